"""Numbers written with the digits and number signs of other scripts.

References: the Unicode Character Database through Python's ``unicodedata`` (digit
names, decimal values, NFKC of full-width forms: UAX #15) and CLDR number symbols through
babel 2.19 (``Locale.number_symbols``, ``get_decimal_symbol`` with a numbering system).
babel formats with a numbering system's symbols but Latin digits, so the digits are put
in by their Unicode names.
"""

from __future__ import annotations

import unicodedata
from decimal import Decimal

import pandas as pd
import pyarrow as pa
import pytest
from babel import Locale
from babel import numbers as babel_numbers
from hypothesis import given, settings
from hypothesis import strategies as st

from harmonize.context import Context
from harmonize.engines.base import Outcome
from harmonize.engines.numbers import NumberEngine
from harmonize.engines.numbers_convert import convert_amounts, convert_amounts_full
from harmonize.engines.numbers_forms import _folded, analyse, analyse_full, fold_chars
from harmonize.engines.units import UnitEngine
from harmonize.evidence import TableEvidence

NUMBERS, UNITS = NumberEngine(), UnitEngine()
DIGIT_NAMES = ("ZERO", "ONE", "TWO", "THREE", "FOUR", "FIVE", "SIX", "SEVEN", "EIGHT", "NINE")
# Unicode names of the digits of each script (UnicodeData.txt), by CLDR numbering system
SCRIPTS = {"arab": "ARABIC-INDIC", "arabext": "EXTENDED ARABIC-INDIC", "deva": "DEVANAGARI",
           "beng": "BENGALI", "fullwide": "FULLWIDTH", "thai": "THAI", "mymr": "MYANMAR",
           "khmr": "KHMER", "tibt": "TIBETAN"}


def script_digits(system: str) -> dict[str, str]:
    """ASCII digit -> the digit of a script, found by its Unicode name."""
    return {str(d): unicodedata.lookup(f"{SCRIPTS[system]} DIGIT {name}")
            for d, name in enumerate(DIGIT_NAMES)}


def in_script(text: str, system: str) -> str:
    return text.translate(str.maketrans(script_digits(system)))


def plain(value: Decimal) -> str:
    return format(value.normalize(), "f")


def run(values: list[str], header: str = "Amount", engine=NUMBERS, **other: list[str]):
    table = TableEvidence.from_frame(pd.DataFrame({header: values, **other}))
    decision = engine.propose(table.column(header), Context(table))
    assert decision is not None
    result = engine.convert(list(values), decision.convention)
    return decision, result


# ------------------------------------------------------------------ digits


@pytest.mark.parametrize("system", sorted(SCRIPTS))
def test_every_script_digit_reads_as_its_unicode_value(system: str) -> None:
    digits = script_digits(system)
    # unicodedata.decimal: the digit value the Unicode Character Database gives each one
    assert [unicodedata.decimal(digits[str(d)]) for d in range(10)] == list(range(10))
    values = [in_script(str(n), system) for n in (0, 7, 42, 905, 31416)]
    _, result = run(values)
    assert result.text == ["0", "7", "42", "905", "31416"]


def test_every_decimal_digit_of_unicode_folds_alike_on_both_roads() -> None:
    # the vectorised folding (Arrow, the numbers engine) and the per-string one (the units
    # engine) give every character of category Nd its decimal value (unicodedata)
    digits = [chr(c) for c in range(0x80, 0x110000) if unicodedata.category(chr(c)) == "Nd"]
    expected = [str(unicodedata.decimal(d)) for d in digits]
    assert _folded(pa.array(digits)).to_pylist() == expected
    assert [fold_chars(d) for d in digits] == expected
    # digits of other kinds (superscripts "²", circled "①": category No) are not numbers
    assert fold_chars("m\u00b2 \u2460") == "m\u00b2 \u2460"


# ------------------------------------------------------------------ CLDR symbols


@pytest.mark.parametrize(("locale", "system"), [
    ("ar_EG", "arab"), ("ar_SA", "arab"), ("fa_IR", "arabext"), ("ur_IN", "arabext"),
    ("ckb", "arab"), ("ps_AF", "arabext"), ("mr_IN", "deva"), ("ne_NP", "deva"),
    ("bn_BD", "beng"), ("hi_IN", "deva"), ("my_MM", "mymr")])
@pytest.mark.parametrize("value", ["-1234567.891", "1234.5", "0.75", "12"])
def test_cldr_numbers_in_native_digits_read_back(locale: str, system: str, value: str) -> None:
    # babel.numbers.format_decimal with the numbering system: its symbols (U+066B, U+066C
    # for arab/arabext; CLDR minus signs with direction marks) around Latin digits
    text = babel_numbers.format_decimal(Decimal(value), locale=locale, numbering_system=system)
    native = in_script(text, system)
    _, result = run([native])
    assert result.text == [plain(Decimal(value))]


def test_babel_gives_the_arabic_separators() -> None:
    # CLDR 49 via babel: the arab and arabext numbering systems mark decimals with U+066B
    # ARABIC DECIMAL SEPARATOR and group with U+066C ARABIC THOUSANDS SEPARATOR
    for locale, system in (("ar_EG", "arab"), ("fa_IR", "arabext")):
        assert babel_numbers.get_decimal_symbol(locale, numbering_system=system) == "\u066b"
        assert babel_numbers.get_group_symbol(locale, numbering_system=system) == "\u066c"
    assert unicodedata.name("\u066b") == "ARABIC DECIMAL SEPARATOR"
    assert unicodedata.name("\u066c") == "ARABIC THOUSANDS SEPARATOR"


@pytest.mark.parametrize(("locale", "system"), [("ar_EG", "arab"), ("fa_IR", "arabext")])
def test_cldr_percent_and_per_mille_signs_read(locale: str, system: str) -> None:
    symbols = Locale.parse(locale).number_symbols[system]   # CLDR via babel
    decimal = symbols["decimal"]
    values = [in_script(f"12{decimal}5", system) + symbols["percentSign"],
              in_script("7", system) + symbols["percentSign"],
              in_script("5", system) + symbols["perMille"]]
    decision, result = run(values)
    assert decision.convention["percent"] is True
    # per mille: a tenth of a percent (Unicode: U+0609 ARABIC-INDIC PER MILLE SIGN)
    assert unicodedata.name(symbols["perMille"]) == "ARABIC-INDIC PER MILLE SIGN"
    assert result.text == ["12.5", "7", "0.5"]


def test_the_arabic_decimal_separator_decides_nothing_about_ascii_marks() -> None:
    # "١٫٢٣٤" is 1.234 to every writer (U+066B is only ever a decimal mark), so it is no
    # whole number written without group marks and settles no ASCII "1.234"
    decision, result = run(["١٫٢٣٤", "1.234", "٣٤٥"])
    assert result.text[0] == "1.234" and result.text[2] == "345"
    assert result.outcome[1] == Outcome.UNRESOLVED
    assert decision.convention["ungrouped_digits"] is None


def test_grouped_arabic_digits_read_under_any_ascii_mark() -> None:
    # U+066C groups in any notation: the value reads alike under "." and ","
    values = ["١٬٢٣٤٬٥٦٧٫٨٩", "٩٨٧"]
    for mark in (".", ",", "undecided"):
        result = convert_amounts(values, {"decimal_mark": mark})
        assert result.text == ["1234567.89", "987"]


# ------------------------------------------------------------------ full-width forms


def test_full_width_numbers_read_as_their_nfkc_form() -> None:
    # UAX #15: NFKC turns each full-width form into its ASCII character; the ASCII text
    # is then read as CLDR en reads it (babel.numbers.parse_decimal)
    values = ["１，２３４．５", "－１２", "３４５", "１２％"]
    ascii_forms = [unicodedata.normalize("NFKC", v) for v in values]
    assert ascii_forms == ["1,234.5", "-12", "345", "12%"]
    _, result = run(values[:3])
    assert result.text == [plain(babel_numbers.parse_decimal(a, locale="en"))
                           for a in ascii_forms[:3]]


# ------------------------------------------------------------------ quantities


def test_quantities_in_native_digits_with_latin_symbols() -> None:
    # NIST SP 811 B.8: 1 lb = 0.45359237 kg exactly (checkvalues.md U1)
    values = [in_script("5", "arab") + " kg", in_script("2٫5", "arab") + " kg",
              in_script("1٬234", "arab") + " g", in_script("10", "arabext") + " lb",
              "１２ｋｇ"]
    decision, result = run(values, header="Weight", engine=UNITS)
    assert decision.convention["dimension"] == "mass"
    assert result.text == ["5", "2.5", "1.234", "4.5359237", "12"]


# ------------------------------------------------------------------ both roads


NATIVE = st.lists(st.text(alphabet="0123456789٠١٢٣٤٥٦٧٨٩۰۱۲۵०१५０５٫٬.,' -%٪，．",
                          min_size=1, max_size=12), min_size=1, max_size=30)


@settings(max_examples=150, deadline=None)
@given(NATIVE.map(lambda v: list(dict.fromkeys(v))),
       st.sampled_from([".", ",", "undecided"]))
def test_fast_and_full_readings_agree_on_other_scripts(values: list[str], mark: str) -> None:
    fast, full = analyse(values), analyse_full(values)
    for name in ("status", "dot_digits", "comma_digits", "percent", "arabic_decimal"):
        assert getattr(fast, name).tolist() == getattr(full, name).tolist(), name
    one, other = convert_amounts(values, {"decimal_mark": mark}), \
        convert_amounts_full(values, {"decimal_mark": mark})
    assert (one.text, one.outcome.tolist()) == (other.text, other.outcome.tolist())


# ------------------------------------------------------------------ signs around them


def test_a_cldr_currency_sign_with_a_direction_mark_reads() -> None:
    # CLDR ar_SA writes the riyal "ر.س.\u200f" (babel.numbers.get_currency_symbol), with a
    # RIGHT-TO-LEFT MARK inside the sign, which the reading drops as it drops it anywhere
    sign = babel_numbers.get_currency_symbol("SAR", "ar_SA")
    assert sign.endswith("\u200f") and unicodedata.category("\u200f") == "Cf"
    text = babel_numbers.format_currency(Decimal("1234.5"), "SAR", locale="ar_SA",
                                         numbering_system="arab")
    decision, result = run([in_script(text, "arab"), in_script("12", "arab") + " " + sign])
    assert decision.unit == "SAR"
    assert result.text == ["1234.5", "12"]


def test_hyphen_look_alikes_are_minus_signs() -> None:
    # U+2010 HYPHEN and U+2011 NON-BREAKING HYPHEN, as word processors substitute them
    assert unicodedata.name("\u2010") == "HYPHEN"
    _, result = run(["\u20105", "\u201112,5", "7,25"])
    assert result.text == ["-5", "-12.5", "7.25"]


def test_currency_words_cldr_does_not_carry() -> None:
    # hryvnia "грн." and yuan "元" after the amount: common practice, no source (from memory)
    decision, result = run(["1 234,56 грн.", "12,00 грн."])
    assert decision.unit == "UAH" and result.text == ["1234.56", "12"]
    decision, result = run(["12.5元", "5万元"])   # 万: 10^4 (CLDR zh compact forms)
    assert decision.unit == "CNY" and result.text == ["12.5", "50000"]
