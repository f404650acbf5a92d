"""Whether a column holds dates, date-times or times, and what a date column does with a
time of day that says nothing.

A system that stores dates as date-times writes every one of them at midnight
(``2024-05-02 00:00:00``), and a workbook cell holding a date under a date-and-time number
format is read as ``2024-05-02T00:00:00``. When no dated value of a column carries any other
time, the times are storage, not information: the column is a date column, and its
midnight values are written as dates (``YYYY-MM-DD``), like the values written without a
time beside them. A midnight with a UTC offset names an instant and is kept. One real time
of day among them makes the midnights real too (a log with an entry at 00:00:00).
"""

from __future__ import annotations

import re
from collections.abc import Sequence

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from harmonize.engines.base import Converted
from harmonize.engines.dates_parse import DIGITS, TIME, Clock
from harmonize.engines.dates_table import DateTable

# The time of a value read in bulk (dates_fast._SHAPE) when it is midnight without an
# offset: the shape's time is last, so a zone would follow these digits.
_BULK_MIDNIGHT = re.compile(r"(?:T| |, )0?0:00(?::00(?:\.0+)?)?")
# An output date-time at midnight without an offset (dates_parse.render).
OUTPUT_MIDNIGHT = r"^\d{4}-\d{2}-\d{2}T00:00:00(?:\.0+)?$"
SAMPLE = 64   # timed values looked at before all of them: a real time shows up at once


def is_naive_midnight(clock: Clock) -> bool:
    """00:00:00 (any fraction of zeros), with no UTC offset or zone named."""
    return (clock.hour == clock.minute == clock.second == 0 and not clock.fraction.strip("0")
            and clock.offset is None and clock.zone is None)


def storage_midnights(table: DateTable, values: Sequence[str] | np.ndarray
                      ) -> np.ndarray | None:
    """The dated values whose time is a stored midnight (per row), or None when a dated
    value carries a real time of day (then every time written is information)."""
    rows = np.flatnonzero(table.timed & table.has_date)
    if not len(rows):
        return None

    def midnight(i: int) -> bool:
        if table.by_parser[i]:
            clock = table.slow[i].clock
            return clock is not None and is_naive_midnight(clock)
        text = values[i]
        match = _BULK_MIDNIGHT.search(text)
        return match is not None and match.end() == len(text)

    for part in (rows[:SAMPLE], rows[SAMPLE:]):
        if not all(midnight(i) for i in part.tolist()):
            return None
    found = np.zeros(len(table), dtype=bool)
    found[rows] = True
    return found


def column_kind(table: DateTable, counts: np.ndarray, numbers: str | None, with_time: bool,
                values: Sequence[str] | np.ndarray) -> tuple[str, int]:
    """("date" / "datetime" / "time", cells whose stored midnight is dropped)."""
    if numbers in ("unix_seconds", "unix_milliseconds") or with_time:
        return "datetime", 0
    timed = table.timed
    dated = table.has_date | table.of(DIGITS)
    n_dated = counts[dated].sum()
    if n_dated == 0 and timed.any():
        return "time", 0
    midnights = storage_midnights(table, values)
    if midnights is not None:
        return "date", int(counts[midnights].sum())
    kind = "datetime" if counts[timed & dated].sum() * 2 >= max(n_dated, 1) else "date"
    return kind, 0


def undated_cells(table: DateTable, counts: np.ndarray) -> int:
    """Cells of a date-time column written as a date alone (kept as dates: no time of
    day is made up for them)."""
    return int(counts[table.has_date & ~table.timed & ~table.of(TIME)].sum())


def drop_midnights(result: Converted) -> None:
    """Write date-times at a stored midnight as dates (a date column's rule), in the
    output, the candidate readings and the best reading alike."""
    texts = pa.array(result.text, type=pa.large_string())
    if len(texts) and (pc.max(pc.utf8_length(texts)).as_py() or 0) > len("YYYY-MM-DD"):
        hit = pc.fill_null(pc.match_substring_regex(texts, OUTPUT_MIDNIGHT), False)
        for i in np.flatnonzero(np.asarray(hit, dtype=bool)).tolist():
            result.text[i] = result.text[i][:10]
    for i, listed in result.candidates.items():
        dropped = [_dropped(t) for t in listed]
        if dropped != listed:   # two readings may now be one
            result.candidates[i] = list(dict.fromkeys(dropped))
    for i, best in result.best.items():
        result.best[i] = _dropped(best)


def _dropped(text: str) -> str:
    return text[:10] if re.fullmatch(OUTPUT_MIDNIGHT, text) else text
