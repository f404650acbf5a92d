"""When bare numbers in a column are dates: compact digit strings (20240403), spreadsheet
serial day numbers (ECMA-376 1900 system) and Unix epoch seconds or milliseconds.

A plain number column (amounts, quantities, identifiers) must stay numbers, so a reading
is accepted only when the column makes it clear: its header names a date or time, or
other cells of the column are dates, and every number falls in a plausible range.
Eight-digit strings that are all valid ISO 8601 basic dates (D1) are the one exception.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from datetime import date

import numpy as np

from harmonize.engines.dates_parse import (
    BAD,
    DIGITS,
    EXCEL_1900,
    EXCEL_1904,
    ORDERS,
    compact_parse,
    reading,
)
from harmonize.engines.dates_table import DateTable
from harmonize.engines.dates_words import header_says_date
from harmonize.evidence import ColumnEvidence

# Plausible ranges: 1950-01-01 .. 2100-12-31 (common practice, no source).
SERIAL_RANGE = (18264, 73415)             # 1900 system (checkvalues D20: 25569 = 1970-01-01)
EPOCH_SECONDS = (631152000, 4133894400)   # 1990-01-01 .. 2100-12-31 (POSIX, D23)
EPOCH_MILLIS = (EPOCH_SECONDS[0] * 1000, EPOCH_SECONDS[1] * 1000)
COMPACT_YEARS = (1900, 2099)
OTHER_DATES = 0.2      # share of cells that are written dates, making numbers dates too
MIN_COMPACT = 5        # distinct eight-digit dates needed without a header
YEAR_DAYS = 365        # the 1904 system must put the numbers a year closer to the dates
_ISO_DAY = re.compile(r"\d{4}-\d{2}-\d{2}")


@dataclass
class NumbersMode:
    mode: str | None = None
    confidence: float = 1.0
    with_time: bool = False
    evidence: list[str] = field(default_factory=list)

    def reads(self, text: str) -> bool:
        return self.mode is not None and _in_range(text, self.mode)


def numbers_mode(column: ColumnEvidence, table: DateTable, date1904: bool = False
                 ) -> NumbersMode:
    """The reading of the column's bare numbers, or NumbersMode() when they stay numbers.
    ``date1904``: the workbook flags the 1904 date system, which its serials then follow."""
    counts = column.counts
    is_digits = table.of(DIGITS)
    if not is_digits.any():
        return NumbersMode()
    texts = [table.slow[i].text for i in np.flatnonzero(is_digits).tolist()]
    header = header_says_date(column.name)
    dated = table.has_date
    other = float(counts[dated].sum()) / max(int(counts.sum()), 1) >= OTHER_DATES
    why = (f"the header {column.name!r} names a date" if header else
           "other cells of the column are written dates")
    compact = _compact(texts, header or other, why)
    if compact is not None:
        return compact
    if not (header or other):
        return NumbersMode()
    for mode, label in (("serial1900", "spreadsheet serial day numbers (1900 system)"),
                        ("unix_seconds", "Unix epoch seconds"),
                        ("unix_milliseconds", "Unix epoch milliseconds")):
        if all(_in_range(t, mode) for t in texts):
            timed = mode != "serial1900" or any("." in t for t in texts)
            lo, hi = min(texts, key=float), max(texts, key=float)
            found = NumbersMode(mode, 0.97 if header and other else 0.93, timed,
                                [f"{why}; its numbers {lo}-{hi} read as {label}"])
            if mode != "serial1900":
                return found
            if date1904:   # ECMA-376 Part 4 §3.17.4.1: <workbookPr date1904="1"/>
                return NumbersMode("serial1904", found.confidence, found.with_time, [
                    f"{why}; its numbers {lo}-{hi} read as spreadsheet serial day numbers "
                    "in the 1904 system, which the workbook declares"])
            return _date_system(found, texts, column)
    return NumbersMode()


def _date_system(found: NumbersMode, texts: list[str], column: ColumnEvidence) -> NumbersMode:
    """Serial numbers beside the workbook's own date cells: the 1904 system (ECMA-376
    Part 4 §3.17.4.1, D18; 1462 days after the 1900 system, D19) when it puts the numbers
    among those dates and the 1900 system four years away from them."""
    typed = [date.fromisoformat(v[:10]).toordinal() for v, tag in column.typed.items()
             if tag in ("date", "datetime") and _ISO_DAY.match(v)]
    if not typed:
        return found
    middle = float(np.median(typed))
    serial = float(np.median([int(t.partition(".")[0]) for t in texts]))
    by_1900 = abs(EXCEL_1900.toordinal() + serial - middle)
    by_1904 = abs(EXCEL_1904.toordinal() + serial - middle)
    if by_1904 + YEAR_DAYS > by_1900:
        return found
    return NumbersMode("serial1904", found.confidence, found.with_time, [
        *found.evidence, f"read in the 1900 system they would fall {round(by_1900 / 365.25, 1)} "
                         f"years from the column's date cells; in the 1904 system (a Mac "
                         f"workbook's) among them: the 1904 system"])


def _compact(texts: list[str], hinted: bool, why: str) -> NumbersMode | None:
    lengths = {len(t) for t in texts}
    if any(not t.isdigit() for t in texts) or not lengths <= {6, 8} or len(lengths) != 1:
        return None
    parsed = [compact_parse(t) for t in texts]
    valid = [p.form != BAD and any(reading(p, o, 1950) for o in ORDERS) for p in parsed]
    if not all(valid):
        return None
    if lengths == {8}:
        years = [p.parts[0] for p in parsed]
        if not all(COMPACT_YEARS[0] <= y <= COMPACT_YEARS[1] for y in years):
            return None
        if hinted:
            return NumbersMode("compact", 0.97, False,
                               [f"{why}; its digit strings are ISO 8601 basic dates"])
        if len(texts) >= MIN_COMPACT:
            return NumbersMode("compact", 0.9, False,
                               [f"all {len(texts)} eight-digit values are valid ISO 8601 "
                                f"basic dates (YYYYMMDD)"])
        return None
    if hinted:
        return NumbersMode("compact", 0.9, False,
                           [f"{why}; its digit strings read as compact dates (six digits)"])
    return None


def _in_range(text: str, mode: str) -> bool:
    whole, _, fraction = text.partition(".")
    if not whole.isdigit():
        return False
    value = int(whole)
    if mode == "serial1900" or mode == "serial1904":
        return SERIAL_RANGE[0] <= value <= SERIAL_RANGE[1]
    if fraction:
        return False
    if mode == "unix_seconds":
        return EPOCH_SECONDS[0] <= value <= EPOCH_SECONDS[1]
    if mode == "unix_milliseconds":
        return EPOCH_MILLIS[0] <= value <= EPOCH_MILLIS[1]
    return mode == "compact"
