"""Evidence from row order and from the other cells of a row (numbers engine).

* A fixed-width digit column that changes little from row to row is a measured series,
  not a column of codes: the BLS employment counts shipped in vega_datasets (a test
  dependency) are read as numbers, while codes in random or sorted order stay declined.
* A column whose every value reads two ways ("28.980") is decided by the other numbers of
  the same rows ("2710.349", "1707.4"), never by rows of another writer.

The real rows below are the first quarters of statsmodels' ``macrodata.csv`` (US
macroeconomic series from the Federal Reserve and BEA as shipped in statsmodels'
datasets, comma-delimited, '.' decimal marks: realgdp in billions of chained 2005
dollars, cpi an index, pop in millions; statsmodels' dataset notes).
"""

from __future__ import annotations

from decimal import Decimal
from importlib.resources import files
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from harmonize.context import Context
from harmonize.engines.base import Outcome
from harmonize.engines.numbers import NumberEngine
from harmonize.engines.numbers_forms import analyse
from harmonize.engines.numbers_series import measured_series
from harmonize.evidence import TableEvidence
from harmonize.options import Options

ENGINE = NumberEngine()

# statsmodels datasets/macrodata/macrodata.csv, rows 1-24: year, quarter, realgdp,
# realcons, cpi, pop exactly as written in the file
MACRODATA = """\
1959,1,2710.349,1707.4,28.980,177.146
1959,2,2778.801,1733.7,29.150,177.830
1959,3,2775.488,1751.8,29.350,178.657
1959,4,2785.204,1753.7,29.370,179.386
1960,1,2847.699,1770.5,29.540,180.007
1960,2,2834.390,1792.9,29.550,180.671
1960,3,2839.022,1785.8,29.750,181.528
1960,4,2802.616,1788.2,29.840,182.287
1961,1,2819.264,1787.7,29.810,182.992
1961,2,2872.005,1814.3,29.920,183.691
1961,3,2918.419,1823.1,29.980,184.524
1961,4,2977.830,1859.6,30.040,185.242
1962,1,3031.241,1879.4,30.210,185.874
1962,2,3064.709,1902.5,30.220,186.538
1962,3,3093.047,1917.9,30.380,187.323
1962,4,3100.563,1945.1,30.440,188.013
1963,1,3141.087,1958.2,30.480,188.580
1963,2,3180.447,1976.9,30.690,189.242
1963,3,3240.332,2003.8,30.750,190.028
1963,4,3264.967,2020.6,30.940,190.668
1964,1,3338.246,2060.5,30.950,191.245
1964,2,3376.587,2096.7,31.020,191.889
1964,3,3422.469,2135.2,31.120,192.631
1964,4,3431.957,2141.2,31.280,193.223"""
MACRO_COLUMNS = ["year", "quarter", "realgdp", "realcons", "cpi", "pop"]


def macrodata() -> pd.DataFrame:
    rows = [line.split(",") for line in MACRODATA.splitlines()]
    return pd.DataFrame(rows, columns=MACRO_COLUMNS)


def convert_column(frame: pd.DataFrame, name: str, options: Options | None = None):
    """(decision, text, outcome) of one column decided and converted as the core does
    (per group where the decision splits the rows)."""
    table = TableEvidence.from_frame(frame)
    context = Context(table, options)
    column = table.column(name)
    decision = ENGINE.propose(column, context)
    assert decision is not None
    codes = column.codes
    text, outcome = [""] * len(codes), np.zeros(len(codes), np.int8)
    labels = np.full(len(codes), -1)
    conventions = []
    if decision.groups is not None:
        split = context.split(decision.groups.by)
        labels = split.codes
        conventions = [decision.groups.convention_for(decision.convention, label)
                       for label in split.labels]
    for group in range(-1, len(conventions)):
        rows = np.flatnonzero(labels == group)
        if not len(rows):
            continue
        wanted = np.unique(codes[rows])
        result = ENGINE.convert(column.values[wanted].tolist(),
                                conventions[group] if group >= 0 else decision.convention)
        where = {int(v): i for i, v in enumerate(wanted)}
        for row in rows.tolist():
            text[row] = result.text[where[int(codes[row])]]
            outcome[row] = result.outcome[where[int(codes[row])]]
    return decision, text, outcome


# ------------------------------------------------------------------ rows decide the mark


@pytest.mark.parametrize("name", ["cpi", "pop"])
def test_three_decimals_read_with_the_marks_of_their_rows(name: str) -> None:
    frame = macrodata()
    decision, text, outcome = convert_column(frame, name)
    assert decision.convention["decimal_mark"] == "."
    assert (outcome == Outcome.CONVERTED).all()
    # the value as written, '.' the decimal mark (exact decimal arithmetic)
    assert [Decimal(t) for t in text] == [Decimal(v) for v in frame[name]]
    assert any("rows" in e and "'.'" in e for e in decision.evidence)
    assert decision.confidence >= 0.9


def test_without_the_other_columns_the_values_stay_listed() -> None:
    # issue #4.6: nothing in the column shows the role of '.' ("28.980" is also 28980)
    frame = macrodata()[["year", "cpi"]]
    _, text, outcome = convert_column(frame, "cpi")
    assert (outcome == Outcome.UNRESOLVED).all() and set(text) == {""}


def test_a_row_without_a_deciding_neighbour_keeps_the_column_listed() -> None:
    frame = macrodata()[["realcons", "cpi"]].copy()
    frame.loc[5, "realcons"] = "1792"   # reads alike with either mark: no evidence there
    _, _, outcome = convert_column(frame, "cpi")
    assert (outcome == Outcome.UNRESOLVED).all()


def test_a_neighbour_reading_the_other_way_on_a_row_keeps_the_column_listed() -> None:
    frame = macrodata()[["realgdp", "cpi"]].copy()
    frame["Freight"] = "12,5"           # a decimal comma in every row: two writers
    _, _, outcome = convert_column(frame, "cpi")
    assert (outcome == Outcome.UNRESOLVED).all()


def test_merged_rows_are_decided_by_their_own_cells_only() -> None:
    # two branches merged: the US rows show '.' decimals beside the amount, the German
    # rows show nothing that decides ("1.234" there is 1234 in de CLDR notation)
    us = macrodata()[["realgdp", "cpi"]].iloc[:12].assign(Country="United States")
    de = pd.DataFrame({"realgdp": ["2710"] * 12, "cpi": [f"{n}.{n + 100}" for n in range(12, 24)],
                       "Country": ["Deutschland"] * 12})
    frame = pd.concat([us, de], ignore_index=True)
    _, _, outcome = convert_column(frame, "cpi")
    assert (outcome[12:] == Outcome.UNRESOLVED).all()


def test_a_group_mark_by_exclusion_stays_listed() -> None:
    # the other cells decide ',' as the decimal mark; "12.345" is then a grouped 12345 to
    # the same writer, but issue #4.6 counts only the column's or group's own values
    frame = pd.DataFrame({"Amount": [f"{n}.{n * 7 % 900 + 100}" for n in range(10, 40)],
                          "Rate": [f"0,{n}" for n in range(10, 40)]})
    _, _, outcome = convert_column(frame, "Amount")
    assert (outcome == Outcome.UNRESOLVED).all()


def test_workbook_number_cells_are_not_row_evidence() -> None:
    # a typed cell is rendered "2710.349" by the reader whatever the branch writes
    frame = macrodata()[["realgdp", "cpi"]]
    typed = {"realgdp": {v: "number" for v in frame["realgdp"]}}
    table = TableEvidence.from_frame(frame, typed=typed)
    decision = ENGINE.propose(table.column("cpi"), Context(table))
    assert decision is not None and decision.convention["decimal_mark"] == "undecided"


# ------------------------------------------------------------------ a measured series


def _employment() -> pd.DataFrame:
    path = Path(str(files("vega_datasets") / "_data" / "us-employment.csv"))
    return pd.read_csv(path, dtype=str, keep_default_na=False)


@pytest.mark.parametrize("name", ["nonfarm", "private", "government", "manufacturing"])
def test_six_digit_employment_counts_are_numbers(name: str) -> None:
    # BLS Current Employment Statistics in thousands of jobs (vega_datasets 0.9.0)
    frame = _employment()
    decision, text, outcome = convert_column(frame, name)
    assert decision.kind == "number" and (outcome == Outcome.CONVERTED).all()
    assert text == frame[name].tolist()
    assert "measured series" in decision.evidence[0]


def test_codes_in_random_order_stay_declined() -> None:
    rng = np.random.default_rng(7)
    codes = [str(v) for v in rng.integers(100_000, 999_999, 120)]
    table = TableEvidence.from_frame(pd.DataFrame({"Value": codes}))
    assert ENGINE.propose(table.column("Value"), Context(table)) is None


def test_sorted_keys_stay_declined() -> None:
    # order numbers in date order climb like keys: no step back
    keys = [str(480_113 + 3 * i + i % 4) for i in range(120)]
    table = TableEvidence.from_frame(pd.DataFrame({"Value": keys}))
    assert ENGINE.propose(table.column("Value"), Context(table)) is None


def test_series_statistic_on_random_order_is_near_two() -> None:
    # von Neumann (1941): for values in random order the ratio of the mean square
    # successive difference to the variance has expectation 2n/(n-1)
    rng = np.random.default_rng(3)
    ratios = []
    for _ in range(200):
        values = rng.integers(10_000, 99_999, 60)
        ratios.append(float((np.diff(values) ** 2).sum() / ((values - values.mean()) ** 2).sum()))
    assert abs(np.mean(ratios) - 2 * 60 / 59) < 0.05
    frame = pd.DataFrame({"Value": [str(v) for v in rng.integers(10_000, 99_999, 60)]})
    table = TableEvidence.from_frame(frame)
    column = table.column("Value")
    forms = analyse(column.values)
    assert measured_series(column, forms, forms.bare_digits) is None
