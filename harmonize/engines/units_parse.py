"""Splitting quantity cells and headers into number parts and unit tokens.

A cell is one of: a bare number ("72.5"), a number and a unit with or without a space
("5kg", "1,5 Kilo", "-40 °F"), or a compound of several of them in one dimension with
falling units ("5' 11\"", "5 ft 11 in", "1 h 30 min", "11 st 4 lb"; after feet or stone
the last unit may be left out: "5'11"). Anything else is not a quantity.

The simple forms are split for all distinct values at once by one regular expression
(RE2 in pyarrow, for printable-ASCII values; Python's ``re`` for the rest); only cells
whose unit part still holds a digit are tried as compounds. Number parts are not read
here: the numbers engine's parser reads them, so that "1.234,5" and "1,234.5" follow the
same decimal-mark rules in every engine.
"""

from __future__ import annotations

import re
import unicodedata
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from functools import cache, lru_cache

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from harmonize.engines.numbers_forms import ARABIC_DECIMAL, fold_chars, is_magnitude_word
from harmonize.engines.units_registry import UNITS, Reading, normalise_token, read_token
from harmonize.locales import load_entries

# A number part: digits grouped by three (space, apostrophe, dot or comma), or plain digits,
# with an optional fraction and exponent. The reading of the marks is left to the parser.
# A fraction, as the customary measures are written ("3/4 in", "1 1/2 lb"; "½" is folded
# to "1/2"), comes first: "1 1/2" is one number, not "1" and a unit "1/2".
FRACTION = r"(?:\d+ )?\d+/\d+"
# The Arabic decimal separator (kept by the folding) marks a fraction like "." and ",".
_POINT = f"[.,{ARABIC_DECIMAL}]"
NUMBER = (rf"(?:{FRACTION}|\d{{1,3}}(?:[ '.,]\d{{3}})+(?:{_POINT}\d+)?|\d+(?:{_POINT}\d+)?"
          rf"|{_POINT}\d+)(?:[eE][-+]?\d{{1,3}})?")
SIMPLE = re.compile(rf"^(?P<sign>[-+])?\s*(?P<num>{NUMBER})\s*(?P<unit>[^\d\s.,+\-].*?)?$")
PIECE = re.compile(r"(?P<num>\d+(?:[.,]\d+)?)\s*(?P<unit>[^\d\s][^\d]*?)?\s*(?=\d|$)")

# After these units the last part of a compound may omit its unit ("5'11", "11 st 4").
IMPLIED_NEXT = {"ft": "in", "st": "lb"}
# The units that may follow each unit in a compound, as customarily written (common
# practice, no source): "5 ft 11 in", "11 st 4 lb", "1 h 30 min", "1 m 20 cm".
COMPOUND_NEXT: dict[str, frozenset[str]] = {
    "mi": frozenset({"yd", "ft"}), "yd": frozenset({"ft", "in"}), "ft": frozenset({"in"}),
    "st": frozenset({"lb"}), "lb": frozenset({"oz"}), "ton_long": frozenset({"lb"}),
    "kg": frozenset({"g"}), "m": frozenset({"cm", "mm"}), "cm": frozenset({"mm"}),
    "km": frozenset({"m"}), "wk": frozenset({"d"}), "d": frozenset({"h"}),
    "h": frozenset({"min", "s"}), "min": frozenset({"s"})}

Piece = tuple[str, str | None]  # (number part as written, unit token or None)


_SPACED_DEGREE = re.compile(r"°\s+(?=[CFKcfk]\b)")
# Vulgar fractions ("½", "1¾"): NFKC writes "½" as "1⁄2", so "1½" would become "11⁄2"
_VULGAR = re.compile(r"(?<=\d)(?=[\u00bc-\u00be\u2150-\u215e])")


def fold_text(text: str) -> str:
    """NFKC, then the numbers engine's folding of spaces, apostrophes and minus signs;
    "21 ° C" is written "21 °C", "1½" is written "1 1/2"."""
    text = _VULGAR.sub(" ", text)
    folded = fold_chars(unicodedata.normalize("NFKC", text)).replace("\u2044", "/").strip()
    return _SPACED_DEGREE.sub("°", folded) if "°" in folded else folded


@dataclass(frozen=True)
class Cells:
    """Per distinct value: its pieces (empty when it is not a quantity)."""

    pieces: list[tuple[Piece, ...]]

    @property
    def bare(self) -> np.ndarray:
        return np.array([len(p) == 1 and p[0][1] is None for p in self.pieces], dtype=bool)

    @property
    def parsed(self) -> np.ndarray:
        return np.array([bool(p) for p in self.pieces], dtype=bool)

    def number_parts(self) -> list[str]:
        return [num for pieces in self.pieces for num, _ in pieces]

    def tokens(self) -> set[str]:
        return {unit for pieces in self.pieces for _, unit in pieces if unit is not None}


# Printable ASCII, where NFKC and folding change nothing but the spaces around, and where
# RE2 (pyarrow) reads ``\d`` and ``\s`` exactly as Python's ``re`` does.
_PRINTABLE_ASCII = r"^[\x20-\x7e]*$"


def split_cells(values: Sequence[str]) -> Cells:
    """Split every distinct value into pieces: the simple forms of printable-ASCII values
    by one regular expression over all of them (RE2 in pyarrow), the rest in Python."""
    raw = pa.array([str(v) for v in values], type=pa.string())
    plain = np.asarray(pc.match_substring_regex(raw, _PRINTABLE_ASCII), dtype=bool)
    text = np.empty(len(raw), dtype=object)
    sign, num, unit = (np.full(len(raw), None, dtype=object) for _ in range(3))
    if plain.any():
        folded = pc.utf8_trim(raw.filter(pa.array(plain)), " ")
        text[plain] = folded.to_numpy(zero_copy_only=False)
        found = pc.extract_regex(folded, SIMPLE.pattern)
        matched = np.asarray(found.is_valid(), dtype=bool)
        at = np.flatnonzero(plain)[matched]
        found = found.filter(pa.array(matched))
        sign[at] = found.field("sign").to_numpy(zero_copy_only=False)
        num[at] = found.field("num").to_numpy(zero_copy_only=False)
        unit[at] = found.field("unit").to_numpy(zero_copy_only=False)
    for i in np.flatnonzero(~plain).tolist():
        text[i] = fold_text(str(values[i]))
        found = SIMPLE.search(text[i])
        if found:
            sign[i], num[i], unit[i] = found.group("sign", "num", "unit")
    return Cells(_pieces(text.tolist(), sign.tolist(), num.tolist(), unit.tolist()))


def _pieces(text: list[str], sign: list[str | None], num: list[str | None],
            unit: list[str | None]) -> list[tuple[Piece, ...]]:
    single: dict[str, bool] = {}
    pieces: list[tuple[Piece, ...]] = []
    for raw, s, n, u in zip(text, sign, num, unit, strict=True):
        if n is None:
            pieces.append(compound(raw))
        elif not u:   # no unit part ("" from RE2, None from re)
            pieces.append(((f"{s or ''}{n}", None),))
        elif single.get(u) or single.setdefault(u, _one_token(u)):
            pieces.append(((f"{s or ''}{n}", u.strip()),))
        else:
            pieces.append(compound(raw))
    return pieces


def _one_token(unit: str) -> bool:
    """A unit part without digits, or one that reads as a unit ("m2", "cm3", "ms-1")."""
    return not any(c.isdigit() for c in unit) or bool(read_token(unit.strip()).units)


@lru_cache(maxsize=1 << 16)  # bounded: called per distinct cell text
def compound(text: str) -> tuple[Piece, ...]:
    """Pieces of a compound quantity, or () when the text is not one."""
    matches = list(PIECE.finditer(text))
    if len(matches) < 2 or "".join(m.group(0) for m in matches).replace(" ", "") != \
            text.replace(" ", ""):
        return ()
    pieces: list[Piece] = [(m.group("num"), (m.group("unit") or "").strip() or None)
                           for m in matches]
    if pieces[-1][1] is None:
        implied = IMPLIED_NEXT.get(_single_unit(pieces[-2][1]) or "")
        if implied is None:
            return ()
        pieces[-1] = (pieces[-1][0], UNITS[implied].symbol)
    return tuple(pieces) if _falling_units(pieces) else ()


def _single_unit(token: str | None) -> str | None:
    if token is None:
        return None
    units = read_token(token).units
    return next(iter(units)) if len(units) == 1 else None


def _falling_units(pieces: list[Piece]) -> bool:
    """The first piece one unit, each later piece a unit customarily written after the
    one before: "3 lb 4 oz" ("oz" alone is also a fluid ounce; after "lb" it is not)."""
    if any("," in num or "." in num for num, _ in pieces[:-1]):
        return False
    unit = _single_unit(pieces[0][1])
    for _, token in pieces[1:]:
        if unit is None or token is None:
            return False
        follows = read_token(token).units & COMPOUND_NEXT.get(unit, frozenset())
        unit = next(iter(follows)) if len(follows) == 1 else None
    return unit is not None


# --------------------------------------------------------------------------- headers

_BRACKETED = re.compile(r"[(\[{]\s*(?:in\s+)?(?P<unit>[^()\[\]{}]+?)\s*[)\]}]")
_IN_WORD = re.compile(r"(?:^|[\s_\-])in[\s_\-]+(?P<unit>[^\s_\-][^_]*?)\s*$", re.IGNORECASE)
_LAST_WORD = re.compile(r"[\s_\-]+(?P<unit>[^\s_\-]+)\s*$")


@dataclass(frozen=True)
class HeaderUnit:
    token: str
    reading: Reading
    span: tuple[int, int]   # where the unit is written in the header


def header_unit(header: str) -> HeaderUnit | None:
    """The unit a header names: "Weight (lb)", "Länge [cm]", "temp_F", "Weight_in_lbs"."""
    for pattern, strict in ((_BRACKETED, False), (_IN_WORD, False), (_LAST_WORD, True)):
        found = None
        for match in pattern.finditer(header):
            found = match
        if found is None:
            continue
        token = found.group("unit")
        reading = read_token(token)
        if not reading.units:
            continue
        if strict and reading.how == "case-folded" and len(normalise_token(token)) < 2:
            continue  # "Size_M": a one-letter word in the wrong case names no unit
        if strict and _minimum_not_minute(header, token, found.start("unit")):
            continue  # "temp_min": the minimum temperature, not minutes
        return HeaderUnit(token, reading, found.span("unit"))
    return None


@cache
def header_words(role: str) -> frozenset[str]:
    """Words of one role in ``locales/unit_header_words.txt`` (case folded)."""
    return frozenset(w.casefold() for w in load_entries("unit_header_words").get(role, ()))


def _minimum_not_minute(header: str, token: str, start: int) -> bool:
    """Whether a last word "min" is the minimum: no other word of the header is about time
    (``minute-context`` in ``locales/unit_header_words.txt``)."""
    if token.casefold() != "min":
        return False
    words = re.findall(r"[^\W\d_]+", header[:start].casefold())
    cues = header_words("minute-context")
    return not any(word.startswith(cue) or word.endswith(cue)
                   for word in words for cue in cues)


def clock_hour_header(header: HeaderUnit | None) -> bool:
    """Whether a header's unit is a last word naming the hour in the singular ("peak_hour"),
    which over whole numbers 0-23 is an hour of the day (``hour-of-day``)."""
    return header is not None and header.token.casefold() in header_words("hour-of-day") \
        and header.reading.units == frozenset({"h"})


# The literal text of a workbook number format: quoted ('0.0" kg"') or escaped ('0\ \k\g')
_FORMAT_LITERAL = re.compile(r'"([^"]*)"|\\(.)')
_UNSHOWN_FORMATS = frozenset({"general", "@"})


def format_unit(formats: Mapping[str, int]) -> HeaderUnit | None:
    """The one unit every number format of a workbook column shows after its numbers
    ('0.0" kg"', '#,##0\\ "cm"'), read like a header's unit; None when a format shows
    none, or formats show different ones. Text cells' "General" formats say nothing."""
    found: set[str] = set()
    for fmt in formats:
        if fmt.strip().casefold() in _UNSHOWN_FORMATS:
            continue
        for section in fmt.split(";")[:2]:   # positive and negative numbers
            literal = "".join(a or b for a, b in _FORMAT_LITERAL.findall(section)).strip()
            found.add(literal)
    if len(found) != 1:
        return None
    token = found.pop()
    # '0,"K"' and '0.0,, "M"' show thousands and millions, not kelvin and metres
    if not token or is_magnitude_word(token):
        return None
    reading = read_token(token)
    if not reading.units or reading.how == "case-folded":
        return None
    return HeaderUnit(token, reading, (0, 0))


@cache
def _dimension_words() -> dict[str, str]:
    return {word.casefold(): dim for dim, words in load_entries("unit_dimension_words").items()
            for word in words}


def header_dimensions(header: str) -> set[str]:
    """Dimensions a header's words name ("Gross weight" -> mass)."""
    words = re.findall(r"[^\W\d_]+", header.casefold())
    table = _dimension_words()
    return {dim for word in words for key, dim in table.items() if word.startswith(key)}


# ------------------------------------------------------------- clock-written durations

# Lengths of time written as a clock ("3:30", "26:30", "1:05:10"): hours (any number of
# them), then minutes and seconds 00-59 (ISO 8601:2004 §4.2.2.2 writes a time of day as
# hh:mm:ss, a duration lets the hours run past 24; common practice, no source for the
# latter). ``CLOCK_FORMS`` names what two parts mean; three parts are always h:mm:ss.
_CLOCK_DURATION = (r"^(?P<a>\d+):(?P<b>[0-5]\d)"
                   r"(?::(?P<c>[0-5]\d(?:[.,]\d+)?))?$")
CLOCK_DURATION = re.compile(_CLOCK_DURATION)
CLOCK_LIKE = re.compile(r"[-+]?\d+:\d+(?::\d+(?:[.,]\d+)?)?")
CLOCK_FORMS = {"h:mm": ("h", "min"), "m:ss": ("min", "s")}


def clock_durations(values: Sequence[str], cells: Cells, form: str) -> tuple[Cells, np.ndarray]:
    """``cells`` with each clock-written value ("3:30") split into hours, minutes and
    seconds pieces, and which values were; ``form`` ("h:mm" or "m:ss") says what a value
    of two parts means. Printable-ASCII values are matched by one RE2 expression over all
    of them; the rest are folded first (Arabic-Indic or full-width digits, "：")."""
    raw = pa.array([str(v) for v in values], type=pa.string())
    plain = np.asarray(pc.match_substring_regex(raw, _PRINTABLE_ASCII), dtype=bool)
    parts: list[tuple[str | None, ...] | None] = [None] * len(raw)
    if plain.any():
        found = pc.extract_regex(pc.utf8_trim(raw.filter(pa.array(plain)), " "), _CLOCK_DURATION)
        rows = np.flatnonzero(plain)
        for i, match in zip(rows.tolist(), found.to_pylist(), strict=True):
            if match is not None:
                parts[i] = (match["a"], match["b"], match["c"] or None)
    for i in np.flatnonzero(~plain).tolist():
        match = CLOCK_DURATION.match(fold_text(str(values[i])))
        if match is not None:
            parts[i] = match.group("a", "b", "c")
    pieces = list(cells.pieces)
    first, second = CLOCK_FORMS[form]
    for i, found_parts in enumerate(parts):
        if found_parts is None:
            continue
        a, b, c = found_parts
        pieces[i] = ((a, "h"), (b, "min"), (c, "s")) if c else ((a, first), (b, second))
    return Cells(pieces), np.array([p is not None for p in parts], dtype=bool)
