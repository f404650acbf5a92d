"""Text: the fallback engine. Consistent spelling for categories, free text left alone.

Every value is cleaned: Unicode normalisation form C (UAX #15), zero-width characters
removed, every kind of space (U+00A0, U+202F, tabs ...) made a plain space, runs of spaces
collapsed, ends trimmed; a word mixing Latin with Cyrillic or Greek letters (a Cyrillic 'а'
typed inside "Gala") takes its main script's letter for each look-alike (Unicode TS #39
confusables). Values that are equal once case, spacing, accents and punctuation are folded
away ("Saint-Étienne", "saint etienne", "SAINT-ETIENNE") form a *variant group* and are all
written as one canonical spelling. A form that is a lossy rewrite of another form of its
group (upper or lower case, title case of "van der Berg" or "McDonald", accents or
apostrophes dropped) is never chosen over it: the canonical spelling is the most frequent
of the forms left, ties going to the form with diacritics, then to the column's prevailing
case style.

Free text (long, mostly unique values such as notes) is only trimmed.

Convention keys (a person may edit them in a plan file):

``mode``           ``"categories"`` (clean and spell consistently), ``"free"`` (trim only) or
                   ``"as_written"`` (kept as written; trimmed when ``trim`` is true).
``canonical``      folded key -> spelling, e.g. ``{"saint etienne": "Saint-Étienne"}``. A value
                   whose key is missing (next month's new town) is cleaned and kept as written.
``merge``          spelling -> list of other spellings to write as it, e.g.
                   ``{"Harrowdene": ["Harowdene"]}``. Empty unless a person adds entries (the
                   report's ``suggested_merges`` lists near matches worth a look).
``country_codes``  true to write a country column as ISO 3166-1 alpha-2 codes (off by
                   default; switch on with the ``text`` engine option ``country_codes``).
``countries``      folded key -> alpha-2 code for the values seen (used with country_codes;
                   unseen values are looked up again, unknown ones are unresolved).

``canonical`` lists every key while the column has at most 5000 of them, else only the keys
written in more than one way (a single-spelling key gives the same output either way).
A value the canonical spelling (or cleaning) changes is CONVERTED; one that stays as
written, apart from trimming, is PASSED.

Harmonising the output again must change nothing. Text is what no other engine claimed, so
its cleaning must not turn the column into something another engine claims on the next run
("y\u200bes" cleaned to "yes" in a column that then reads as booleans, "1·5" written as its
commoner variant "1.5"), nor write a value the next run sets aside as missing ("N/A\u200b").
Before proposing, the engine reads its own output as the next run would (missing values,
then every other engine); when that output would be read differently it steps down to
gentler cleaning (no merged variants, then trimming only, then the values as written) and
says so in the evidence and in the details (``kept_for_stability``).

Report details: ``variant_groups`` (up to 100 groups, each {"canonical", "cells_changed",
"variants": {raw: count}}, with ``variant_groups_total`` and a note when capped),
``suggested_merges`` (near matches, never applied), ``country_column`` and ``territories``
when the values name countries.

The folded key of a value: case folded, compatibility-decomposed, accents dropped; between
two letters a run of spaces and punctuation is one space, full stops and apostrophes alone
are dropped ("Saint-Étienne" -> "saint etienne", "U.K." -> "uk", "St. Mary's" -> "st marys");
between a letter and a digit punctuation is dropped ("AB-12" -> "ab12"); a trailing full stop
is dropped; symbols stay ("C++", "A-"). Word breaks stay: "Juana" and "Juan A.", "Newcastle"
and "New Castle" are different names. Between two digits nothing is dropped: "1.5", "1,5",
"15", "1-5" and "1/5" are different values (a decimal, a grouping, a range, a fraction, a
date).
"""

from __future__ import annotations

import re
import unicodedata
from collections import Counter, defaultdict
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass, replace
from difflib import SequenceMatcher
from typing import Any, ClassVar

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from harmonize.context import COUNTRY_SHARE, Context
from harmonize.engines.base import Converted, Decision, Outcome
from harmonize.evidence import ColumnEvidence
from harmonize.territory import territory_of

# Patterns in RE2 syntax, run by Arrow on whole columns. RE2's \s and \w know only ASCII,
# so the classes are spelled out: _WS is Python's white space (str.isspace), letters and
# digits are Unicode general categories (L, N; Nd for decimal digits), as Python's \w is.
_WS_NOT_SPACE = (r"\t-\r\x{1c}-\x{1f}\x{85}\x{a0}\x{1680}\x{2000}-\x{200a}\x{2028}\x{2029}"
                 r"\x{202f}\x{205f}\x{3000}")
_WS = _WS_NOT_SPACE + r"\x{20}"
# Zero-width and other invisible format characters that only hide differences.
INVISIBLE = r"[\x{200b}\x{200c}\x{200d}\x{2060}\x{feff}\x{ad}\x{180e}]"
SPACES = f"[{_WS}]+"
COMBINING = r"[\x{300}-\x{36f}\x{1ab0}-\x{1aff}\x{1dc0}-\x{1dff}\x{20d0}-\x{20ff}\x{fe20}-\x{fe2f}]"
# Spaces and punctuation (not symbols such as + # & %) ...
_MARKS = (r"\-\x{2010}-\x{2015}.,;:·'\x{2018}\x{2019}`´\"\x{201c}\x{201d}"
          r"/\\_()\[\]{}!?¡¿…")
_SEPARATOR = f"[{_WS}{_MARKS}]"
_NOT_A_SPACE = f"[{_WS_NOT_SPACE}{_MARKS}]"   # a separator other than U+0020
_LETTER = r"[\p{L}\p{Nl}\p{No}]"   # a letter, or a digit that is not a decimal digit (²)
# Full stops and apostrophes join the letters around them into one word ("U.K.", "Mary's");
# any other run of separators between two letters is a word break ("Saint-Étienne",
# "Juan A."), kept as one space so that "Juana" and "Juan A." stay two values. Between a
# letter and a digit every separator goes ("AB-12"); between two digits none does
# ("1.5", "15"). Each match takes the characters on either side along, so every pattern
# runs twice ("a.b.c"); a word break that is already one space is not matched, so that it
# does not take along the letter the next break needs ("a\ra\ra").
_JOINERS = r"[.'\x{2018}\x{2019}`´·]"
JOINED_LETTERS = rf"({_LETTER}){_JOINERS}+({_LETTER})"
CODE_SEPARATORS = (rf"({_LETTER}){_SEPARATOR}+(\p{{Nd}})"
                   rf"|(\p{{Nd}}){_SEPARATOR}+({_LETTER})")
WORD_SEPARATORS = rf"({_LETTER})(?:{_NOT_A_SPACE}|\x{{20}}{_SEPARATOR}){_SEPARATOR}*({_LETTER})"
FOLD_PASSES = ((JOINED_LETTERS, r"\1\2"), (CODE_SEPARATORS, r"\1\2\3\4"),
               (WORD_SEPARATORS, r"\1 \2"))
TRAILING_STOPS = rf"[.{_WS}]+$"
# The same in Python's re, whose \s, \w and \d are Unicode-aware: quicker on a few values,
# where compiling the RE2 patterns (large Unicode classes) costs more than running them.
ARROW_FROM = 1000
_INVISIBLE = re.compile("[\u200b\u200c\u200d\u2060\ufeff\u00ad\u180e]")
_SPACES = re.compile(r"\s+")
_COMBINING = re.compile("[\u0300-\u036f\u1ab0-\u1aff\u1dc0-\u1dff\u20d0-\u20ff\ufe20-\ufe2f]")
_PY_SEPARATOR = "[\\s\\-\u2010-\u2015.,;:·'\u2018\u2019`´\"\u201c\u201d/\\\\_()\\[\\]{}!?¡¿…]"
_PY_LETTER = r"[^\W\d_]"
_PY_FOLD_PASSES = (
    (re.compile(rf"(?<={_PY_LETTER})[.'\u2018\u2019`´·]+(?={_PY_LETTER})"), ""),
    (re.compile(rf"(?<={_PY_LETTER}){_PY_SEPARATOR}+(?=\d)"
                rf"|(?<=\d){_PY_SEPARATOR}+(?={_PY_LETTER})"), ""),
    (re.compile(rf"(?<={_PY_LETTER}){_PY_SEPARATOR}+(?={_PY_LETTER})"), " "),
)
_TRAILING_STOPS = re.compile(r"[.\s]+$")
WORD_BREAKS = re.compile(r"[\s\-'’/]+")

FREE_MEDIAN_LENGTH = 40     # a column of values this long ...
FREE_UNIQUE_SHARE = 0.7     # ... and mostly unique is free text
FREE_MEDIAN_WORDS = 8
MAX_CANONICAL = 5000        # above this many keys, only multi-form groups go in the plan
MAX_GROUPS_LISTED = 100
MAX_SUGGESTIONS = 50
SIMILARITY = 0.85           # difflib ratio on folded keys for a suggested merge
MIN_SUGGEST_LENGTH = 5      # shorter keys differ by one letter too often ("bern", "bonn")
MAX_SUGGEST_KEYS = 50_000
MAX_COUNTRY_KEYS = 1000
# Gentler cleaning, tried in turn when a column's output would read differently next run;
# the last writes every value as it came, which always reads the same.
GENTLER: tuple[tuple[str, dict[str, Any]], ...] = (
    ("spelling variants are cleaned but not merged",
     {"mode": "categories", "canonical": {}, "merge": {}}),
    ("values are only trimmed", {"mode": "as_written", "trim": True}),
    ("values are kept exactly as written", {"mode": "as_written", "trim": False}),
)
UNSETTLED = 0.5   # a column at the edge of another kind: text or that kind, about even odds
EDGE = 0.5        # ... when the other kind's engine reads this much of the column as it is
REWRITTEN = "cells rewritten to their group's canonical spelling"
AS_CODES = "country names are written as ISO 3166-1 alpha-2 codes"


def normalise_many(values: Iterable[str]) -> list[str]:
    """NFC, invisible characters removed, white space collapsed and trimmed, mixed-script
    words in one script."""
    values = list(values)
    cleaned = normalise_in_arrow(values) if len(values) >= ARROW_FROM else [
        _SPACES.sub(" ", _INVISIBLE.sub("", unicodedata.normalize("NFC", v))).strip()
        for v in values]
    return unmix_scripts(cleaned)


# Look-alike letters of Cyrillic and Greek for Latin ones (Unicode TS #39 confusables; the
# pairs are from memory, each one a letter drawn alike in common fonts).
_CYRILLIC_LATIN = dict(zip("аеорсухіјѕԁԛԝһӏАВЕКМНОРСТХУІЈЅԚԜ",
                           "aeopcyxijsdqwhlABEKMHOPCTXYIJSQW", strict=True))
_GREEK_LATIN = dict(zip("οινΑΒΕΖΗΙΚΜΝΟΡΤΥΧ", "oivABEZHIKMNOPTYX", strict=True))
_TO_LATIN = {**_CYRILLIC_LATIN, **_GREEK_LATIN}
_FROM_LATIN = {"cyrillic": {v: k for k, v in _CYRILLIC_LATIN.items()},
               "greek": {v: k for k, v in _GREEK_LATIN.items()}}
_OTHER_SCRIPT = re.compile("[\u0370-\u03ff\u0400-\u052f]")
_LATIN_LETTER = re.compile("[A-Za-z\u00c0-\u024f]")
_WORD = re.compile(r"[^\W\d_]+")


def unmix_scripts(values: list[str]) -> list[str]:
    """Each word that mixes Latin with Cyrillic or Greek letters written in the script most
    of its letters are in, where every other letter has a look-alike there ('Galа' with a
    Cyrillic а -> 'Gala'); other words, and whole words of one script, stay."""
    for i, value in enumerate(values):
        if not value.isascii() and _OTHER_SCRIPT.search(value) and _LATIN_LETTER.search(value):
            values[i] = _WORD.sub(_one_script, value)
    return values


def _one_script(match: re.Match[str]) -> str:
    word = match[0]
    latin = _LATIN_LETTER.findall(word)
    other = _OTHER_SCRIPT.findall(word)
    if not latin or not other or len(latin) == len(other):
        return word
    if len(latin) > len(other):
        minority, table = other, _TO_LATIN
    else:
        greek = all(ch <= "\u03ff" for ch in other)
        minority, table = latin, _FROM_LATIN["greek" if greek else "cyrillic"]
    if not all(ch in table for ch in minority):
        return word   # a letter without a look-alike: the scripts are meant
    return word.translate(str.maketrans(table))


def normalise_in_arrow(values: list[str]) -> list[str]:
    text = pc.utf8_normalize(pa.array(values, type=pa.large_string()), "NFC")
    text = pc.replace_substring_regex(pc.replace_substring_regex(text, INVISIBLE, ""), SPACES, " ")
    return pc.utf8_trim(text, " ").to_pylist()   # every white space is a plain space by now


def fold_many(values: Iterable[str]) -> list[str]:
    """Folded keys: case and accents away, punctuation between letters made one space
    (full stops and apostrophes dropped), between a letter and a digit dropped, a trailing
    full stop dropped: 'Côte-d’Or' -> 'cote dor', 'U.K.' -> 'uk', 'Juan A.' -> 'juan a'.

    Symbols and outer punctuation stay, so that 'C++', 'C#' and 'C', or the grades 'A-',
    'A' and 'A+', remain different values. A value that folds to nothing keys as itself.
    """
    values = list(values)
    # dotless ı upper-cases to I, which folds to i: fold ı to i too (Turkish names)
    decomposed = [unicodedata.normalize("NFKD", v.casefold().replace("ı", "i"))
                  for v in values]
    folded = fold_in_arrow(decomposed) if len(values) >= ARROW_FROM else [
        _TRAILING_STOPS.sub("", _inner_separators(_COMBINING.sub("", k))) for k in decomposed]
    # marks outside the common combining blocks, if any, go one value at a time
    keys = [k if k.isascii() else _strip_marks(k) for k in folded]
    return [k or v for k, v in zip(keys, values, strict=True)]  # "...": itself


def fold_in_arrow(decomposed: list[str]) -> list[str]:
    """Combining marks, inner separators and trailing stops away, on case-folded NFKD text."""
    text = pc.replace_substring_regex(pa.array(decomposed, type=pa.large_string()), COMBINING,
                                      "")
    for pattern, sides in FOLD_PASSES:
        for _ in range(2):
            text = pc.replace_substring_regex(text, pattern, sides)
    return pc.replace_substring_regex(text, TRAILING_STOPS, "").to_pylist()


def _inner_separators(text: str) -> str:
    for pattern, replacement in _PY_FOLD_PASSES:
        text = pattern.sub(replacement, text)
    return text


def _strip_marks(text: str) -> str:
    return "".join(ch for ch in text if not unicodedata.combining(ch))


def normalise(value: str) -> str:
    return normalise_many([value])[0]


def fold(value: str) -> str:
    return fold_many([normalise(value)])[0]


def diacritic_count(text: str) -> int:
    return sum(1 for ch in unicodedata.normalize("NFD", text) if unicodedata.combining(ch))


def case_style(text: str) -> str:
    """'upper', 'lower', 'title' or 'mixed' (no letters: 'none')."""
    if text.isascii():   # quick: an ASCII letter is cased, and upper() changes it
        if text.upper() == text.lower():
            return "none"
    elif not any(ch.isupper() or ch.islower() for ch in text if ch.isalpha()):
        return "none"
    if text.isupper():
        return "upper"
    if text.islower():
        return "lower"
    words = [w for w in WORD_BREAKS.split(text) if w and w[0].isalpha()]
    if words and all(w[0].isupper() and not w[1:].isupper() for w in words if len(w) > 3):
        return "title"
    return "mixed"


@dataclass(frozen=True)
class Unsettled:
    """Why a column's output would read differently on a second run."""

    reason: str
    input_fit: float = 0.0   # how much of the input the engine that would claim it reads


class TextEngine:
    name: ClassVar[str] = "text"

    def propose(self, column: ColumnEvidence, context: Context) -> Decision | None:
        decision, written = self._proposal(column, context)
        return self._settled(decision, column, context, written)

    def _proposal(self, column: ColumnEvidence, context: Context
                  ) -> tuple[Decision, Converted | None]:
        """The decision, with its output when working it out gave it for free."""
        raw = column.values.tolist()
        counts = column.counts.tolist()
        options = context.options.for_engine(self.name)
        if not raw:
            return Decision(kind="text", engine=self.name, fit=1.0, confidence=0.5,
                            convention={"mode": "categories", "canonical": {}, "merge": {}}), None
        normalised = normalise_many(raw)
        if _is_free_text(normalised, counts):
            return self._free(column, normalised, counts), None
        keys = fold_many(normalised)
        forms = _multi_forms(keys, normalised, counts)
        prevailing = _prevailing_style(normalised, counts)
        canonical = dict(zip(keys, normalised, strict=True))   # keys written one way
        canonical.update({key: _canonical(form_counts, prevailing)
                          for key, form_counts in forms.items()})
        multi = set(forms)
        kept = canonical if len(canonical) <= MAX_CANONICAL else {k: canonical[k] for k in multi}
        convention: dict[str, Any] = {"mode": "categories", "canonical": dict(sorted(kept.items())),
                                      "merge": {}}
        groups = _variant_groups(raw, keys, counts, canonical)
        details: dict[str, Any] = {
            "prevailing_case": prevailing,
            "distinct_keys": len(canonical),
            "canonical_complete": len(kept) == len(canonical),
            "variant_groups": groups[:MAX_GROUPS_LISTED],
            "variant_groups_total": len(groups),
        }
        if len(groups) > MAX_GROUPS_LISTED:
            details["variant_groups_note"] = (f"showing the {MAX_GROUPS_LISTED} groups with the "
                                              f"most cells of {len(groups)}")
        key_counts = _key_counts(keys, counts)
        suggestions = suggest_merges(canonical, key_counts)
        details["suggested_merges"] = suggestions
        evidence = [f"{len(canonical)} distinct spellings once case, spacing, accents and "
                    "punctuation are folded"]
        if groups:
            changed = sum(g["cells_changed"] for g in groups)
            evidence.append(f"{len(groups)} variant groups; {changed} {REWRITTEN}")
        if suggestions:
            evidence.append(f"{len(suggestions)} near matches suggested for merging (not applied)")
        self._countries(raw, keys, counts, options, convention, details, evidence)
        decision = Decision(kind="text", engine=self.name, fit=1.0,
                            confidence=_confidence(normalised, counts), convention=convention,
                            evidence=tuple(evidence), details=details)
        return decision, _written(raw, normalised, keys, convention)

    def _free(self, column: ColumnEvidence, normalised: list[str],
              counts: list[int]) -> Decision:
        lengths = sorted(len(v) for v in normalised)
        evidence = (f"{len(normalised)} distinct values in {sum(counts)} cells, median length "
                    f"{lengths[len(lengths) // 2]}: free text, only trimmed",)
        return Decision(kind="text", engine=self.name, fit=1.0, confidence=0.9,
                        convention={"mode": "free"}, evidence=evidence,
                        details={"free_text": True})

    @staticmethod
    def _countries(raw: list[str], keys: list[str], counts: list[int],
                   options: Mapping[str, Any], convention: dict[str, Any],
                   details: dict[str, Any], evidence: list[str]) -> None:
        if len(set(keys)) > MAX_COUNTRY_KEYS:
            return  # there are fewer than 300 territories
        found = {key: territory_of(value) for key, value in zip(keys, raw, strict=True)}
        total = sum(counts)
        named: Counter[str] = Counter()
        for key, count in zip(keys, counts, strict=True):
            if found[key]:
                named[found[key]] += count
        if not total or sum(named.values()) / total < COUNTRY_SHARE:
            return
        details["country_column"] = True
        details["territories"] = dict(named.most_common())
        evidence.append(f"{sum(named.values())} of {total} cells name one of {len(named)} "
                        "countries (CLDR names, ISO 3166 codes): a country column")
        if options.get("country_codes"):
            convention["country_codes"] = True
            convention["countries"] = {k: v for k, v in sorted(found.items()) if v}
            evidence.append(AS_CODES)

    def _settled(self, decision: Decision, column: ColumnEvidence, context: Context,
                 written: Converted | None = None) -> Decision:
        """The decision, or a gentler one when its output would read differently next run."""
        problem = self._second_reading(column, decision.convention, context, written)
        if problem is None:
            return decision
        # the column at the edge of another kind: text or that kind, about even odds
        confidence = (min(decision.confidence, UNSETTLED) if problem.input_fit >= EDGE
                      else decision.confidence)
        # the last, values as written, always reads the same
        what, convention = next((what, convention) for what, convention
                                in _gentler(decision.convention)
                                if self._second_reading(column, convention, context) is None)
        undone = (AS_CODES,) if convention.get("canonical") else (AS_CODES, REWRITTEN)
        kept = [line for line in decision.evidence if not line.endswith(undone)]
        evidence = (*kept, f"cleaning would change how a second run reads the column "
                           f"({problem.reason}): {what}")
        details = {**decision.details, "kept_for_stability": problem.reason}
        return replace(decision, convention=dict(convention), evidence=evidence,
                       details=details, confidence=confidence)

    def _second_reading(self, column: ColumnEvidence, convention: Mapping[str, Any],
                        context: Context, written: Converted | None = None) -> Unsettled | None:
        """Why the output under ``convention`` (``written``, when already worked out) would
        be read differently by a second run (missing values set aside, another engine
        claiming it), or None."""
        raw = column.values.tolist()
        result = written if written is not None else self.convert(raw, convention)
        if result.text == raw and not (result.outcome == Outcome.UNRESOLVED).any():
            return None   # nothing written differently: the next run reads the same
        output = _output_evidence(column, result)
        if output.total == 0:
            return None
        # imported here: both import the engines, this one among them
        from harmonize.decide import proposals
        from harmonize.engines import engine_named
        from harmonize.engines.missing import missing_with_mask

        rule, missing = missing_with_mask(output, context.options)
        if missing.any():
            already = missing_with_mask(column, context.options)[0].tokens
            if rule.tokens - already:   # cleaning made them missing, not the input
                shown = ", ".join(repr(v) for v in output.values[missing][:3].tolist())
                return Unsettled(f"{int(output.counts[missing].sum())} cells would be missing "
                                 f"values ({shown})")
        min_fit = context.options.min_fit
        for proposal in proposals(output, context):
            if proposal.fit < min_fit:
                continue
            before = engine_named(proposal.engine).propose(column, context)
            if before is None or before.fit < min_fit:   # the cleaning made the claim
                return Unsettled(f"{proposal.fit:.0%} of cells would read as {proposal.kind} "
                                 f"({proposal.engine} engine)",
                                 before.fit if before is not None else 0.0)
        return None

    def convert(self, values: Sequence[str], convention: Mapping[str, Any]) -> Converted:
        result = Converted.empty(len(values))
        mode = convention.get("mode")
        if mode in ("free", "as_written"):
            trim = mode == "free" or bool(convention.get("trim", True))
            result.text = list(map(str.strip, values)) if trim else list(values)
            return result   # every value passed through
        normalised = normalise_many(values)
        return _written(values, normalised, fold_many(normalised), convention)


def _written(values: Sequence[str], normalised: list[str], keys: list[str],
             convention: Mapping[str, Any]) -> Converted:
    """Each value's output under a categories convention, from its cleaned text and key."""
    if convention.get("country_codes"):
        return _country_codes(values, normalised, keys, convention)
    spelling = _spelling_table(convention)
    result = Converted.empty(len(values))
    result.text = [spelling.get(key, text) for key, text in zip(keys, normalised, strict=True)]
    kept = np.fromiter(map(str.__eq__, result.text, map(str.strip, values)), dtype=bool,
                       count=len(values))
    result.outcome = np.where(kept, Outcome.PASSED, Outcome.CONVERTED).astype(np.int8)
    return result


def _country_codes(values: Sequence[str], normalised: list[str], keys: list[str],
                   convention: Mapping[str, Any]) -> Converted:
    result = Converted.empty(len(values))
    countries = convention.get("countries", {})
    for i, (raw, text, key) in enumerate(zip(values, normalised, keys, strict=True)):
        code = countries.get(key) or territory_of(text)
        if code is None:
            result.unresolved(i, "not a country name or ISO 3166 code known to CLDR")
        else:
            result.set(i, code, Outcome.PASSED if code == raw.strip() else Outcome.CONVERTED)
    return result


def _gentler(convention: Mapping[str, Any]) -> list[tuple[str, dict[str, Any]]]:
    """Conventions to try, in turn, when ``convention``'s output would read differently."""
    steps = list(GENTLER)
    if convention.get("country_codes"):   # first keep the spelling, give up only the codes
        names = {k: v for k, v in convention.items() if k not in ("country_codes", "countries")}
        steps.insert(0, ("country names are kept, not written as codes", names))
    return steps


def _output_evidence(column: ColumnEvidence, result: Converted) -> ColumnEvidence:
    """The column as a second run meets it: the output text of each row, the same rows."""
    texts = np.asarray(result.text, dtype=object)
    written = (result.outcome != Outcome.UNRESOLVED) & (texts != "")  # "" reads as missing
    index, values = pd.factorize(texts[written])
    new_index = np.full(len(texts) + 1, -1, dtype=np.int64)   # the last slot: rows set aside
    new_index[:-1][written] = index
    counts = np.bincount(new_index[:-1][written], weights=column.counts[written],
                         minlength=len(values)).astype(np.int64)
    codes = new_index[column.codes] if column.codes is not None else None
    return ColumnEvidence(column.name, column.index, np.asarray(values, dtype=object), counts,
                          codes)


def _spelling_table(convention: Mapping[str, Any]) -> dict[str, str]:
    table = dict(convention.get("canonical", {}))
    for target, variants in dict(convention.get("merge", {})).items():
        target_text = normalise(str(target))
        for variant in [target, *variants]:
            table[fold(str(variant))] = target_text
    return table


def _is_free_text(normalised: list[str], counts: list[int]) -> bool:
    lengths = np.fromiter((len(v) for v in normalised), dtype=np.int64, count=len(normalised))
    words = np.fromiter((v.count(" ") + 1 for v in normalised), dtype=np.int64,
                        count=len(normalised))
    weights = np.asarray(counts, dtype=np.int64)
    unique_share = len(set(normalised)) / max(int(weights.sum()), 1)
    median_length = float(np.median(np.repeat(lengths, weights))) if len(lengths) else 0.0
    median_words = float(np.median(np.repeat(words, weights))) if len(words) else 0.0
    return (unique_share >= FREE_UNIQUE_SHARE and median_length >= FREE_MEDIAN_LENGTH
            or unique_share >= 0.5 and median_words >= FREE_MEDIAN_WORDS)


def _multi_forms(keys: list[str], normalised: list[str],
                 counts: list[int]) -> dict[str, Counter[str]]:
    """The forms of each key written in more than one way, with their cell counts."""
    forms: dict[str, Counter[str]] = defaultdict(Counter)
    wanted = _written_apart(keys, normalised)
    if not wanted:
        return forms
    for key, text, count in zip(keys, normalised, counts, strict=True):
        if key in wanted:
            forms[key][text] += count
    return forms


def _written_apart(keys: list[str], texts: list[str]) -> set[str]:
    """Keys that come with more than one text (a plain loop: far quicker than a frame)."""
    first: dict[str, str] = {}
    apart = set()
    for key, text in zip(keys, texts, strict=True):
        if first.setdefault(key, text) != text:
            apart.add(key)
    return apart


def _key_counts(keys: list[str], counts: list[int]) -> dict[str, int]:
    codes, uniques = pd.factorize(np.asarray(keys, dtype=object))
    totals = np.bincount(codes, weights=np.asarray(counts, dtype=np.float64),
                         minlength=len(uniques))
    return dict(zip(uniques.tolist(), totals.astype(np.int64).tolist(), strict=True))


def _prevailing_style(normalised: list[str], counts: list[int]) -> str:
    styles = case_styles(normalised)
    weights = np.asarray(counts, dtype=np.float64)
    tally = {style: float(weights[styles == style].sum()) for style in STYLES}
    tally = {style: total for style, total in tally.items() if total > 0}
    # most cells; ties to the style met first, as a tally in column order would
    first = {style: int(np.argmax(styles == style)) for style in tally}
    return min(tally, key=lambda style: (-tally[style], first[style])) if tally else "none"


STYLES = ("upper", "lower", "title", "mixed")


def _flag(found: pa.Array) -> np.ndarray:
    return np.asarray(pc.fill_null(found, False), dtype=bool)


# An ASCII value's case style in RE2: a word starts after a break (white space, - ' /)
_BREAK = r"[\t-\r\x{1c}-\x{20}\-'/]"
_WORD_CHAR = r"[^\t-\r\x{1c}-\x{20}\-'/]"
_NOT_LOWER = r"[^\t-\r\x{1c}-\x{20}\-'/a-z]"      # within a word: no lower-case letter
_WORD_START = rf"(?:^|{_BREAK})"
_LETTER_WORD = rf"{_WORD_START}[A-Za-z]"
# a word of four or more characters that breaks title case: a lower-case first letter, or
# a letter followed by three or more characters, none lower-case, one upper-case
_UNTITLED = (rf"{_WORD_START}(?:[a-z]{_WORD_CHAR}{{3,}}|[A-Za-z](?:{_NOT_LOWER}{{2,}}[A-Z]"
             rf"{_NOT_LOWER}*|{_NOT_LOWER}[A-Z]{_NOT_LOWER}+|[A-Z]{_NOT_LOWER}{{2,}}))"
             rf"(?:{_BREAK}|$)")


def case_styles(texts: list[str]) -> np.ndarray:
    """``case_style`` of each text (in Arrow when there are many)."""
    if len(texts) < ARROW_FROM:
        return np.asarray([case_style(t) for t in texts], dtype=object)
    return case_styles_in_arrow(texts)


def case_styles_in_arrow(texts: list[str]) -> np.ndarray:
    """ASCII texts' styles by regular expressions in Arrow, the others one at a time."""
    styles = np.full(len(texts), "mixed", dtype=object)
    text = pa.array(texts, type=pa.large_string())
    ascii_text = np.asarray(pc.string_is_ascii(text), dtype=bool)
    for i in np.flatnonzero(~ascii_text).tolist():
        styles[i] = case_style(texts[i])
    at = np.flatnonzero(ascii_text)
    if len(at):
        plain = text.take(pa.array(at))
        title = (_flag(pc.match_substring_regex(plain, _LETTER_WORD))
                 & ~_flag(pc.match_substring_regex(plain, _UNTITLED)))
        styles[at] = np.select(
            [~_flag(pc.match_substring_regex(plain, "[A-Za-z]")),
             _flag(pc.ascii_is_upper(plain)), _flag(pc.ascii_is_lower(plain)), title],
            ["none", "upper", "lower", "title"], "mixed")
    return styles


def _canonical(form_counts: Counter[str], prevailing: str) -> str:
    """Most frequent of the forms no other form rewrites lossily; ties: more diacritics,
    then the prevailing case style."""
    if len(form_counts) == 1:   # most keys are written one way only
        return next(iter(form_counts))
    forms = list(form_counts)
    # forms rewriting each other ('Golden Delicious', 'Golden delicious'): the cased ones
    kept = (_not_derived(forms) or [f for f in forms if not (f.isupper() or f.islower())]
            or forms)
    most = max(form_counts[form] for form in kept)
    tied = [form for form in kept if form_counts[form] == most]
    return min(tied, key=lambda form: (-diacritic_count(form), case_style(form) != prevailing,
                                       form))


ACRONYM_LETTERS = 3   # an all-capitals form this short may be an acronym (IBM, UK), not shouting


def _not_derived(forms: list[str]) -> list[str]:
    """The forms that are not a lossy rewrite of another form of the group."""
    derived: set[str] = set()
    for form in forms:
        derived |= lossy_rewrites(form)
    return [form for form in forms if form not in derived or (
        form.isupper() and sum(map(str.isalpha, form)) <= ACRONYM_LETTERS)]


def lossy_rewrites(form: str) -> set[str]:
    """Spellings that lose what ``form`` says: upper or lower case; title case of a form
    whose case is not already plain ('van der Berg' -> 'Van Der Berg', 'McDonald' ->
    'Mcdonald'); accents dropped ('Müller' -> 'Muller'); apostrophes dropped ('O'Neill' ->
    'ONeill'); and these combined. Common practice, no source."""
    bases = {form, _strip_accents(form)}
    bases |= {_APOSTROPHES.sub("", b) for b in bases}
    found: set[str] = set()
    for base in bases:
        found |= {base, base.upper(), base.lower()}
        if not (base.isupper() or base.islower()):
            found |= {base.title(), " ".join(w.capitalize() for w in base.split(" ")),
                      base.capitalize()}
    found.discard(form)
    return found


_APOSTROPHES = re.compile("(?<=\\w)['\u2019](?=\\w)")


def _strip_accents(text: str) -> str:
    return unicodedata.normalize("NFC", _strip_marks(unicodedata.normalize("NFD", text)))


def _variant_groups(raw: list[str], keys: list[str], counts: list[int],
                    canonical: Mapping[str, str]) -> list[dict[str, Any]]:
    """Groups whose cells are written in more than one way, most cells rewritten first."""
    wanted = _written_apart(keys, list(map(str.strip, raw)))
    by_key: dict[str, dict[str, int]] = defaultdict(dict)
    for value, key, count in zip(raw, keys, counts, strict=True):
        if key in wanted:
            by_key[key][value] = by_key[key].get(value, 0) + count
    groups = []
    for key, variants in by_key.items():
        target = canonical[key]
        changed = sum(c for v, c in variants.items() if v.strip() != target)
        groups.append({"canonical": target, "cells_changed": changed,
                       "variants": dict(sorted(variants.items(), key=lambda kv: -kv[1]))})
    groups.sort(key=lambda g: (-g["cells_changed"], g["canonical"]))
    return groups


def suggest_merges(canonical: Mapping[str, str],
                   key_counts: Mapping[str, int]) -> list[dict[str, Any]]:
    """Near matches between variant groups, the rarer spelling suggested into the commoner.

    Candidates share a one-deletion neighbour (an edit distance of at most two: one typo,
    a doubled or dropped letter, a swap), then must reach ``SIMILARITY`` by difflib's
    ratio. Keys that differ in their digits ("unit12"/"unit13") are never suggested.
    """
    keys = [k for k in canonical if len(k) >= MIN_SUGGEST_LENGTH]
    if len(keys) > MAX_SUGGEST_KEYS:
        return []
    neighbours: dict[str, list[str]] = defaultdict(list)
    for key in keys:
        for variant in {key, *(key[:i] + key[i + 1:] for i in range(len(key)))}:
            neighbours[variant].append(key)
    pairs: set[tuple[str, str]] = set()
    for bucket in neighbours.values():
        if 1 < len(bucket) <= 20:
            pairs.update((a, b) for a in bucket for b in bucket if a < b)
    found = []
    for a, b in pairs:
        if re.sub(r"\D", "", a) != re.sub(r"\D", "", b):
            continue
        major, minor = (a, b) if key_counts[a] >= key_counts[b] else (b, a)
        if key_counts[minor] * 2 > key_counts[major]:
            continue  # two common spellings are more likely two different places
        ratio = SequenceMatcher(None, a, b).ratio()
        if ratio >= SIMILARITY:
            found.append({"canonical": canonical[major], "variants": [canonical[minor]],
                          "similarity": round(ratio, 3),
                          "counts": {canonical[major]: key_counts[major],
                                     canonical[minor]: key_counts[minor]}})
    found.sort(key=lambda s: (-s["similarity"], s["canonical"], s["variants"]))
    return _combine(found)[:MAX_SUGGESTIONS]


def _combine(found: list[dict[str, Any]]) -> list[dict[str, Any]]:
    """One suggestion per target spelling, listing every variant suggested into it."""
    merged: dict[str, dict[str, Any]] = {}
    taken: set[str] = set()
    for item in found:
        minor = item["variants"][0]
        if minor in taken or minor in merged:
            continue
        taken.add(minor)
        entry = merged.setdefault(item["canonical"], {"canonical": item["canonical"],
                                                      "variants": [], "similarity": {},
                                                      "counts": {}})
        entry["variants"].append(minor)
        entry["similarity"][minor] = item["similarity"]
        entry["counts"].update(item["counts"])
    return list(merged.values())


def _confidence(normalised: list[str], counts: list[int]) -> float:
    """Text is the fallback: less sure when the values look like something else."""
    digits = sum(c for v, c in zip(normalised, counts, strict=True)
                 if sum(map(str.isdigit, v)) * 2 > len(v))
    return 0.6 if digits * 2 > sum(counts) else 0.97
