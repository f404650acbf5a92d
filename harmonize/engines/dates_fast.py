"""A vectorised path for the way large date-time columns are most often written.

Database and system exports write ISO 8601 extended dates and date-times
(``2024-04-03``, ``2024-04-03 14:05:09``, ``2024-04-03T14:05:09.120+02:00``), and a
column of time stamps is nearly unique per row: a million distinct values. Reading each
one with ``dates_parse.parse`` costs several microseconds, so the values of that one shape
are checked and rewritten here on whole arrays (pyarrow), and only the others go through
the parser. Answers are the parser's: a value is taken here only when its reading is
certain (a real calendar day and time of day, no zone abbreviation, no leap second);
everything else, impossible dates included, is left to the parser and its reasons.
"""

from __future__ import annotations

from collections.abc import Collection, Sequence
from dataclasses import dataclass

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

# ISO 8601:2004 §4.1.2.2 calendar date, §4.2.2.2 time of day, §4.2.5.1 UTC offset, in the
# extended format (RFC 3339 §5.6 allows the space separator). Fixed positions follow.
ISO_SHAPE = (r"^[0-9]{4}-[0-9]{2}-[0-9]{2}"
             r"(?:[T ][0-9]{2}:[0-9]{2}(?::[0-9]{2}(?:\.[0-9]{1,9})?)?"
             r"(?:Z|[+-][0-9]{2}:[0-9]{2})?)?$")
DATE_LENGTH = 10
MONTH_DAYS = np.array([31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31])
MAX_OFFSET_HOURS = 18   # dates_parse.normal_offset refuses larger offsets


@dataclass(frozen=True)
class IsoValues:
    """Which values the fast path reads, and their output text (aligned with the values)."""

    read: np.ndarray     # bool: an ISO date or date-time whose reading is certain
    timed: np.ndarray    # bool: it carries a time of day
    text: np.ndarray     # object: output text where ``read``, else ""

    @classmethod
    def none(cls, n: int) -> IsoValues:
        return cls(np.zeros(n, bool), np.zeros(n, bool), np.full(n, "", object))


def read_iso(values: Sequence[str], with_text: bool = True,
             leave_days: Collection[str] = ()) -> IsoValues:
    """Find the values written in the ISO extended shape and read them on whole arrays.

    ``with_text=False`` skips writing the output (deciding needs only which ones read);
    values whose date part is one of ``leave_days`` (sentinel dates) are left unread."""
    n = len(values)
    if n == 0:
        return IsoValues.none(0)
    try:
        array = pa.array(values, type=pa.large_string())   # 64-bit offsets: one chunk
    except (pa.ArrowException, UnicodeError):   # e.g. lone surrogates: the parser copes
        return IsoValues.none(n)
    shaped = np.asarray(pc.match_substring_regex(array, ISO_SHAPE), dtype=bool)
    found = IsoValues.none(n)
    if not shaped.any():
        return found
    which = np.flatnonzero(shaped)
    text = array.filter(pa.array(shaped))
    chars = _Chars(text)
    ok = chars.valid()
    if leave_days:
        day = pc.utf8_slice_codeunits(text, 0, DATE_LENGTH)
        ok &= ~np.asarray(pc.is_in(day, pa.array(sorted(leave_days), pa.large_string())),
                          dtype=bool)
    found.read[which] = ok
    found.timed[which] = ok & chars.timed
    if with_text:
        found.text[which[ok]] = _strings(_rewrite(text, chars))[ok]
    return found


def _strings(array: pa.Array) -> np.ndarray:
    return np.asarray(array.to_numpy(zero_copy_only=False), dtype=object)


class _Chars:
    """The bytes of ASCII values of the ISO shape, read at fixed positions."""

    def __init__(self, text: pa.Array) -> None:
        offsets = np.frombuffer(text.buffers()[1], dtype=np.int64)
        self.start = offsets[text.offset: text.offset + len(text)]
        self.length = offsets[text.offset + 1: text.offset + len(text) + 1] - self.start
        self.data = np.frombuffer(text.buffers()[2], dtype=np.uint8)
        self.timed = self.length > DATE_LENGTH

    def at(self, position: int) -> np.ndarray:
        """The byte at ``position`` of each value (0 past its end)."""
        inside = self.length > position
        index = np.minimum(self.start + position, len(self.data) - 1)
        return np.where(inside, self.data[index], 0)

    def _number(self, starts: np.ndarray, first: int, stop: int) -> np.ndarray:
        """The digits at ``first:stop`` of values starting at ``starts`` (the shape puts
        digits there for every value given)."""
        value = np.zeros(len(starts), dtype=np.int32)
        for position in range(first, stop):
            value = value * 10 + (self.data[starts + position].astype(np.int32) - ord("0"))
        return value

    def valid(self) -> np.ndarray:
        """A real calendar day (year 1 on), a time of day, an offset the parser accepts."""
        year, month = self._number(self.start, 0, 4), self._number(self.start, 5, 7)
        day = self._number(self.start, 8, 10)
        leap = (year % 4 == 0) & ((year % 100 != 0) | (year % 400 == 0))
        last_day = MONTH_DAYS[np.clip(month, 1, 12) - 1] + ((month == 2) & leap)
        ok = (year >= 1) & (month >= 1) & (month <= 12) & (day >= 1) & (day <= last_day)
        timed = np.flatnonzero(self.timed)   # HH:MM always, then :SS when written
        starts = self.start[timed]
        clock_ok = (self._number(starts, 11, 13) <= 23) & (self._number(starts, 14, 16) <= 59)
        seconds = np.flatnonzero(self.at(16)[timed] == ord(":"))
        clock_ok[seconds] &= self._number(starts[seconds], 17, 19) <= 59
        ok[timed] &= clock_ok
        return ok & self._offset_ok()

    def _offset_ok(self) -> np.ndarray:
        """A written offset ``±HH:MM`` is within ±18:00 with minutes below 60."""
        sign = self.length - 6
        ok = np.ones(len(self.start), dtype=bool)
        has = self.timed & (self.length >= 22)
        if not has.any():
            return ok
        at = self.start + np.maximum(sign, 0)
        is_sign = has & np.isin(self.data[np.minimum(at, len(self.data) - 1)],
                                (ord("+"), ord("-")))
        rows = np.flatnonzero(is_sign)
        digits = [self.data[at[rows] + k].astype(np.int64) - ord("0") for k in (1, 2, 4, 5)]
        hours, minutes = digits[0] * 10 + digits[1], digits[2] * 10 + digits[3]
        ok[rows] = (hours <= MAX_OFFSET_HOURS) & (minutes <= 59)
        return ok


def _rewrite(text: pa.Array, chars: _Chars) -> pa.Array:
    """The parser's output text: ``T`` between date and time, seconds always written,
    ``Z`` as ``+00:00``; a date alone stays as written."""
    spaced = chars.timed & (chars.at(DATE_LENGTH) == ord(" "))
    if spaced.any():   # same lengths: write the "T" into a copy of the bytes
        data = chars.data.copy()
        data[chars.start[spaced] + DATE_LENGTH] = ord("T")
        text = pa.LargeStringArray.from_buffers(len(text), text.buffers()[1],
                                                pa.py_buffer(data), offset=text.offset)
    short = chars.timed & (chars.at(16) != ord(":"))
    if short.any():   # hours and minutes only: the parser writes the seconds
        text = pc.replace_substring_regex(text, r"^([0-9-]{10}T[0-9]{2}:[0-9]{2})($|[Z+-])",
                                          r"\1:00\2")
    if (_last_byte(chars) == ord("Z")).any():
        text = pc.replace_substring_regex(text, r"Z$", "+00:00")
    return text


def _last_byte(chars: _Chars) -> np.ndarray:
    return chars.data[chars.start + chars.length - 1]
