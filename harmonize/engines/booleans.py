"""Booleans: yes/no, true/false, on/off, 1/0, check marks and their equivalents in other
languages, written out as ``true``/``false``.

Convention keys (a person may edit them in a plan file):

``true``  list of words read as true  (matched ignoring case, accents, surrounding space
          and a trailing full stop), e.g. ``["yes", "y", "ja", "1"]``.
``false`` list of words read as false, e.g. ``["no", "n", "nein", "0"]``.

Any other value in a boolean column is unresolved. The word lists come from
``locales/boolean_words.txt``; the engine puts into the convention the languages the column
uses (English always), the single letters only of the pair the column uses, and "1"/"0"
only when the column's numbers are all 1 or 0.

The engine is conservative: a column of "x" and blanks, a two-valued category ("M"/"F",
"A"/"B"), or a 0/1/2 column is not boolean. A column of only 1 and 0 is boolean when its
header reads like a flag (is_..., has_..., active, ...) or its cells are typed workbook
booleans; otherwise it is left to the numbers engine, which writes 1 and 0 as they are: in
published statistical tables such columns are as often codes or counts ("sex", "choice",
"nchildren") as flags, and "true" for a code says nothing while "1" loses nothing.
"""

from __future__ import annotations

import re
import unicodedata
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from functools import cache
from typing import Any, ClassVar

from harmonize.context import Context
from harmonize.engines.base import Converted, Decision, Outcome
from harmonize.evidence import ColumnEvidence
from harmonize.locales import load_entries

TRUE_MARKS = frozenset("✓✔☑✅")
# Format characters that hide in copied cells: zero-width (non-)joiners and spaces, word
# joiner, byte order mark, soft hyphen, Mongolian vowel separator (Unicode category Cf)
INVISIBLE = dict.fromkeys(map(ord, "\u200b\u200c\u200d\u2060\ufeff\u00ad\u180e"))
NUMERIC = re.compile(r"^[+-]?\d+(?:[.,]\d+)?$")
# A column whose only readings are letters may hold a few stray values, no more.
LETTERS_MAX_UNREAD = 0.05
# Even written in many languages and cases, a boolean column has few distinct forms.
MAX_DISTINCT = 2000


def fold_word(text: str) -> str:
    """'  Sí. ' -> 'si': case, accents, outer space, invisible characters (zero-width space,
    soft hyphen, byte order mark) and a trailing full stop folded away."""
    # dotless ı (Turkish) upper-cases to I, which folds to i: fold ı to i as well
    visible = text.translate(INVISIBLE).strip().casefold().replace("ı", "i")
    decomposed = unicodedata.normalize("NFKD", visible)
    return "".join(ch for ch in decomposed if not unicodedata.combining(ch)).rstrip(".").strip()


@dataclass(frozen=True)
class Vocabulary:
    """Folded word -> (polarity, languages that use it)."""

    words: Mapping[str, tuple[bool, tuple[str, ...]]]
    originals: Mapping[str, str]          # folded -> the spelling in the word list
    by_language: Mapping[str, tuple[tuple[str, ...], tuple[str, ...]]]  # lang -> (true, false)
    header_prefixes: frozenset[str]
    header_words: frozenset[str]


@cache
def vocabulary() -> Vocabulary:
    words: dict[str, tuple[bool, tuple[str, ...]]] = {}
    originals: dict[str, str] = {}
    by_language: dict[str, tuple[list[str], list[str]]] = {}
    entries = load_entries("boolean_words")
    for key, listed in entries.items():
        lang, _, polarity = key.partition(".")
        if lang == "header":
            continue
        truth = polarity == "true"
        for word in listed:
            folded = fold_word(word)
            seen = words.get(folded)
            if seen is not None and seen[0] != truth:
                raise ValueError(f"boolean_words: {word!r} is listed as both true and false")
            langs = (seen[1] if seen else ()) + (lang,)
            words[folded] = (truth, langs)
            originals.setdefault(folded, word)
            by_language.setdefault(lang, ([], []))[0 if truth else 1].append(word)
    return Vocabulary(
        words=words, originals=originals,
        by_language={k: (tuple(t), tuple(f)) for k, (t, f) in by_language.items()},
        header_prefixes=frozenset(entries.get("header.prefix", ())),
        header_words=frozenset(entries.get("header.word", ())))


def header_words(header: str) -> list[str]:
    """'isActive' / 'is_active' / 'Is active?' -> ['is', 'active']."""
    spaced = re.sub(r"([a-z])([A-Z])", r"\1 \2", header)
    return [w for w in re.split(r"[^\w]+|_", fold_word(spaced)) if w]


def header_is_flag(header: str) -> bool:
    vocab = vocabulary()
    words = header_words(header)
    if not words:
        return False
    if header.strip().endswith("?") or words[0] in vocab.header_prefixes:
        return True
    joined = "".join(words)
    return any(w in vocab.header_words for w in words) or joined in vocab.header_words


@dataclass(frozen=True)
class Reading:
    """What the column's folded tokens say, before any decision."""

    polarity: dict[str, bool]      # folded token -> truth, for tokens the column can use
    languages: set[str]
    digits: bool                   # 1/0 read as true/false
    letters_only: bool             # every word read is a single letter
    unread: list[str]              # folded tokens nothing reads


def read_tokens(tokens: Iterable[str]) -> Reading:
    """Decide which of a column's folded tokens count as boolean words."""
    vocab = vocabulary()
    tokens = set(tokens)
    numeric = {t for t in tokens if NUMERIC.match(t)}
    digits = bool(numeric) and numeric <= {"0", "1"}
    polarity: dict[str, bool] = {}
    languages: set[str] = set()
    for token in tokens:
        if token in vocab.words and (len(token) > 1 or not token.isalpha()):
            polarity[token] = vocab.words[token][0]
            languages.update(lang for lang in vocab.words[token][1] if lang != "marks")
    if digits:
        polarity.update({t: t == "1" for t in numeric})
    if "x" in tokens and TRUE_MARKS & tokens:
        polarity["x"] = False  # "✓" beside "x": the x is the cross of a tick/cross column
    letters = {t for t in tokens if len(t) == 1 and t.isalpha() and t in vocab.words}
    for letter in letters:
        truth, langs = vocab.words[letter]
        # a lone letter means nothing (M/F, A/B): it needs a word of the other polarity
        others = set(polarity.values()) | {vocab.words[o][0] for o in letters if o != letter}
        if (not truth) in others:
            polarity[letter] = truth
            languages.update(langs)
    letters_only = bool(polarity) and all(len(t) == 1 and t.isalpha() for t in polarity)
    return Reading(polarity, languages, digits, letters_only,
                   sorted(tokens - polarity.keys()))


class BooleanEngine:
    name: ClassVar[str] = "booleans"

    def propose(self, column: ColumnEvidence, context: Context) -> Decision | None:
        raw = column.values.tolist()
        counts = column.counts.tolist()
        total = sum(counts)
        if not total or len(raw) > MAX_DISTINCT:
            return None
        folded = [fold_word(v) for v in raw]
        reading = read_tokens(folded)
        if not reading.polarity:
            return None
        read_counts = [c for t, c in zip(folded, counts, strict=True) if t in reading.polarity]
        fit = sum(read_counts) / total
        sides = {reading.polarity[t] for t in folded if t in reading.polarity}
        digits_only = all(NUMERIC.match(t) for t in reading.polarity)
        if len(sides) < 2 and (digits_only or reading.letters_only):
            return None  # all "1", or all "Y": nothing shows these are two-valued
        if reading.letters_only and 1 - fit > LETTERS_MAX_UNREAD:
            return None
        typed = [v for v in raw if column.typed.get(v) == "boolean"]
        flag = header_is_flag(column.name)
        if digits_only and not (flag or typed):
            return None  # a 0/1 code or count: the numbers engine keeps it as written
        confidence = self._confidence(fit, len(sides) == 2, digits_only, flag, bool(typed),
                                      reading.letters_only)
        convention = self._convention(reading)
        evidence = self._evidence(raw, folded, counts, reading, typed, flag)
        details = {"languages": sorted(reading.languages),
                   "values_read": {t: c for t, c in _tally(folded, counts).items()
                                   if t in reading.polarity},
                   "unread_values": reading.unread[:20]}
        return Decision(kind="boolean", engine=self.name, fit=fit, confidence=confidence,
                        convention=convention, evidence=tuple(evidence), details=details)

    @staticmethod
    def _confidence(fit: float, both_sides: bool, digits_only: bool, flag: bool,
                    typed: bool, letters_only: bool) -> float:
        if typed:
            base = 0.995
        elif digits_only:
            base = 0.93  # a flag header over 1/0: still maybe a count that never exceeded 1
        elif not both_sides:
            base = 0.85 if flag else 0.7
        elif letters_only:
            base = 0.95
        else:
            base = 0.99
        # every value nothing reads makes it likelier the column is something else
        return round(max(0.05, base - 2.0 * (1.0 - fit) * base), 3)

    @staticmethod
    def _convention(reading: Reading) -> dict[str, Any]:
        vocab = vocabulary()
        true_words: list[str] = []
        false_words: list[str] = []
        for lang in ["en", *sorted(reading.languages - {"en"})]:
            t, f = vocab.by_language.get(lang, ((), ()))
            true_words += [w for w in t if len(w) > 1]
            false_words += [w for w in f if len(w) > 1]
        for token, truth in sorted(reading.polarity.items()):
            word = vocab.originals.get(token, token)
            (true_words if truth else false_words).append(word)
        return {"true": list(dict.fromkeys(true_words)), "false": list(dict.fromkeys(false_words))}

    @staticmethod
    def _evidence(raw: list[str], folded: list[str], counts: list[int], reading: Reading,
                  typed: list[str], flag: bool) -> list[str]:
        tally = _tally(folded, counts)
        true_n = sum(c for t, c in tally.items() if reading.polarity.get(t) is True)
        false_n = sum(c for t, c in tally.items() if reading.polarity.get(t) is False)
        lines = [f"{true_n} cells read as true and {false_n} as false "
                 f"({', '.join(sorted(t for t in tally if t in reading.polarity))})"]
        if typed:
            lines.append(f"{len(typed)} distinct values are typed workbook booleans")
        if reading.digits:
            lines.append("every number in the column is 1 or 0"
                         + ("; the header reads like a flag" if flag else ""))
        if reading.unread:
            unread_n = sum(c for t, c in tally.items() if t not in reading.polarity)
            lines.append(f"{unread_n} cells ({len(reading.unread)} distinct) are not boolean "
                         "words and are listed")
        return lines

    def convert(self, values: Sequence[str], convention: Mapping[str, Any]) -> Converted:
        lookup = {fold_word(w): True for w in convention.get("true", ())}
        for word in convention.get("false", ()):
            key = fold_word(word)
            if lookup.get(key) is True:
                raise ValueError(f"boolean convention lists {word!r} as both true and false")
            lookup[key] = False
        result = Converted.empty(len(values))
        for i, raw in enumerate(values):
            truth = lookup.get(fold_word(raw))
            if truth is None:
                result.unresolved(i, "not one of the column's true/false words "
                                     f"({_preview(convention)})")
            else:
                result.set(i, "true" if truth else "false", Outcome.CONVERTED)
        return result


def _tally(tokens: list[str], counts: list[int]) -> dict[str, int]:
    tally: dict[str, int] = {}
    for token, count in zip(tokens, counts, strict=True):
        tally[token] = tally.get(token, 0) + count
    return tally


def _preview(convention: Mapping[str, Any]) -> str:
    true_words = list(convention.get("true", ()))[:4]
    false_words = list(convention.get("false", ()))[:4]
    return f"true: {', '.join(true_words)}...; false: {', '.join(false_words)}..."
