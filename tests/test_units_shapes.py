"""Quantity cells in forms the corpora do not generate: compounds whose last unit alone
reads several ways, invisible format characters, ranges. Expected values from NIST SP 811
exact factors (checkvalues.md A1)."""

from __future__ import annotations

import unicodedata
from collections import Counter
from decimal import Decimal

import pandas as pd
import pytest

from harmonize.context import Context
from harmonize.engines.base import Outcome
from harmonize.engines.numbers_forms import INVISIBLE
from harmonize.engines.units import UnitEngine
from harmonize.engines.units_parse import compound, split_cells
from harmonize.evidence import TableEvidence
from harmonize.options import Options

ENGINE = UnitEngine()
POUND = Decimal("0.45359237")         # kg, NIST SP 811 footnote 22 (checkvalues U1)
OUNCE = Decimal("0.028349523125")     # kg, = lb/16, NIST HB 44 App. C (checkvalues U2)
INCH, FOOT = Decimal("0.0254"), Decimal("0.3048")   # m, NIST SP 811 B.8 (U6, U7)


def convert_all(values: list[str], header: str) -> dict[str, tuple[str, Outcome, str]]:
    table = TableEvidence.from_frame(pd.DataFrame({header: values}))
    decision = ENGINE.propose(table.column(header), Context(table, Options()))
    assert decision is not None
    distinct = list(dict.fromkeys(values))
    result = ENGINE.convert(distinct, decision.convention)
    return {v: (result.text[i], Outcome(result.outcome[i]), result.reasons.get(i, ""))
            for i, v in enumerate(distinct)}


def plain(value: Decimal) -> str:
    return format(value.normalize(), "f")


def test_pounds_and_ounces_add_up() -> None:
    # "oz" alone may be a fluid ounce; after "lb" it can only be the avoirdupois ounce
    found = convert_all(["3 lb 4 oz", "1 lb 15 oz", "2 lb", "12 oz", "2 kg"], "Box weight")
    assert found["3 lb 4 oz"][:2] == (plain(3 * POUND + 4 * OUNCE), Outcome.CONVERTED)
    assert found["1 lb 15 oz"][0] == plain(POUND + 15 * OUNCE)
    assert found["12 oz"][0] == plain(12 * OUNCE)


def test_a_compound_whose_next_unit_does_not_follow_is_not_read() -> None:
    assert compound("3 lb 4 oz") == (("3", "lb"), ("4", "oz"))
    assert compound("4 oz 3 lb") == ()          # units must fall
    assert compound("3 lb 4 gal") == ()         # gallons never follow pounds
    assert compound("5 ft 11 in") == (("5", "ft"), ("11", "in"))


@pytest.mark.parametrize("char", list(INVISIBLE) + ["\u00ad"])
def test_invisible_characters_inside_quantities_are_read_through(char: str) -> None:
    # Unicode Character Database: general category Cf (format), shown as nothing
    assert unicodedata.category(char) == "Cf"
    cell = f"1{char}234 kg"
    found = convert_all([cell, "980 kg", "45 kg", f"5{char} ft"], "Weight")
    assert found[cell][:2] == ("1234", Outcome.CONVERTED)


def test_invisible_characters_split_like_plain_text() -> None:
    marked = ["1\u200b234,5 kg", "\u200e5 ft 11 in", "12\u00ad500 g", "7\u2060lb"]
    clean = ["1234,5 kg", "5 ft 11 in", "12500 g", "7lb"]
    assert split_cells(marked).pieces == split_cells(clean).pieces


def test_feet_and_inches_with_an_invisible_mark() -> None:
    found = convert_all(["5\u200b'11\"", "6'", "5 ft 8 in", "170 cm"], "Height")
    assert found["5\u200b'11\""][0] == plain(5 * FOOT + 11 * INCH)


def test_a_range_is_listed_as_a_range() -> None:
    values = ["5-10 kg", "10–15 kg", "6 to 8 kg"] + [f"{n} kg" for n in range(1, 30)]
    found = convert_all(values, "Crate weight")
    for cell in ("5-10 kg", "10–15 kg", "6 to 8 kg"):
        assert found[cell][1] == Outcome.UNRESOLVED
        assert "range" in found[cell][2]


# ------------------------------------------------------------ fractions


def test_fractions_of_customary_measures() -> None:
    # fractions of the inch and the pound as written in US sheets (common practice, no
    # source); factors NIST SP 811 (checkvalues U1, U6)
    found = convert_all(["1 1/2 lb", "3/4 lb", "½ lb", "1¾ lb", "2 1/3 lb", "2 lb"], "Weight")
    assert found["1 1/2 lb"][0] == plain(Decimal("1.5") * POUND)
    assert found["3/4 lb"][0] == plain(Decimal("0.75") * POUND)
    assert found["½ lb"][0] == plain(Decimal("0.5") * POUND)
    assert found["1¾ lb"][0] == plain(Decimal("1.75") * POUND)
    # 7/3 lb is not a terminating decimal: 15 significant digits
    assert found["2 1/3 lb"][0] == "1.05838219666667"
    pipes = convert_all(["3/4 in", '1/2"', "1 1/4 in", "2 in"], "Pipe size")
    assert pipes["3/4 in"][0] == plain(Decimal("0.75") * INCH)
    assert pipes["1 1/4 in"][0] == plain(Decimal("1.25") * INCH)


def test_improper_or_fine_fractions_are_listed() -> None:
    found = convert_all(["5/3 lb", "1/128 lb", "2 lb", "3 lb", "1/2 lb"], "Weight")
    assert found["5/3 lb"][1] == Outcome.UNRESOLVED
    assert found["1/128 lb"][1] == Outcome.UNRESOLVED


def test_fractions_split_alike_on_both_paths() -> None:
    # printable ASCII goes through RE2 (pyarrow), the rest through Python's re
    ascii_cells = ["1 1/2 lb", "3/4 in", "-1/2 kg"]
    spaced = [c.replace(" lb", "\u00a0lb").replace(" in", "\u00a0in").replace(" kg", "\u00a0kg")
              for c in ascii_cells]
    assert split_cells(ascii_cells).pieces == split_cells(spaced).pieces == [
        (("1 1/2", "lb"),), (("3/4", "in"),), (("-1/2", "kg"),)]
    assert split_cells(["1½ lb"]).pieces == [(("1 1/2", "lb"),)]


# ------------------------------------------------------------ units in workbook formats


def workbook_column(values: list[str], formats: dict[str, int], header: str = "Weight"
                    ) -> tuple[list[str], object]:
    """A column of typed workbook numbers with the given number formats."""
    frame = pd.DataFrame({header: values})
    typed = {header: dict.fromkeys(values, "number")}
    table = TableEvidence.from_frame(frame, typed=typed,
                                     formats={header: Counter(formats)})
    column = table.column(header)
    return column.values.tolist(), ENGINE.propose(column, Context(table, Options()))


def test_a_unit_shown_by_the_number_format_is_the_unit_of_bare_numbers() -> None:
    values, decision = workbook_column(["2", "36.5", "41"], {'0.0 "°F"': 3}, "Cold store")
    assert decision is not None and decision.unit == "°C"
    result = ENGINE.convert(values, {**decision.convention, "decimal_mark": "."})
    # NIST SP 811 B.9: t/°C = (t/°F - 32)/1.8 (checkvalues U25)
    expected = [(Decimal(v) - 32) / Decimal("1.8") for v in values]
    for text, exact in zip(result.text, expected, strict=True):
        assert abs(Decimal(text) - exact) < Decimal("1e-12"), text
    assert any("number formats" in e for e in decision.evidence)
    _, lengths = workbook_column(["100", "101"], {'#,##0\\ "cm"': 2, "General": 1}, "Length")
    assert lengths is not None and lengths.convention["bare_unit"] == "cm"


@pytest.mark.parametrize("fmt", ['0,"K"', '0.0,, "M"', '0 "EUR"', "0.00", "General"])
def test_formats_showing_no_unit_make_no_quantity(fmt: str) -> None:
    # thousands and millions shown as K and M are not kelvin and metres
    _, decision = workbook_column(["12", "15", "18"], {fmt: 3}, "Total")
    assert decision is None


def test_cubic_feet_written_cft() -> None:
    found = convert_all(["12 cft", "3.5 cu ft", "1 ft³"], "Crate volume")
    # NIST SP 811 B.8: foot = 0.3048 m exactly (U7), so ft³ = 0.3048³ m³
    assert found["12 cft"][0] == plain(12 * FOOT ** 3)
