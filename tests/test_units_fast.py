"""The units engine's shortcuts give exactly what the general reading gives.

``split_cells`` splits printable-ASCII cells with one regular expression over all of them
(RE2 in pyarrow) and the rest with Python's ``re``; ``Tally.of`` counts each distinct
set of unit tokens once; ``convert_quantities`` writes a cell with one number reading and
one unit directly (``plain_in``, cached). Each is compared here with the plain per-value
reading it replaces, on generated cells.
"""

from __future__ import annotations

from collections import Counter

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st
from strategies import amounts, quantities

from harmonize.engines.base import Converted, Outcome
from harmonize.engines.units import Tally
from harmonize.engines.units_convert import (
    NumberReadings,
    UnitMemo,
    convert_quantities,
    read_cell,
)
from harmonize.engines.units_parse import SIMPLE, _one_token, compound, fold_text, split_cells
from harmonize.engines.units_registry import normalise_token, read_token

ODD = ["", " ", "\t", "\x0b", "\x1c", "\u00a0", "\u3000", "\u2028", "°", "٣", "5", "x", "٫",
       "５"]
TOKENS = ["kg", " kg", "KG", " Kilo", " lbs.", " ° C", "°F", " m²", "m2", " cm3", " ms-1",
          " ft 11 in", "' 11\"", " h 30 min", " st 4 lb", " oz", " gal", " ton", "Mg", " mg",
          "kg kg", " 1/2", "", " кг", "公斤", " S", " H", "٫٥ كغ"]


@st.composite
def cells(draw: st.DrawFn) -> str:
    """Quantity cells, with the spaces and control characters where ``re`` and RE2
    could part ways (RE2's ``\\s`` is ASCII only)."""
    ambiguous = st.tuples(st.integers(1, 999), st.sampled_from(".,"), st.integers(0, 999),
                          st.sampled_from(TOKENS)).map(lambda t: f"{t[0]}{t[1]}{t[2]:03d}{t[3]}")
    text = draw(st.one_of(quantities(), ambiguous,
                          st.tuples(amounts(), st.sampled_from(TOKENS)).map("".join)))
    return draw(st.sampled_from(ODD)) + text + draw(st.sampled_from(ODD))


COLUMN = st.lists(cells(), min_size=1, max_size=40).map(lambda v: list(dict.fromkeys(v)))


def split_in_python(values: list[str]) -> list[tuple]:
    """Each cell split on its own with Python's ``re`` (the reading RE2 stands in for)."""
    pieces = []
    for value in values:
        text = fold_text(str(value))
        found = SIMPLE.search(text)
        sign, num, unit = found.group("sign", "num", "unit") if found else (None, None, None)
        if num is None:
            pieces.append(compound(text))
        elif unit is None:
            pieces.append(((f"{sign or ''}{num}", None),))
        elif _one_token(unit):
            pieces.append(((f"{sign or ''}{num}", unit.strip()),))
        else:
            pieces.append(compound(text))
    return pieces


@settings(max_examples=100, deadline=None)
@given(COLUMN)
def test_split_matches_python_re(values: list[str]) -> None:
    assert split_cells(values).pieces == split_in_python(values)


@settings(max_examples=100, deadline=None)
@given(COLUMN, st.lists(st.integers(1, 50), min_size=40, max_size=40))
def test_tally_counts_each_cell(values: list[str], weights: list[int]) -> None:
    found = split_cells(values)
    counts = np.asarray(weights[: len(values)], dtype=np.int64)
    tally = Tally.of(found, counts)
    dims: Counter[str] = Counter()
    tokens: Counter[str] = Counter()
    unit_cells = bare_cells = 0
    for pieces, count in zip(found.pieces, counts.tolist()):   # one cell at a time
        if not pieces:
            continue
        if len(pieces) == 1 and pieces[0][1] is None:
            bare_cells += count
            continue
        unit_cells += count
        shared = None
        for _, token in pieces:
            tokens[normalise_token(token or "")] += count
            seen = read_token(token or "").dimensions
            shared = seen if shared is None else shared & seen
        if shared and len(shared) == 1:
            dims[next(iter(shared))] += count
    assert (tally.dimension_cells, tally.unit_cells, tally.bare_cells, tally.token_cells) == (
        dims, unit_cells, bare_cells, tokens)


CONVENTIONS = [
    {"dimension": "mass", "target": "kg", "bare_unit": None, "column_units": ["kg", "lb"],
     "units": {}, "customary": None, "decimal_mark": None, "likely_decimal_mark": ",",
     "ungrouped_digits": None, "significant_digits": 15},
    {"dimension": "mass", "target": "lb", "bare_unit": "kg", "column_units": ["kg"],
     "units": {"ton": "t"}, "customary": "US", "decimal_mark": ",",
     "likely_decimal_mark": None, "ungrouped_digits": 4, "significant_digits": 6},
    {"dimension": "length", "target": "m", "bare_unit": None, "column_units": [],
     "units": {}, "customary": None, "decimal_mark": ".", "likely_decimal_mark": None,
     "ungrouped_digits": None, "significant_digits": 15},
    {"dimension": "temperature", "target": "degC", "bare_unit": "degF", "column_units": [],
     "units": {}, "customary": None, "decimal_mark": None, "likely_decimal_mark": None,
     "ungrouped_digits": 6, "significant_digits": 15},
]


def convert_each(values: list[str], convention: dict) -> Converted:
    """Every cell through ``read_cell``, the general reading (no shortcut)."""
    found = split_cells(values)
    numbers = NumberReadings.of(found.number_parts(), convention["decimal_mark"],
                                convention["ungrouped_digits"] or 0)
    memo = UnitMemo(convention)
    result = Converted.empty(len(values))
    for i, pieces in enumerate(found.pieces):
        cell = read_cell(pieces, numbers, memo, convention["significant_digits"]) \
            if pieces else None
        texts = {f"{v.normalize():f}" for v, _ in cell.readings} if cell else set()
        if cell is None or cell.problem or len(texts) != 1:
            result.unresolved(i, "")
        else:
            result.set(i, texts.pop())
    return result


@settings(max_examples=80, deadline=None)
@given(COLUMN, st.sampled_from(CONVENTIONS))
def test_direct_cells_match_the_general_reading(values: list[str], convention: dict) -> None:
    fast, each = convert_quantities(values, convention), convert_each(values, convention)
    assert (fast.outcome == Outcome.CONVERTED).tolist() == (
        each.outcome == Outcome.CONVERTED).tolist()
    done = np.flatnonzero(fast.outcome == Outcome.CONVERTED).tolist()
    # Python's decimal is the reference for the plain text (no exponent, no "-0")
    assert [fast.text[i] for i in done] == [
        "0" if each.text[i] in ("-0", "0") else each.text[i] for i in done]
