"""Whether fixed-width digit strings are a measured series rather than codes.

A column whose numbers all have the same five or more digits ("135450", "135762") looks
like a column of codes (article numbers, postal codes), and the numbers engine leaves
such columns alone. A monthly count of jobs has the same look. What tells them apart is
the row order: a measured series changes little from one row to the next and goes both
up and down, while codes in row order jump about (customers, places) or climb like keys
(order numbers in date order, a column sorted by its codes).

"Changes little" is measured by the von Neumann ratio: the mean square of the steps
between consecutive rows over the variance, about 2 for values in random order (von
Neumann, "Distribution of the ratio of the mean square successive difference to the
variance", Ann. Math. Statist. 12, 1941) and near 0 for a smooth series. Everything runs
on numpy arrays over the rows; each distinct value is parsed once.
"""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from harmonize.engines.numbers_forms import Forms
from harmonize.evidence import ColumnEvidence

MIN_ROWS = 20            # fewer rows say nothing about an order
SMOOTH_RATIO = 0.2       # random order stays above ~0.45 even at 20 rows (simulated)
MIN_TURNS = 2            # steps against the main direction a series must take
MIN_TURN_SHARE = 0.03    # ... and as a share of the steps that move


def row_values(column: ColumnEvidence, forms: Forms, keep: np.ndarray) -> np.ndarray:
    """The numbers of the rows whose value is under ``keep`` (bare digit strings), in row
    order; rows set aside or holding another value are left out."""
    if column.codes is None or not keep.any():
        return np.zeros(0)
    per_value = np.full(len(forms), np.nan)
    digits = forms.text_array.filter(pa.array(keep))
    try:
        per_value[keep] = np.asarray(pc.cast(digits, pa.float64()), dtype=float)
    except pa.ArrowInvalid:   # a digit form Arrow does not cast (none expected): no series
        return np.zeros(0)
    codes = column.codes[column.codes >= 0]
    rows = per_value[codes]
    return rows[~np.isnan(rows)]


def measured_series(column: ColumnEvidence, forms: Forms, bare: np.ndarray) -> str | None:
    """An evidence sentence when the bare digit values of ``column`` form a measured
    series in row order (see the module docstring), else None."""
    rows = row_values(column, forms, bare)
    if len(rows) < MIN_ROWS:
        return None
    centred = rows - rows.mean()
    spread = float((centred ** 2).sum())
    if spread == 0.0:
        return None
    steps = np.diff(rows)
    ratio = float((steps ** 2).sum()) / spread
    up, down = int((steps > 0).sum()), int((steps < 0).sum())
    against = min(up, down)
    if ratio >= SMOOTH_RATIO or against < MIN_TURNS or against < MIN_TURN_SHARE * (up + down):
        return None
    return (f"the values change little from row to row (von Neumann ratio {ratio:.3f}; "
            f"about 2 in random order) and go both up ({up} steps) and down ({down}): a "
            "measured series, not codes of a fixed width")
