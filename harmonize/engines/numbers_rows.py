"""What the other cells of a row show about the decimal mark of an undecided column.

A column whose every value reads two ways ("28.980": 28.98, or 28980 with "." grouping)
is listed when no value of its own decides the mark (issue #4.6). The cells beside it in
the same row were written by the same exporter at the same time: where, on every row that
holds such a value, another number of the row can only be read with that mark as the
decimal mark ("1707.4", "2710.349") and no number of the row reads the other way, the row
itself shows how its writer marks decimals. Rows are the unit, not the file: a file
merged from branches with different notations mixes writers, but one row comes from one.

Workbook number cells are not counted: the reader renders them as plain "1234.5"
whatever the branch writes. Only columns that mostly hold numbers are counted.

Only the mark the ambiguous values hold is read this way (the rows show "." as a decimal
mark, so "28.980" is 28.98). The converse, reading "12.345" as 12345 because the rows
show "," as the decimal mark, is the same inference but is left listed: issue #4.6 counts
only a value's own column or group as deciding that reading.
"""

from __future__ import annotations

import threading
from dataclasses import dataclass
from weakref import WeakKeyDictionary

import numpy as np
import pandas as pd
import pyarrow.compute as pc

from harmonize.context import Context
from harmonize.engines.numbers_convert import mark_name
from harmonize.engines.numbers_forms import COMMA_ONLY, DOT_ONLY, NOT_NUMBER, analyse
from harmonize.evidence import ColumnEvidence

MARKS = (".", ",")
NUMBER_SHARE = 0.5     # a sibling column counts when this share of its filled cells are numbers
MIN_ROWS = 5           # rows that must show the mark before it decides anything
SAME_FORM = 0.95       # confidence when the rows show the very form (mark + three digits)
OTHER_FORM = 0.9       # ... when they show the mark as a decimal mark in another form
_DECIDES = {".": DOT_ONLY, ",": COMMA_ONLY}
_THREE_AFTER = {".": r"\.\d{3}$", ",": r",\d{3}$"}


@dataclass(frozen=True)
class ColumnMarks:
    """Per row of one column: whether its cell decides each mark as the decimal mark, and
    whether it shows that mark followed by exactly three digits."""

    decides: dict[str, np.ndarray]
    three: dict[str, np.ndarray]


@dataclass(frozen=True)
class RowMarks:
    """Per row: how many number columns decide each mark, and how many show it followed
    by exactly three digits."""

    decides: dict[str, np.ndarray]
    three: dict[str, np.ndarray]
    counted: frozenset[str]   # the columns counted

    def without(self, column: ColumnEvidence | None
                ) -> tuple[dict[str, np.ndarray], dict[str, np.ndarray]]:
        """The counts less one column's own cells (``column`` from the table)."""
        own = _column_marks(column) if column is not None else None
        if own is None or column is None or column.name not in self.counted:
            return self.decides, self.three
        return ({m: self.decides[m] - own.decides[m] for m in MARKS},
                {m: self.three[m] - own.three[m] for m in MARKS})


_CACHE: WeakKeyDictionary[Context, RowMarks] = WeakKeyDictionary()
_LOCK = threading.Lock()


def _column_marks(column: ColumnEvidence) -> ColumnMarks | None:
    """A number column's per-row marks, None for a column that is mostly not numbers."""
    if column.codes is None or not len(column.values):
        return None
    forms = analyse(column.values)
    counts = column.counts
    filled = np.asarray(pc.utf8_length(pc.utf8_trim_whitespace(forms.raw)), dtype=np.int64) > 0
    if counts[forms.status != NOT_NUMBER].sum() < NUMBER_SHARE * max(counts[filled].sum(), 1):
        return None
    typed = pd.Series(column.values, dtype=object).isin(list(column.typed)).to_numpy() \
        if column.typed else np.zeros(len(forms), bool)
    rows = column.codes
    decides, three = {}, {}
    for mark in MARKS:
        per_value = (forms.status == _DECIDES[mark]) & ~typed
        shaped = per_value & np.asarray(pc.fill_null(pc.match_substring_regex(
            forms.body_array, _THREE_AFTER[mark]), False), dtype=bool)
        decides[mark] = np.append(per_value, False)[rows].astype(np.int16)
        three[mark] = np.append(shaped, False)[rows].astype(np.int16)
    return ColumnMarks(decides, three)


def row_marks(context: Context) -> RowMarks:
    """The table's per-row counts, found once per table (threads share the context)."""
    with _LOCK:
        found = _CACHE.get(context)
        if found is not None:
            return found
        n = context.table.n_rows
        decides = {m: np.zeros(n, np.int16) for m in MARKS}
        three = {m: np.zeros(n, np.int16) for m in MARKS}
        counted = set()
        for column in context.table.columns:
            marks = _column_marks(column)
            if marks is None or len(marks.decides["."]) != n:
                continue
            counted.add(column.name)
            for m in MARKS:
                decides[m] += marks.decides[m]
                three[m] += marks.three[m]
        found = RowMarks(decides, three, frozenset(counted))
        _CACHE[context] = found
        return found


@dataclass(frozen=True)
class RowDecision:
    mark: str
    confidence: float
    evidence: str


def decide_from_rows(column: ColumnEvidence, ambiguous: np.ndarray, marks: np.ndarray,
                     context: Context) -> RowDecision | None:
    """The decimal mark that the other cells of every row holding one of the column's
    ambiguous values show (see the module docstring), else None.

    ``ambiguous``: which distinct values are ambiguous; ``marks``: the mark each holds."""
    held = set(marks[ambiguous].tolist())
    if column.codes is None or len(held) != 1 or len(column.codes) != context.table.n_rows:
        return None
    mark = held.pop()
    other = "," if mark == "." else "."
    rows = np.flatnonzero(np.append(ambiguous, False)[column.codes])
    if len(rows) < MIN_ROWS:
        return None
    try:
        own = context.table.column(column.name)
    except KeyError:
        own = None
    decides, three = row_marks(context).without(own)
    if (decides[mark][rows] <= 0).any() or (decides[other][rows] > 0).any():
        return None
    same_form = int((three[mark][rows] > 0).sum())
    confidence = SAME_FORM if same_form == len(rows) else OTHER_FORM
    form = (f" ({same_form} of them with exactly three digits after it, as here)"
            if same_form else "")
    evidence = (f"each of the {len(rows)} rows holding these values has another number that "
                f"reads only with {mark_name(mark)} as the decimal mark{form} and none that "
                f"reads so with {mark_name(other)}: the rows' writer marks decimals with "
                f"{mark_name(mark)}")
    return RowDecision(mark, confidence, evidence)
