"""A column's distinct values read once, as arrays the decision works on whole.

Each value becomes one row: its form (``dates_parse``: fixed, open, week, ...), its three
numbers and their digit counts, the separator of an open numeric date, whether a time
follows, the weekday named beside it. The common shapes are read in bulk
(``dates_fast.scan``); every other value goes through ``dates_parse.parse`` and keeps its
record (``slow``) for what only it carries (a bare number's text, a zone abbreviation).
Readings under an order are then day numbers for all rows at once.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from harmonize.engines.dates_fast import SEPARATORS, ordinal_days, real_day, scan
from harmonize.engines.dates_parse import (
    BAD,
    DIGITS,
    FIXED,
    MONTH,
    OPEN,
    ORDINAL,
    TIME,
    WEEK,
    ZERO,
    Parsed,
    compact_parse,
    parse,
    reading,
)

FORMS = (FIXED, OPEN, WEEK, ORDINAL, MONTH, TIME, DIGITS, ZERO, BAD)   # index = form code
CODE = {form: code for code, form in enumerate(FORMS)}
DATED = (FIXED, OPEN, WEEK, ORDINAL, MONTH)
ORDERS = ("DMY", "MDY", "YMD")


@dataclass
class DateTable:
    """One row per distinct value (see the module docstring)."""

    form: np.ndarray        # int8 code in FORMS
    parts: np.ndarray       # (n, 3) int32, zero-filled (dates_parse: at most 4 digits)
    widths: np.ndarray      # (n, 3) int8 digit counts, zero-filled
    sep: np.ndarray         # int8 code in SEPARATORS
    timed: np.ndarray       # bool: a time of day is written
    weekday: np.ndarray     # int8 ISO weekday named beside the date, 0 = none
    slow: np.ndarray        # object: the parser's record, None where read in bulk
    by_parser: np.ndarray   # bool: read by the parser (``slow`` holds its record)
    _keys: dict[tuple[str | None, int], np.ndarray] = field(default_factory=dict)

    @classmethod
    def read(cls, values: Sequence[str] | np.ndarray) -> DateTable:
        """Every value read: the common shapes in bulk, the others by the parser."""
        n = len(values)
        found = scan(values)
        layouts = found.layouts
        table = cls(found.per_value([CODE[x.form] for x in layouts], CODE[BAD], np.int8),
                    found.parts,
                    found.per_value([x.widths for x in layouts], (0, 0, 0), np.int8),
                    found.per_value([x.sep for x in layouts], 0, np.int8),
                    found.per_value([bool(x.clock) for x in layouts], False, bool),
                    np.zeros(n, np.int8), np.full(n, None, dtype=object), np.zeros(n, bool))
        rows = np.flatnonzero(~found.fast).tolist()
        if rows:
            table.parts = table.parts.copy()   # the scan's numbers may be kept (memo)
        table._store(rows, [parse(values[i]) for i in rows])
        return table

    def _store(self, rows: list[int], records: list[Parsed]) -> None:
        """Write parser records into the arrays at ``rows``."""
        if not rows:
            return
        for i, p in zip(rows, records, strict=True):
            self.slow[i] = p
        self.by_parser[rows] = True
        self.form[rows] = [CODE[p.form] for p in records]
        self.parts[rows] = [(*p.parts, 0, 0, 0)[:3] for p in records]
        self.widths[rows] = [(*p.widths, 0, 0, 0)[:3] for p in records]
        self.sep[rows] = [SEPARATORS.index(p.sep) for p in records]
        self.timed[rows] = [p.clock is not None for p in records]
        self.weekday[rows] = [p.weekday or 0 for p in records]
        self._keys.clear()

    def __len__(self) -> int:
        return len(self.form)

    def take(self, rows: np.ndarray) -> DateTable:
        return DateTable(self.form[rows], self.parts[rows], self.widths[rows], self.sep[rows],
                         self.timed[rows], self.weekday[rows], self.slow[rows],
                         self.by_parser[rows])

    def compact(self) -> DateTable:
        """Bare numbers read as compact dates (``dates_parse.compact_parse``)."""
        table = self.take(np.arange(len(self)))
        rows = np.flatnonzero(self.form == CODE[DIGITS]).tolist()
        table._store(rows, [compact_parse(self.slow[i].text) for i in rows])
        return table

    def of(self, *forms: str) -> np.ndarray:
        if len(forms) == 1:
            return self.form == CODE[forms[0]]
        return np.isin(self.form, [CODE[f] for f in forms])

    @property
    def has_date(self) -> np.ndarray:
        """A calendar date, or a month of a year (FORMS lists these forms first)."""
        return self.form <= CODE[MONTH]

    def records(self) -> list[Parsed]:
        """The parser's records (values not read in bulk)."""
        return self.slow[self.by_parser].tolist()

    # ------------------------------------------------------------ readings

    def keys(self, order: str | None, year_from: int) -> np.ndarray:
        """Per row, the day ``reading(p, order, year_from)`` gives as one number
        (year * 10000 + month * 100 + day), 0 where it gives none."""
        key = (order, year_from)
        if key not in self._keys:
            self._keys[key] = self._read_keys(order, year_from)
        return self._keys[key]

    def days(self, order: str | None, year_from: int) -> np.ndarray:
        """Per row, ``reading(p, order, year_from).toordinal()``, 0 where it has none."""
        return ordinal_of_keys(self.keys(order, year_from))

    def admitted(self, orders: Sequence[str], year_from: int) -> dict[str, np.ndarray]:
        """Per order, the rows that read as a real day under it."""
        return {o: self.keys(o, year_from) > 0 for o in orders}

    def plausible(self, order: str) -> np.ndarray:
        """``dates_parse.plausible_under`` per row (open rows only)."""
        _, m, d, _, fits = open_fields(self.parts, self.widths, order)
        return (self.form == CODE[OPEN]) & fits & (m >= 1) & (m <= 12) & (d >= 1) & (d <= 31)

    def _read_keys(self, order: str | None, year_from: int) -> np.ndarray:
        if order in ORDERS:   # fixed rows read alike under every order: read them once
            is_open = np.flatnonzero(self.form == CODE[OPEN])
            if len(is_open) == len(self):   # a column of open dates only
                keys = open_keys(self.parts, self.widths, order, year_from)
            else:
                keys = self.keys(None, year_from).copy()
                keys[is_open] = open_keys(self.parts[is_open], self.widths[is_open], order,
                                          year_from)
            self._check_weekdays(keys, is_open)
            return keys
        keys = np.zeros(len(self), dtype=np.int64)
        fixed = np.flatnonzero(self.form == CODE[FIXED])
        if len(fixed):
            y, m, d = self.parts[fixed].T
            keys[fixed] = day_keys(full_years(y, self.widths[fixed, 0], year_from), m, d)
            self._check_weekdays(keys, fixed)
        for i in np.flatnonzero(self.of(WEEK, ORDINAL)).tolist():
            found = reading(self.slow[i], order, year_from)
            keys[i] = (found.year * 100 + found.month) * 100 + found.day if found else 0
        return keys

    def _check_weekdays(self, keys: np.ndarray, rows: np.ndarray) -> None:
        """A weekday named beside the date must be the date's (``reading`` checks it)."""
        if not self.by_parser.any():
            return   # weekdays are named only in values the parser read
        named = rows[(self.weekday[rows] > 0) & (keys[rows] > 0)]
        if len(named):
            iso_weekday = (ordinal_of_keys(keys[named]) + 6) % 7 + 1
            keys[named] = np.where(iso_weekday == self.weekday[named], keys[named], 0)


def day_keys(year: np.ndarray, month: np.ndarray, day: np.ndarray) -> np.ndarray:
    """year * 10000 + month * 100 + day where that day exists, else 0."""
    key = (year.astype(np.int64) * 100 + month) * 100 + day
    return np.where(real_day(year, month, day), key, 0)


def ordinal_of_keys(keys: np.ndarray) -> np.ndarray:
    """``date.toordinal`` of days given as keys (0 stays 0)."""
    return ordinal_days(keys // 10000, keys // 100 % 100, keys % 100)


def full_years(year: np.ndarray, width: np.ndarray, year_from: int) -> np.ndarray:
    """``dates_parse.full_year`` per element: two-digit years in year_from .. +99."""
    return np.where(width > 2, year, year_from + (year - year_from) % 100)


def open_fields(parts: np.ndarray, widths: np.ndarray, order: str) -> tuple[np.ndarray, ...]:
    """(year, month, day, year width, fits) of open numeric dates read in ``order``
    (``dates_parse.fields_under``; fits: the digit counts allow the order)."""
    a, b, c = parts.T
    wa, wb, wc = widths.T
    if order == "DMY":
        y, m, d, wy, wo = c, b, a, wc, np.maximum(wa, wb)
    elif order == "MDY":
        y, m, d, wy, wo = c, a, b, wc, np.maximum(wa, wb)
    else:
        y, m, d, wy, wo = a, b, c, wa, np.maximum(wb, wc)
    return y, m, d, wy, ((wy == 2) | (wy == 4)) & (wo <= 2)


def open_keys(parts: np.ndarray, widths: np.ndarray, order: str, year_from: int
              ) -> np.ndarray:
    """The day keys of open numeric dates read in ``order``, 0 where they read none."""
    y, m, d, wy, fits = open_fields(parts, widths, order)
    return np.where(fits, day_keys(full_years(y, wy, year_from), m, d), 0)
