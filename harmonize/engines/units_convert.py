"""Converting quantity cells under a units convention (see ``harmonize.engines.units``).

Every distinct value is split once, its number parts are read by the numbers engine's
parser under the column's decimal mark, and its unit tokens through the cached word lists;
each reading is converted exactly (``Fraction``) and rounded once at the end. A cell with
more than one reading (mark or unit undecided, a bare number in a column of several units)
is listed with every reading as a candidate.
"""

from __future__ import annotations

import itertools
import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from decimal import Context as DecimalContext
from decimal import Decimal
from fractions import Fraction
from functools import cache, lru_cache
from typing import Any

import numpy as np

from harmonize.engines.base import Converted
from harmonize.engines.numbers_convert import range_reason
from harmonize.engines.numbers_forms import (
    AMBIGUOUS,
    COMMA_ONLY,
    DOT_ONLY,
    EXACT,
    SAME,
    analyse,
    format_decimal_plain,
    to_decimal,
)
from harmonize.engines.units_parse import (
    CLOCK_FORMS,
    CLOCK_LIKE,
    Cells,
    clock_durations,
    split_cells,
)
from harmonize.engines.units_registry import (
    UNITS,
    factor,
    linear_map,
    normalise_token,
    read_token,
)

SIGNIFICANT_DIGITS = 15
MAX_CANDIDATES = 8


# -------------------------------------------------------------- reading numbers


@dataclass(frozen=True)
class NumberReadings:
    """Each number part's readings under a decimal-mark convention."""

    values: dict[str, tuple[Decimal, ...]]   # part -> one reading, two (mark unknown), none
    problems: dict[str, str]                 # part -> why it does not read

    @classmethod
    def of(cls, parts: Sequence[str], mark: str | None, ungrouped: int = 0) -> NumberReadings:
        """``ungrouped``: an ambiguous part whose group reading has that many digits or
        fewer takes its own mark as the decimal mark (see ``numbers_marks``)."""
        distinct = list(dict.fromkeys(parts))
        forms = analyse(distinct)
        values: dict[str, tuple[Decimal, ...]] = {}
        problems: dict[str, str] = {}
        own = forms.body_length - 1 <= ungrouped if ungrouped else np.zeros(len(forms), bool)
        for i, part in enumerate(distinct):
            if "/" in part:
                _read_fraction(part, values, problems)
                continue
            status = int(forms.status[i])
            marks = _marks_for(status, mark)
            if status == AMBIGUOUS and mark is None and own[i]:
                marks = (forms.swapped_mark(i),)
            if not marks:
                problems[part] = _mark_problem(part, status, mark)
                continue
            values[part] = tuple(to_decimal(forms.digits_for(i, m), int(forms.shift[i]),
                                            bool(forms.negative[i])) for m in marks)
        return cls(values, problems)


MAX_DENOMINATOR = 64   # the finest division of the inch customarily written (1/64)


def _read_fraction(part: str, values: dict[str, tuple[Decimal, ...]],
                   problems: dict[str, str]) -> None:
    """A fraction as customary measures write it ("3/4", "1 1/2"): a proper fraction with a
    denominator from 2 to 64 (exact in ``Decimal``: ``EXACT`` keeps 200 digits)."""
    whole, _, fraction = part.lstrip("+-").rpartition(" ")
    top, bottom = (int(n) for n in fraction.split("/"))
    if not 0 < top < bottom <= MAX_DENOMINATOR:
        problems[part] = f"{part!r} is not a fraction of the form customary measures take"
        return
    value = EXACT.add(Decimal(int(whole or 0)), EXACT.divide(Decimal(top), Decimal(bottom)))
    values[part] = (-value if part.startswith("-") else value,)


def _marks_for(status: int, mark: str | None) -> tuple[str, ...]:
    if status == SAME:
        return (".",)
    if status == AMBIGUOUS:
        return (mark,) if mark else (".", ",")
    own = {DOT_ONLY: ".", COMMA_ONLY: ","}.get(status)
    if own is None or (mark is not None and own != mark):
        return ()
    return (own,)


def _mark_problem(part: str, status: int, mark: str | None) -> str:
    if status in (DOT_ONLY, COMMA_ONLY):
        own = "." if status == DOT_ONLY else ","
        return (f"the number {part!r} is written with {own!r} as the decimal mark but its "
                f"column uses {mark!r}")
    return f"{part!r} is not a number in a form this engine reads"


# ---------------------------------------------------------------- unit readings


def token_units(token: str, convention: Mapping[str, Any]) -> frozenset[str]:
    """The units a token may mean in a column under its convention."""
    key = normalise_token(token)
    decided = (convention.get("units") or {}).get(key)
    if decided in UNITS:
        return frozenset({decided})
    reading = read_token(token)
    dimension = convention.get("dimension", "")
    inside = reading.in_dimension(dimension)
    if not inside:
        return reading.units  # another dimension (or unknown): the caller says which
    return _by_customary(inside, convention.get("customary"))


def _by_customary(units: frozenset[str], customary: str | None) -> frozenset[str]:
    if len(units) < 2 or not customary:
        return units
    systems = {UNITS[u].system for u in units}
    if systems != {"US", "imperial"}:
        return units
    return frozenset(u for u in units if UNITS[u].system == customary)


# ------------------------------------------------------------------- converting

Combo = tuple[tuple[Decimal, str], ...]   # (number, unit id) per piece


@cache
def _affine(unit_id: str, target: str) -> tuple[Decimal, Decimal, Decimal]:
    """Integers (p, q, r) with value_in_target = (value * p + q) / r, exactly."""
    a, b = linear_map(unit_id, target)
    r = math.lcm(a.denominator, b.denominator)
    return (Decimal(a.numerator * (r // a.denominator)),
            Decimal(b.numerator * (r // b.denominator)), Decimal(r))


@cache
def _rounding(digits: int) -> DecimalContext:
    return DecimalContext(prec=digits)


def convert_value(value: Decimal, unit_id: str, target: str, digits: int) -> Decimal:
    """A value in ``target``: exact products, one correctly rounded division."""
    p, q, r = _affine(unit_id, target)
    top = EXACT.add(EXACT.multiply(value, p), q)
    return _rounding(digits).divide(top, r)


@lru_cache(maxsize=1 << 16)   # bounded; a column's cells come back at apply time
def plain_in(value: Decimal, unit_id: str, target: str, digits: int) -> str:
    """``value`` in ``unit_id`` written as a plain number in ``target`` (numerically equal
    values give the same text, so they may share a cache entry)."""
    return format_decimal_plain(convert_value(value, unit_id, target, digits))


def _round(value: Fraction, digits: int) -> Decimal:
    return _rounding(digits).divide(Decimal(value.numerator), Decimal(value.denominator))


def _combo_value(combo: Combo, target: str, digits: int) -> Decimal:
    if len(combo) == 1:
        return convert_value(combo[0][0], combo[0][1], target, digits)
    total = Fraction(0)
    for number, unit_id in combo:
        a, b = linear_map(unit_id, target)
        total += Fraction(number) * a + b
    return _round(total, digits)


@dataclass
class CellReading:
    """All readings of one cell (number readings x unit readings), or why there is none."""

    readings: list[tuple[Decimal, Combo]] = field(default_factory=list)
    problem: str = ""


class UnitMemo(dict):
    """Per-call memo: token -> the unit ids a piece may be in, or a problem sentence."""

    def __init__(self, convention: Mapping[str, Any]) -> None:
        super().__init__()
        self.convention = convention

    def __missing__(self, token: str | None) -> list[str] | str:
        found = _piece_units(token, self.convention)
        self[token] = found
        return found


def read_cell(pieces: tuple[tuple[str, str | None], ...], numbers: NumberReadings,
              memo: UnitMemo, digits: int) -> CellReading:
    """Every reading of a cell in the target unit, rounded to ``digits``."""
    convention = memo.convention
    options_per_piece: list[list[tuple[Decimal, str]]] = []
    for part, token in pieces:
        if part in numbers.problems:
            return CellReading(problem=numbers.problems[part])
        units = memo[token]
        if isinstance(units, str):
            return CellReading(problem=units)
        options_per_piece.append([(n, u) for n in numbers.values[part] for u in units])
    if len(pieces) > 1 and convention["dimension"] == "temperature":
        return CellReading(problem="temperatures do not add up in compounds")
    target = convention["target"]
    combos = list(itertools.product(*options_per_piece))
    possible = [c for c in combos if not _below_absolute_zero(*c[0])]
    if not possible:
        return CellReading(problem=BELOW_ZERO)
    return CellReading([(_combo_value(combo, target, digits), combo) for combo in possible])


# SI Brochure, 9th ed. (2019), §2.3.1: thermodynamic temperature starts at 0 K
BELOW_ZERO = "below absolute zero (0 K): no temperature is that low"


def _below_absolute_zero(number: Decimal, unit_id: str) -> bool:
    if UNITS[unit_id].dimension != "temperature":
        return False
    to_kelvin = factor(unit_id)
    return Fraction(number) * to_kelvin.scale + to_kelvin.offset < 0


def _piece_units(token: str | None, convention: Mapping[str, Any]) -> list[str] | str:
    """Unit ids a piece may be in, or a problem sentence."""
    dimension = convention["dimension"]
    if token is None:
        bare = convention.get("bare_unit")
        if bare in UNITS:
            return [bare]
        used = [u for u in convention.get("column_units") or [] if u in UNITS]
        return used or "a number without a unit, and the column names none"
    units = token_units(token, convention)
    if not units:
        return f"unit {token!r} is not known"
    inside = [u for u in units if UNITS[u].dimension == dimension]
    if not inside:
        other = sorted({UNITS[u].dimension for u in units})
        return (f"{token!r} is a unit of {' or '.join(other)}, but the column holds "
                f"{dimension}")
    return sorted(inside)


def convert_quantities(values: Sequence[str], convention: Mapping[str, Any],
                       cells: Cells | None = None) -> Converted:
    """Convert distinct values under a convention (see the module docstring); ``cells``
    are the values already split, when the caller has them."""
    if cells is None:
        cells = split_cells(values)
        if convention.get("clock_form") in CLOCK_FORMS:
            cells, _ = clock_durations(values, cells, convention["clock_form"])
    digits = int(convention.get("significant_digits") or SIGNIFICANT_DIGITS)
    ungrouped = int(convention.get("ungrouped_digits") or 0)
    numbers = NumberReadings.of(cells.number_parts(), convention.get("decimal_mark"),
                                ungrouped)
    memo = UnitMemo(convention)
    target = convention["target"]
    likely: NumberReadings | None = None
    result = Converted.empty(len(values))
    for i, pieces in enumerate(cells.pieces):
        if len(pieces) == 1:   # one number, one unit, one reading: most cells
            readings, units = numbers.values.get(pieces[0][0]), memo[pieces[0][1]]
            if readings and len(readings) == 1 and not isinstance(units, str) \
                    and len(units) == 1 and not _below_absolute_zero(readings[0], units[0]):
                result.set(i, plain_in(readings[0], units[0], target, digits))
                continue
        raw = str(values[i]).strip()
        if not pieces:
            result.unresolved(i, range_reason(raw) or _clock_reason(raw, convention) or
                              f"{raw!r} is not a quantity in a form this engine reads")
            continue
        cell = read_cell(pieces, numbers, memo, digits)
        if cell.problem:
            result.unresolved(i, f"{raw!r}: {cell.problem}")
            continue
        texts = list(dict.fromkeys(format_decimal_plain(v) for v, _ in cell.readings))
        if len(texts) == 1:
            result.set(i, texts[0])
            continue
        if likely is None:
            likely = NumberReadings.of(cells.number_parts(),
                                       convention.get("likely_decimal_mark"), ungrouped)
        best = _best(pieces, likely, memo, digits)
        result.unresolved(i, _ambiguity_reason(raw, pieces, cell, convention),
                          candidates=texts[:MAX_CANDIDATES], best=best)
    return result


def _clock_reason(raw: str, convention: Mapping[str, Any]) -> str | None:
    """Why a clock-written value of a clock_form column does not read ("3:75")."""
    if not convention.get("clock_form") or not CLOCK_LIKE.fullmatch(raw):
        return None
    return (f"{raw!r} is written as a clock, but its minutes or seconds are not 00-59 "
            f"(the column reads {convention['clock_form']} and h:mm:ss)")


def _best(pieces: tuple[tuple[str, str | None], ...], likely: NumberReadings,
          memo: UnitMemo, digits: int) -> str | None:
    """The reading under the likely decimal mark, when that alone settles the cell."""
    cell = read_cell(pieces, likely, memo, digits)
    texts = {format_decimal_plain(v) for v, _ in cell.readings}
    return texts.pop() if len(texts) == 1 else None


def _ambiguity_reason(raw: str, pieces: tuple[tuple[str, str | None], ...], cell: CellReading,
                      convention: Mapping[str, Any]) -> str:
    target = UNITS[convention["target"]].symbol
    options = "; ".join(
        " + ".join(f"{n} {UNITS[u].symbol}" for n, u in combo)
        + f" = {format_decimal_plain(DecimalContext(prec=6).plus(v))} {target}"
        for v, combo in cell.readings[:MAX_CANDIDATES])
    if any(unit is None for _, unit in pieces) and not convention.get("bare_unit"):
        why = "a number without a unit in a column of several units whose header names none"
    elif len({tuple(u for _, u in combo) for _, combo in cell.readings}) > 1:
        why = "its unit may mean several units and nothing in the column decides which"
    else:
        why = "its decimal mark is not decided by any value of the column"
    return f"{raw!r}: {why} ({options})"
