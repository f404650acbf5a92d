"""Invented exports with known truth for the numbers engine.

Scenario (invented): the "Fernhollow Supply Cooperative" merges the monthly price lists
of its branches in several countries. Each branch exports from its own system, usually
in its country's CLDR notation (decimal and group symbols from babel), sometimes in a
foreign one (a branch running an English-language system). Columns: a country column,
unit prices with currency signs, stock values, discounts in percent and volumes with
magnitude words.

The truth of each cell is its exact value (``Decimal``), its currency, and whether the
data can decide it. Whether a written amount decides the decimal mark, is ambiguous, or
reads alike both ways is worked out here from how it was rendered (how many group marks,
how many fraction digits), independently of the engine's parser:

* a cell is *undecidable* when its two readings differ and no value of its country's rows
  decides the mark, unless the deciding values of the other rows all show one notation and
  the country's CLDR notation agrees with it (a branch exporting in a foreign notation
  with nothing but such values is then read wrongly: the data cannot tell).
"""

from __future__ import annotations

import random
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from decimal import Decimal
from typing import Any

import numpy as np
import pandas as pd
from babel import numbers as babel_numbers

from harmonize.context import Context
from harmonize.engines.base import Decision, Outcome
from harmonize.evidence import TableEvidence

# Branch countries: the name written in the country column, CLDR locale, currency,
# whether the sign goes before the amount, and the sign written.
BRANCHES: dict[str, tuple[str, str, bool, str]] = {
    "Germany": ("de_DE", "EUR", False, "€"),
    "France": ("fr_FR", "EUR", False, "€"),
    "Spain": ("es_ES", "EUR", False, "€"),
    "Switzerland": ("de_CH", "CHF", True, "CHF"),
    "India": ("en_IN", "INR", True, "₹"),
    "United States": ("en_US", "USD", True, "$"),
    "Canada": ("en_CA", "CAD", True, "$"),
    "United Kingdom": ("en_GB", "GBP", True, "£"),
    "Sweden": ("sv_SE", "SEK", False, "kr"),
    "Brazil": ("pt_BR", "BRL", True, "R$"),
}


@dataclass(frozen=True)
class Notation:
    decimal: str
    group: str
    lakh: bool = False
    grouping: bool = True   # some systems export without group marks

    @classmethod
    def of_locale(cls, locale: str) -> Notation:
        return cls(babel_numbers.get_decimal_symbol(locale),
                   babel_numbers.get_group_symbol(locale), lakh=locale == "en_IN")


@dataclass(frozen=True)
class Rendered:
    text: str
    value: Decimal
    kind: str   # "decides", "ambiguous" or "same"
    mark: str   # the mark an ambiguous value holds: its decimal mark or its group mark
    has_fraction: bool = False


def _group_int(digits: str, notation: Notation) -> tuple[str, int]:
    """Digits of the integer part grouped; also how many group marks were written."""
    if not notation.grouping or len(digits) <= 3:
        return digits, 0
    head, tail = digits[:-3], digits[-3:]
    size = 2 if notation.lakh else 3
    groups = []
    while len(head) > size:
        groups.insert(0, head[-size:])
        head = head[:-size]
    groups.insert(0, head)
    return notation.group.join([*groups, tail]), len(groups)


def render(value: Decimal, places: int, notation: Notation) -> Rendered:
    """Write a non-negative amount with ``places`` fraction digits in a notation."""
    quantized = value.quantize(Decimal(1).scaleb(-places)) if places else value.quantize(1)
    int_digits, _, frac = f"{quantized:f}".partition(".")
    grouped, n_groups = _group_int(int_digits, notation)
    text = grouped + (notation.decimal + frac if frac else "")
    mark = notation.decimal if frac else notation.group
    return Rendered(text, quantized, _kind(int_digits, frac, n_groups, notation), mark,
                    bool(frac))


def _kind(int_digits: str, frac: str, n_groups: int, notation: Notation) -> str:
    """Does the written form decide the decimal mark, read two ways, or read alike?"""
    swappable = notation.group in ".,"
    if n_groups and frac:
        return "decides"          # both marks present
    if n_groups:
        if not swappable:
            return "same"         # spaces and apostrophes only group
        return "decides" if n_groups >= 2 else "ambiguous"
    if not frac:
        return "same"
    # only a decimal mark: a group reading needs 1-3 leading digits (no leading 0) and 3 after
    could_group = len(frac) == 3 and 1 <= len(int_digits) <= 3 and int_digits[0] != "0"
    return "ambiguous" if could_group else "decides"


@dataclass
class CellTruth:
    value: Decimal
    currency: str | None
    undecidable: bool


@dataclass
class CorpusTable:
    frame: pd.DataFrame
    truth: dict[str, list[CellTruth]] = field(default_factory=dict)


def _amount(rng: random.Random, scale: str) -> tuple[Decimal, int]:
    if scale == "price":
        return Decimal(rng.randint(50, 500_000)).scaleb(-2), 2
    if scale == "stock":
        places = rng.choice([0, 0, 2, 3])
        return Decimal(rng.randint(1, 9_000_000_000)).scaleb(-3), places
    if scale == "round":
        return Decimal(rng.randint(1, 999) * rng.choice([1, 10, 100, 1000])), 0
    return Decimal(rng.randint(0, 5000)).scaleb(-2), rng.choice([1, 2])  # percent


def _notations(rng: random.Random, countries: Sequence[str]) -> dict[str, Notation]:
    out = {}
    for country in countries:
        notation = Notation.of_locale(BRANCHES[country][0])
        if rng.random() < 0.12:   # a branch exporting from a foreign-language system
            notation = Notation(".", ",") if notation.decimal == "," else Notation(",", ".")
        if rng.random() < 0.1:
            notation = Notation(notation.decimal, notation.group, notation.lakh, grouping=False)
        out[country] = notation
    return out


# Magnitude words a branch writes in volumes: (word, power of ten)
MAGNITUDE_WORDS = {"de_DE": ("Mio", 6), "fr_FR": ("M", 6), "en_IN": ("lakh", 5),
                   "en_US": ("k", 3), "en_GB": ("k", 3), "es_ES": ("M", 6)}


def _decorate(text: str, country: str, column: str, negative: bool, use_code: bool) -> str:
    locale, code, before, sign = BRANCHES[country]
    if column == "Discount":
        return text + ("\u00a0%" if locale in ("fr_FR", "de_DE", "sv_SE") else "%")
    if column == "Unit price":
        sign = code if use_code else sign
        text = f"{sign}{text}" if before and len(sign) == 1 else (
            f"{sign} {text}" if before else f"{text} {sign}")
    if negative:
        if country in ("United States", "Canada"):
            return f"({text})"                     # accounting style
        return f"{text}-" if locale == "de_DE" else f"\u2212{text}" if locale == "sv_SE" \
            else f"-{text}"
    return text


def _cell(rng: random.Random, column: str, scale: str, country: str,
          notation: Notation, use_code: bool) -> tuple[Rendered, Decimal, str]:
    """One cell: its rendering, its true value and the text written."""
    locale = BRANCHES[country][0]
    if column == "Order volume" and locale in MAGNITUDE_WORDS and rng.random() < 0.2:
        word, power = MAGNITUDE_WORDS[locale]
        base = render(Decimal(rng.randint(11, 99)).scaleb(-1), 1, notation)
        return base, base.value.scaleb(power), f"{base.text} {word}"
    value, places = _amount(rng, scale)
    rendered = render(value, places, notation)
    negative = column == "Stock value" and rng.random() < 0.05
    text = _decorate(rendered.text, country, column, negative, use_code)
    return rendered, -rendered.value if negative else rendered.value, text


def make_table(seed: int, rows: int = 400) -> CorpusTable:
    """One merged price list with known truth per cell."""
    rng = random.Random(seed)
    countries = rng.sample(sorted(BRANCHES), rng.randint(1, 4))
    country_of_row = [rng.choice(countries) for _ in range(rows)]
    if rng.random() < 0.3:   # branch codes instead of country names: "DE-03"
        codes = {c: f"{BRANCHES[c][0][-2:]}-{rng.randint(1, 9):02d}" for c in countries}
        frame = pd.DataFrame({"Branch": [codes[c] for c in country_of_row]})
    else:
        frame = pd.DataFrame({"Country": country_of_row})
    table = CorpusTable(frame)
    use_code = rng.random() < 0.2
    for column, scale in (("Unit price", "price"), ("Stock value", "stock"),
                          ("Order volume", "round"), ("Discount", "percent")):
        notations = _notations(rng, countries)
        cells = []
        for country in country_of_row:
            rendered, value, text = _cell(rng, column, scale, country, notations[country],
                                          use_code)
            cells.append((country, rendered, value, text))
        frame[column] = [c[3] for c in cells]
        table.truth[column] = _truth(column, cells, notations)
    return table


def _truth(column: str, cells: list[tuple[str, Rendered, Decimal, str]],
           notations: Mapping[str, Notation]) -> list[CellTruth]:
    decided_countries = {c for c, r, _, _ in cells if r.kind == "decides"}
    families = {notations[c].decimal for c in decided_countries}
    out = []
    for country, rendered, value, _ in cells:
        currency = BRANCHES[country][1] if column == "Unit price" else None
        out.append(CellTruth(value, currency, rendered.kind == "ambiguous" and not _decided(
            country, rendered, cells, notations, decided_countries, families)))
    return out


def _decided(country: str, rendered: Rendered, cells: list[tuple[str, Rendered, Decimal, str]],
             notations: Mapping[str, Notation], decided_countries: set[str],
             families: set[str]) -> bool:
    """Can the data decide an ambiguous cell?

    With several notations among the deciding values, only the country's own rows can
    (the rows split by country). With one, the other rows can too, when the country's
    CLDR notation agrees and the value's mark is read as a group mark. Either way a
    reading that takes the value's mark as the decimal mark needs a deciding value that
    shows that mark as a decimal mark.
    """
    if len(families) >= 2:
        if country not in decided_countries:
            return False
        family, scope = notations[country].decimal, {country}
    elif len(families) == 1:
        family = next(iter(families))
        cldr = babel_numbers.get_decimal_symbol(BRANCHES[country][0])
        if country not in decided_countries and (cldr != family or rendered.mark == family):
            return False   # other rows vouch for a group mark only, and only if CLDR agrees
        scope = {c for c, _, _, _ in cells}
    else:
        return False
    if rendered.mark != family:
        return True   # read as a group mark: three digits follow, as in any group
    return any(r.kind == "decides" and c in scope and notations[c].decimal == family
               and r.has_fraction for c, r, _, _ in cells)


# --------------------------------------------------------------- applying a decision


@dataclass
class Applied:
    decision: Decision
    text: list[str]
    outcome: np.ndarray
    extra: dict[str, list[str]]


def apply_engine(engine: Any, frame: pd.DataFrame, column: str) -> Applied | None:
    """Decide one column and convert it as the core does: per group, distinct values."""
    table = TableEvidence.from_frame(frame)
    context = Context(table)
    evidence = table.column(column)
    decision = engine.propose(evidence, context)
    if decision is None:
        return None
    codes = evidence.codes
    n = len(codes)
    if decision.groups is not None:
        split = context.split(decision.groups.by)
        labels = split.codes
        conventions = [decision.groups.convention_for(decision.convention, lab)
                       for lab in split.labels]
    else:
        labels, conventions = np.full(n, -1), []
    text, outcome, extra = [""] * n, np.zeros(n, np.int8), {}
    for g in range(-1, len(conventions)):
        rows = np.flatnonzero(labels == g)
        if not len(rows):
            continue
        wanted = np.unique(codes[rows])
        convention = conventions[g] if g >= 0 else decision.convention
        result = engine.convert(evidence.values[wanted].tolist(), convention)
        where = {int(v): i for i, v in enumerate(wanted)}
        for row in rows.tolist():
            i = where[int(codes[row])]
            text[row], outcome[row] = result.text[i], result.outcome[i]
            for suffix, values in result.extra.items():
                extra.setdefault(suffix, [""] * n)[row] = values[i]
    return Applied(decision, text, outcome, extra)


@dataclass
class Score:
    cells: int = 0
    wrong_unlisted: int = 0
    decidable: int = 0
    decidable_correct: int = 0
    decidable_listed: int = 0
    undecidable: int = 0
    undecidable_listed: int = 0

    def add(self, other: Score) -> None:
        for name in self.__dataclass_fields__:
            setattr(self, name, getattr(self, name) + getattr(other, name))

    def rates(self) -> dict[str, float]:
        return {"wrong_unlisted": self.wrong_unlisted / max(self.cells, 1),
                "decidable_correct": self.decidable_correct / max(self.decidable, 1),
                "decidable_listed": self.decidable_listed / max(self.decidable, 1),
                "undecidable_listed": self.undecidable_listed / max(self.undecidable, 1)}


def score(applied: Applied, truth: Sequence[CellTruth]) -> Score:
    """Compare each row's output with the truth."""
    result = Score()
    currencies = applied.extra.get("currency")
    unit = applied.decision.unit
    for row, cell in enumerate(truth):
        result.cells += 1
        listed = applied.outcome[row] == Outcome.UNRESOLVED
        correct = applied.outcome[row] == Outcome.CONVERTED and _same(
            applied.text[row], cell.value) and _same_currency(
            cell.currency, currencies[row] if currencies else unit)
        if applied.outcome[row] == Outcome.CONVERTED and not correct:
            result.wrong_unlisted += 1
        if cell.undecidable:
            result.undecidable += 1
            result.undecidable_listed += int(listed)
        else:
            result.decidable += 1
            result.decidable_correct += int(correct)
            result.decidable_listed += int(listed)
    return result


def _same(text: str, value: Decimal) -> bool:
    try:
        return Decimal(text) == value
    except ArithmeticError:
        return False


def _same_currency(expected: str | None, got: str | None) -> bool:
    return expected is None or got == expected


def measure(seeds: range, rows: int = 400) -> Score:
    """Score the numbers engine on generated tables (``python -m tests.corpora.numbers``)."""
    from harmonize.engines.numbers import NumberEngine

    engine, total = NumberEngine(), Score()
    for seed in seeds:
        table = make_table(seed, rows)
        for column, truth in table.truth.items():
            applied = apply_engine(engine, table.frame, column)
            if applied is not None:
                total.add(score(applied, truth))
    return total


if __name__ == "__main__":
    import sys

    first = int(sys.argv[1]) if len(sys.argv) > 1 else 1000
    result = measure(range(first, first + 100))
    print(result)
    print({k: round(v, 5) for k, v in result.rates().items()})
