"""Invented logistics sheets with known truth for the units engine.

Scenario (invented): "Brackenmoor Provisions", a wholesaler with depots in several
countries, merges its depots' monthly logistics sheets. Each depot writes numbers in its
country's CLDR notation (decimal mark from babel) and units in its own habits: kilograms
and "Kilo" in Germany, pounds and ounces in the United States, feet and inches beside
centimetres, Fahrenheit beside Celsius, US gallons in the United States and imperial
gallons in the United Kingdom. Some cells are wrong or undecidable on purpose: a length in
a weight column, "ton" (short, long or metric?), gallons from the Canadian depot (US or
imperial?), and bare numbers in a column of several units whose header names none.

The truth of each cell is its exact value in the column's SI unit (``Fraction``), worked
out here from the value drawn and the factors of NIST SP 811 App. B (checkvalues.md A1),
not from the engine's tables; None marks a cell that the data cannot decide.
"""

from __future__ import annotations

import random
import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from decimal import Context as DecimalContext
from decimal import Decimal
from fractions import Fraction
from typing import Any

import pandas as pd
from babel import numbers as babel_numbers

from harmonize.context import Context
from harmonize.engines.base import Outcome
from harmonize.evidence import TableEvidence

D = Decimal
# Exact factors to SI (NIST SP 811 App. B / HB 44 App. C; checkvalues.md U1-U14, U24-U25).
LB, OZ, IN, FT = D("0.45359237"), D("0.028349523125"), D("0.0254"), D("0.3048")
GAL_US, GAL_IMP = D("0.003785411784"), D("0.00454609")

DEPOTS = {"Germany": "de_DE", "United States": "en_US", "United Kingdom": "en_GB",
          "France": "fr_FR", "Canada": "en_CA"}


@dataclass
class Cell:
    text: str
    si: Fraction | None      # None: the data cannot decide this cell
    number: str | None = None   # the number part as rendered


@dataclass
class Sheet:
    frame: pd.DataFrame
    truth: dict[str, list[Fraction | None]] = field(default_factory=dict)


def _mark(depot: str) -> str:
    return babel_numbers.get_decimal_symbol(DEPOTS[depot])


def _render(value: Decimal, decimals: int, depot: str, rng: random.Random) -> str:
    """The number in the depot's notation, sometimes with group marks."""
    text = f"{value:.{decimals}f}"
    whole, _, frac = text.partition(".")
    mark = _mark(depot)
    group = {".": ",", ",": "."}[mark] if rng.random() < 0.5 else ""
    if group and len(whole.lstrip("-")) > 3:
        digits = whole.lstrip("-")
        chunks = [digits[max(0, i - 3):i] for i in range(len(digits), 0, -3)][::-1]
        whole = ("-" if whole.startswith("-") else "") + group.join(chunks)
    return whole + (mark + frac if frac else "")


def _amount(rng: random.Random, low: float, high: float, decimals: int) -> Decimal:
    return D(str(round(rng.uniform(low, high), decimals))).quantize(D(1).scaleb(-decimals))


def _weight(depot: str, rng: random.Random) -> Cell:
    r = rng.random()
    if r < 0.004:
        return Cell(f"{rng.randint(2, 9)} m", None)                  # wrong dimension
    if r < 0.008:
        return Cell(f"{rng.randint(1, 9)} ton", None)                # short, long or metric
    if r < 0.012:
        return Cell(str(rng.randint(20, 90)), None)                  # bare, several units
    decimals = rng.choice([1, 1, 2, 2, 3])
    if depot == "United States":
        unit, factor = rng.choice([("lb", LB), ("lbs", LB), ("pounds", LB), ("oz", OZ)])
        value = _amount(rng, 1, 900 if unit != "oz" else 60, decimals)
    else:
        unit, factor = rng.choice([("kg", D(1)), ("Kilo", D(1)), ("kg", D(1)),
                                   ("g", D("0.001"))] if depot == "Germany" else
                                  [("kg", D(1)), ("kgs", D(1)), ("g", D("0.001"))])
        value = _amount(rng, 1, 400 if unit != "g" else 2000, decimals)
    space = rng.choice([" ", " ", ""])
    number = _render(value, decimals, depot, rng)
    return Cell(number + space + unit, Fraction(value * factor), number)


def _length(depot: str, rng: random.Random) -> Cell:
    r = rng.random()
    if r < 0.004:
        return Cell(f"{rng.randint(2, 9)} kg", None)
    if depot in ("United States", "Canada") and r < 0.5:
        feet, inches = rng.randint(1, 8), rng.randint(0, 11)
        form = rng.choice(["{f}' {i}\"", "{f}'{i}\"", "{f} ft {i} in", "{f}'{i}"])
        return Cell(form.format(f=feet, i=inches), Fraction(feet * FT + inches * IN))
    decimals = rng.choice([0, 1, 1, 2])
    unit, factor = rng.choice([("cm", D("0.01")), ("m", D(1)), ("mm", D("0.001"))])
    value = _amount(rng, 1, 250 if unit == "cm" else (9 if unit == "m" else 2500), decimals)
    number = _render(value, decimals, depot, rng)
    return Cell(number + " " + unit, Fraction(value * factor), number)


def _temperature(depot: str, rng: random.Random) -> Cell:
    decimals = rng.choice([0, 1, 1])
    if depot == "United States":
        value = _amount(rng, -10, 45, decimals)
        unit = rng.choice(["°F", "°F", "F", "degF"])
        number = _render(value, decimals, depot, rng)
        return Cell(number + " " + unit, (Fraction(value) - 32) / Fraction(9, 5),  # NIST B.9
                    number)
    value = _amount(rng, -25, 8, decimals)
    unit = rng.choice(["°C", "°C", "C", "℃"])
    number = _render(value, decimals, depot, rng)
    return Cell(number + rng.choice([" ", ""]) + unit, Fraction(value), number)


def _volume(depot: str, rng: random.Random) -> Cell:
    decimals = rng.choice([0, 1, 2])
    if depot in ("United States", "United Kingdom", "Canada") and rng.random() < 0.6:
        value = _amount(rng, 1, 60, decimals)
        unit = rng.choice(["gal", "gallons"])
        factor = {"United States": GAL_US, "United Kingdom": GAL_IMP}.get(depot)
        si = Fraction(value * factor) if factor else None  # Canada: US or imperial?
        number = _render(value, decimals, depot, rng)
        return Cell(number + " " + unit, si, number)
    unit, factor = rng.choice([("L", D("0.001")), ("l", D("0.001")), ("ml", D("0.000001")),
                               ("litres", D("0.001"))])
    value = _amount(rng, 1, 200 if unit != "ml" else 900, decimals)
    number = _render(value, decimals, depot, rng)
    return Cell(number + " " + unit, Fraction(value * factor), number)


COLUMNS = {"Gross weight": _weight, "Length": _length, "Temperature": _temperature,
           "Volume": _volume}


AMBIGUOUS_NUMBER = re.compile(r"-?[1-9]\d{0,2}[.,]\d{3}")


def _ambiguous(cell: Cell) -> bool:
    """A number both notations read, differently ("1.250", "2,500"): worked out from the
    grouping rules (a group mark follows 1-3 leading digits and precedes 3 digits)."""
    return cell.number is not None and bool(AMBIGUOUS_NUMBER.fullmatch(cell.number))


def _deciding(cell: Cell) -> bool:
    """A number only one notation reads: a mark that is not ambiguous."""
    return cell.number is not None and not _ambiguous(cell) and (
        "," in cell.number or "." in cell.number)


def make_sheet(seed: int, rows: int = 1500) -> Sheet:
    rng = random.Random(seed)
    depots = [rng.choice(list(DEPOTS)) for _ in range(rows)]
    data: dict[str, list[str]] = {"Depot": depots}
    sheet = Sheet(pd.DataFrame())
    for name, make in COLUMNS.items():
        cells = [make(depot, rng) for depot in depots]
        data[name] = [c.text for c in cells]
        decided_depots = {d for d, c in zip(depots, cells) if _deciding(c)}
        sheet.truth[name] = [None if _ambiguous(c) and d not in decided_depots else c.si
                             for d, c in zip(depots, cells)]
    sheet.frame = pd.DataFrame(data)
    return sheet


@dataclass
class Applied:
    text: list[str]
    outcome: list[int]
    decision: Any


def apply_engine(engine: Any, frame: pd.DataFrame, column: str) -> Applied | None:
    """Decide a column and convert each row under its group's convention."""
    table = TableEvidence.from_frame(frame)
    evidence = table.column(column)
    decision = engine.propose(evidence, Context(table))
    if decision is None:
        return None
    labels = frame[decision.groups.by].tolist() if decision.groups else [None] * len(frame)
    text, outcome = [""] * len(frame), [0] * len(frame)
    by_label: dict[Any, list[int]] = {}
    for row, label in enumerate(labels):
        by_label.setdefault(label, []).append(row)
    for label, rows in by_label.items():
        convention = (decision.groups.convention_for(decision.convention, label)
                      if decision.groups else decision.convention)
        values = list(dict.fromkeys(frame[column].iloc[rows].tolist()))
        result = engine.convert(values, convention)
        index = {v: i for i, v in enumerate(values)}
        for row in rows:
            i = index[frame[column].iloc[row]]
            text[row], outcome[row] = result.text[i], int(result.outcome[i])
    return Applied(text, outcome, decision)


@dataclass
class Score:
    cells: int = 0
    decidable: int = 0
    undecidable: int = 0
    correct: int = 0
    wrong_unlisted: int = 0
    listed_decidable: int = 0
    listed_undecidable: int = 0
    failures: list[str] = field(default_factory=list)

    def add(self, other: Score) -> None:
        for name in ("cells", "decidable", "undecidable", "correct", "wrong_unlisted",
                     "listed_decidable", "listed_undecidable"):
            setattr(self, name, getattr(self, name) + getattr(other, name))
        self.failures += other.failures

    @property
    def rates(self) -> dict[str, float]:
        return {"wrong_unlisted": self.wrong_unlisted / max(self.cells, 1),
                "decidable_correct": self.correct / max(self.decidable, 1),
                "undecidable_listed": self.listed_undecidable / max(self.undecidable, 1),
                "decidable_listed": self.listed_decidable / max(self.decidable, 1)}


def _same(text: str, truth: Fraction) -> bool:
    """Equal to the truth rounded to 15 significant digits (the engine's output rule)."""
    if not text:
        return False
    expected = DecimalContext(prec=15).divide(D(truth.numerator), D(truth.denominator))
    return D(text) == expected


def score(applied: Applied, truth: Sequence[Fraction | None], raw: Sequence[str]) -> Score:
    result = Score()
    for text, outcome, true, written in zip(applied.text, applied.outcome, truth, raw):
        result.cells += 1
        listed = outcome == Outcome.UNRESOLVED
        if true is None:
            result.undecidable += 1
            result.listed_undecidable += listed
            if not listed:
                result.wrong_unlisted += 1
                result.failures.append(f"undecidable {written!r} -> {text!r}")
            continue
        result.decidable += 1
        if listed:
            result.listed_decidable += 1
            result.failures.append(f"listed decidable {written!r}")
        elif _same(text, true):
            result.correct += 1
        else:
            result.wrong_unlisted += 1
            result.failures.append(f"wrong {written!r} -> {text!r} (truth {float(true)})")
    return result
