"""The numbers engine: forms, decisions, currencies, groups and undecided cells.

Expected values here are facts of the trade (common practice, no source) unless a comment
names a standard; the CLDR-based checks live in test_numbers_reference.py.
"""

from __future__ import annotations

from decimal import Decimal

import pandas as pd
import pytest

from harmonize.context import Context
from harmonize.engines.base import Outcome
from harmonize.engines.numbers import (
    NumberEngine,
    decide_marks,
    format_decimal_plain,
    parse_amount,
    parse_amounts,
)
from harmonize.evidence import TableEvidence
from harmonize.options import Options

try:
    from tests.corpora.numbers import apply_engine
except ImportError:  # tests/ is not a package: pytest puts tests/ itself on sys.path
    from corpora.numbers import apply_engine  # type: ignore[no-redef]

ENGINE = NumberEngine()


def decide(frame: pd.DataFrame, column: str, options: Options | None = None):
    table = TableEvidence.from_frame(frame)
    return ENGINE.propose(table.column(column), Context(table, options))


def run(values: list[str], **other: list[str]):
    """Decide and convert a column; returns (decision, output text, outcome) per row."""
    frame = pd.DataFrame({"Amount": values, **other})
    applied = apply_engine(ENGINE, frame, "Amount")
    assert applied is not None, "the engine should claim this column"
    return applied


def outputs(values: list[str], **other: list[str]) -> list[str]:
    return run(values, **other).text


class TestWrittenForms:
    # Each value is read under a convention that states its decimal mark.
    @pytest.mark.parametrize(("text", "mark", "expected"), [
        ("1.234,56", ",", "1234.56"),
        ("1,234.56", ".", "1234.56"),
        ("-1.234,5", ",", "-1234.5"),
        ("+3", ".", "3"),
        ("\u22125", ".", "-5"),                 # U+2212 MINUS SIGN (used by sv in CLDR)
        ("(1,234.50)", ".", "-1234.5"),         # accounting negative: common practice
        ("1.234,56-", ",", "-1234.56"),         # trailing minus (ledger exports)
        ("1.5E3", ".", "1500"),
        ("2,5e-3", ",", "0.0025"),
        ("1.2k", ".", "1200"),
        ("3 Mio", ",", "3000000"),
        ("2,5 Mrd", ",", "2500000000"),
        ("4 lakh", ".", "400000"),              # lakh = 10^5 (Indian numbering)
        ("1.5 crore", ".", "15000000"),         # crore = 10^7
        ("5,-", ",", "5"),                      # whole amount, German price style
        ("1\u00a0234,5", ",", "1234.5"),        # no-break space groups (sv, pl)
        ("1\u202f234,5", ",", "1234.5"),        # narrow no-break space groups (fr)
        ("1'234.5", ".", "1234.5"),
        ("1\u2019234.5", ".", "1234.5"),        # pre-CLDR-48 Swiss group mark
        ("12,34,567.8", ".", "1234567.8"),      # lakh grouping
        (".5", ".", "0.5"),
        ("0,25", ",", "0.25"),
        ("\uff11\uff12\uff13", ".", "123"),       # full-width digits
    ])
    def test_reads(self, text: str, mark: str, expected: str) -> None:
        result = ENGINE.convert([text], {"decimal_mark": mark})
        assert result.outcome[0] == Outcome.CONVERTED, result.reasons
        assert result.text == [expected]

    @pytest.mark.parametrize("text", ["12-34", "1..2", "--5", "(5", "5 kg", "1,2,3,4", "abc",
                                      "-(5)", "1.2.3,4.5"])
    def test_rejects(self, text: str) -> None:
        result = ENGINE.convert([text], {"decimal_mark": None})
        assert result.outcome[0] == Outcome.UNRESOLVED
        assert result.reasons[0]

    def test_magnitude_letter_m_needs_a_currency(self) -> None:
        # "£5m" is five million pounds; a bare "5m" is more likely a length
        result = ENGINE.convert(["£5m", "5m"], {"decimal_mark": ".", "currency_mode": "single",
                                                 "currency": "GBP"})
        assert result.text[0] == "5000000"
        assert result.outcome[1] == Outcome.UNRESOLVED


class TestExactOutput:
    def test_no_float_noise(self) -> None:
        # 0.1 + 0.2 style noise would show here if floats were used
        assert outputs(["1234.5", "0.1", "1,234,567,890.123456789"]) == [
            "1234.5", "0.1", "1234567890.123456789"]

    def test_integers_stay_integers(self) -> None:
        assert outputs(["1,200", "1,200.00", "7.0"]) == ["1200", "1200", "7"]

    def test_trailing_zeros_dropped_by_default_kept_on_request(self) -> None:
        convention = {"decimal_mark": ","}
        assert ENGINE.convert(["12,50"], convention).text == ["12.5"]
        keep = {**convention, "trailing_zeros": "keep"}
        assert ENGINE.convert(["12,50", "-0,00"], keep).text == ["12.50", "0.00"]

    def test_negative_zero_is_zero(self) -> None:
        assert ENGINE.convert(["-0", "(0.00)"], {"decimal_mark": "."}).text == ["0", "0"]

    def test_format_decimal_plain(self) -> None:
        assert format_decimal_plain(Decimal("1.2E+3")) == "1200"
        assert format_decimal_plain(Decimal("-0.000")) == "0"
        assert format_decimal_plain(Decimal("12.50"), keep_trailing_zeros=True) == "12.50"
        assert format_decimal_plain(Decimal("1E-7")) == "0.0000001"


class TestDecidingTheMark:
    def test_both_marks_in_one_value_decide(self) -> None:
        applied = run(["1.234", "2.500", "1.234,56", "17"])
        assert applied.decision.convention["decimal_mark"] == ","
        assert applied.text == ["1234", "2500", "1234.56", "17"]

    def test_repeated_mark_decides(self) -> None:
        applied = run(["1,234", "1,234,567"])
        assert applied.decision.convention["decimal_mark"] == "."
        assert applied.text == ["1234", "1234567"]

    def test_mark_with_one_two_or_four_digits_decides(self) -> None:
        assert outputs(["2,500", "0,5"]) == ["2.5", "0.5"]
        assert outputs(["2.500", "3.25"]) == ["2.5", "3.25"]
        assert outputs(["2,500", "1,2345"]) == ["2.5", "1.2345"]

    def test_undecidable_values_are_listed_with_both_readings(self) -> None:
        applied = run(["1.234", "2,500", "17"])
        listed = [i for i, o in enumerate(applied.outcome) if o == Outcome.UNRESOLVED]
        assert listed == [0, 1]
        result = ENGINE.convert(["1.234"], applied.decision.convention)
        assert sorted(result.candidates[0]) == ["1.234", "1234"]
        assert "decimal mark" in result.reasons[0]

    def test_coinciding_readings_are_not_listed(self) -> None:
        applied = run(["1 234", "17", "1'500"])
        assert list(applied.outcome) == [Outcome.CONVERTED] * 3
        assert applied.text == ["1234", "17", "1500"]

    def test_role_of_the_mark_must_be_shown(self) -> None:
        # "12,34,567" shows "," grouping but says nothing about "." as a decimal mark,
        # so "80.600" (a foreign branch's 80600?) stays listed
        applied = run(["12,34,567", "2,500", "80.600"])
        assert applied.text[:2] == ["1234567", "2500"]
        assert applied.outcome[2] == Outcome.UNRESOLVED

    def test_typed_workbook_numbers_are_plain(self) -> None:
        frame = pd.DataFrame({"Amount": ["1234.5", "17", "2.5"]})
        table = TableEvidence.from_frame(frame, typed={"Amount": {
            "1234.5": "number", "17": "number", "2.5": "number"}})
        decision = ENGINE.propose(table.column("Amount"), Context(table))
        assert decision is not None and decision.convention["decimal_mark"] == "."
        assert any("workbook" in e for e in decision.evidence)

    def test_stray_value_of_the_other_notation_is_listed(self) -> None:
        values = [f"{n},50" for n in range(100, 200)] + ["1,234.50"]
        applied = run(values)
        assert applied.decision.convention["decimal_mark"] == ","
        assert applied.outcome[-1] == Outcome.UNRESOLVED
        assert ENGINE.convert(["1,234.50"], applied.decision.convention).best[0] == "1234.5"

    def test_mixed_notations_without_a_split_read_each_value_on_its_own(self) -> None:
        applied = run(["1.234,5", "2,5", "1,234.5", "3.5", "2.500"] * 3)
        assert applied.decision.convention["decimal_mark"] == "undecided"
        assert applied.text[:4] == ["1234.5", "2.5", "1234.5", "3.5"]
        assert applied.outcome[4] == Outcome.UNRESOLVED

    def test_decide_marks_for_other_engines(self) -> None:
        convention, confidence, evidence = decide_marks(["1.234,5", "7"], [3, 1])
        assert convention["decimal_mark"] == ","
        assert 0.5 < confidence < 1 and evidence
        assert parse_amount("2.500", convention) == Decimal("2500")
        assert parse_amounts(["1,5", "x"], convention) == [Decimal("1.5"), None]

    def test_locale_hint_never_converts_but_names_the_best_reading(self) -> None:
        applied = run(["2.500", "1.250"], Country=["Germany", "Germany"])
        assert all(o == Outcome.UNRESOLVED for o in applied.outcome)
        result = ENGINE.convert(["2.500"], applied.decision.convention)
        assert result.best[0] == "2500"   # CLDR de: "," decimal, "." groups

    def test_trusting_the_locale_hint_is_an_option(self) -> None:
        frame = pd.DataFrame({"Amount": ["2.500", "1.250"]})
        options = Options(locale="de_DE", engine={"numbers": {"trust_locale_hint": True}})
        decision = decide(frame, "Amount", options)
        assert decision.convention["decimal_mark"] == ","


class TestGroups:
    def test_per_country_marks(self) -> None:
        values = ["1.234,5", "2.500", "3,25", "1,234.5", "2,500", "3.25"]
        countries = ["Germany"] * 3 + ["United States"] * 3
        applied = run(values, Country=countries)
        groups = applied.decision.groups
        assert groups is not None and groups.by == "Country"
        assert groups.conventions["Germany"]["decimal_mark"] == ","
        assert groups.conventions["United States"]["decimal_mark"] == "."
        assert applied.text == ["1234.5", "2500", "3.25", "1234.5", "2500", "3.25"]

    def test_a_country_whose_cldr_mark_differs_is_not_decided_by_others(self) -> None:
        values = ["1,234.5", "3.25", "2.500", "7.125"]
        applied = run(values, Country=["US", "US", "DE", "DE"])
        assert applied.text[:2] == ["1234.5", "3.25"]
        assert list(applied.outcome[2:]) == [Outcome.UNRESOLVED] * 2

    def test_split_by_a_branch_column(self) -> None:
        values = ["1.234,5", "2.500", "1,234.5", "2,500"] * 3
        branch = ["North", "North", "South", "South"] * 3
        applied = run(values, Branch=branch)
        assert applied.decision.groups.by == "Branch"
        assert applied.text[:4] == ["1234.5", "2500", "1234.5", "2500"]


class TestCurrency:
    def test_single_currency_column(self) -> None:
        applied = run(["1.234,56 €", "12,50 €", "€3"])
        assert applied.decision.unit == "EUR"
        assert applied.decision.convention["currency"] == "EUR"
        assert applied.text == ["1234.56", "12.5", "3"]
        assert "currency" not in applied.extra

    @pytest.mark.parametrize(("text", "expected", "code"), [
        ("£1,234.50", "1234.5", "GBP"),
        ("CHF 1'234.00", "1234", "CHF"),
        ("Fr. 12.50", "12.5", "CHF"),
        ("₹1,23,456.78", "123456.78", "INR"),
        ("US$ 5", "5", "USD"),
        ("R$ 1.234,56", "1234.56", "BRL"),
        ("1 234,50 zł", "1234.5", "PLN"),
        ("-€5", "-5", "EUR"),
        ("€ -5", "-5", "EUR"),
        ("USD -1,234.5", "-1234.5", "USD"),
    ])
    def test_signs_and_codes(self, text: str, expected: str, code: str) -> None:
        result = ENGINE.convert([text], {"decimal_mark": None, "currency_mode": "mixed"})
        assert result.outcome[0] == Outcome.CONVERTED, result.reasons
        assert (result.text[0], result.extra["currency"][0]) == (expected, code)

    def test_mixed_currencies_go_to_a_companion_column(self) -> None:
        applied = run(["£5.50", "€7.25", "USD 3.10", "12.00"])
        assert applied.decision.convention["currency_mode"] == "mixed"
        assert applied.decision.unit is None
        assert applied.text == ["5.5", "7.25", "3.1", "12"]
        assert applied.extra["currency"] == ["GBP", "EUR", "USD", ""]

    def test_ambiguous_dollar_converts_amounts_and_leaves_currency_unknown(self) -> None:
        # CLDR (babel) writes USD, AUD, NZD, ... all as "$": the amount is certain, the
        # currency is not, so the column reports no currency rather than listing cells
        applied = run(["$5.50", "$7.25"])
        assert list(applied.outcome) == [Outcome.CONVERTED] * 2
        assert applied.decision.convention["currency"] is None
        assert any("USD" in e and "AUD" in e for e in applied.decision.evidence)

    def test_an_unknown_dollar_among_other_currencies_is_listed(self) -> None:
        applied = run(["$5.50", "€7,25", "£3.10", "€1,10"])
        i = 0  # "$5.50": its row's currency cannot be written in the companion column
        assert applied.outcome[i] == Outcome.UNRESOLVED

    @pytest.mark.parametrize(("header", "others", "expected"), [
        ("Price (CAD)", [], "CAD"),
        ("Price", ["AUD 3.00"], "AUD"),
    ])
    def test_ambiguous_dollar_from_header_or_other_values(self, header: str,
                                                          others: list[str],
                                                          expected: str) -> None:
        frame = pd.DataFrame({header: ["$5.50", "$7.25", *others]})
        decision = decide(frame, header)
        assert decision.convention["symbols"] == {"$": expected}
        assert decision.unit == expected

    def test_dollar_per_country(self) -> None:
        applied = run(["$5.50", "$7.25", "$1,000.00", "$2.00"],
                      Country=["USA", "USA", "Canada", "Canada"])
        assert applied.decision.convention["currency_mode"] == "mixed"
        assert applied.extra["currency"] == ["USD", "USD", "CAD", "CAD"]

    def test_dollar_from_a_single_country_column(self) -> None:
        applied = run(["$5.50", "$7.25"], Country=["Canada", "Canada"])
        assert applied.decision.unit == "CAD"
        assert applied.text == ["5.5", "7.25"]

    def test_unknown_code_is_not_an_amount(self) -> None:
        result = ENGINE.convert(["XYZ 5"], {"decimal_mark": "."})
        assert result.outcome[0] == Outcome.UNRESOLVED

    def test_drift_to_another_currency_is_listed(self) -> None:
        convention = {"decimal_mark": ".", "currency_mode": "single", "currency": "EUR"}
        result = ENGINE.convert(["€5", "£5", "5"], convention)
        assert list(result.outcome) == [Outcome.CONVERTED, Outcome.UNRESOLVED,
                                        Outcome.CONVERTED]


class TestPercent:
    def test_percent_column(self) -> None:
        applied = run(["12.5%", "3 %", "100%"])
        assert applied.decision.unit == "percent"
        assert applied.decision.convention["percent"] is True
        assert "percent" in str(applied.decision.details)
        assert applied.text == ["12.5", "3", "100"]

    def test_comma_percent(self) -> None:
        assert outputs(["12,5\u00a0%", "7,25 %"]) == ["12.5", "7.25"]

    def test_a_percentage_among_plain_numbers_is_listed(self) -> None:
        applied = run(["12.5", "3.25", "7.5", "4%"])
        assert applied.decision.unit is None
        assert applied.outcome[3] == Outcome.UNRESOLVED


class TestNotOurs:
    @pytest.mark.parametrize(("header", "values"), [
        ("Item", ["007", "00123", "042", "17"]),                       # leading zeros
        ("Card", ["4111111111111111", "5500000000000004"]),            # 16+ digits
        ("Postcode", ["75001", "10115", "20095", "80331"]),             # postal codes
        ("Ref", [str(10000 + i * 7919 % 90000) for i in range(40)]),   # fixed width codes
        ("Note", ["good", "late delivery", "ok", "5"]),                 # words
        ("Phone", ["+44 20 7946 0958", "020 7946 0958"]),
        ("Date", ["03/04/2024", "2024-04-03", "03.04.2024"]),
    ])
    def test_identifiers_and_words(self, header: str, values: list[str]) -> None:
        assert decide(pd.DataFrame({header: values}), header) is None

    def test_zero_point_five_is_a_number(self) -> None:
        decision = decide(pd.DataFrame({"Rate": ["0.5", "0.25", "1.75"]}), "Rate")
        assert decision is not None and decision.fit == 1.0

    def test_uniform_one_letter_suffix_looks_like_a_unit(self) -> None:
        decision = decide(pd.DataFrame({"T": ["300 K", "290 K", "310 K"]}), "T")
        assert decision is None or decision.fit < 0.8


class TestDecision:
    def test_fit_counts_cells(self) -> None:
        decision = decide(pd.DataFrame({"A": ["1.5", "2.5", "3.5", "n/a?"]}), "A")
        assert decision.fit == pytest.approx(0.75)

    def test_convention_is_plain_json(self) -> None:
        import json

        decision = decide(pd.DataFrame({"A": ["€1.234,5", "$7.25", "£1"]}), "A")
        json.dumps(dict(decision.convention))
        assert decision.kind == "number" and decision.engine == "numbers"

    def test_more_evidence_more_confidence(self) -> None:
        few = decide(pd.DataFrame({"A": ["1.234,5", "2.500"]}), "A")
        many = decide(pd.DataFrame({"A": [f"{n}.234,5" for n in range(1, 60)] + ["2.500"]}),
                      "A")
        assert few.confidence < many.confidence


class TestCurrencyContext:
    def test_dollar_per_currency_column(self) -> None:
        applied = run(["$5.50", "$7.25", "$1,000.00"], Currency=["USD", "AUD", "AUD"])
        assert applied.extra["currency"] == ["USD", "AUD", "AUD"]

    def test_workbook_format_names_the_currency(self) -> None:
        from collections import Counter

        frame = pd.DataFrame({"Amount": ["1234.5", "17"]})
        table = TableEvidence.from_frame(
            frame, typed={"Amount": {"1234.5": "number", "17": "number"}},
            formats={"Amount": Counter({"[$€-407]#,##0.00": 2})})
        decision = ENGINE.propose(table.column("Amount"), Context(table))
        assert decision.unit == "EUR"


class TestPlanFile:
    def test_conventions_survive_the_plan_file(self, monkeypatch: pytest.MonkeyPatch) -> None:
        import harmonize.engines
        from harmonize import plan as plan_file

        # the plan reader checks the engine name against the registry
        monkeypatch.setattr(harmonize.engines, "ENGINES", [*harmonize.engines.ENGINES, ENGINE])

        values = ["1,234.5", "3.25", "2.500", "7.125", "$5.00", "$7.00"]
        countries = ["US", "US", "DE", "DE", "CA", "CA"]
        # five rows a group at least, or the country column explains no split
        frame = pd.DataFrame({"Amount": values * 5, "Country": countries * 5})
        decision = decide(frame, "Amount")
        column = plan_file.ColumnPlan.from_decision("Amount", decision, [])
        text = plan_file.dumps(plan_file.Plan([plan_file.TablePlan("f.csv", None, [column])]))
        loaded = plan_file.loads(text).tables[0].column("Amount")
        for label in ("US", "DE", "CA"):
            before = decision.groups.convention_for(decision.convention, label)
            after = loaded.groups.convention_for(loaded.convention, label)
            assert ENGINE.convert(values, before).text == ENGINE.convert(values, after).text
            assert list(ENGINE.convert(values, before).outcome) == list(
                ENGINE.convert(values, after).outcome)


def test_currency_without_minor_units_groups_its_digits() -> None:
    # ISO 4217 gives JPY no minor unit (babel: get_currency_precision("JPY") == 0), so a
    # yen amount's one mark can only group thousands
    import pandas as pd
    from babel.numbers import get_currency_precision

    import harmonize
    assert get_currency_precision("JPY") == 0
    frame = pd.DataFrame({"Net amount": ["￥35,984", "￥93,022", "￥3,738"]})
    # the file name names Japan, so ￥ is JPY (alone it may also be CNY, which has cents)
    out, entry, _ = harmonize.harmonize_frame(frame, name="stock_jp.csv")
    assert out["Net amount"].tolist() == ["35984", "93022", "3738"]
    assert entry["unresolved"] == []
    out, entry, _ = harmonize.harmonize_frame(frame, name="stock.csv")
    assert len(entry["unresolved"]) == 3
