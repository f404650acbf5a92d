"""Converting the common shapes of a column's distinct values on whole arrays.

``dates_fast.scan`` reads the numbers of values written ``03/04/2024``,
``2024-04-03 14:05:09`` and the like; here they are read under the plan's rule (its
order, or the order each way of writing follows, or the candidate orders when none is
settled) and written as ISO 8601 text. Only a value whose answer is a converted date is
taken: one that is impossible, ambiguous, a sentinel or written unlike the ways the
plan names goes back to the engine's per-value path, which says why.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import date
from typing import Any

import numpy as np

from harmonize.engines.dates_decide import Ways, templates_of
from harmonize.engines.dates_fast import Scan, real_day, render, scan
from harmonize.engines.dates_parse import FIXED, ORDERS
from harmonize.engines.dates_table import full_years, open_fields

SENTINELS = ("1900-01-01", "9999-12-31", "0000-00-00")


@dataclass(frozen=True)
class Settings:
    """The convention's keys ``convert`` reads (see ``dates``)."""

    order: str | None
    shapes: Mapping[str, str] | None
    candidates: tuple[str, ...]
    likely: str | None
    year_from: int
    numbers: str | None
    kind: str
    zones: Mapping[str, str]
    sentinels: frozenset[str]

    @classmethod
    def of(cls, convention: Mapping[str, Any]) -> Settings:
        order = convention.get("order")
        shapes = convention.get("order_shapes")
        if isinstance(shapes, list):   # a list of ways: all follow ``order``
            shapes = dict.fromkeys(shapes, order)
        return cls(order=order, shapes=dict(shapes) if shapes else None,
                   candidates=tuple(convention.get("candidates") or ("DMY", "MDY")),
                   likely=convention.get("likely_order"),
                   year_from=int(convention.get("year_from") or date.today().year - 79),
                   numbers=convention.get("numbers"), kind=convention.get("kind", "date"),
                   zones=dict(convention.get("zone_offsets") or {}),
                   sentinels=frozenset(convention.get("sentinels", SENTINELS)))


AS_WRITTEN = len(ORDERS)   # reading code of a fixed date: its numbers as written
NO_READING = -1


def fast_convert(values: Sequence[str], s: Settings) -> tuple[np.ndarray, np.ndarray | None]:
    """(taken, text): which values convert here, and the output text of every value
    ("" where not taken; None when none is)."""
    n = len(values)
    if s.kind == "time" or not set(s.candidates) <= set(ORDERS):
        return np.zeros(n, dtype=bool), None   # a column of times lists its dates
    found = scan(values)
    rows = np.flatnonzero(found.fast)
    if not len(rows):
        return np.zeros(n, dtype=bool), None
    reading = _read(found, rows, s)
    keep = reading.how != NO_READING
    if s.sentinels:   # sentinel dates are missing cells: the parser's job
        keep &= ~np.isin(reading.key(), _sentinel_keys(s.sentinels))
    if not keep.all():
        rows, reading = rows[keep], reading.take(keep)
        if not len(rows):
            return np.zeros(n, dtype=bool), None
    written = render(found, rows, reading.ymd(), reading.how, values)
    if len(rows) == n:
        return np.ones(n, dtype=bool), written
    taken = np.zeros(n, dtype=bool)
    taken[rows] = True
    text = np.empty(n, dtype=object)
    text[:] = ""
    text[rows] = written
    return taken, text


@dataclass
class _Reading:
    """The day each value reads as, and how: ``how`` is the index in ORDERS of the order
    its numbers were read in, AS_WRITTEN for a fixed date, NO_READING where the parser
    must answer (an impossible day, readings that differ, a stray)."""

    year: np.ndarray
    month: np.ndarray
    day: np.ndarray
    how: np.ndarray

    def key(self) -> np.ndarray:
        return (self.year * 100 + self.month) * 100 + self.day

    def ymd(self) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        return self.year, self.month, self.day

    def take(self, keep: np.ndarray) -> _Reading:
        return _Reading(self.year[keep], self.month[keep], self.day[keep], self.how[keep])


def _read(found: Scan, rows: np.ndarray, s: Settings) -> _Reading:
    parts = found.parts[rows]
    fixed = found.per_value([x.form == FIXED for x in found.layouts], False, bool)[rows]
    year, month, day = parts.T
    if fixed.all():   # bulk-read fixed dates have four-digit years
        how = np.where(real_day(year, month, day), AS_WRITTEN, NO_READING).astype(np.int8)
        return _Reading(year, month, day, how)
    widths = found.per_value([x.widths for x in found.layouts], (0, 0, 0), np.int8)[rows]
    if not fixed.any() and s.shapes is None and not s.order:
        return _Reading(*_agreed(parts, widths, s))   # open dates only, no order settled
    year, month, day = year.copy(), month.copy(), day.copy()
    how = np.where(fixed & real_day(year, month, day), AS_WRITTEN, NO_READING).astype(np.int8)
    is_open = np.flatnonzero(~fixed)
    if s.shapes is not None:
        orders = _orders_by_way(found, rows[is_open], s.shapes)
    else:
        orders = np.full(len(is_open), ORDERS.index(s.order) if s.order in ORDERS
                         else NO_READING, dtype=np.int8)
    if s.shapes is None and not s.order:   # no order: every candidate must agree
        y, m, d, which = _agreed(parts[is_open], widths[is_open], s)
        year[is_open], month[is_open], day[is_open], how[is_open] = y, m, d, which
        return _Reading(year, month, day, how)
    if not fixed.any() and (orders == orders[0]).all() and orders[0] != NO_READING:
        y, m, d, ok = _in_order(parts, widths, ORDERS[orders[0]], s.year_from)
        return _Reading(y, m, d, np.where(ok, orders[0], NO_READING).astype(np.int8))
    for code, order in enumerate(ORDERS):   # a stray or a wrong order: NO_READING
        pick = is_open[orders == code]
        if len(pick):
            y, m, d, ok = _in_order(parts[pick], widths[pick], order, s.year_from)
            year[pick], month[pick], day[pick] = y, m, d
            how[pick] = np.where(ok, code, NO_READING)
    return _Reading(year, month, day, how)


def _in_order(parts: np.ndarray, widths: np.ndarray, order: str, year_from: int
              ) -> tuple[np.ndarray, ...]:
    y, m, d, wy, fits = open_fields(parts, widths, order)
    y = full_years(y, wy, year_from)
    return y, m, d, fits & real_day(y, m, d)


def _agreed(parts: np.ndarray, widths: np.ndarray, s: Settings) -> tuple[np.ndarray, ...]:
    """The day the candidate orders that read one agree on, and the first order that
    reads it (NO_READING: none reads one, or two differ)."""
    chosen = [np.zeros(len(parts), np.int32) for _ in range(3)]
    which = np.full(len(parts), NO_READING, dtype=np.int8)
    differ = np.zeros(len(parts), dtype=bool)
    for order in s.candidates:
        *ymd, ok = _in_order(parts, widths, order, s.year_from)
        seen = which != NO_READING
        differ |= seen & ok & ((ymd[0] != chosen[0]) | (ymd[1] != chosen[1])
                               | (ymd[2] != chosen[2]))
        new = ok & ~seen
        for k in range(3):
            chosen[k] = np.where(new, ymd[k], chosen[k])
        which[new] = ORDERS.index(order)
    which[differ] = NO_READING
    return chosen[0], chosen[1], chosen[2], which


def _orders_by_way(found: Scan, rows: np.ndarray, shapes: Mapping[str, str]) -> np.ndarray:
    """The order (index in ORDERS) of each value's way of writing; NO_READING where its
    way names no single order (a stray: the parser lists it when its readings differ)."""
    layouts = found.layouts
    ways = Ways.of(found.per_value([x.sep for x in layouts], 0, np.int8)[rows],
                   found.parts[rows],
                   found.per_value([x.widths for x in layouts], (0, 0, 0), np.int8)[rows],
                   found.per_value([bool(x.clock) for x in layouts], False, bool)[rows])
    signatures, _, inverse = ways.distinct()
    codes = np.full(len(signatures), NO_READING, dtype=np.int8)
    named = {o for o in set(shapes.values()) if o}
    for k, way in enumerate(signatures):
        matched = {o for o in named if any(shapes.get(t) == o for t in templates_of(way, o))}
        if len(matched) == 1 and (order := matched.pop()) in ORDERS:
            codes[k] = ORDERS.index(order)
    return codes[inverse]


def _sentinel_keys(sentinels: frozenset[str]) -> np.ndarray:
    """year * 10000 + month * 100 + day of the sentinels that are dates as
    ``date.isoformat`` writes them (a value reading as one is a missing cell)."""
    keys = []
    for text in sentinels:
        try:
            day = date.fromisoformat(text)
        except (TypeError, ValueError):
            continue
        if day.isoformat() == text:
            keys.append(day.year * 10000 + day.month * 100 + day.day)
    return np.asarray(keys, dtype=np.int64)
