"""German ledger forms: Soll/Haben letters ("1.234,50 S") and thousands ("1.234 TEUR").

What the letters and "TEUR" mean is a fact of German bookkeeping (common practice, no
source). The references the decisions lean on: CLDR likely subtags via babel (the
language of a country: ``Locale.parse("und_AT").language == "de"``), CLDR currency
symbols via babel ("T$" is the paʻanga's sign in to_TO), CLDR de number symbols (decimal
","; checkvalues.md A3), the SI Brochure 9th ed. (2019) Table 7 (prefix T, tera, 10^12:
the trillion reading of "T").
"""

from __future__ import annotations

import pandas as pd
from babel import Locale
from babel import numbers as babel_numbers

from harmonize import harmonize_frame
from harmonize.context import Context
from harmonize.engines.base import Decision, Outcome
from harmonize.engines.numbers import NumberEngine
from harmonize.engines.numbers_ledger import LETTERS_KEY, THOUSANDS_KEY
from harmonize.evidence import TableEvidence
from harmonize.options import Options

ENGINE = NumberEngine()
LEDGER = ["1.234,50 S", "980,00 H", "12,00 S", "7.500,00 H"]


def decide(values: list[str], header: str = "Saldo", options: Options | None = None,
           **other: list[str]) -> Decision:
    table = TableEvidence.from_frame(pd.DataFrame({header: values, **other}))
    decision = ENGINE.propose(table.column(header), Context(table, options))
    assert decision is not None
    return decision


def convert(values: list[str], convention: dict):
    return ENGINE.convert(values, convention)


def test_the_languages_the_decisions_lean_on() -> None:
    # CLDR likely subtags: German for Germany, Austria and Switzerland, not for the UK
    assert [Locale.parse(f"und_{t}").language for t in ("DE", "AT", "CH", "GB")] == \
        ["de", "de", "de", "en"]
    assert babel_numbers.get_decimal_symbol("de_DE") == ","   # checkvalues.md A3


class TestSollHaben:
    def test_without_a_german_writer_the_letters_are_listed(self) -> None:
        decision = decide(LEDGER)
        assert decision.convention[LETTERS_KEY] is False
        result = convert(LEDGER, decision.convention)
        assert (result.outcome == Outcome.UNRESOLVED).all()
        assert "Soll (debit)" in result.reasons[0] and "Haben (credit)" in result.reasons[1]
        assert result.best[0] == "1234.5"   # the amount, offered

    def test_a_german_country_reads_them_as_sides(self) -> None:
        decision = decide(LEDGER, Land=["Deutschland"] * 4)
        assert decision.convention[LETTERS_KEY] is True
        assert decision.convention["side_marks"] == "column"
        result = convert(LEDGER, decision.convention)
        assert result.text == ["1234.5", "980", "12", "7500"]
        assert result.extra["side"] == ["debit", "credit", "debit", "credit"]

    def test_a_plan_may_sign_them(self) -> None:
        decision = decide(LEDGER, Land=["Österreich"] * 4)
        convention = {**decision.convention, "side_marks": "debit-negative"}
        assert convert(LEDGER, convention).text == ["-1234.5", "980", "-12", "7500"]

    def test_the_header_or_the_words_name_them(self) -> None:
        assert decide(LEDGER, header="Saldo S/H").convention[LETTERS_KEY] is True
        assert decide(LEDGER, header="Soll/Haben").convention[LETTERS_KEY] is True
        words = ["1.234,50 Soll", "980,00 Haben", "12,00 S"]
        decision = decide(words)
        result = convert(words, decision.convention)
        assert result.extra["side"] == ["debit", "credit", "debit"]

    def test_the_words_alone_are_sides_anywhere(self) -> None:
        values = ["1.234,50 Soll", "980,00 Haben"]
        decision = decide(values)
        assert LETTERS_KEY not in decision.convention
        assert convert(values, decision.convention).extra["side"] == ["debit", "credit"]

    def test_one_letter_alone_needs_more_than_a_country(self) -> None:
        # "S" alone may be schillings or a size: both sides show a ledger
        values = ["1.234,50 S", "12,00 S", "980,00 S"]
        decision = decide(values, Land=["Deutschland"] * 3)
        assert decision.convention[LETTERS_KEY] is False

    def test_rows_of_other_countries_decide_nothing(self) -> None:
        decision = decide(LEDGER, Land=["Deutschland", "United Kingdom"] * 2)
        assert decision.convention[LETTERS_KEY] is False

    def test_the_run_locale_names_a_german_writer(self) -> None:
        decision = decide(LEDGER, options=Options(locale="de_AT"))
        assert decision.convention[LETTERS_KEY] is True

    def test_a_ledger_column_is_not_read_as_seconds_and_hours(self) -> None:
        # "S" and "H" read as s and h only case-folded: the ledger reading wins the column
        frame = pd.DataFrame({"Saldo": LEDGER * 2, "Land": ["Deutschland"] * 8})
        out, entry, _ = harmonize_frame(frame)
        kinds = {c["name"]: c["kind"] for c in entry["columns"]}
        assert kinds["Saldo"] == "number"
        assert out["Saldo"].tolist()[:4] == ["1234.5", "980", "12", "7500"]
        # durations written "5 H" stay durations (1 h = 3600 s, SI Brochure Table 8)
        out, entry, _ = harmonize_frame(pd.DataFrame({"Dauer": ["5 H", "3 H", "1,5 H"] * 2}))
        assert out.iloc[:3, 0].tolist() == ["18000", "10800", "5400"]


class TestThousands:
    VALUES = ["980 TEUR", "12 T€", "1.500 TEUR"]

    def test_without_a_german_writer_both_readings_are_listed(self) -> None:
        decision = decide(self.VALUES[:2], header="Umsatz")
        assert decision.convention[THOUSANDS_KEY] is False
        result = convert(self.VALUES[:2], decision.convention)
        assert (result.outcome == Outcome.UNRESOLVED).all()
        # thousands (German ledgers) or tera, 10^12 (SI prefix T)
        assert result.candidates[0] == ["980000", "980" + "0" * 12]

    def test_a_german_country_reads_thousands(self) -> None:
        decision = decide(self.VALUES, header="Umsatz", Land=["Österreich"] * 3)
        assert decision.convention[THOUSANDS_KEY] is True
        assert decision.unit == "EUR"
        result = convert(self.VALUES[:2], decision.convention)
        assert result.text == ["980000", "12000"]

    def test_german_magnitude_words_beside_them_show_the_writer(self) -> None:
        values = ["980 TEUR", "1,5 Mio. €", "12 T€"]
        decision = decide(values, header="Umsatz")
        assert convert(values, decision.convention).text == ["980000", "1500000", "12000"]

    def test_a_currency_sign_starting_with_t_is_no_thousands(self) -> None:
        # CLDR: "T$" is the sign of the Tongan paʻanga (TOP) in to_TO
        assert babel_numbers.get_currency_symbol("TOP", "to_TO") == "T$"
        decision = decide(["5 T$", "12 T$"], header="Price")
        assert THOUSANDS_KEY not in decision.convention
        assert convert(["5 T$"], decision.convention).text == ["5"]

    def test_three_trillion_is_not_a_ledger_form(self) -> None:
        # "$3T" puts T after the number, not before a currency: never read as thousands
        from harmonize.engines.numbers_forms import analyse
        assert not analyse(["$3T", "3T"]).thousands.any()
