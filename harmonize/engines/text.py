"""Text: the fallback engine. Consistent spelling for categories, free text left alone.

Every value is cleaned: Unicode normalisation form C (UAX #15), zero-width characters
removed, every kind of space (U+00A0, U+202F, tabs ...) made a plain space, runs of spaces
collapsed, ends trimmed. Values that are equal once case, spacing, accents and punctuation
are folded away ("Saint-Étienne", "saint etienne", "SAINT-ETIENNE") form a *variant group*
and are all written as one canonical spelling: the group's most frequent form, ties going
to the form with diacritics, then to the column's prevailing case style.

Free text (long, mostly unique values such as notes) is only trimmed.

Convention keys (a person may edit them in a plan file):

``mode``           ``"categories"`` (clean and spell consistently) or ``"free"`` (trim only).
``canonical``      folded key -> spelling, e.g. ``{"saintetienne": "Saint-Étienne"}``. A value
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

Report details: ``variant_groups`` (up to 100 groups, each {"canonical", "cells_changed",
"variants": {raw: count}}, with ``variant_groups_total`` and a note when capped),
``suggested_merges`` (near matches, never applied), ``country_column`` and ``territories``
when the values name countries.

The folded key of a value: case folded, compatibility-decomposed, accents dropped, spaces
and punctuation between letters or digits dropped, a trailing full stop dropped
("Saint-Étienne" -> "saintetienne", "U.K." -> "uk"); symbols stay ("C++", "A-").
"""

from __future__ import annotations

import re
import unicodedata
from collections import Counter, defaultdict
from collections.abc import Iterable, Mapping, Sequence
from difflib import SequenceMatcher
from typing import Any, ClassVar

import numpy as np
import pandas as pd

from harmonize.context import COUNTRY_SHARE, Context
from harmonize.engines.base import Converted, Decision, Outcome
from harmonize.evidence import ColumnEvidence
from harmonize.territory import territory_of

# Zero-width and other invisible format characters that only hide differences.
INVISIBLE = re.compile("[\u200b\u200c\u200d\u2060\ufeff\u00ad\u180e]")
SPACES = re.compile(r"\s+")             # str patterns: every Unicode white space (U+00A0 ...)
COMBINING = re.compile("[\u0300-\u036f\u1ab0-\u1aff\u1dc0-\u1dff\u20d0-\u20ff\ufe20-\ufe2f]")
# Spaces and punctuation (not symbols such as + # & %) between two letters or digits
_SEPARATOR = "[\\s\\-\u2010-\u2015.,;:·'\u2018\u2019`´\"\u201c\u201d/\\\\_()\\[\\]{}!?¡¿…]"
INNER_SEPARATORS = re.compile(rf"(?<=[^\W_]){_SEPARATOR}+(?=[^\W_])")
TRAILING_STOPS = re.compile(r"[.\s]+$")

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


def normalise_many(values: Iterable[str]) -> list[str]:
    """NFC, invisible characters removed, white space collapsed and trimmed (vectorised)."""
    series = pd.Series(list(values), dtype=object)
    if series.empty:
        return []
    cleaned = (series.str.normalize("NFC").str.replace(INVISIBLE, "", regex=True)
               .str.replace(SPACES, " ", regex=True).str.strip())
    return cleaned.tolist()


def fold_many(values: Iterable[str]) -> list[str]:
    """Folded keys: case, accents, and the spaces and punctuation *between* letters or
    digits away, and a trailing full stop: 'Côte-d’Or' -> 'cotedor', 'U.K.' -> 'uk'.

    Symbols and outer punctuation stay, so that 'C++', 'C#' and 'C', or the grades 'A-',
    'A' and 'A+', remain different values. A value that folds to nothing keys as itself.
    """
    series = pd.Series(list(values), dtype=object)
    if series.empty:
        return []
    # dotless ı upper-cases to I, which folds to i: fold ı to i too (Turkish names)
    folded = (series.str.casefold().str.replace("ı", "i", regex=False).str.normalize("NFKD")
              .str.replace(COMBINING, "", regex=True)
              .str.replace(INNER_SEPARATORS, "", regex=True)
              .str.replace(TRAILING_STOPS, "", regex=True)).tolist()
    # marks outside the common combining blocks, if any, go one value at a time
    keys = [k if k.isascii() else _strip_marks(k) for k in folded]
    return [k or v for k, v in zip(keys, series.tolist(), strict=True)]  # "...": itself


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
    letters = [ch for ch in text if ch.isalpha()]
    if not any(ch.isupper() or ch.islower() for ch in letters):
        return "none"
    if text.isupper():
        return "upper"
    if text.islower():
        return "lower"
    words = [w for w in re.split(r"[\s\-'’/]+", text) if w and w[0].isalpha()]
    if words and all(w[0].isupper() and not w[1:].isupper() for w in words if len(w) > 3):
        return "title"
    return "mixed"


class TextEngine:
    name: ClassVar[str] = "text"

    def propose(self, column: ColumnEvidence, context: Context) -> Decision | None:
        raw = column.values.tolist()
        counts = column.counts.tolist()
        options = context.options.for_engine(self.name)
        if not raw:
            return Decision(kind="text", engine=self.name, fit=1.0, confidence=0.5,
                            convention={"mode": "categories", "canonical": {}, "merge": {}})
        normalised = normalise_many(raw)
        if _is_free_text(normalised, counts):
            return self._free(column, normalised, counts)
        keys = fold_many(normalised)
        forms = _forms_by_key(keys, normalised, counts)
        prevailing = _prevailing_style(normalised, counts)
        canonical = {key: _canonical(form_counts, prevailing) for key, form_counts in forms.items()}
        multi = {k for k, f in forms.items() if len(f) > 1}
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
        key_counts = {k: sum(f.values()) for k, f in forms.items()}
        suggestions = suggest_merges(canonical, key_counts)
        details["suggested_merges"] = suggestions
        evidence = [f"{len(canonical)} distinct spellings once case, spacing, accents and "
                    "punctuation are folded"]
        if groups:
            changed = sum(g["cells_changed"] for g in groups)
            evidence.append(f"{len(groups)} variant groups; {changed} cells rewritten to their "
                            "group's canonical spelling")
        if suggestions:
            evidence.append(f"{len(suggestions)} near matches suggested for merging (not applied)")
        self._countries(raw, keys, counts, options, convention, details, evidence)
        return Decision(kind="text", engine=self.name, fit=1.0,
                        confidence=_confidence(normalised, counts), convention=convention,
                        evidence=tuple(evidence), details=details)

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
            evidence.append("country names are written as ISO 3166-1 alpha-2 codes")

    def convert(self, values: Sequence[str], convention: Mapping[str, Any]) -> Converted:
        result = Converted.empty(len(values))
        if convention.get("mode") == "free":
            for i, raw in enumerate(values):
                result.set(i, raw.strip(), Outcome.PASSED)
            return result
        normalised = normalise_many(values)
        keys = fold_many(normalised)
        spelling = _spelling_table(convention)
        countries = convention.get("countries", {}) if convention.get("country_codes") else None
        for i, (raw, text, key) in enumerate(zip(values, normalised, keys, strict=True)):
            if countries is not None:
                code = countries.get(key) or territory_of(text)
                if code is None:
                    result.unresolved(i, "not a country name or ISO 3166 code known to CLDR")
                    continue
                out = code
            else:
                out = spelling.get(key, text)
            result.set(i, out, Outcome.PASSED if out == raw.strip() else Outcome.CONVERTED)
        return result


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


def _forms_by_key(keys: list[str], normalised: list[str],
                  counts: list[int]) -> dict[str, Counter[str]]:
    forms: dict[str, Counter[str]] = defaultdict(Counter)
    for key, text, count in zip(keys, normalised, counts, strict=True):
        forms[key][text] += count
    return forms


def _prevailing_style(normalised: list[str], counts: list[int]) -> str:
    styles: Counter[str] = Counter()
    for text, count in zip(normalised, counts, strict=True):
        style = case_style(text)
        if style != "none":
            styles[style] += count
    return styles.most_common(1)[0][0] if styles else "none"


def _canonical(form_counts: Counter[str], prevailing: str) -> str:
    """Most frequent form; ties: more diacritics, then the prevailing case style."""
    return min(form_counts, key=lambda form: (-form_counts[form], -diacritic_count(form),
                                              case_style(form) != prevailing, form))


def _variant_groups(raw: list[str], keys: list[str], counts: list[int],
                    canonical: Mapping[str, str]) -> list[dict[str, Any]]:
    """Groups whose cells are written in more than one way, most cells rewritten first."""
    by_key: dict[str, dict[str, int]] = defaultdict(dict)
    for value, key, count in zip(raw, keys, counts, strict=True):
        by_key[key][value] = by_key[key].get(value, 0) + count
    groups = []
    for key, variants in by_key.items():
        if len({v.strip() for v in variants}) < 2:
            continue
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
                 if sum(ch.isdigit() for ch in v) * 2 > len(v))
    return 0.6 if digits * 2 > sum(counts) else 0.97
