"""Magnitude words whose power of ten depends on the writer's language.

"5 bn" is five thousand million to an English writer and five million million to a
Swedish or French one (CLDR compact decimal formats: ``locales/magnitude_languages.txt``).
Such a value is read only where something names the language: the column itself (it writes
10^9 with "Md", so its "bn" is the next power, 10^12), the rows' country (a country
column, per group), one country named on every row or in the file name, or the run
options (``locale``, ``default_region``). Elsewhere it is listed with both readings.

Convention key ``magnitude_words``: word -> power of ten decided for the column (or for
a group of rows), e.g. ``{"bn": 12}``; a word absent from it is listed.
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from functools import cache
from typing import Any

import numpy as np
from babel import Locale

from harmonize.context import Context
from harmonize.engines.numbers_forms import Forms, magnitude_key, magnitudes
from harmonize.evidence import ColumnEvidence

KEY = "magnitude_words"
FROM_COLUMN = 0.95    # the column's own words leave one power free
FROM_COUNTRY = 0.9    # a country names a language; branches also write in English


def language_words(forms: Forms) -> np.ndarray:
    """Per value: the key of its language-dependent magnitude word ("" when none)."""
    keys = np.full(len(forms), "", dtype=object)
    table = magnitudes().by_language
    words = forms.magnitude
    held = np.flatnonzero(words != "")
    for i in held.tolist():
        key = magnitude_key(str(words[i]))
        if key in table:
            keys[i] = key
    return keys


def powers_of(key: str) -> list[int]:
    """The powers a language-dependent word takes, smallest first."""
    return sorted(set(magnitudes().by_language.get(key, {}).values()))


def language_shift(forms: Forms, convention: Mapping[str, Any]
                   ) -> tuple[np.ndarray, np.ndarray]:
    """(shift, open): each value's power of ten with the convention's readings of
    language-dependent words added, and which values hold a word it does not read."""
    keys = language_words(forms)
    held = keys != ""
    if not held.any():
        return forms.shift, held
    decided = convention.get(KEY) or {}
    shift = forms.shift.copy()
    open_ = np.zeros(len(forms), dtype=bool)
    for i in np.flatnonzero(held).tolist():
        power = decided.get(keys[i])
        if power is None:
            open_[i] = True
        else:
            shift[i] += int(power)
    return shift, open_


def open_reason(raw: str, key: str) -> str:
    readings = magnitudes().by_language.get(key, {})
    by_power: dict[int, list[str]] = {}
    for lang, power in readings.items():
        by_power.setdefault(power, []).append(lang)
    said = "; ".join(f"10^{p} in {', '.join(langs[:6])}" for p, langs in sorted(by_power.items()))
    return (f"{raw!r}: {key!r} means {said} (CLDR) and nothing names the writer's language "
            "(a country column, a country in the file name, or the column's other magnitude "
            "words would decide)")


@cache
def territory_language(territory: str) -> str | None:
    """The likely language of a territory (CLDR likely subtags via babel)."""
    try:
        return Locale.parse(f"und_{territory}").language
    except Exception:   # babel raises several types for codes it does not know
        return None


def _locale_language(locale: str | None) -> str | None:
    if not locale:
        return None
    try:
        return Locale.parse(locale).language
    except Exception:
        return None


@dataclass
class MagnitudeDecision:
    readings: dict[str, int] = field(default_factory=dict)
    per_label: dict[str, dict[str, int]] = field(default_factory=dict)
    split_column: str | None = None
    confidence: float = 1.0
    evidence: list[str] = field(default_factory=list)


def _by_column(words: list[str], partners: set[int]) -> dict[str, int]:
    """Words whose readings leave one power that no other word of the column writes."""
    found = {}
    for key in words:
        free = [p for p in powers_of(key) if p not in partners]
        if len(free) == 1 and len(powers_of(key)) > 1:
            found[key] = free[0]
    return found


def _reading(key: str, language: str | None) -> int | None:
    return magnitudes().by_language.get(key, {}).get(language or "")


def decide_magnitude_words(column: ColumnEvidence, forms: Forms, context: Context,
                           single_territory: Callable[[], str | None]) -> MagnitudeDecision:
    """How the column's language-dependent words are read (see the module docstring).
    ``single_territory`` finds the one country the table names, when it is needed."""
    keys = language_words(forms)
    used = forms.is_number & (keys != "")
    decision = MagnitudeDecision()
    if not used.any():
        return decision
    words = sorted(set(keys[used].tolist()))
    table = magnitudes().exponents
    partners = {table[magnitude_key(str(w))] for w in forms.magnitude[forms.is_number].tolist()
                if w and magnitude_key(str(w)) in table}
    for key, power in _by_column(words, partners).items():
        decision.readings[key] = power
        decision.confidence = min(decision.confidence, FROM_COLUMN)
        decision.evidence.append(f"{key!r} is read as 10^{power}: the column writes the other "
                                 "powers it may stand for with other words")
    rest = [w for w in words if w not in decision.readings]
    if rest:
        _by_language(column, forms, context, keys, rest, single_territory, decision)
    return decision


def _by_language(column: ColumnEvidence, forms: Forms, context: Context, keys: np.ndarray,
                 rest: list[str], single_territory: Callable[[], str | None],
                 decision: MagnitudeDecision) -> None:
    split = context.country_split
    if split is not None and column.codes is not None and split.n_groups > 1:
        _per_country(column, context, keys, rest, decision)
        return
    options = context.options
    territory = single_territory()
    for source, language in (
            ("the country the data names", territory and territory_language(territory)),
            ("the run's locale", _locale_language(options.locale)),
            ("the run's default region", options.default_region and
             territory_language(options.default_region.upper()))):
        if not language:
            continue
        for key in rest:
            power = _reading(key, language)
            if power is not None:
                decision.readings[key] = power
                decision.confidence = min(decision.confidence, FROM_COUNTRY)
                decision.evidence.append(f"{key!r} is read as 10^{power}, as CLDR gives it "
                                         f"in {language} ({source})")
        break
    _say_listed(rest, decision)


def _per_country(column: ColumnEvidence, context: Context, keys: np.ndarray,
                 rest: list[str], decision: MagnitudeDecision) -> None:
    split = context.country_split
    assert split is not None and column.codes is not None
    said: list[str] = []
    present = column.codes >= 0
    for code, (label, territory) in enumerate(zip(split.labels, split.territories,
                                                  strict=True)):
        rows = present & (split.codes == code)
        held = np.unique(keys[column.codes[rows]]).tolist()
        language = territory_language(territory) if territory else None
        for key in sorted(set(held) & set(rest)):
            power = _reading(key, language)
            if power is not None:
                decision.per_label.setdefault(label, {})[key] = power
                said.append(f"{label} {key!r} 10^{power}")
    if decision.per_label:
        decision.split_column = split.column
        decision.confidence = min(decision.confidence, FROM_COUNTRY)
        decision.evidence.append(f"magnitude words read per {split.column!r} as CLDR gives "
                                 f"them in each country's language: {', '.join(said[:6])}")
    _say_listed(rest, decision, per_label=True)


def _say_listed(rest: list[str], decision: MagnitudeDecision, per_label: bool = False) -> None:
    open_ = [k for k in rest if k not in decision.readings and not (
        per_label and any(k in m for m in decision.per_label.values()))]
    for key in open_:
        powers = " or ".join(f"10^{p}" for p in powers_of(key))
        decision.evidence.append(f"{key!r} means {powers} depending on the writer's language "
                                 "(CLDR) and nothing here names it: values with it are listed")
