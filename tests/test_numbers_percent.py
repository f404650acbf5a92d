"""Numbers written without a percent sign in a column of percentages.

References: CLDR percent formats via babel 2.19 (a percent pattern shows the number times
100: ``format_percent(Decimal("0.2"), locale="de_DE") == "20 %"``), which is how a sheet
shows a fraction under a percent format; ECMA-376 Part 1 §18.8.31 says the same of the "%"
in a workbook number format (from memory). That bare numbers the size of the signed ones
are percentage points is a fact of the trade (common practice, no source).
"""

from __future__ import annotations

from decimal import Decimal

import pandas as pd
import pytest
from babel import numbers as babel_numbers

from harmonize.context import Context
from harmonize.engines.base import Decision, Outcome
from harmonize.engines.numbers import NumberEngine
from harmonize.engines.numbers_percent import KEY
from harmonize.evidence import TableEvidence
from harmonize.options import Options

ENGINE = NumberEngine()


def decide(values: list[str], header: str = "Discount", typed: dict[str, str] | None = None,
           **options) -> Decision:
    table = TableEvidence.from_frame(pd.DataFrame({header: values}),
                                     typed={header: typed} if typed else None)
    decision = ENGINE.propose(table.column(header), Context(table, Options(**options)))
    assert decision is not None
    return decision


def convert(values: list[str], convention: dict) -> dict[str, tuple[str, Outcome, list]]:
    result = ENGINE.convert(values, convention)
    return {v: (result.text[i], Outcome(result.outcome[i]), result.candidates.get(i, []))
            for i, v in enumerate(values)}


def as_fraction(text: str, locale: str = "de_DE") -> str:
    """The percentage CLDR shows for a fraction of one (babel.numbers.format_percent),
    as a plain number: "0,2" -> "20 %" -> "20"."""
    number = babel_numbers.parse_decimal(text, locale=locale)
    shown = babel_numbers.format_percent(number, locale=locale, format="#,##0.###%")
    return format(babel_numbers.parse_decimal(shown.rstrip("%\u00a0 "), locale=locale)
                  .normalize(), "f")


def test_small_bare_numbers_beside_larger_percentages_are_listed_with_both_readings() -> None:
    values = ["12,5 %", "7,5 %", "3 %", "0,2", "0,05", "15 %"]
    decision = decide(values)
    assert decision.convention["percent"] is True
    assert decision.convention[KEY] == "listed"
    assert any("without a percent sign" in e for e in decision.evidence)
    out = convert(values, decision.convention)
    assert out["12,5 %"] == ("12.5", Outcome.CONVERTED, [])
    for bare in ("0,2", "0,05"):
        text, outcome, candidates = out[bare]
        assert outcome == Outcome.UNRESOLVED and text == ""
        # the points reading as written, the fraction reading as CLDR shows it
        assert candidates == [bare.replace(",", "."), as_fraction(bare)]
    assert as_fraction("0,2") == "20" and as_fraction("0,05") == "5"


def test_bare_numbers_the_size_of_the_percentages_are_points() -> None:
    values = ["12,5 %", "7,5 %", "20", "5", "15 %"]
    decision = decide(values)
    assert decision.convention[KEY] == "points"
    out = convert(values, decision.convention)
    assert [out[v][0] for v in values] == ["12.5", "7.5", "20", "5", "15"]


def test_a_workbook_fraction_beside_written_percentages_is_listed() -> None:
    # typed 0.125 under a plain "0.00" format (not a percent format) beside "12,5 %"
    values = ["0.125", "12,5 %", "7,5 %", "30 %"]
    decision = decide(values, header="Margin", typed={"0.125": "number"})
    assert decision.convention[KEY] == "listed"
    assert any("workbook number cells" in e for e in decision.evidence)
    # the core converts typed cells apart, with "." (they are plain whatever the text says)
    typed_convention = {**decision.convention, "decimal_mark": "."}
    text, outcome, candidates = convert(["0.125"], typed_convention)["0.125"]
    assert outcome == Outcome.UNRESOLVED
    assert candidates == ["0.125", as_fraction("0.125", "en_US")] == ["0.125", "12.5"]


def test_fractions_that_fit_the_percentages_better_are_not_read_as_points() -> None:
    # some bare numbers above 1 do not make them points: read a hundred times, 0.25, 0.5
    # and 1.2 are the 25 %, 50 % and 120 % the column writes
    decision = decide(["12 %", "25 %", "50 %", "120 %", "0.25", "0.5", "1.2"])
    assert decision.convention[KEY] == "listed"


@pytest.mark.parametrize(("mode", "expected", "outcome"), [
    ("points", "0.2", Outcome.CONVERTED),
    ("fraction", "20", Outcome.CONVERTED),
    ("listed", "", Outcome.UNRESOLVED),
    (None, "0.2", Outcome.CONVERTED),      # a plan written before the key: points
])
def test_a_plan_reads_bare_numbers_as_it_says(mode: str | None, expected: str,
                                              outcome: Outcome) -> None:
    convention = {"decimal_mark": ",", "percent": True, KEY: mode}
    out = convert(["0,2", "12,5 %", "0", "-0,05"], convention)
    assert out["0,2"][:2] == (expected, outcome)
    assert out["12,5 %"][:2] == ("12.5", Outcome.CONVERTED)   # signed values: as written
    assert out["0"][:2] == ("0", Outcome.CONVERTED)           # zero reads alike either way
    if mode == "fraction":
        assert out["-0,05"][0] == "-" + as_fraction("0,05")
    assert convert(["0,2"], {"decimal_mark": ",", "percent": False, KEY: "fraction"}) \
        ["0,2"][0] == "0.2"   # outside a percentage column the key means nothing


def test_a_percent_column_without_bare_numbers_lists_any_that_come() -> None:
    # next month's data under a saved plan: no evidence was seen, so nothing is guessed
    decision = decide(["12 %", "25 %", "7,5 %"])
    assert decision.convention[KEY] == "listed"
    assert KEY not in decide(["12", "25", "7,5"]).convention


def test_the_run_option_sets_the_reading() -> None:
    values = ["12,5 %", "7,5 %", "0,2"]
    decision = decide(values, engine={"numbers": {KEY: "fraction"}})
    assert decision.convention[KEY] == "fraction"
    assert convert(values, decision.convention)["0,2"][0] == as_fraction("0,2")


def test_the_plan_reader_rejects_an_unknown_reading() -> None:
    assert ENGINE.problems({"percent": True, KEY: "guess"})
    assert not ENGINE.problems({"percent": True, KEY: "fraction"})


def test_fast_and_full_readings_agree_under_every_mode() -> None:
    from harmonize.engines.numbers_convert import convert_amounts, convert_amounts_full
    values = ["0,2", "12,5 %", "20", "1.234,5", "0", "-3", "5 ‰"]
    for mode in ("points", "fraction", "listed"):
        convention = {"decimal_mark": ",", "percent": True, KEY: mode}
        fast, full = convert_amounts(values, convention), convert_amounts_full(values,
                                                                              convention)
        assert fast.text == full.text and fast.candidates == full.candidates
    assert Decimal(convert(["5 ‰"], {"decimal_mark": ",", "percent": True})["5 ‰"][0]) \
        == Decimal("0.5")   # U+2030 PER MILLE SIGN: a tenth of a percent


def test_the_reading_survives_the_plan_file(monkeypatch: pytest.MonkeyPatch) -> None:
    import harmonize.engines
    from harmonize import plan as plan_file

    # the plan reader checks the engine name against the registry
    monkeypatch.setattr(harmonize.engines, "ENGINES", [*harmonize.engines.ENGINES, ENGINE])
    values = ["12,5 %", "7,5 %", "0,2", "0,05"]
    decision = decide(values)
    column = plan_file.ColumnPlan.from_decision("Discount", decision, [])
    text = plan_file.dumps(plan_file.Plan([plan_file.TablePlan("f.csv", None, [column])]))
    loaded = plan_file.loads(text).tables[0].column("Discount")
    assert loaded.convention[KEY] == "listed"
    before, after = convert(values, decision.convention), convert(values, loaded.convention)
    assert before == after
    # an edited plan that reads them as fractions
    edited = text.replace('bare_percent = "listed"', 'bare_percent = "fraction"')
    loaded = plan_file.loads(edited).tables[0].column("Discount")
    assert convert(values, loaded.convention)["0,2"][0] == as_fraction("0,2")
    with pytest.raises(plan_file.PlanError, match="bare_percent"):
        plan_file.loads(text.replace('bare_percent = "listed"', 'bare_percent = "maybe"'))


@pytest.mark.parametrize("locale", ["tr_TR", "eu_ES"])
def test_a_percent_sign_before_the_number_reads(locale: str) -> None:
    # CLDR tr and eu put the sign first (babel.numbers.format_percent: "%12,5", "% 12,5")
    values = [babel_numbers.format_percent(Decimal(v), locale=locale,
                                           decimal_quantization=False)
              for v in ("0.125", "0.07", "-0.03")]
    assert values[0].lstrip("\u00a0").startswith("%")
    decision = decide(values)
    assert decision.convention["percent"] is True
    assert [convert(values, decision.convention)[v][0] for v in values] == ["12.5", "7", "-3"]
