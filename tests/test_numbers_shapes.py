"""Written forms of amounts met in exports the corpora do not generate: invisible format
characters, credit/debit marks, per mille, brackets outside a currency sign, prices per
unit, ranges. Expected values come from outside sources named beside each check."""

from __future__ import annotations

import unicodedata
from decimal import Decimal
from fractions import Fraction

import numpy as np
import pandas as pd
import pyarrow as pa
import pytest
from babel import numbers as babel_numbers
from hypothesis import given, settings
from hypothesis import strategies as st

from harmonize.context import Context
from harmonize.engines.base import Decision, Outcome
from harmonize.engines.numbers import NumberEngine, parse_amount
from harmonize.engines.numbers_convert import convert_amounts, convert_amounts_full
from harmonize.engines.numbers_forms import (
    FOLD_MAP,
    INVISIBLE,
    SOFT_HYPHEN,
    _folded,
    analyse,
    analyse_full,
    fold_chars,
)
from harmonize.evidence import TableEvidence
from harmonize.options import Options

ENGINE = NumberEngine()

# NIST SP 811 footnote 22 / 1959 agreement: 1 lb = 0.453 592 37 kg exactly (checkvalues U1)
POUND_KG = Decimal("0.45359237")


def decide(values: list[str], header: str = "Amount", **options) -> Decision:
    table = TableEvidence.from_frame(pd.DataFrame({header: values}))
    decision = ENGINE.propose(table.column(header), Context(table, Options(**options)))
    assert decision is not None
    return decision


def convert(values: list[str], header: str = "Amount", **options
            ) -> tuple[dict[str, tuple[str, Outcome, str]], Decision]:
    """value -> (text, outcome, reason) under the engine's own decision."""
    decision = decide(values, header, **options)
    distinct = list(dict.fromkeys(values))
    result = ENGINE.convert(distinct, decision.convention)
    return {v: (result.text[i], Outcome(result.outcome[i]), result.reasons.get(i, ""))
            for i, v in enumerate(distinct)}, decision


def plain(value: Decimal) -> str:
    return format(value.normalize(), "f")


def cldr(text: str, locale: str) -> str:
    """The value CLDR's notation of ``locale`` gives a written number (babel)."""
    return plain(babel_numbers.parse_decimal(text, locale=locale))


# ------------------------------------------------------------ invisible characters


def test_the_dropped_characters_are_invisible_format_characters() -> None:
    # Unicode Character Database (via unicodedata): general category Cf, "Format"
    for char in INVISIBLE + SOFT_HYPHEN:
        assert unicodedata.category(char) == "Cf", hex(ord(char))


@pytest.mark.parametrize("char", list(INVISIBLE))
def test_an_invisible_character_inside_a_number_is_read_through(char: str) -> None:
    values = [f"1{char}234,50", f"{char}980,75", f"45,10{char}", "12.500,00"]
    found, _ = convert(values)
    # CLDR de: "," decimal, "." group (checkvalues.md A3), parsed by babel
    assert found[values[0]][:2] == (cldr("1.234,50", "de"), Outcome.CONVERTED)
    assert found[values[1]][:2] == (cldr("980,75", "de"), Outcome.CONVERTED)
    assert found[values[2]][:2] == (cldr("45,10", "de"), Outcome.CONVERTED)


def test_a_soft_hyphen_between_digits_is_dropped_but_a_leading_one_is_not_a_minus() -> None:
    # a leading soft hyphen may be a legacy code page's minus sign: neither sign is guessed
    found, _ = convert(["3\u00ad456,00", "\u00ad12,50", "980,75", "7,25", "1,5", "2,5"])
    assert found["3\u00ad456,00"][:2] == (cldr("3456,00", "de"), Outcome.CONVERTED)
    assert found["\u00ad12,50"][1] == Outcome.UNRESOLVED


INVISIBLE_BODIES = st.builds(
    lambda digits, char, at, tail: digits[:at] + char + digits[at:] + tail,
    st.text("0123456789", min_size=1, max_size=7), st.sampled_from(INVISIBLE + SOFT_HYPHEN),
    st.integers(0, 7), st.sampled_from(["", ",5", ".25", " €", "%"]))


@settings(max_examples=150, deadline=None)
@given(st.lists(INVISIBLE_BODIES, min_size=1, max_size=6, unique=True),
       st.sampled_from([".", ",", None]))
def test_fast_and_full_readings_agree_on_invisible_characters(values: list[str],
                                                              mark: str | None) -> None:
    fast, full = analyse(values), analyse_full(values)
    assert fast.status.tolist() == full.status.tolist()
    assert fast.text.tolist() == full.text.tolist()
    convention = {"decimal_mark": mark, "percent": True}
    a, b = convert_amounts(values, convention), convert_amounts_full(values, convention)
    assert a.text == b.text and a.outcome.tolist() == b.outcome.tolist()


# ------------------------------------------------------------ credit and debit marks


LEDGER = ["1,234.50 CR", "980.00 DR", "12,500.75 Cr", "3.10 dr", "100.00CR", "0.00", "7.25"]


def test_credit_and_debit_marks_go_to_a_companion_column_by_default() -> None:
    found, decision = convert(LEDGER, "Ledger")
    assert decision.convention["side_marks"] == "column"
    assert ENGINE.companions(decision.convention) == ("side",)
    # CLDR en: "." decimal, "," group (checkvalues.md A3), parsed by babel
    assert found["1,234.50 CR"][:2] == (cldr("1,234.50", "en"), Outcome.CONVERTED)
    assert found["980.00 DR"][0] == cldr("980.00", "en")
    result = ENGINE.convert(LEDGER, decision.convention)
    assert result.extra["side"] == ["credit", "debit", "credit", "debit", "credit", "", ""]


@pytest.mark.parametrize("mode, negative", [("credit-negative", "credit"),
                                             ("debit-negative", "debit")])
def test_a_plan_may_read_the_marks_as_signs(mode: str, negative: str) -> None:
    found, decision = convert(LEDGER, "Ledger", engine={"numbers": {"side_marks": mode}})
    assert ENGINE.companions(decision.convention) == ()
    credit = cldr("1,234.50", "en")
    debit = cldr("980.00", "en")
    assert found["1,234.50 CR"][0] == ("-" + credit if negative == "credit" else credit)
    assert found["980.00 DR"][0] == ("-" + debit if negative == "debit" else debit)


def test_a_mark_beside_a_sign_or_in_a_column_without_marks_is_listed() -> None:
    found, _ = convert([*LEDGER, "-5.00 CR"], "Ledger")
    assert found["-5.00 CR"][1] == Outcome.UNRESOLVED
    plain_plan = decide(["12.50", "7.25", "980.00"]).convention
    result = ENGINE.convert(["12.50 CR"], plain_plan)
    assert result.outcome[0] == Outcome.UNRESOLVED and "credit" in result.reasons[0]


def test_an_unknown_side_mode_is_a_plan_problem() -> None:
    assert ENGINE.problems({"side_marks": "credit"})
    assert not ENGINE.problems({"side_marks": "debit-negative"})


# ------------------------------------------------------------ per mille, brackets


def test_per_mille_and_per_ten_thousand_are_written_as_percentages() -> None:
    # 1 ‰ = 10^-3 and 1 ‱ = 10^-4 (Unicode U+2030 PER MILLE SIGN, U+2031 PER TEN THOUSAND
    # SIGN; ISO 80000-1, from memory), so as a percentage: a tenth and a hundredth
    found, decision = convert(["12,5 ‰", "3 ‰", "0,5‰", "25 ‱", "1,5 %"], "Rate")
    assert decision.unit == "percent"
    assert found["12,5 ‰"][0] == plain(Decimal("12.5") / 10)
    assert found["0,5‰"][0] == plain(Decimal("0.5") / 10)
    assert found["25 ‱"][0] == plain(Decimal(25) / 100)
    assert found["1,5 %"][0] == plain(Decimal("1.5"))


@pytest.mark.parametrize("written", ["($1,234.50)", "$(1,234.50)", "$ (1,234.50)",
                                     "USD (1,234.50)", "(USD 1,234.50)"])
def test_accounting_brackets_inside_or_outside_the_currency(written: str) -> None:
    found, decision = convert([written, "$12.50", "USD 7.00"], "Total (USD)")
    # accounting brackets mark a negative amount: common practice, no source
    assert found[written][:2] == ("-" + cldr("1,234.50", "en"), Outcome.CONVERTED)
    assert decision.unit == "USD"


def test_unbalanced_brackets_are_listed() -> None:
    found, _ = convert(["$(1,234.50", "($12.50))", "$7.00", "$8.00", "$9.00"], "Total (USD)")
    assert found["$(1,234.50"][1] == Outcome.UNRESOLVED
    assert found["($12.50))"][1] == Outcome.UNRESOLVED


def test_yen_and_won_written_in_their_own_script() -> None:
    found, decision = convert(["1,234円", "980円", "12,500円"], "Kakaku")
    # ISO 4217 via babel: the yen has no minor unit, so "1,234" groups digits
    assert babel_numbers.get_currency_precision("JPY") == 0
    assert decision.unit == "JPY"
    assert found["1,234円"][:2] == ("1234", Outcome.CONVERTED)
    assert decide(["12,000원", "5,000원"], "Price").unit == "KRW"


# ------------------------------------------------------------ prices per unit


def test_prices_per_unit_keep_their_unit_and_convert_other_units_of_it() -> None:
    values = ["2,50 €/kg", "1,80 €/kg", "3,10 € al kg", "0,95 €/Kilo", "1,00 €/lb"]
    found, decision = convert(values, "Prezzo")
    assert decision.unit == "EUR/kg"
    assert found["2,50 €/kg"][0] == cldr("2,50", "it")
    assert found["0,95 €/Kilo"][0] == cldr("0,95", "it")
    # a price per lb is per kg times the pounds in a kilogram: 1 / 0.45359237 (NIST U1),
    # written to 15 significant digits
    per_kg = Decimal(1) / POUND_KG
    assert Decimal(found["1,00 €/lb"][0]) == per_kg.quantize(Decimal("1e-14"))


def test_prices_per_unit_follow_the_run_unit_target() -> None:
    found, decision = convert(["$2.50/lb", "$1.80 per lb", "$1.00/kg"], "Price (USD)",
                              unit_targets={"mass": "kg"})
    assert decision.unit == "USD/kg"
    exact = Fraction(Decimal("2.50")) / Fraction(POUND_KG)   # NIST U1
    assert abs(Fraction(Decimal(found["$2.50/lb"][0])) - exact) < Fraction(1, 10**13)
    assert found["$1.00/kg"][0] == "1"


def test_a_price_per_something_else_is_listed_and_a_date_is_no_price() -> None:
    found, _ = convert(["2,50 €/kg", "1,80 €/kg", "4 € je Stk.", "3,10 €/kg"], "Prezzo")
    assert found["4 € je Stk."][1] == Outcome.UNRESOLVED
    assert analyse(["12/Mar", "3 €/ton"]).status.tolist() == [0, 0]   # NOT_NUMBER


def test_a_range_is_listed_as_a_range() -> None:
    found, _ = convert(["5-10", "12.50", "8.25", "7.10", "9.99", "1.5", "2.5", "3.5"])
    assert found["5-10"][1] == Outcome.UNRESOLVED
    assert "range" in found["5-10"][2]


def test_new_forms_keep_whole_columns_on_the_fast_path_unchanged() -> None:
    values = [f"{n:,}.{n % 100:02d}" for n in range(1000, 3000)]
    fast = convert_amounts(values, {"decimal_mark": "."})
    full = convert_amounts_full(values, {"decimal_mark": "."})
    assert fast.text == full.text
    assert np.array_equal(fast.outcome, full.outcome)


def test_credit_marks_alone_may_be_crores_and_are_listed() -> None:
    # "Cr" also abbreviates crore (10^7) in Indian figures (common practice, no source)
    found, decision = convert(["1.2 Cr", "3.5 Cr", "12.75", "8.10"], "Turnover")
    assert decision.convention["side_marks"] is None
    assert found["1.2 Cr"][1] == Outcome.UNRESOLVED and "crore" in found["1.2 Cr"][2]
    assert found["12.75"][:2] == ("12.75", Outcome.CONVERTED)


# ------------------------------------------------------------ CLDR compact forms

# CLDR short compact decimal formats (babel.numbers.format_compact_decimal, CLDR 49): each
# (locale, value) below is written by babel and must read back as the value.
COMPACT = {
    "en": [1200, 34000, 2500000], "de": [2500000, 1500000000, 3000000000000],
    "it": [1200, 2500000, 1500000000], "nl": [1200, 2500000, 1500000000],
    "pl": [1200, 2500000, 1500000000], "ru": [1200, 2500000, 1500000000, 3000000000000],
    "ja": [34000, 2500000, 1500000000, 3000000000000],
    "zh": [34000, 2500000, 1500000000, 3000000000000],
    "ko": [1200, 34000, 1500000000, 3000000000000], "hi": [1200, 2500000],
}


@pytest.mark.parametrize("locale, value", [(loc, v) for loc, vs in COMPACT.items()
                                           for v in vs])
def test_cldr_compact_forms_read_back(locale: str, value: int) -> None:
    written = babel_numbers.format_compact_decimal(value, locale=locale, fraction_digits=1)
    mark = babel_numbers.get_decimal_symbol(locale)
    assert parse_amount(written, {"decimal_mark": mark}) == value, written


def test_a_word_two_notations_read_apart_is_not_read() -> None:
    # sv CLDR writes a thousand "1,2 tn" (tusen) where English writes a trillion "1.2tn"
    written = babel_numbers.format_compact_decimal(1200, locale="sv", fraction_digits=1)
    assert written.endswith("tn")
    assert parse_amount(written, {"decimal_mark": ","}) is None


FOLDED_CHARS = "".join(FOLD_MAP) + SOFT_HYPHEN + "0123456789.,-' €a\u0661\u0662"


@settings(max_examples=200, deadline=None)
@given(st.lists(st.text(FOLDED_CHARS, max_size=12), min_size=1, max_size=8))
def test_arrow_folding_matches_python_folding(values: list[str]) -> None:
    # the vectorised fold (byte scan, literal passes) and the per-string fold the units
    # engine uses must agree character for character
    folded = _folded(pa.array(values, type=pa.string())).to_pylist()
    assert folded == [fold_chars(v) for v in values]
