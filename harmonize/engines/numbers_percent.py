"""Numbers written without a percent sign in a column of percentages.

A column of "12,5 %", "7,5 %" may also hold "20" and "5": percentage points whose writer
left the sign out. It may instead hold "0,2" and "0,05", or a workbook's typed 0.125 under
a plain number format: a sheet stores 12.5 % as 0.125 and shows it so unless the cell is
formatted as a percentage, so such a number may be a fraction of one (20 %, 5 %, 12.5 %)
as well as a small percentage (0.2 %). The two readings differ a hundredfold and nothing
in the value says which is meant.

The decision compares sizes: read as points, the bare numbers should lie where the
percentages written with a sign lie; read as fractions, a hundred times higher. The
distance of each reading from the range of the signed percentages is counted in powers of
ten (0 inside the range). The points reading is taken when it is nearer by half a power of
ten per cell or more, and the bare numbers are not all 1 or less beside percentages mostly
above 1; otherwise the bare numbers are listed with both readings. The fraction reading
is never taken by itself: a plan (or the engine option ``bare_percent``) may set it.

Convention key ``bare_percent`` (in a percentage column): ``"points"`` (bare numbers are
percentage points, kept as written), ``"fraction"`` (times 100: 0.2 -> 20) or
``"listed"`` (each non-zero bare number is listed with both readings). A plan without the
key reads bare numbers as points, as plans written before the key did.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from decimal import Decimal
from typing import Any

import numpy as np

from harmonize.engines.numbers_forms import Forms, format_decimal_plain, to_decimal
from harmonize.evidence import ColumnEvidence

KEY = "bare_percent"
POINTS, FRACTION, LISTED = "points", "fraction", "listed"
MODES = (POINTS, FRACTION, LISTED)
FRACTION_SHIFT = 2           # a fraction of one is a hundred times its percentage
MIN_MARGIN = 0.5             # powers of ten per cell by which points must fit better
SURE_MARGIN = 1.0            # ... and by which they are sure
POINTS_SURE, POINTS_NEAR = 0.98, 0.9


def bare_mode(convention: Mapping[str, Any]) -> str:
    """How the convention reads bare numbers ("points" for a plain number column)."""
    if not convention.get("percent"):
        return POINTS
    mode = convention.get(KEY)
    return mode if mode in MODES else POINTS


def bare_values(forms: Forms) -> np.ndarray:
    """Per value: a number written without a percent sign (a currency is another matter)."""
    return forms.is_number & ~forms.percent & ~forms.has_currency


def fraction_reading(digits: str, shift: int, negative: bool, keep: bool) -> str:
    """The text of a bare number read as a fraction of one (0.2 -> 20)."""
    value = to_decimal(digits, shift + FRACTION_SHIFT, negative)
    return format_decimal_plain(value, keep)


def bare_percent_reason(raw: str, points: str, fraction: str) -> str:
    return (f"{raw!r} has no percent sign in a column of percentages: it may be {points} % "
            f"(percentage points) or {fraction} % (a fraction of one, as a sheet stores "
            f"percentages); nothing decides which ({KEY} in the plan would)")


@dataclass
class PercentDecision:
    percent: bool
    bare: str | None = None          # ``bare_percent`` (None outside percentage columns)
    confidence: float = 1.0
    evidence: list[str] = field(default_factory=list)

    def convention(self) -> dict[str, Any]:
        return {KEY: self.bare} if self.percent else {}


def is_percent_column(column: ColumnEvidence, forms: Forms, number: np.ndarray) -> bool:
    """Half the number cells carry a percent sign, or some do under a header naming it."""
    pct_cells = column.counts[number & forms.percent].sum()
    number_cells = column.counts[number].sum()
    header = column.name.casefold()
    return bool(pct_cells >= 0.5 * number_cells or (
        pct_cells and ("%" in header or "percent" in header or "pct" in header)))


def decide_percent(column: ColumnEvidence, forms: Forms, number: np.ndarray,
                   values: Callable[[], list[Decimal | None]], typed: np.ndarray,
                   options: Mapping[str, Any]) -> PercentDecision:
    """Whether the column holds percentages, and how its bare numbers are read.
    ``values()`` gives each value's number as the column's decimal mark reads it (None
    where it does not), as points for a signed percentage."""
    if not is_percent_column(column, forms, number):
        return PercentDecision(False)
    # a size beyond a float's range is still far from any percentage: capped
    sizes = np.array([min(abs(float(v)), 1e300) if v is not None else 0.0 for v in values()])
    bare = bare_values(forms) & (sizes > 0)
    signed = number & forms.percent & (sizes > 0)
    chosen = options.get(KEY)
    if chosen in MODES:
        said = f"numbers without a percent sign are read as {chosen} (run option)"
        return PercentDecision(True, chosen, 1.0, [said] if bare.any() else [])
    if not bare.any() or not signed.any():
        # nothing to compare: a bare number that turns up later is listed
        return PercentDecision(True, LISTED)
    return _by_size(column, forms, sizes, bare, signed, typed)


def _distance(logs: np.ndarray, low: float, high: float) -> np.ndarray:
    """Powers of ten from each log-size to the range [low, high] (0 inside)."""
    return np.maximum(low - logs, 0.0) + np.maximum(logs - high, 0.0)


def _by_size(column: ColumnEvidence, forms: Forms, sizes: np.ndarray, bare: np.ndarray,
             signed: np.ndarray, typed: np.ndarray) -> PercentDecision:
    counts = column.counts
    logs = np.log10(np.where(sizes > 0, sizes, 1.0))
    low, high = float(logs[signed].min()), float(logs[signed].max())
    weight = counts[bare].astype(float)
    as_points = float((_distance(logs[bare], low, high) * weight).sum())
    as_fraction = float((_distance(logs[bare] + FRACTION_SHIFT, low, high) * weight).sum())
    small = bool((sizes[bare] <= 1).all())
    mostly_above = counts[signed & (sizes > 1)].sum() > 0.5 * counts[signed].sum()
    cells, example = int(weight.sum()), forms.text_at(int(np.flatnonzero(bare)[0]))
    span = (f"{_plain(10 ** low)} to {_plain(10 ** high)} %" if high > low
            else f"{_plain(10 ** low)} %")
    workbook = int(counts[bare & typed].sum())
    typed_note = (f"; {workbook} of them are workbook number cells without a percent "
                  "format (a sheet stores 12.5 % as 0.125)") if workbook else ""
    margin = (as_fraction - as_points) / cells
    if margin >= MIN_MARGIN and not (small and mostly_above):
        confidence = POINTS_SURE if margin >= SURE_MARGIN else POINTS_NEAR
        return PercentDecision(True, POINTS, confidence, [
            f"{cells} cell(s) written without a percent sign (e.g. {example!r}) are read as "
            f"percentage points: their sizes lie nearer the percentages written with one "
            f"({span}) than a hundred times them (fractions of one) do{typed_note}"])
    return PercentDecision(True, LISTED, 1.0, [
        f"{cells} cell(s) written without a percent sign (e.g. {example!r}) may be "
        f"percentage points or fractions of one (a hundred times more): beside percentages "
        f"of {span} their size does not decide, so they are listed with both readings "
        f"(set {KEY} to 'points' or 'fraction' to read them){typed_note}"])


def _plain(value: float) -> str:
    """A size for a sentence: three significant digits, plain."""
    digits = max(0, 2 - math.floor(math.log10(value))) if value > 0 else 0
    return format_decimal_plain(Decimal(f"{value:.{digits}f}"))
