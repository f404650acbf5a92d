"""German bookkeeping forms: Soll/Haben letters and amounts in thousands (TEUR, T€).

German ledgers and balance lists print the side of an amount as a letter after it:
"1.234,50 S" (Soll, debit) and "980,00 H" (Haben, credit); reports give amounts in
thousands of a currency as "TEUR", "T€" or "TCHF" ("1.234 TEUR" is 1 234 000 euros).
Both are common practice in German-speaking accounting (no published source). Elsewhere
the same letters mean other things: "S" and "H" are also seconds and hours or sizes, and
"$3T" is three trillion. So they are read only where something shows a German writer:

* the rows' countries (a country column: every row holding such a value), the one country
  the data names, or the run's locale or default region, whose likely language is German
  (CLDR likely subtags via babel);
* the header ("Soll/Haben", "S/H", "TEUR", "T€", "Tsd.", "Tausend");
* the column's other values: the words "Soll"/"Haben" written out, German magnitude words
  ("Tsd.", "Mio.", "Mrd."), thousands "T€" beside the letters and the other way round.

The letters also need both sides in the column, or the words or a header naming them (a
column of "S" alone may be Austrian schillings or sizes). Elsewhere the values are listed.

Convention keys: ``soll_haben`` (true: "S" and "H" after an amount are debit and credit
marks, read as ``side_marks`` says; absent or false: such values are listed) and
``currency_thousands`` (true: a "T" glued before the currency after an amount means
thousands; absent or false: listed with the thousand and the trillion readings).
"""

from __future__ import annotations

import re
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pyarrow.compute as pc

from harmonize.context import Context
from harmonize.engines.numbers_forms import HABEN, SOLL, Forms
from harmonize.engines.numbers_magnitudes import territory_language
from harmonize.evidence import ColumnEvidence

LETTERS_KEY = "soll_haben"
THOUSANDS_KEY = "currency_thousands"
GERMAN = "de"
THOUSAND, TRILLION = 3, 12       # "TEUR" in a German ledger; "T" after an English amount
# German magnitude words (CLDR de compact forms and German trade usage; magnitudes.txt)
GERMAN_WORDS = frozenset({"Tsd.", "Tsd", "Tausend", "Mio.", "Mrd.", "Mrd", "Bio.", "Billionen"})
_HEADER_LETTERS = re.compile(r"(?i)\bsoll\b|\bhaben\b|\bS\s*/\s*H\b")
_HEADER_THOUSANDS = re.compile(r"TEUR|TCHF|T€|(?i:\btsd\b|\btausend)")
_WORDS = r"(?i)\b(?:soll|haben)\b"
FROM_CONTEXT = 0.95      # a German country, locale or header
FROM_VALUES = 0.93       # the column's own German forms


def sides_of(forms: Forms, convention: Mapping[str, Any]) -> np.ndarray:
    """Per value: "credit", "debit", or "" (no mark); the letters "S"/"H" are debit and
    credit under ``soll_haben`` and stay "soll"/"haben" (unread) otherwise."""
    sides = forms.side
    if not convention.get(LETTERS_KEY) or not ((sides == SOLL) | (sides == HABEN)).any():
        return sides
    return np.where(sides == SOLL, "debit", np.where(sides == HABEN, "credit", sides))


def unread_letters(forms: Forms, convention: Mapping[str, Any]) -> np.ndarray:
    sides = sides_of(forms, convention)
    return (sides == SOLL) | (sides == HABEN)


def thousands_shift(forms: Forms, convention: Mapping[str, Any]) -> np.ndarray:
    """Per value: the power of ten its "T" before the currency adds under the convention."""
    read = forms.thousands & bool(convention.get(THOUSANDS_KEY))
    return np.where(read, THOUSAND, 0)


def unread_thousands(forms: Forms, convention: Mapping[str, Any]) -> np.ndarray:
    return forms.thousands & (not convention.get(THOUSANDS_KEY))


def letter_reason(raw: str, side: str) -> str:
    word, meaning = ("S", "Soll (debit)") if side == SOLL else ("H", "Haben (credit)")
    return (f"{raw!r} ends in {word!r}: {meaning} in German bookkeeping, but nothing shows a "
            "German ledger (a German country or locale, a header naming Soll/Haben, or "
            "both letters beside German forms in the column); listed")


def thousands_reason(raw: str) -> str:
    return (f"{raw!r}: 'T' before the currency is thousands in German bookkeeping (TEUR, "
            "T€), while 'T' is also trillion ($3T); nothing shows a German writer (a German "
            "country or locale, or the header): listed with both readings")


@dataclass
class LedgerDecision:
    letters: bool = False
    thousands: bool = False
    confidence: float = 1.0
    evidence: list[str] = field(default_factory=list)

    def convention(self, forms: Forms) -> dict[str, Any]:
        found: dict[str, Any] = {}
        if ((forms.side == SOLL) | (forms.side == HABEN)).any():
            found[LETTERS_KEY] = self.letters
        if forms.thousands.any():
            found[THOUSANDS_KEY] = self.thousands
        return found


def decide_ledger(column: ColumnEvidence, forms: Forms, context: Context,
                  single_territory: Callable[[], str | None]) -> LedgerDecision:
    """Whether the column's "S"/"H" letters and "T" thousands are read (module docstring)."""
    number = forms.is_number
    letters = number & ((forms.side == SOLL) | (forms.side == HABEN))
    thousands = number & forms.thousands
    decision = LedgerDecision()
    if not (letters.any() or thousands.any()):
        return decision
    writer = _german_context(column, letters | thousands, context, single_territory)
    values_cue = _german_values(forms, number, letters, thousands)
    if letters.any():
        _decide_letters(column, forms, letters, writer, values_cue, decision)
    if thousands.any():
        _decide_thousands(column, thousands, writer, values_cue, decision)
    return decision


def _decide_letters(column: ColumnEvidence, forms: Forms, letters: np.ndarray,
                    writer: str | None, values_cue: str | None,
                    decision: LedgerDecision) -> None:
    both = {SOLL, HABEN} <= set(forms.side[letters].tolist())
    words = _has_words(forms)
    header = _HEADER_LETTERS.search(column.name)
    cells = int(column.counts[letters].sum())
    if header or words:
        said = f"the header {column.name!r}" if header else "the words Soll/Haben in the column"
        confidence = FROM_CONTEXT if header else FROM_VALUES
    elif both and (writer or values_cue):
        said, confidence = (writer, FROM_CONTEXT) if writer else (values_cue, FROM_VALUES)
    else:
        decision.evidence.append(
            f"{cells} value(s) end in 'S' or 'H' (Soll/Haben in German ledgers) and nothing "
            "shows a German ledger: listed")
        return
    decision.letters = True
    decision.confidence = min(decision.confidence, confidence)
    decision.evidence.append(f"{cells} value(s) end in 'S' (Soll, debit) or 'H' (Haben, "
                             f"credit), German ledger marks: {said}")


def _decide_thousands(column: ColumnEvidence, thousands: np.ndarray, writer: str | None,
                      values_cue: str | None, decision: LedgerDecision) -> None:
    cells = int(column.counts[thousands].sum())
    header = _HEADER_THOUSANDS.search(column.name)
    cue = writer or (f"the header {column.name!r}" if header else None) or values_cue
    if cue is None:
        decision.evidence.append(
            f"{cells} value(s) put 'T' before the currency (thousands in German ledgers, "
            "trillion elsewhere) and nothing shows a German writer: listed")
        return
    decision.thousands = True
    decision.confidence = min(decision.confidence,
                              FROM_CONTEXT if cue != values_cue else FROM_VALUES)
    decision.evidence.append(f"{cells} value(s) are thousands of their currency ('TEUR', "
                             f"'T€': German ledgers): {cue}")


def _has_words(forms: Forms) -> bool:
    found = pc.match_substring_regex(forms.text_array, _WORDS)
    return bool(pc.any(found.fill_null(False)).as_py())


def _german_values(forms: Forms, number: np.ndarray, letters: np.ndarray,
                   thousands: np.ndarray) -> str | None:
    """A German form among the column's values, beside the ones to decide."""
    words = sorted(set(forms.magnitude[number].tolist()) & GERMAN_WORDS)
    if words:
        return f"the column writes German magnitude words ({', '.join(words)})"
    if letters.any() and thousands.any():
        return "the column has both Soll/Haben letters and thousands ('TEUR', 'T€')"
    return None


def _german_context(column: ColumnEvidence, marked: np.ndarray, context: Context,
                    single_territory: Callable[[], str | None]) -> str | None:
    """Why the writer is German-speaking, from the country or the run options."""
    split = context.country_split
    if split is not None and column.codes is not None:
        rows = np.append(marked, False)[column.codes]
        held = np.unique(split.codes[rows])
        territories = {split.territories[code] for code in held.tolist() if code >= 0}
        if territories and all(t and territory_language(t) == GERMAN for t in territories):
            return (f"every row holding them is in a German-speaking country "
                    f"({', '.join(sorted(t for t in territories if t))}, CLDR)")
        return None
    territory = single_territory()
    if territory and territory_language(territory) == GERMAN:
        return f"the data names {territory}, whose language is German (CLDR)"
    options = context.options
    for source, language in (("the run's locale", _language(options.locale)),
                             ("the run's default region", options.default_region
                              and territory_language(options.default_region.upper()))):
        if language == GERMAN:
            return f"{source} is German"
    return None


def _language(locale: str | None) -> str | None:
    from babel import Locale
    if not locale:
        return None
    try:
        return Locale.parse(locale).language
    except Exception:   # babel raises several types for locales it does not know
        return None
