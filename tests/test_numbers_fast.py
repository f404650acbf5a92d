"""The numbers engine's fast paths give exactly what the full reading gives.

``numbers_forms.analyse`` classifies the values of the fast shape ("-1.234,50", "12")
with two regular expressions and byte operations, and ``numbers_fast`` writes their
output text with byte operations; every other value takes the full reading. Each test
here compares the two on the same values: the full reading (``analyse_full``,
``convert_amounts_full``) is the reference, itself checked against CLDR (babel) and
Python's ``decimal`` in test_numbers_reference.py. ``_split`` and ``_without`` are the
full reading's own shortcuts, checked against the one-pass regex operations.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from decimal import Decimal
from unittest import mock

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from strategies import amounts

from harmonize.context import Context
from harmonize.engines import numbers, numbers_convert, numbers_marks, units, units_convert
from harmonize.engines.base import Outcome
from harmonize.engines.numbers import NumberEngine
from harmonize.engines.numbers_bytes import ByteView
from harmonize.engines.numbers_convert import convert_amounts, convert_amounts_full
from harmonize.engines.numbers_fast import READS, fast_marks
from harmonize.engines.numbers_forms import (
    SPLIT_PATTERN,
    _split,
    _without,
    analyse,
    analyse_full,
    format_decimal_plain,
)
from harmonize.engines.units import UnitEngine
from harmonize.evidence import TableEvidence

try:
    from tests.corpora import numbers as number_corpus
    from tests.corpora import quantities as quantity_corpus
except ImportError:  # tests/ is not a package: pytest puts tests/ itself on sys.path
    from corpora import numbers as number_corpus  # type: ignore[no-redef]
    from corpora import quantities as quantity_corpus  # type: ignore[no-redef]

# digits, every mark the engine reads, signs, currency signs, words and look-alikes; digits
# and marks of other scripts (Arabic-Indic, Persian, Devanagari, full-width), the Arabic
# decimal and thousands separators and percent sign, German ledger letters
ALPHABET = "0123456789.,' -+()%€$£eEkKMm\u00a0\u2212٣abc٫٬٪۵५５，．SHT"
VALUES = st.lists(st.text(alphabet=ALPHABET, max_size=14), min_size=1, max_size=40)


def _group(digits: str, mark: str, lakh: bool) -> str:
    """Digits grouped by threes (lakh: the last three, then twos), as written by hand."""
    head, tail = digits[:-3], digits[-3:]
    size = 2 if lakh else 3
    groups = [tail] if head else [digits]
    while head:
        groups.insert(0, head[-size:])
        head = head[:-size]
    return mark.join(groups)


SHAPES = ("whole", "grouped", "lakh", "fraction", "grouped fraction", "mark first",
          "ambiguous", "zero", "long", "leading zeros", "stray mark")


@st.composite
def plain_amounts(draw: st.DrawFn) -> str:
    """Amounts of the fast shape in every notation, and the near misses around it:
    leading zeros, a stray or missing group mark, a sign or a suffix, 16 digits."""
    shape = draw(st.sampled_from(SHAPES))
    mark, group = draw(st.sampled_from([(".", ","), (",", "."), (".", " "), (",", " "),
                                        (".", "'"), (",", "\u00a0")]))
    whole = str(draw(st.integers(0, 10**9)))
    fraction = draw(st.text("0123456789", min_size=1, max_size=5))
    body = {
        "whole": whole,
        "grouped": _group(whole, group, False),
        "lakh": _group(whole, ",", True),
        "fraction": whole + mark + fraction,
        "grouped fraction": _group(whole, group, False) + mark + fraction,
        "mark first": mark + fraction,
        "ambiguous": str(draw(st.integers(1, 999))) + draw(st.sampled_from(".,"))
        + draw(st.text("0123456789", min_size=3, max_size=3)),
        "zero": "0" + draw(st.sampled_from(["", mark + "0", mark + "00", mark + "000"])),
        "long": str(draw(st.integers(10**15, 10**20))),
        "leading zeros": "0" + whole + draw(st.sampled_from(["", mark + fraction])),
        "stray mark": whole[:2] + draw(st.sampled_from(".,")) + whole[2:] + mark + fraction,
    }[shape]
    sign = draw(st.sampled_from(["", "", "-", "-", "+", "\u2212", " "]))
    return sign + body + draw(st.sampled_from(["", "", "", "", " ", "-", "%", ",-", "0"]))


COLUMN = st.lists(st.one_of(plain_amounts(), plain_amounts(), plain_amounts(), amounts(),
                            st.text(ALPHABET, max_size=14)),
                  min_size=5, max_size=60).map(lambda v: list(dict.fromkeys(v)))

FIELDS = ("status", "shift", "negative", "percent", "currency", "has_currency",
          "bare_digits", "magnitude", "has_magnitude", "length", "zero_first", "text",
          "body", "dot_digits", "comma_digits", "body_length", "body_zero_first", "side",
          "thousands", "arabic_decimal")


@contextmanager
def full_reading() -> Iterator[None]:
    """Every engine module reads every value in full: no fast shape anywhere."""
    def nothing_fast(values, *_):
        return np.full(len(values), "", dtype=object), np.zeros(len(values), bool)

    with mock.patch.multiple(numbers_convert, analyse=analyse_full,
                             fast_convert=nothing_fast), \
            mock.patch.object(numbers, "analyse", analyse_full), \
            mock.patch.object(numbers_marks, "analyse", analyse_full), \
            mock.patch.object(units, "analyse", analyse_full), \
            mock.patch.object(units_convert, "analyse", analyse_full):
        yield


def same_result(fast, full) -> None:
    assert fast.text == full.text
    assert fast.outcome.tolist() == full.outcome.tolist()
    assert (fast.reasons, fast.candidates, fast.best) == (full.reasons, full.candidates,
                                                          full.best)
    assert fast.extra == full.extra


# ------------------------------------------------------------------ reading forms


@settings(max_examples=120, deadline=None)
@given(COLUMN)
def test_fast_forms_match_the_full_reading(values: list[str]) -> None:
    fast, full = analyse(values), analyse_full(values)
    for field in FIELDS:
        assert getattr(fast, field).tolist() == getattr(full, field).tolist(), field
    for char in ".,' ":
        assert fast.has_char(char).tolist() == full.has_char(char).tolist(), char
        assert full.has_char(char).tolist() == [char in b for b in full.body.tolist()]
    assert [fast.text_at(i) for i in range(len(values))] == full.text.tolist()


def test_a_plain_column_is_read_by_the_fast_shape() -> None:
    # the amounts of an export take the fast path (it is what makes a million rows quick)
    values = ["1.234,50", "-12,5", "0,75", "1 234,5", "12", "1.234.567", "1,234.5", "0.5"]
    assert analyse(values).fast.all()
    assert (fast_marks(pa.array(values[:5]), ",", [".", ","]) == READS[","]).all()
    assert analyse(["007", "1.2.3", "€5", " 5", "1234567890123456"]).fast.sum() == 0


# ------------------------------------------------------------------ converting


@st.composite
def conventions(draw: st.DrawFn) -> dict:
    mode = draw(st.sampled_from(["none", "single", "mixed"]))
    return {"decimal_mark": draw(st.sampled_from([".", ",", "undecided", None])),
            "settled_marks": draw(st.sampled_from([None, [], ["."], [","], [".", ","]])),
            "likely_decimal_mark": draw(st.sampled_from([None, ".", ","])),
            "ungrouped_digits": draw(st.sampled_from([None, 4, 6])),
            "trailing_zeros": draw(st.sampled_from(["drop", "keep"])),
            "percent": draw(st.booleans()), "currency_mode": mode,
            "currency": None if mode == "none" else draw(st.sampled_from([None, "EUR"])),
            "symbols": draw(st.sampled_from([{}, {"$": "CAD"}])),
            "bare_percent": draw(st.sampled_from([None, "points", "fraction", "listed"])),
            "side_marks": draw(st.sampled_from([None, "column", "debit-negative"])),
            "soll_haben": draw(st.booleans()), "currency_thousands": draw(st.booleans())}


@settings(max_examples=120, deadline=None)
@given(COLUMN, conventions())
def test_fast_conversion_matches_the_full_reading(values: list[str], convention: dict) -> None:
    fast = convert_amounts(values, convention)
    with full_reading():
        full = convert_amounts(values, convention)
    same_result(fast, full)
    assert full.text == convert_amounts_full(values, convention).text


@settings(max_examples=100, deadline=None)
@given(st.text("0123456789", min_size=1, max_size=6), st.sampled_from(["", "-"]),
       st.sampled_from([".", ","]), st.booleans())
def test_a_value_starting_with_its_mark(digits: str, sign: str, mark: str, keep: bool) -> None:
    # ".0" once came out empty: Python's decimal module is the reference for the text
    convention = {"decimal_mark": mark, "trailing_zeros": "keep" if keep else "drop"}
    result = convert_amounts([f"{sign}{mark}{digits}"], convention)
    assert result.text == [format_decimal_plain(Decimal(f"{sign}.{digits}"), keep)]


@pytest.mark.parametrize("seed", range(4))
def test_corpus_decisions_and_outputs_are_unchanged(seed: int) -> None:
    """The invented corpora decide and convert alike with and without the fast paths."""
    frames = [(number_corpus.make_table(seed, rows=250).frame, NumberEngine()),
              (quantity_corpus.make_sheet(seed, rows=250).frame, UnitEngine())]
    for frame, engine in frames:
        table = TableEvidence.from_frame(frame.astype(str))
        for column in table.columns:
            fast = _decide_and_convert(engine, table, column.name)
            with full_reading():
                full = _decide_and_convert(engine, table, column.name)
            assert fast == full, column.name


def _decide_and_convert(engine, table: TableEvidence, name: str):
    column = table.column(name)
    decision = engine.propose(column, Context(table))
    if decision is None:
        return None
    conventions = [decision.convention]
    if decision.groups:
        conventions += [decision.groups.convention_for(decision.convention, label)
                        for label in sorted(decision.groups.conventions)]
    results = [engine.convert(column.values.tolist(), c) for c in conventions]
    return repr(decision), [(r.text, r.outcome.tolist(), r.reasons, r.candidates, r.best)
                            for r in results]


def test_an_export_column_converts_whole() -> None:
    # de-DE amounts (CLDR: decimal ",", group "."), all in the fast shape
    values = ["33.496,29", "17.930,40", "1,00", "-0,00", "0,50", "1.000.000,10", "12"]
    engine = NumberEngine()
    table = TableEvidence.from_frame(pd.DataFrame({"Betrag": values}))
    decision = engine.propose(table.column("Betrag"), Context(table))
    result = engine.convert(values, decision.convention)
    assert result.text == ["33496.29", "17930.4", "1", "0", "0.5", "1000000.1", "12"]
    assert (result.outcome == Outcome.CONVERTED).all()


# ------------------------------------------------------------------ byte views


@settings(max_examples=200, deadline=None)
@given(st.lists(st.text("ab., '", max_size=5), max_size=12), st.integers(0, 3))
def test_byte_views_count_like_python(values: list[str], skip: int) -> None:
    array = pa.array(["x"] * skip + values, type=pa.string()).slice(skip)  # an offset too
    view = ByteView.of(array)
    held = view.holds(".,' ")
    for char in ".,' ":
        assert held[char].tolist() == [char in v for v in values]
    assert view.first_bytes().tolist() == [ord(v[0]) if v else 0 for v in values]
    assert view.compact(view.data == ord(".")).to_arrow().to_pylist() == [
        v.replace(".", "") for v in values]


# ------------------------------------------------------------------ full reading's own


def full_split(text: pa.Array) -> tuple[list, list, list, list]:
    split = pc.extract_regex(text, SPLIT_PATTERN)
    valid = np.asarray(split.is_valid(), dtype=bool).tolist()
    return (valid, *(split.field(name).to_pylist() for name in ("pre", "num", "post")))


@settings(max_examples=200, deadline=None)
@given(VALUES)
def test_split_matches_the_full_pattern(values: list[str]) -> None:
    text = pa.array(values, type=pa.string())
    matched, pre, num, post = _split(text)
    valid, pre_ref, num_ref, post_ref = full_split(text)
    assert matched.tolist() == valid
    for i, ok in enumerate(valid):
        if ok:   # groups of a value the pattern does not match are never read
            assert (pre[i].as_py(), num[i].as_py(), post[i].as_py()) == (
                pre_ref[i], num_ref[i], post_ref[i])


@settings(max_examples=200, deadline=None)
@given(VALUES)
def test_without_matches_the_regex_rewrite(values: list[str]) -> None:
    text = pa.array(values, type=pa.string())
    assert _without(text, ", '").to_pylist() == pc.replace_substring_regex(
        text, r"[, ']", "").to_pylist()
    assert _without(text, ". '").to_pylist() == [v.replace(".", "").replace(" ", "")
                                                .replace("'", "") for v in values]


def test_a_column_of_bare_bodies_and_a_mixed_one_read_alike() -> None:
    # the same values alone (every one a bare body: the shortcut only) and beside
    # others that need the full pattern must read the same
    bodies = ["1.234,50", "0,5", "12", ",75", "1 234,5", "7'500"]
    mixed = bodies + ["EUR 3,20", "(1.234,50)", "5,-", "n/a"]
    alone, beside = analyse(bodies), analyse(mixed)
    for field in ("status", "dot_digits", "comma_digits", "negative", "currency"):
        assert getattr(alone, field).tolist() == getattr(beside, field)[: len(bodies)].tolist()
    # de-DE (CLDR decimal ",", group "."): 1.234,50 is 1234.5
    result = convert_amounts(mixed, {"decimal_mark": ",", "currency_mode": "single",
                                     "currency": "EUR"})
    assert result.text[:6] == ["1234.5", "0.5", "12", "0.75", "1234.5", "7500"]
    assert result.text[7:9] == ["-1234.5", "5"]
