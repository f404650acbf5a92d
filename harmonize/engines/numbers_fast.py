"""Converting the plain shapes most amounts take, for all distinct values at once.

Once a column's decimal mark is known, a value such as "-1.234,50" (a number body alone,
in ASCII, after at most a "-", without leading zeros) is matched by one regular expression
over all values (RE2 in pyarrow), and its output is written by byte operations on the
Arrow buffers: group marks dropped, the decimal mark made ".", trailing fractional zeros
dropped, the sign of a zero dropped. The result is the text ``format_decimal_plain``
writes; every other value goes through the full reading (``numbers_convert``), and
``tests/test_numbers_fast.py`` checks that both give identical results.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from harmonize.engines.numbers_bytes import COMMA, DOT, MINUS, ZERO, ByteView
from harmonize.engines.numbers_forms import LONG_DIGITS, WHOLE

SPACE, APOSTROPHE = ord(" "), ord("'")

# A whole part, then an optional fraction after the decimal mark. (A value that starts
# with the decimal mark, ",5", takes the full reading: its output gains a "0".)
CONVERT_SHAPE = {".": rf"^-?(?:{WHOLE['.']})(?:\.\d+)?$",
                 ",": rf"^-?(?:{WHOLE[',']})(?:,\d+)?$"}


def _ambiguous_shape(mark: str) -> str:
    """The values of the fast shape that both notations read, differently: one mark
    followed by exactly three digits ("1.234", "-12,500")."""
    return rf"^-?[1-9]\d{{0,2}}\{mark}\d{{3}}$"


def _matches(array: pa.Array, pattern: str) -> np.ndarray:
    return np.asarray(pc.match_substring_regex(array, pattern), dtype=bool)


NOT_FAST = 0
READS = {".": 1, ",": 2}   # fast_marks codes of the marks a value is read with


def fast_marks(raw: pa.Array, mark: str | None, settled: Sequence[str]) -> np.ndarray:
    """Per value: the code (``READS``) of the decimal mark the fast path reads it with,
    ``NOT_FAST`` where it does not.

    Under a decided mark, that is every value of the shape the mark's notation reads,
    except an ambiguous one whose mark is not settled. Undecided, a value is read when
    only one notation reads it, or both alike.
    """
    marks = np.full(len(raw), NOT_FAST, dtype=np.int8)
    if len(raw) == 0:
        return marks
    view = ByteView.of(raw)
    too_long = (view.lengths >= LONG_DIGITS) & np.asarray(pc.ascii_is_decimal(raw), bool)
    if mark is not None:
        read = _matches(raw, CONVERT_SHAPE[mark]) & ~too_long
        for unsettled in {".", ","} - set(settled):
            read &= ~_matches(raw, _ambiguous_shape(unsettled))
        marks[read] = READS[mark]
        return marks
    dot, comma = (_matches(raw, CONVERT_SHAPE[m]) & ~too_long for m in (".", ","))
    held = view.holds(".,")
    marked = held["."] | held[","]
    marks[dot & ~(comma & marked)] = READS["."]
    marks[comma & ~dot] = READS[","]
    return marks


def fast_plain(raw: pa.Array, mark: str, keep_trailing_zeros: bool) -> pa.Array:
    """Output text of values of ``CONVERT_SHAPE[mark]``."""
    view = ByteView.of(raw)
    data = view.data
    point_byte, group_byte = (DOT, COMMA) if mark == "." else (COMMA, DOT)
    drop = (data == group_byte) | (data == SPACE) | (data == APOSTROPHE)
    if not keep_trailing_zeros:
        _drop_trailing_zeros(view, point_byte, drop)
    _drop_sign_of_zero(view, point_byte, drop)
    plain = view.compact(drop)
    if point_byte != DOT:   # the only commas left are decimal marks
        plain.data[plain.data == COMMA] = DOT
    return plain.to_arrow()


def _byte_set(chars: str) -> np.ndarray:
    table = np.zeros(256, dtype=bool)
    table[[ord(c) for c in chars]] = True
    return table


ZEROS, DIGITS = _byte_set("0"), _byte_set("0123456789")


def _scan_left(view: ByteView, values: np.ndarray, start: np.ndarray,
               moving: np.ndarray) -> np.ndarray:
    """For each of ``values``, the position reached moving left from ``start`` while the
    byte is in the set ``moving`` (the string's first position minus one at the most).
    Each step touches only the values still moving: the cost is the bytes passed over."""
    data, first = view.data, view.offsets[values]
    at = start.copy()
    active = np.flatnonzero(at >= first)
    while len(active):
        active = active[moving[data[at[active]]]]
        at[active] -= 1
        active = active[at[active] >= first[active]]
    return at


def _drop_trailing_zeros(view: ByteView, point_byte: int, drop: np.ndarray) -> None:
    """Flag the zeros that end a fraction, and the decimal mark when nothing is left
    after it ("12,50" -> "12,5", "12,00" -> "12"; "1.200" under "," is a whole number)."""
    data, ends = view.data, view.offsets[1:]
    ending = np.flatnonzero(data[ends - 1] == ZERO)   # the fast shape has no empty value
    if not len(ending):
        return
    last = ends[ending] - 1
    before_zeros = _scan_left(view, ending, last, ZEROS)
    before_digits = _scan_left(view, ending, before_zeros, DIGITS)
    inside = before_digits >= view.offsets[ending]
    fraction = np.zeros(len(ending), bool)
    fraction[inside] = data[before_digits[inside]] == point_byte
    # the zeros, and the mark too when the zeros were the whole fraction
    first_dropped = np.where(before_zeros == before_digits, before_zeros, before_zeros + 1)
    _flag_ranges(drop, first_dropped[fraction], last[fraction] + 1)


def _flag_ranges(flags: np.ndarray, starts: np.ndarray, stops: np.ndarray) -> None:
    """Set ``flags[starts[i]:stops[i]]`` for every i, in one operation."""
    lengths = stops - starts
    if not lengths.sum():
        return
    step = np.arange(lengths.sum()) - np.repeat(np.cumsum(lengths) - lengths, lengths)
    flags[np.repeat(starts, lengths) + step] = True


def _drop_sign_of_zero(view: ByteView, point_byte: int, drop: np.ndarray) -> None:
    """A zero is written without a sign ("-0,00" -> "0"). In the fast shape a zero's
    whole part is "0": only values starting "-0" are looked at."""
    data, starts, ends = view.data, view.offsets[:-1], view.offsets[1:]
    signed = np.flatnonzero((data[starts] == MINUS) & (view.lengths >= 2))
    signed = signed[data[starts[signed] + 1] == ZERO]
    if not len(signed):
        return
    # "-0", or "-0" and a mark and nothing but zeros after it
    before_zeros = _scan_left(view, signed, ends[signed] - 1, ZEROS)
    zero = (before_zeros == starts[signed]) | (
        (before_zeros == starts[signed] + 2) & (data[before_zeros] == point_byte))
    drop[starts[signed[zero]]] = True


def fast_convert(values: Sequence[str], mark: str | None, settled: Sequence[str],
                 keep: bool) -> tuple[list[str] | np.ndarray, np.ndarray]:
    """(output text, read) per value for the values of the fast shape ("" elsewhere);
    the text is a list when every value is read, else an object array."""
    raw = pa.array(values, type=pa.string())
    marks = fast_marks(raw, mark, settled)
    text = np.full(len(raw), "", dtype=object)
    for reading, code in READS.items():
        chosen = marks == code
        if chosen.all():   # the usual column: straight to Python strings
            return fast_plain(raw, reading, keep).to_pylist(), chosen
        if chosen.any():
            part = fast_plain(raw.filter(pa.array(chosen)), reading, keep)
            text[chosen] = part.to_numpy(zero_copy_only=False)
    return text, marks != NOT_FAST
