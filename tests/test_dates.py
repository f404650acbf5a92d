"""The dates engine against published references: ISO 8601 and RFC 3339 examples,
ECMA-376 spreadsheet serials, the Gregorian calendar (Python's ``calendar``/``datetime``)
and CLDR month names and date patterns (babel). Check-value ids (D1, U11, ...) refer to
the reference values of ISO 8601, RFC 3339 and ECMA-376 named beside each check."""

from __future__ import annotations

import calendar
from collections import Counter
from datetime import date, datetime, timedelta

import babel.dates as bd
import pandas as pd
import pytest

from harmonize.context import Context
from harmonize.engines.base import Outcome
from harmonize.engines.dates import DateEngine
from harmonize.engines.dates_decide import format_order
from harmonize.engines.dates_parse import parse
from harmonize.engines.dates_words import locale_order, month_table, territory_order
from harmonize.evidence import TableEvidence
from harmonize.options import Options

ENGINE = DateEngine()
BASE = {"order": None, "candidates": ["DMY", "MDY"], "year_from": 1947, "numbers": None,
        "kind": "datetime", "zone_offsets": {}, "sentinels": ["1900-01-01", "9999-12-31"]}


def convert_one(value: str, **convention) -> tuple[str, Outcome]:
    result = ENGINE.convert([value], {**BASE, **convention})
    return result.text[0], Outcome(result.outcome[0])


def decide(frame: pd.DataFrame, column: str, options: Options | None = None,
           formats: dict[str, Counter[str]] | None = None):
    table = TableEvidence.from_frame(frame, formats=formats)
    evidence = table.column(column)
    return ENGINE.propose(evidence, Context(table, options)), evidence


def apply(frame: pd.DataFrame, column: str, options: Options | None = None) -> dict[str, str]:
    """Propose and convert, following group rules like the core does; raw -> output."""
    decision, evidence = decide(frame, column, options)
    assert decision is not None
    out: dict[str, str] = {}
    if decision.groups is None:
        result = ENGINE.convert(evidence.values.tolist(), decision.convention)
        return dict(zip(evidence.values.tolist(), result.text, strict=True))
    for label, rows in frame.groupby(decision.groups.by):
        convention = decision.groups.convention_for(decision.convention, str(label))
        values = rows[column].unique().tolist()
        out.update(zip(values, ENGINE.convert(values, convention).text, strict=True))
    return out


class TestIso8601:
    # ISO 8601:2000 §5.2.1.1 calendar date, basic and extended (checkvalues.md D1)
    @pytest.mark.parametrize("text", ["19850412", "1985-04-12"])
    def test_calendar_date(self, text: str) -> None:
        assert convert_one(text, numbers="compact", kind="date") == ("1985-04-12",
                                                                    Outcome.CONVERTED)

    # ISO 8601:2000 §5.2.2.1 ordinal date, extended (D2)
    def test_ordinal_date(self) -> None:
        assert convert_one("1985-102", numbers="compact", kind="date")[0] == "1985-04-12"

    def test_seven_digits_are_never_a_date(self) -> None:
        # the basic ordinal form (D2: 1985102) is left out on purpose: a column's 7-digit
        # numbers (references, the engine's own output of a text column) must stay numbers
        assert convert_one("1985102", numbers="compact", kind="date")[1] == Outcome.UNRESOLVED

    # ISO 8601:2000 §5.2.3 week date, basic and extended; Monday = 1 (D3)
    @pytest.mark.parametrize("text", ["1985W155", "1985-W15-5"])
    def test_week_date(self, text: str) -> None:
        assert convert_one(text, kind="date")[0] == "1985-04-12"

    # Week-date edge cases computed with Python's date.isocalendar (D6-D9)
    @pytest.mark.parametrize(("week", "day"), [
        ("2009-W01-1", "2008-12-29"), ("2009-W53-4", "2009-12-31"),
        ("2009-W53-7", "2010-01-03"), ("2004-W53-6", "2005-01-01"),
        ("2005-W52-7", "2006-01-01"), ("2013-W01-1", "2012-12-31"),
        ("2015-W53-7", "2016-01-03"), ("1999-W52-6", "2000-01-01"),
        ("2020-W53-4", "2020-12-31")])
    def test_week_edges(self, week: str, day: str) -> None:
        assert convert_one(week, kind="date")[0] == day
        y, w, d = date.fromisoformat(day).isocalendar()  # Python as the reference
        assert week == f"{y}-W{w:02d}-{d}"

    def test_week_53_of_a_52_week_year_is_impossible(self) -> None:
        # 2015-W53 exists (D9) but 2014 has 52 weeks: date.fromisocalendar rejects W53
        assert convert_one("2014-W53-1", kind="date")[1] == Outcome.UNRESOLVED

    # Ordinal edge cases (D10)
    @pytest.mark.parametrize(("ordinal", "day"), [
        ("2004-366", "2004-12-31"), ("2016-060", "2016-02-29"), ("1953-214", "1953-08-02")])
    def test_ordinal_edges(self, ordinal: str, day: str) -> None:
        assert convert_one(ordinal, kind="date")[0] == day

    def test_day_366_of_a_common_year_is_impossible(self) -> None:
        assert convert_one("2023-366", kind="date")[1] == Outcome.UNRESOLVED

    # ISO 8601:2000 §5.4.1 date-time with UTC offset forms ±hhmm, ±hh:mm, ±hh, Z (D4)
    @pytest.mark.parametrize(("text", "expected"), [
        ("19850412T101530Z", "1985-04-12T10:15:30+00:00"),
        ("19850412T101530+0400", "1985-04-12T10:15:30+04:00"),
        ("19850412T101530+04", "1985-04-12T10:15:30+04:00"),
        ("1985-04-12T10:15:30+04:00", "1985-04-12T10:15:30+04:00"),
        ("1985-04-12T10:15:30+04", "1985-04-12T10:15:30+04:00"),
        ("1985-04-12T10:15:30Z", "1985-04-12T10:15:30+00:00")])
    def test_offsets(self, text: str, expected: str) -> None:
        assert convert_one(text) == (expected, Outcome.CONVERTED)

    def test_offset_is_never_invented(self) -> None:
        assert convert_one("1985-04-12T10:15:30")[0] == "1985-04-12T10:15:30"


class TestRfc3339:
    # RFC 3339 §5.8 examples (D11); fraction kept as written, Z -> +00:00
    @pytest.mark.parametrize(("text", "expected"), [
        ("1985-04-12T23:20:50.52Z", "1985-04-12T23:20:50.52+00:00"),
        ("1996-12-19T16:39:57-08:00", "1996-12-19T16:39:57-08:00"),
        ("1937-01-01T12:00:27.87+00:20", "1937-01-01T12:00:27.87+00:20")])
    def test_examples(self, text: str, expected: str) -> None:
        assert convert_one(text) == (expected, Outcome.CONVERTED)

    def test_leap_second_kept(self) -> None:
        # RFC 3339 §5.8 allows 23:59:60 (D11); Python's datetime rejects it (D13)
        assert convert_one("1990-12-31T23:59:60Z")[0] == "1990-12-31T23:59:60+00:00"
        assert convert_one("1990-12-31T15:59:60-08:00")[0] == "1990-12-31T15:59:60-08:00"

    def test_lowercase_t_and_z_and_space(self) -> None:
        # RFC 3339 §5.6 NOTE: 't' and 'z' may be lowercase; a space may replace T (D12)
        assert convert_one("1985-04-12t23:20:50z")[0] == "1985-04-12T23:20:50+00:00"
        assert convert_one("1985-04-12 23:20:50Z")[0] == "1985-04-12T23:20:50+00:00"

    def test_unknown_local_offset_kept_distinct_from_utc(self) -> None:
        # RFC 3339 §4.3: -00:00 is not the same as Z (D12)
        assert convert_one("1985-04-12T23:20:50-00:00")[0] == "1985-04-12T23:20:50-00:00"


class TestSpreadsheetSerials:
    # ECMA-376 1st ed. Part 4 §3.17.4.1 (D15-D17, D20), 1900 system
    @pytest.mark.parametrize(("serial", "day"), [
        ("1", "1900-01-01"), ("59", "1900-02-28"), ("61", "1900-03-01"), ("3687", "1910-02-03"),
        ("38749", "2006-02-01"), ("2958465", "9999-12-31"), ("36161", "1999-01-01"),
        ("40179", "2010-01-01"), ("45000", "2023-03-15"), ("25569", "1970-01-01")])
    def test_1900_system(self, serial: str, day: str) -> None:
        text, outcome = convert_one(serial, numbers="serial1900", kind="date", sentinels=[])
        assert (text, outcome) == (day, Outcome.CONVERTED)

    def test_fictitious_leap_day(self) -> None:
        # serial 60 is "1900-02-29", which does not exist (D16); 1900 is not leap (D14)
        assert not calendar.isleap(1900)
        assert convert_one("60", numbers="serial1900", kind="date")[1] == Outcome.UNRESOLVED

    # ECMA-376 1904 system: serial 0 = 1904-01-01 (D18); offset 1462 days (D19)
    @pytest.mark.parametrize(("serial", "day"), [
        ("0", "1904-01-01"), ("2225", "1910-02-03"), ("37287", "2006-02-01"),
        ("2957003", "9999-12-31")])
    def test_1904_system(self, serial: str, day: str) -> None:
        assert convert_one(serial, numbers="serial1904", kind="date",
                           sentinels=[])[0] == day
        if int(serial):
            assert convert_one(str(int(serial) + 1462), numbers="serial1900", kind="date",
                               sentinels=[])[0] == day

    def test_fraction_is_time_of_day(self) -> None:
        # serial fraction = share of the day (ECMA-376 §3.17.4.1): .5 is noon
        assert convert_one("45000.5", numbers="serial1900")[0] == "2023-03-15T12:00:00"

    def test_unix_epoch(self) -> None:
        # POSIX seconds since the epoch (D23): 946684800 = 2000-01-01T00:00:00Z
        assert convert_one("946684800", numbers="unix_seconds")[0] == \
            "2000-01-01T00:00:00+00:00"
        assert convert_one("946684800123", numbers="unix_milliseconds")[0] == \
            "2000-01-01T00:00:00.123+00:00"

    def test_serial_column_needs_a_date_header(self) -> None:
        values = ["45000", "45010", "45020", "45031"]
        assert decide(pd.DataFrame({"Amount": values}), "Amount")[0] is None
        decision, _ = decide(pd.DataFrame({"Created": values}), "Created")
        assert decision is not None and decision.convention["numbers"] == "serial1900"

    def test_plain_amounts_are_not_dates(self) -> None:
        # task rule 6: a column of amounts is not a date
        frame = pd.DataFrame({"Total": ["12.5", "1200", "45000", "17.25", "300"]})
        assert decide(frame, "Total")[0] is None


class TestCalendar:
    # Gregorian leap rule via Python's calendar.isleap (D14)
    @pytest.mark.parametrize("year", [1600, 1900, 2000, 2023, 2024, 2100])
    def test_february_29(self, year: int) -> None:
        text, outcome = convert_one(f"29/02/{year}", order="DMY", kind="date")
        if calendar.isleap(year):
            assert (text, outcome) == (f"{year}-02-29", Outcome.CONVERTED)
        else:
            assert outcome == Outcome.UNRESOLVED

    def test_every_day_of_a_leap_year_round_trips(self) -> None:
        # Python's datetime as the reference for validity
        days = [date(2024, 1, 1) + timedelta(days=i) for i in range(366)]
        values = [d.strftime("%d.%m.%Y") for d in days]
        result = ENGINE.convert(values, {**BASE, "order": "DMY", "kind": "date"})
        assert result.text == [d.isoformat() for d in days]

    def test_impossible_date_is_listed_with_a_reason(self) -> None:
        result = ENGINE.convert(["31/02/2024"], {**BASE, "order": "DMY"})
        assert result.outcome[0] == Outcome.UNRESOLVED
        assert "impossible" in result.reasons[0]


class TestCldr:
    # CLDR month names via babel (checkvalues.md A3 / libnotes §1): every language's wide and
    # abbreviated names in both contexts read as their month
    @pytest.mark.parametrize("lang", ["en", "de", "fr", "es", "it", "nl", "pt", "sv", "da",
                                      "nb", "fi", "pl", "cs"])
    def test_month_names(self, lang: str) -> None:
        for context in ("format", "stand-alone"):
            for width in ("wide", "abbreviated"):
                for month, name in bd.get_month_names(width, context, lang).items():
                    text, outcome = convert_one(f"3 {name} 2024", kind="date")
                    assert (text, outcome) == (f"2024-{month:02d}-03", Outcome.CONVERTED), name

    @pytest.mark.parametrize(("locale", "order"), [
        ("en_US", "MDY"), ("en_GB", "DMY"), ("de_DE", "DMY"), ("fr_FR", "DMY"),
        ("ja_JP", "YMD"), ("zh_CN", "YMD"), ("ko_KR", "YMD"), ("hu_HU", "YMD"),
        ("sv_SE", "YMD"), ("nl_NL", "DMY")])
    def test_short_pattern_order(self, locale: str, order: str) -> None:
        # CLDR 49 short date patterns (checkvalues.md A3)
        assert locale_order(locale) == order

    def test_territory_order(self) -> None:
        # likely subtags: und_US -> en_US (M/d/yy), und_DE -> de_DE (dd.MM.yy) (libnotes §1)
        assert territory_order("US") == "MDY" and territory_order("DE") == "DMY"

    @pytest.mark.parametrize(("locale", "day"), [
        ("en_US", date(2003, 2, 1)), ("de_DE", date(2003, 2, 1)), ("en_GB", date(2003, 2, 1)),
        ("fr_FR", date(2024, 12, 31)), ("nl_NL", date(2024, 7, 9)), ("pl_PL", date(1999, 3, 13))])
    def test_babel_formatted_dates_read_back(self, locale: str, day: date) -> None:
        # babel's own short and medium renderings, read with the locale's order stated
        for width in ("short", "medium", "long"):
            text = bd.format_date(day, width, locale=locale)
            order = locale_order(locale)
            got, outcome = convert_one(text, order=order, kind="date", year_from=1950)
            assert (got, outcome) == (day.isoformat(), Outcome.CONVERTED), text

    def test_month_names_unique(self) -> None:
        assert month_table()["märz"] == 3 and month_table()["sept"] == 9
        assert month_table()["října"] == 10  # cs genitive (format context)


class TestForms:
    @pytest.mark.parametrize(("text", "expected"), [
        ("5 de marzo de 2023", "2023-03-05"), ("Monday, 4 March 2024", "2024-03-04"),
        ("4. März 2024", "2024-03-04"), ("1er mars 2024", "2024-03-01"),
        ("March 3rd, 2024", "2024-03-03"), ("Sept. 3, 2024", "2024-09-03"),
        ("03-Mar-24", "2024-03-03"), ("mar. 5 mars 2024", "2024-03-05"),
        ("1:a maj 2024", "2024-05-01"), ("2024/03/04", "2024-03-04"),
        ("2024. 03. 04.", "2024-03-04"), ("JUEVES 7 DE MARZO DE 2024", "2024-03-07")])
    def test_written_dates(self, text: str, expected: str) -> None:
        assert convert_one(text, kind="date") == (expected, Outcome.CONVERTED)

    def test_weekday_that_does_not_match_is_impossible(self) -> None:
        # 2024-03-04 is a Monday (Python datetime)
        assert date(2024, 3, 4).isoweekday() == 1
        assert convert_one("Tuesday, 4 March 2024", kind="date")[1] == Outcome.UNRESOLVED

    @pytest.mark.parametrize(("text", "expected"), [
        ("03/04/2024 3:45 PM", "2024-04-03T15:45:00"), ("03/04/2024 12:05 a.m.",
                                                        "2024-04-03T00:05:00"),
        ("4. März 2024 um 10:30 Uhr", "2024-03-04T10:30:00"),
        ("4 mai 2024 à 14h30", "2024-05-04T14:30:00"),
        ("2024-03-04 10:00 UTC+2", "2024-03-04T10:00:00+02:00"),
        ("04.03.2024 10:00:05,250", "2024-03-04T10:00:05.250"),
        ("3.4.2024 10:15 ip.", "2024-04-03T22:15:00")])
    def test_datetimes(self, text: str, expected: str) -> None:
        assert convert_one(text, order="DMY") == (expected, Outcome.CONVERTED)

    def test_times(self) -> None:
        for text, expected in [("10:30", "10:30:00"), ("3 PM", "15:00:00"),
                               ("23:59:59.5", "23:59:59.5"), ("14h30", "14:30:00")]:
            assert convert_one(text, kind="time") == (expected, Outcome.CONVERTED)

    def test_zone_abbreviation_is_reported_not_guessed(self) -> None:
        text, outcome = convert_one("2024-03-04 10:00 EST")
        assert outcome == Outcome.UNRESOLVED
        assert convert_one("2024-03-04 10:00 CET", zone_offsets={"CET": "+01:00"})[0] == \
            "2024-03-04T10:00:00+01:00"

    @pytest.mark.parametrize("text", ["1900-01-01", "9999-12-31", "0000-00-00", "00/00/0000",
                                      "31/12/9999"])
    def test_sentinels_are_missing(self, text: str) -> None:
        result = ENGINE.convert([text], {**BASE, "order": "DMY"})
        assert result.outcome[0] == Outcome.MISSING and result.reasons[0] == "sentinel date"

    @pytest.mark.parametrize("text", ["03/24", "14 March", "hello", "12:75", "1.2.3", "13/2024"])
    def test_unreadable(self, text: str) -> None:
        result = ENGINE.convert([text], {**BASE, "order": "DMY"})
        assert result.outcome[0] == Outcome.UNRESOLVED and result.reasons[0]

    def test_two_digit_year_window(self) -> None:
        # options.year_window: years land in year_from .. year_from + 99
        assert convert_one("03/04/46", order="DMY", year_from=1947)[0] == "2046-04-03"
        assert convert_one("03/04/47", order="DMY", year_from=1947)[0] == "1947-04-03"
        assert convert_one("03/04/47", order="DMY", year_from=1950)[0] == "2047-04-03"

    def test_parse_is_cached(self) -> None:
        assert parse("03/04/2024") is parse("03/04/2024")


class TestDecisions:
    def test_component_above_12_decides(self) -> None:
        frame = pd.DataFrame({"d": ["03/04/2024", "13/04/2024", "01/02/2024"]})
        out = apply(frame, "d")
        assert out == {"03/04/2024": "2024-04-03", "13/04/2024": "2024-04-13",
                       "01/02/2024": "2024-02-01"}

    def test_no_evidence_lists_ambiguous_keeps_coinciding(self) -> None:
        frame = pd.DataFrame({"d": ["03/04/2024", "05/05/2024", "01/02/2024"]})
        decision, evidence = decide(frame, "d")
        result = ENGINE.convert(evidence.values.tolist(), decision.convention)
        got = dict(zip(evidence.values.tolist(), result.outcome.tolist(), strict=True))
        assert got == {"03/04/2024": Outcome.UNRESOLVED, "05/05/2024": Outcome.CONVERTED,
                       "01/02/2024": Outcome.UNRESOLVED}
        i = evidence.values.tolist().index("03/04/2024")
        assert sorted(result.candidates[i]) == ["2024-03-04", "2024-04-03"]
        assert "stated order" in result.reasons[i]

    def test_country_column_splits_mixed_orders(self) -> None:
        frame = pd.DataFrame({"d": ["03/04/2024", "13/04/2024", "04/14/2024", "01/02/2024"],
                              "country": ["Deutschland", "Deutschland", "USA", "USA"]})
        decision, _ = decide(frame, "d")
        assert decision.groups is not None and decision.groups.by == "country"
        assert apply(frame, "d") == {"03/04/2024": "2024-04-03", "13/04/2024": "2024-04-13",
                                     "04/14/2024": "2024-04-14", "01/02/2024": "2024-01-02"}

    def test_mixed_without_split_converts_only_self_deciding(self) -> None:
        frame = pd.DataFrame({"d": ["03/04/2024", "13/04/2024", "04/14/2024", "25/12/2024",
                                    "12/25/2024"]})
        out = apply(frame, "d")
        assert out["13/04/2024"] == "2024-04-13" and out["04/14/2024"] == "2024-04-14"
        assert out["03/04/2024"] == ""

    def test_stated_order_wins_over_missing_evidence(self) -> None:
        frame = pd.DataFrame({"d": ["03/04/2024", "01/02/2024"]})
        assert apply(frame, "d", Options(date_order="MDY")) == {
            "03/04/2024": "2024-03-04", "01/02/2024": "2024-01-02"}

    def test_plan_order_is_honoured(self) -> None:
        assert convert_one("03/04/2024", order="MDY", kind="date")[0] == "2024-03-04"
        assert convert_one("03/04/2024", order="DMY", kind="date")[0] == "2024-04-03"

    def test_number_format_decides(self) -> None:
        # a workbook's number format states the author's order (libnotes §5, openpyxl)
        frame = pd.DataFrame({"d": ["03/04/2024", "01/02/2024", "2024-05-06"]})
        decision, _ = decide(frame, "d", formats={"d": Counter({"DD/MM/YYYY": 5})})
        assert decision.convention["order"] == "DMY"

    @pytest.mark.parametrize(("number_format", "order"), [
        ("DD/MM/YYYY", "DMY"), ("m/d/yy", "MDY"), ("yyyy-mm-dd", "YMD"),
        ("[$-409]m/d/yy h:mm AM/PM", "MDY"), ("dd.mm.yyyy hh:mm:ss", "DMY"), ("h:mm", None)])
    def test_format_order(self, number_format: str, order: str | None) -> None:
        assert format_order(number_format) == order

    def test_territory_decides_when_no_value_does(self) -> None:
        # 1-10 March written day-first in a German branch: no value decides, none
        # contradicts DMY, and CLDR's de short date pattern (dd.MM.yy) is day-first
        days = [date(2024, 3, d) for d in range(1, 11) for _ in range(2)]
        frame = pd.DataFrame({"d": [d.strftime("%d/%m/%Y") for d in days],
                              "country": ["DE"] * 20})
        decision, evidence = decide(frame, "d")
        assert decision.convention["order"] == "DMY"
        # nor does row order: read month-first the rows are the 3rd of January to October,
        # a monthly series as regular as the daily one
        assert not any("steps" in e for e in decision.evidence)
        assert any("named country" in e for e in decision.evidence)
        assert decision.confidence < 0.98  # a country's habit, not proof
        result = ENGINE.convert(evidence.values.tolist(), decision.convention)
        i = evidence.values.tolist().index("02/03/2024")
        assert result.text[i] == "2024-03-02"

    def test_row_order_alone_makes_a_likely_order_only(self) -> None:
        # no country anywhere: one-day steps read DMY, but a ledger of the same day each
        # month looks the same the other way round, so row order only sets the best reading
        days = [date(2024, 3, d) for d in range(1, 11) for _ in range(2)]
        frame = pd.DataFrame({"d": [d.strftime("%d/%m/%Y") for d in days]})
        decision, evidence = decide(frame, "d")
        assert decision.convention["order"] is None
        assert decision.convention["likely_order"] == "DMY"
        result = ENGINE.convert(evidence.values.tolist(), decision.convention)
        i = evidence.values.tolist().index("03/03/2024")
        assert result.outcome[i] == Outcome.CONVERTED  # readings coincide
        i = evidence.values.tolist().index("02/03/2024")
        assert result.best[i] == "2024-03-02"

    def test_row_order_with_number_format_decides(self) -> None:
        days = [date(2024, 3, d) for d in range(1, 11)]
        frame = pd.DataFrame({"d": [d.strftime("%d/%m/%Y") for d in days]})
        decision, _ = decide(frame, "d", formats={"d": Counter({"dd/mm/yyyy": 2})})
        assert decision.convention["order"] == "DMY"

    def test_iso_column(self) -> None:
        frame = pd.DataFrame({"Shipped": ["2024-03-04", "2024-03-05T10:00:00Z", "2024-03-06"]})
        decision, _ = decide(frame, "Shipped")
        assert decision.kind == "date" and decision.fit == 1.0

    def test_compact_dates_need_evidence(self) -> None:
        ids = pd.DataFrame({"ref": ["20240403", "20240517"]})
        assert decide(ids, "ref")[0] is None
        dated = pd.DataFrame({"Order date": ["20240403", "20240517"]})
        assert decide(dated, "Order date")[0].convention["numbers"] == "compact"

    def test_postal_codes_and_ids_not_claimed(self) -> None:
        frame = pd.DataFrame({"zip": ["75001", "10115", "00123", "99999"]})
        assert decide(frame, "zip")[0] is None

    def test_time_column(self) -> None:
        decision, _ = decide(pd.DataFrame({"t": ["10:30", "11:45:10", "3 PM"]}), "t")
        assert decision.kind == "time"


class TestRegionalForms:
    LOCALES = ("en_GB", "en_US", "en_CA", "en_AU", "en_IN", "de_DE", "de_CH", "fr_FR", "fr_CA",
               "es_ES", "it_IT", "nl_NL", "pt_BR", "sv_SE", "da_DK", "nb_NO", "fi_FI", "pl_PL",
               "cs_CZ", "ja_JP", "hu_HU")

    @pytest.mark.parametrize("locale", LOCALES)
    def test_cldr_dates_and_datetimes_read_back(self, locale: str) -> None:
        # babel (CLDR 49) writes every width of date and the short/medium date-time of the
        # locale (fr_CA '15 h 45', da/fi '15.45', ja '2024年4月3日水曜日', pt 'quarta-feira',
        # fr_CA 'juill.'); each reads back as what Python's datetime holds
        moment = datetime(2024, 7, 3, 15, 45, 10)
        order = locale_order(locale)
        for width in ("short", "medium", "long", "full"):
            text = bd.format_date(moment.date(), width, locale=locale)
            assert convert_one(text, order=order, kind="date", year_from=1950) == (
                "2024-07-03", Outcome.CONVERTED), text
        for width, seconds in (("short", "00"), ("medium", "10")):
            text = bd.format_datetime(moment, width, locale=locale)
            assert convert_one(text, order=order, year_from=1950) == (
                f"2024-07-03T15:45:{seconds}", Outcome.CONVERTED), text

    def test_weekday_checked_in_japanese(self) -> None:
        # 2024-07-03 is a Wednesday (Python datetime); CLDR ja: 水曜日 = Wednesday
        assert date(2024, 7, 3).isoweekday() == 3
        assert convert_one("2024年7月3日木曜日", kind="date")[1] == Outcome.UNRESOLVED

    def test_impossible_date_is_not_evidence_for_year_first(self) -> None:
        # 31.09. does not exist (Python datetime): listed, not read as 2031-09-19
        frame = pd.DataFrame({"d": ["31.09.19", "14.03.19", "02.03.19", "05.04.19"]})
        out = apply(frame, "d")
        assert out["31.09.19"] == "" and out["14.03.19"] == "2019-03-14"
        assert out["02.03.19"] == "2019-03-02"


class TestStraysAndBranches:
    def test_stray_written_another_way_is_listed(self) -> None:
        # a one-branch ledger written dd.MM.yyyy (de_DE medium, CLDR) with one row pasted
        # from a branch writing M/d/yy (en_US short): the host's order does not cover it
        days = [date(2024, 3, d) for d in range(1, 29)]
        values = [d.strftime("%d.%m.%Y") for d in days] + ["3/4/24", "3/14/24"]
        decision, evidence = decide(pd.DataFrame({"d": values}), "d")
        assert decision.convention["order"] == "DMY"
        result = ENGINE.convert(evidence.values.tolist(), decision.convention)
        got = dict(zip(evidence.values.tolist(), zip(result.text, result.outcome.tolist(),
                                                     strict=True), strict=True))
        assert got["02.03.2024"] == ("2024-03-02", Outcome.CONVERTED)
        assert got["3/4/24"][1] == Outcome.UNRESOLVED
        assert got["3/14/24"] == ("2024-03-14", Outcome.CONVERTED)   # one reading only

    def test_slip_against_many_does_not_stop_the_decision(self) -> None:
        days = [date(2024, 3, d) for d in range(1, 29)]
        values = [d.strftime("%m/%d/%Y") for d in days] + ["25/03/2024"]
        decision, _ = decide(pd.DataFrame({"d": values}), "d")
        assert decision.convention["order"] == "MDY" and decision.confidence < 0.95
        out = apply(pd.DataFrame({"d": values}), "d")
        assert out["03/02/2024"] == "2024-03-02" and out["25/03/2024"] == ""

    def test_each_branch_needs_its_own_evidence(self) -> None:
        # GB and US write dd/MM/yyyy alike, and the US rows show it (14/03, 15/03): a branch
        # writing against its country's CLDR pattern means countries decide nothing here,
        # so the Australian rows, which show no order of their own, are listed
        frame = pd.DataFrame({
            "d": ["13/03/2024", "02/03/2024", "14/03/2024", "03/04/2024", "04/03/2024",
                  "01/03/2024", "02/03/2024", "14/03/2024", "15/03/2024", "06/03/2024",
                  "02/04/2024", "01/02/2024", "03/02/2024", "04/02/2024", "05/02/2024"],
            "Country": ["GB"] * 5 + ["US"] * 5 + ["AU"] * 5})
        decision, _ = decide(frame, "d")
        assert decision.groups is not None and decision.groups.by == "Country"
        assert decision.groups.conventions["GB"]["order"] == "DMY"
        assert decision.groups.conventions["US"]["order"] == "DMY"
        assert decision.groups.conventions["AU"]["order"] is None
        assert decision.groups.conventions["AU"]["likely_order"] == "DMY"

    def test_branches_without_evidence_follow_their_country(self) -> None:
        # en_GB dd/MM/y and en_US M/d/yy (CLDR short patterns): GB rows show DMY, the US
        # rows show nothing either way and no branch writes against its country
        frame = pd.DataFrame({
            "d": ["13/03/2024", "02/03/2024", "14/03/2024", "03/04/2024", "04/03/2024",
                  "01/03/2024", "02/03/2024", "03/04/2024", "05/03/2024", "06/03/2024"],
            "Country": ["GB"] * 5 + ["US"] * 5})
        decision, _ = decide(frame, "d")
        assert decision.groups.conventions["GB"]["order"] == "DMY"
        assert decision.groups.conventions["US"]["order"] == "MDY"

    def test_two_ways_of_writing_each_with_its_order(self) -> None:
        # merged without a country column: de_DE dd.MM.yy beside en_US M/d/yy (CLDR short)
        german = [date(2024, 5, d) for d in range(1, 20)]
        american = [date(2024, 6, d) for d in range(1, 20)]
        values = [d.strftime("%d.%m.%y") for d in german] + \
            [f"{d.month}/{d.day}/{d:%y}" for d in american]
        out = apply(pd.DataFrame({"d": values}), "d")
        assert out["02.05.24"] == "2024-05-02" and out["6/2/24"] == "2024-06-02"

    def test_a_monthly_series_on_the_first_leans_to_its_own_order(self) -> None:
        # the FRBNY nowcast file shipped with statsmodels writes "1/1/85", "2/1/85", ...:
        # month first, always the 1st. Read day-first the rows would run 1-12 January and
        # jump a year; read month-first every step is one month. No value decides.
        months = [date(1985 + i // 12, i % 12 + 1, 1) for i in range(36)]
        values = [f"{d.month}/{d.day}/{d:%y}" for d in months]
        frame = pd.DataFrame({"Date": values})
        decision, _ = decide(frame, "Date")
        assert decision.convention["order"] is None            # listed, not guessed
        assert decision.convention["likely_order"] == "MDY"
        assert any("whole months reading MDY" in e for e in decision.evidence)
        # the region's CLDR short pattern (en_US M/d/yy) then decides; expected days from
        # Python's strptime %m/%d/%y (POSIX: 69-99 are 19xx)
        out = apply(frame, "Date", Options(default_region="US"))
        assert out == {v: datetime.strptime(v, "%m/%d/%y").date().isoformat() for v in values}

    def test_the_same_day_each_month_leans_to_the_order_that_keeps_the_months(self) -> None:
        # the 5th of every month for two years, day-first: read month-first it would be
        # 1-12 May, then a jump of a year
        values = [f"05/{m:02d}/{y}" for y in (2023, 2024) for m in range(1, 13)]
        decision, _ = decide(pd.DataFrame({"d": values}), "d")
        assert decision.convention["likely_order"] == "DMY"

    def test_row_order_never_outweighs_a_value(self) -> None:
        # the same day each month (rows read as daily steps the wrong way) and one value
        # only day-first reads: the value decides
        values = [f"02/{m:02d}/2024" for m in range(1, 12)] + ["31/12/2024"]
        decision, _ = decide(pd.DataFrame({"d": values}), "d")
        assert decision.convention["order"] == "DMY"
