"""Bulk reading of the ways dates are most often written, on whole arrays.

A column of dates is a few thousand distinct values written one or two ways
(``03/04/2024``, ``3.4.24``, ``2024-04-03 14:05:09``), and a column of time stamps may
hold a million. Reading each value with ``dates_parse.parse`` costs microseconds, so the
common numeric shapes are recognised here on the bytes of all values at once:

* three numbers of 1-4 digits joined by one separator (``/ . -`` or a space), read as
  ``parse`` reads them (a four-digit first number fixes the order, otherwise it is open);
* optionally followed by a time ``H:MM[:SS[.f]]`` after a space or ", ", or, after an
  ISO 8601 extended date, ``THH:MM[:SS[.f]]`` with ``Z`` or ``±HH:MM`` (ISO 8601:2004
  §4.2.2.2, §4.2.5.1; RFC 3339 §5.6 allows the space separator).

Each value's bytes are mapped to a class string (digits become ``d``): values that share
one, e.g. ``dd/dd/dddd``, have their numbers at the same positions (a ``Layout``), so each
class is checked once and its numbers are read as columns of a byte matrix. A value is
taken only when ``parse`` would give the same record; what it would reject or read its
own way (a zero date, a 24th hour, a leap second, an offset beyond ±18:00) is left to it,
with its reasons. The differential tests hold the two to the same answers.
"""

from __future__ import annotations

import re
import threading
from collections.abc import Sequence
from dataclasses import dataclass
from functools import lru_cache

import numpy as np
import pyarrow as pa
from numpy.lib.stride_tricks import sliding_window_view

from harmonize.engines.dates_parse import FIXED, OPEN, Clock, Parsed

SEPARATORS = ("", "/", ".", "-", " ")   # index = the code kept per value
MIN_LENGTH, MAX_LENGTH = 5, 40          # '1/2/3' .. a date-time with nine fraction digits
MAX_CLASSES = 64                        # ways of writing examined per length of value
MAX_OFFSET_HOURS = 18                   # dates_parse.normal_offset refuses larger offsets
DATE_LENGTH = 10                        # YYYY-MM-DD
MEMO_MIN = 50_000                       # values read twice in a row are worth keeping
_MEMO: list[tuple[list[str], Scan]] = []   # (values, reading) of the last large set
_MEMO_LOCK = threading.Lock()

_CLASS = np.full(256, ord("?"), dtype=np.uint8)   # any other byte: no shape of ours
_CLASS[ord("0"): ord("9") + 1] = ord("d")
for _byte in b"/.- :,TZ+":
    _CLASS[_byte] = _byte

# The class strings read here; ``_layout`` checks what the regular expression cannot.
_SHAPE = re.compile(r"(d{1,4})([/.\- ])(d{1,4})\2(d{1,4})"
                    r"(?:(T| |, )(d{1,2}):(dd)(?::(dd)(?:\.(d{1,9}))?)?(Z|[+-]dd:dd)?)?")

Span = tuple[int, int]


@dataclass(frozen=True)
class Layout:
    """Where the numbers of one way of writing sit, and what ``parse`` makes of it."""

    length: int
    form: str                  # FIXED or OPEN
    numbers: tuple[Span, Span, Span]
    sep: int                   # code in SEPARATORS (OPEN only; FIXED keeps "")
    clock: tuple[Span, ...]    # hour, minute[, second]; () without a time
    fraction: Span | None      # the fraction's digits
    zone: Span | None          # 'Z' or '±HH:MM'
    as_output: bool            # the whole value is written as the output writes it
    copied: bool               # the output is the value with 'T' after the date

    @property
    def widths(self) -> tuple[int, int, int]:
        a, b, c = (stop - start for start, stop in self.numbers)
        return a, b, c

    @property
    def output_length(self) -> int:
        if not self.clock:
            return 10
        fraction = 1 + self.fraction[1] - self.fraction[0] if self.fraction else 0
        return 19 + fraction + (6 if self.zone else 0)


@lru_cache(maxsize=4096)
def _layout(classes: str) -> Layout | None:
    """The layout of a class string such as 'dd/dd/dddd dd:dd', or None when ``parse``
    reads that way of writing otherwise (or refuses it)."""
    m = _SHAPE.fullmatch(classes)
    if not m:
        return None
    widths = (len(m[1]), len(m[3]), len(m[4]))
    if widths[0] == 4:   # dates_parse._numeric: a four-digit year first fixes the order
        if widths[1] > 2 or widths[2] > 2:
            return None
        form = FIXED
    elif 3 in widths or widths[1] > 2 or (widths[2] == 4 and widths[0] > 2):
        return None
    else:
        form = OPEN
    iso_date = widths == (4, 2, 2) and m[2] == "-"
    gap, hour, seconds, fraction, zone = m[5], m[6], m[8], m[9], m[10]
    iso_clock = iso_date and gap in ("T", " ") and hour == "dd"
    if (gap == "T" or zone) and not iso_clock:
        return None   # 'T' and a UTC offset only after an ISO date and a two-digit hour
    copied = iso_clock and seconds is not None and zone != "Z"
    as_output = iso_date and (gap is None or (gap == "T" and copied))
    return Layout(len(classes), form, (m.span(1), m.span(3), m.span(4)),
                  SEPARATORS.index(m[2]) if form == OPEN else 0,
                  tuple(m.span(k) for k in (6, 7, 8) if m[k]),
                  m.span(9) if fraction else None, m.span(10) if zone else None,
                  as_output, copied)


@dataclass
class Scan:
    """What the bulk reading found, aligned with the values."""

    layout: np.ndarray     # int16 per value: index in ``layouts``, -1 = not read here
    parts: np.ndarray      # (n, 3) int32: the three date numbers as written
    starts: np.ndarray     # int64: where each value's bytes begin in ``data``
    layouts: list[Layout]
    data: np.ndarray       # uint8: the values' bytes

    @classmethod
    def empty(cls, n: int) -> Scan:
        return cls(np.full(n, -1, np.int16), np.zeros((n, 3), np.int32),
                   np.zeros(n, np.int64), [], np.zeros(0, np.uint8))

    @property
    def fast(self) -> np.ndarray:
        return self.layout >= 0

    def per_value(self, per_layout: list, missing: object, dtype: type) -> np.ndarray:
        """One entry per layout spread over the values (``missing`` where not read here)."""
        return np.array([*per_layout, missing], dtype=dtype)[self.layout]

    def parsed(self, i: int) -> Parsed:
        """The record ``parse`` gives value ``i`` (read here: ``fast[i]``)."""
        layout = self.layouts[self.layout[i]]
        clock = None
        if layout.clock:
            text = self.data[self.starts[i]: self.starts[i] + layout.length].tobytes()
            hms = [int(text[a:b]) for a, b in layout.clock] + [0]
            fraction = text[slice(*layout.fraction)].decode() if layout.fraction else ""
            offset = None
            if layout.zone:
                written = text[slice(*layout.zone)].decode()
                offset = "+00:00" if written == "Z" else written
            clock = Clock(hms[0], hms[1], hms[2], fraction, offset)
        return Parsed(layout.form, tuple(self.parts[i].tolist()), layout.widths, clock,
                      sep=SEPARATORS[layout.sep] if layout.form == OPEN else "")


def scan(values: Sequence[str] | np.ndarray) -> Scan:
    """Read every value written in one of the common shapes; the others stay unread.

    A large set of values is usually read twice in a row, to decide its column and then
    to convert it: the last large reading is kept and given again, once, for values
    equal to the ones it read (so the answer is the reading itself). Callers must not
    change the ``Scan`` they get."""
    n = len(values)
    listed = None
    if n >= MEMO_MIN:
        listed = values.tolist() if isinstance(values, np.ndarray) else list(values)
        kept = _recall(listed)
        if kept is not None:
            return kept
    try:
        array = pa.array(values, type=pa.large_string())   # 64-bit offsets: one chunk
    except (pa.ArrowException, UnicodeError, TypeError):   # e.g. lone surrogates
        return Scan.empty(n)
    if isinstance(array, pa.ChunkedArray):
        array = array.combine_chunks()
    if n == 0 or array.buffers()[2] is None:   # no value, or every value empty
        return Scan.empty(n)
    offsets = np.frombuffer(array.buffers()[1], dtype=np.int64)[array.offset:][: n + 1]
    data = np.frombuffer(array.buffers()[2], dtype=np.uint8)[: offsets[-1]]
    found = Scan.empty(n)
    found.data, found.starts = data, offsets[:-1]
    _scan_all(found, np.diff(offsets))
    if listed is not None:
        with _MEMO_LOCK:   # one reading kept: for a million values, some 50 MB
            _MEMO[:] = [(listed, found)]
    return found


def forget() -> None:
    """Drop the kept reading (benchmarks time the first reading of a column)."""
    with _MEMO_LOCK:
        _MEMO.clear()


def _recall(values: list[str]) -> Scan | None:
    """The kept reading, if it was of values equal to these (the same strings, mostly:
    comparing them is quick). It is given once: deciding and converting are done."""
    with _MEMO_LOCK:
        kept = _MEMO[0] if _MEMO else None
        if kept is not None and len(kept[0]) == len(values) and kept[0] == values:
            _MEMO.clear()
            return kept[1]
    return None


def _scan_all(found: Scan, lengths: np.ndarray) -> None:
    usable = (lengths >= MIN_LENGTH) & (lengths <= MAX_LENGTH)
    if not usable.any():
        return
    if lengths.min() == lengths.max():   # one length: the usual column of time stamps
        _scan_length(found, slice(None), int(lengths[0]))
        return
    for length in np.flatnonzero(np.bincount(lengths[usable])).tolist():
        _scan_length(found, np.flatnonzero(lengths == length), length)


def byte_matrix(data: np.ndarray, starts: np.ndarray, length: int) -> np.ndarray:
    """The ``length`` bytes at each of ``starts``, one row each (a view when they lie
    packed one after another)."""
    first = int(starts[0])
    if starts[-1] - first == (len(starts) - 1) * length and (
            len(starts) < 3 or (np.diff(starts) == length).all()):
        return data[first: first + len(starts) * length].reshape(len(starts), length)
    return sliding_window_view(data, length)[starts]


def _scan_length(found: Scan, rows: np.ndarray | slice, length: int) -> None:
    """Group values of one length by class string; read each group whose class is ours."""
    matrix = byte_matrix(found.data, found.starts[rows], length)
    keys = np.ascontiguousarray(_CLASS[matrix]).view(f"S{length}").ravel()
    left = None   # None: every row is left (no copy of the index for one class)
    for _ in range(MAX_CLASSES):
        key = keys[0 if left is None else left[0]]
        same = keys == key if left is None else keys[left] == key
        layout = _layout(key.decode("ascii"))
        if layout is not None:
            if left is not None:
                picked = left[same]
            else:   # the first class: every row of it, often all of them
                picked = slice(None) if same.all() else np.flatnonzero(same)
            _read_group(found, matrix[picked], _within(rows, picked), layout)
        left = np.flatnonzero(~same) if left is None else left[~same]
        if not len(left):
            return


# Two ASCII digits read as one big-endian 16-bit number -> their value (255: not digits).
_PAIRS = np.full(1 << 16, 255, dtype=np.uint8)
for _k in range(100):
    _PAIRS[(ord("0") + _k // 10) << 8 | (ord("0") + _k % 10)] = _k


def _pair(matrix: np.ndarray, at: int) -> np.ndarray:
    """The two-digit number at columns ``at``, ``at + 1`` of each row (rows are digits
    there: their class says so)."""
    return _PAIRS[matrix[:, at: at + 2].view(">u2")[:, 0]]


def _within(rows: np.ndarray | slice, picked: np.ndarray | slice) -> np.ndarray | slice:
    """The values at positions ``picked`` of ``rows`` (a slice stands for every value)."""
    if isinstance(picked, slice):
        return rows
    return picked if isinstance(rows, slice) else rows[picked]


def number(matrix: np.ndarray, span: Span) -> np.ndarray:
    """The decimal number of 1-4 digits written at ``span`` of each row."""
    start, stop = span
    if stop - start == 1:
        return matrix[:, start].astype(np.int32) - ord("0")
    value = _pair(matrix, start).astype(np.int32)
    if stop - start == 3:
        return value * 10 + matrix[:, start + 2] - ord("0")
    return value * 100 + _pair(matrix, start + 2) if stop - start == 4 else value


def _at_most(matrix: np.ndarray, span: Span, top: int) -> np.ndarray | bool:
    """Whether the number at ``span`` is at most ``top`` (two digits: compared as bytes)."""
    start, stop = span
    if stop - start == 1:
        return True   # one digit: at most 9
    written = matrix[:, start: stop].view(">u2")[:, 0]
    return written <= ((ord("0") + top // 10) << 8 | (ord("0") + top % 10))


def _read_group(found: Scan, matrix: np.ndarray, rows: np.ndarray | slice,
                layout: Layout) -> None:
    a, b, c = (number(matrix, span) for span in layout.numbers)
    ok = (a != 0) | (b != 0) | (c != 0)   # 0/0/0 is a sentinel: parse reads it its way
    if layout.clock:   # parse refuses a 24th hour and lists a leap second its own way
        for span, top in zip(layout.clock, (23, 59, 59), strict=False):
            ok &= _at_most(matrix, span, top)
    if layout.zone is not None and layout.zone[1] - layout.zone[0] > 1:
        start = layout.zone[0]
        ok &= _at_most(matrix, (start + 1, start + 3), MAX_OFFSET_HOURS) & _at_most(
            matrix, (start + 4, start + 6), 59)
    if not ok.all():
        if isinstance(rows, slice):
            rows = np.arange(len(found.layout))[rows]
        rows, a, b, c = rows[ok], a[ok], b[ok], c[ok]
    found.layout[rows] = len(found.layouts)
    found.layouts.append(layout)
    found.parts[rows, 0], found.parts[rows, 1], found.parts[rows, 2] = a, b, c


# ---------------------------------------------------------------- writing the output

_TWO = np.array([[ord("0") + k // 10, ord("0") + k % 10] for k in range(100)], np.uint8)


# Where year, month and day sit among a value's three numbers: per reading code (the
# index of the order in dates_parse.ORDERS: DMY, MDY, YMD; then a fixed date as written).
FIELDS = ((2, 1, 0), (2, 0, 1), (0, 1, 2), (0, 1, 2))


def render(found: Scan, rows: np.ndarray, ymd: tuple[np.ndarray, np.ndarray, np.ndarray],
           how: np.ndarray, values: Sequence[str] | np.ndarray) -> np.ndarray:
    """Output text (object array) of the values ``rows`` read as the days ``ymd``
    (year, month, day per row), their numbers taken in the order ``how`` (see FIELDS):
    ``YYYY-MM-DD`` and, where a time is written, ``THH:MM:SS[.f][±HH:MM]``, as
    ``dates_parse.render`` writes them."""
    groups = found.layout[rows].astype(np.int64) * len(FIELDS) + how
    first = int(groups[0])
    if (groups == first).all():
        return _render_group(found, rows, ymd, values, *divmod(first, len(FIELDS)))
    text = np.empty(len(rows), dtype=object)
    for group in np.flatnonzero(np.bincount(groups)).tolist():
        pick = np.flatnonzero(groups == group)
        text[pick] = _render_group(found, rows[pick], tuple(x[pick] for x in ymd), values,
                                   *divmod(group, len(FIELDS)))
    return text


def _render_group(found: Scan, rows: np.ndarray, ymd: tuple[np.ndarray, ...],
                  values: Sequence[str] | np.ndarray, which: int, how: int) -> np.ndarray:
    """The output of values written one way (``layouts[which]``) and read one way."""
    layout = found.layouts[which]
    if layout.as_output:   # already the output: keep the string itself
        if isinstance(values, np.ndarray):
            return values[rows]
        return np.array([values[i] for i in rows.tolist()], dtype=object)
    matrix = byte_matrix(found.data, found.starts[rows], layout.length)
    if layout.copied:
        out = matrix.copy()
        out[:, DATE_LENGTH] = ord("T")
        return strings(out)
    out = np.empty((len(matrix), layout.output_length), dtype=np.uint8)
    _write_date(out, matrix, [layout.numbers[k] for k in FIELDS[how]], ymd)
    if layout.clock:
        _write_clock(out, matrix, layout)
    return strings(out)


def _write_date(out: np.ndarray, matrix: np.ndarray, spans: list[Span],
                ymd: tuple[np.ndarray, ...]) -> None:
    """YYYY-MM-DD: the digits as written where year, month and day are written with 4,
    2 and 2 digits (``spans``), else from the numbers."""
    out[:, [4, 7]] = ord("-")
    if [stop - start for start, stop in spans] == [4, 2, 2]:
        for at, (start, stop) in zip((0, 5, 8), spans, strict=True):
            out[:, at: at + stop - start] = matrix[:, start: stop]
        return
    year, month, day = ymd
    out[:, 0:2] = _TWO[year // 100]
    out[:, 2:4] = _TWO[year % 100]
    out[:, 5:7] = _TWO[month]
    out[:, 8:10] = _TWO[day]


def _write_clock(out: np.ndarray, matrix: np.ndarray, layout: Layout) -> None:
    out[:, DATE_LENGTH] = ord("T")
    for at, span in zip((11, 14, 17), layout.clock, strict=False):
        if span[1] - span[0] == 2:
            out[:, at: at + 2] = matrix[:, span[0]: span[1]]
        else:   # a one-digit hour
            out[:, at] = ord("0")
            out[:, at + 1] = matrix[:, span[0]]
    out[:, [13, 16]] = ord(":")
    if len(layout.clock) < 3:
        out[:, 17:19] = ord("0")
    at = 19
    if layout.fraction:   # the mark and digits as written ('.' only in our shapes)
        start, stop = layout.fraction
        out[:, at: at + stop - start + 1] = matrix[:, start - 1: stop]
        at += stop - start + 1
    if layout.zone:
        start, stop = layout.zone
        out[:, at: at + 6] = (np.frombuffer(b"+00:00", np.uint8) if stop - start == 1
                              else matrix[:, start: stop])


def strings(matrix: np.ndarray) -> np.ndarray:
    """One str per row of an ASCII byte matrix (object array)."""
    n, width = matrix.shape
    data = pa.py_buffer(np.ascontiguousarray(matrix, dtype=np.uint8))
    if n * width < 2 ** 31:   # 32-bit offsets: a little quicker to turn into str
        array = pa.StringArray.from_buffers(
            n, pa.py_buffer(np.arange(n + 1, dtype=np.int32) * np.int32(width)), data)
    else:
        array = pa.LargeStringArray.from_buffers(
            n, pa.py_buffer(np.arange(n + 1, dtype=np.int64) * width), data)
    return np.asarray(array.to_numpy(zero_copy_only=False), dtype=object)


# ---------------------------------------------------------------- the calendar

MONTH_DAYS = np.array([0, 31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31], dtype=np.int32)
DAYS_BEFORE_MONTH = np.cumsum(MONTH_DAYS)   # index: month - 1


def is_leap(year: np.ndarray) -> np.ndarray:
    """The Gregorian rule (ISO 8601 uses the Gregorian calendar)."""
    return (year % 4 == 0) & ((year % 100 != 0) | (year % 400 == 0))


LONGEST_MONTHS = MONTH_DAYS + (np.arange(13) == 2)   # February of a leap year: 29


def real_day(year: np.ndarray, month: np.ndarray, day: np.ndarray) -> np.ndarray:
    """Whether ``date(year, month, day)`` exists (Python's ``date`` takes years 1-9999)."""
    ok = (month >= 1) & (month <= 12) & (day >= 1) & (year >= 1) & (year <= 9999)
    ok &= day <= LONGEST_MONTHS[np.clip(month, 0, 12)]
    leap_day = np.flatnonzero(ok & (day == 29) & (month == 2))
    if len(leap_day):
        ok[leap_day] = is_leap(year[leap_day])
    return ok


def ordinal_days(year: np.ndarray, month: np.ndarray, day: np.ndarray) -> np.ndarray:
    """``date(year, month, day).toordinal()`` per element, 0 where there is no such day."""
    year = year.astype(np.int64)
    safe_month = np.clip(month, 1, 12)
    before = year - 1
    days = (before * 365 + before // 4 - before // 100 + before // 400
            + DAYS_BEFORE_MONTH[safe_month - 1] + ((safe_month > 2) & is_leap(year)) + day)
    return np.where(real_day(year, month, day), days, 0)
