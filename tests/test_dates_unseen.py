"""The dates engine on export shapes its corpora do not generate: workbook dates stored as
date-times at midnight, times marked by a word ("14.30 Uhr", "klo 14.30"), durations,
two-digit years written first, headers naming codes or epochs. Expected values come from
Python's datetime (ISO 8601 text via isoformat), openpyxl's reading of the workbook it
wrote, and the POSIX epoch; the scenario (Vallombra Growers, an orchard cooperative) is
invented."""

from __future__ import annotations

from datetime import UTC, date, datetime, time, timedelta, timezone
from pathlib import Path

import openpyxl
import pandas as pd
import pytest

import harmonize
from harmonize.context import Context
from harmonize.engines.base import Outcome
from harmonize.engines.dates import DateEngine
from harmonize.evidence import TableEvidence
from harmonize.options import Options

ENGINE = DateEngine()


def propose(values: list[str], header: str, **columns: list[str]):
    frame = pd.DataFrame({header: values, **columns})
    table = TableEvidence.from_frame(frame)
    column = table.column(header)
    return ENGINE.propose(column, Context(table, Options())), column


def outputs(values: list[str], header: str, **columns: list[str]) -> dict[str, str]:
    decision, column = propose(values, header, **columns)
    assert decision is not None
    result = ENGINE.convert(column.values.tolist(), decision.convention)
    return dict(zip(column.values.tolist(), result.text, strict=True))


# ---------------------------------------------------------------- stored midnights

def _workbook(path: Path, cells: list[object], number_format: str | None = None) -> Path:
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.append(["Picked on", "Lot"])
    for k, cell in enumerate(cells):
        sheet.append([cell, f"L{k}"])
        if number_format and not isinstance(cell, str):
            sheet.cell(row=k + 2, column=1).number_format = number_format
    book.save(path)
    return path


def _picked_on(tmp_path: Path, source: Path) -> tuple[list[str], dict]:
    result = harmonize.run([source], tmp_path / "out", fmt="csv")
    written = next((tmp_path / "out").glob("*.csv"))
    frame = pd.read_csv(written, dtype=str, keep_default_na=False)
    column = next(c for c in result.report["files"][0]["columns"] if c["name"] == "Picked on")
    return frame["Picked on"].tolist(), column


def test_workbook_dates_stored_at_midnight_beside_text_dates_are_one_date_column(
        tmp_path: Path) -> None:
    # openpyxl gives a datetime cell the format 'yyyy-mm-dd h:mm:ss'; what it reads back
    # is the reference for the cells' dates, ISO 8601 calendar dates (D1) the output
    cells = [datetime(2024, 5, 2), datetime(2024, 5, 17), "21/05/2024", datetime(2024, 6, 3)]
    source = _workbook(tmp_path / "harvest.xlsx", cells)
    read_back = [row[0].value for row in openpyxl.load_workbook(source).active.iter_rows(
        min_row=2)]
    assert openpyxl.load_workbook(source).active["A2"].number_format == "yyyy-mm-dd h:mm:ss"
    written, column = _picked_on(tmp_path, source)
    expected = [v.date().isoformat() if isinstance(v, datetime)
                else datetime.strptime(v, "%d/%m/%Y").date().isoformat() for v in read_back]
    assert written == expected
    assert column["kind"] == "date"
    assert any("00:00:00" in line for line in column["evidence"])


def test_a_real_time_of_day_keeps_every_time(tmp_path: Path) -> None:
    cells = [datetime(2024, 5, 2), datetime(2024, 5, 17, 7, 45), datetime(2024, 6, 3, 13, 5)]
    written, column = _picked_on(tmp_path, _workbook(tmp_path / "weighed.xlsx", cells))
    assert column["kind"] == "datetime"
    assert written == [c.isoformat() for c in cells]   # 00:00:00 is a time here


@pytest.mark.parametrize("stored", ["{} 00:00:00", "{}T00:00:00", "{} 00:00", "{} 0:00",
                                    "{} 00:00:00.000", "{}T00:00:00.0000000"])
def test_text_dates_stored_as_midnight_date_times_are_dates(stored: str) -> None:
    days = [date(2024, 5, 2) + timedelta(days=7 * k) for k in range(6)]
    values = [stored.format(d.isoformat()) for d in days[:4]] + [
        d.isoformat() for d in days[4:]]
    decision, _ = propose(values, "Packed")
    assert decision.kind == "date"
    assert list(outputs(values, "Packed").values()) == [d.isoformat() for d in days]


def test_a_midnight_with_an_offset_is_an_instant() -> None:
    # ISO 8601:2000 §5.4.1 (D4): with a UTC offset the time names an instant, kept
    values = ["2024-05-02T00:00:00+02:00", "2024-05-09T00:00:00+02:00"]
    decision, _ = propose(values, "Packed")
    assert decision.kind == "datetime"
    expected = [datetime.fromisoformat(v).isoformat() for v in values]
    assert list(outputs(values, "Packed").values()) == expected


def test_a_date_column_plan_drops_a_stored_midnight_and_keeps_other_times() -> None:
    convention = {"order": "DMY", "candidates": ["DMY", "MDY"], "year_from": 1947,
                  "numbers": None, "kind": "date", "zone_offsets": {}, "sentinels": []}
    values = ["02/05/2024 00:00", "03/05/2024 14:30", "04/05/2024"]
    result = ENGINE.convert(values, convention)
    assert result.text == ["2024-05-02", datetime(2024, 5, 3, 14, 30).isoformat(),
                           "2024-05-04"]
    # an undecided value's readings follow the same rule
    open_plan = {**convention, "order": None}
    listed = ENGINE.convert(["03/04/2024 00:00:00"], open_plan)
    assert listed.outcome[0] == Outcome.UNRESOLVED
    assert sorted(listed.candidates[0]) == ["2024-03-04", "2024-04-03"]


def test_dates_without_a_time_in_a_date_time_column_are_counted() -> None:
    values = ["02/05/2024 09:05", "23/05/2024", "14/05/2024 11:15", "15/05/2024 16:40",
              "03/05/2024", "04/05/2024", "05/05/2024 10:00"]
    decision, _ = propose(values, "Logged")
    assert decision.kind == "datetime"
    assert decision.details["dates_without_time"].startswith("3 cells")
    assert outputs(values, "Logged")["03/05/2024"] == "2024-05-03"   # no time made up


# ---------------------------------------------------------------- times marked by a word

@pytest.mark.parametrize(("written", "expected"), [
    ("14.30 Uhr", time(14, 30)), ("8.05 Uhr", time(8, 5)), ("14 Uhr", time(14)),
    ("14:30 Uhr", time(14, 30)), ("14.30.15 Uhr", time(14, 30, 15)),
    ("klo 14.30", time(14, 30)), ("kl. 9.05", time(9, 5)), ("kl 14", time(14)),
    ("godz. 9.05", time(9, 5)), ("ore 14.30", time(14, 30)),
])
def test_a_time_of_day_marked_by_a_word(written: str, expected: time) -> None:
    # datetime.time.isoformat is the reference for ISO 8601 extended times (hh:mm:ss)
    values = [written, "7.45 Uhr", "klo 23.59"]
    assert outputs(values, "Ende")[written] == expected.isoformat()


def test_a_date_with_a_time_marked_by_a_word() -> None:
    values = ["3. Mai 2024 um 14.30 Uhr", "17.5.2024 um 9 Uhr", "21.05.2024, 14:30 Uhr"]
    out = outputs(values, "Geerntet")
    assert out == {values[0]: datetime(2024, 5, 3, 14, 30).isoformat(),
                   values[1]: datetime(2024, 5, 17, 9).isoformat(),
                   values[2]: datetime(2024, 5, 21, 14, 30).isoformat()}


def test_an_hour_past_23_marked_by_a_word_is_not_a_time() -> None:
    result = ENGINE.convert(["25 Uhr"], {"kind": "time", "candidates": ["DMY", "MDY"]})
    assert result.outcome[0] == Outcome.UNRESOLVED
    assert "not a time of day" in result.reasons[0]


def test_a_dotted_number_alone_is_not_a_time() -> None:
    # "14.30" without a word is a decimal number: the dates engine leaves it alone
    assert propose(["14.30", "9.05", "17.45"], "Ende")[0] is None


@pytest.mark.parametrize("header", ["Duration", "Dauer (h:mm)", "Durée", "Downtime",
                                    "Lead time"])
def test_lengths_of_time_are_not_times_of_day(header: str) -> None:
    # "1:30" under a duration header is an hour and a half (common practice, no source)
    assert propose(["1:30", "0:45", "2:15", "3:05"], header)[0] is None


def test_times_of_day_under_a_time_header_still_read() -> None:
    assert propose(["1:30", "0:45", "2:15"], "Opening hours")[0].kind == "time"


# ---------------------------------------------------------------- headers

@pytest.mark.parametrize("header", ["epoch_ms", "Unix time (ms)", "posix_ms"])
def test_an_epoch_header_reads_milliseconds(header: str) -> None:
    # POSIX seconds since the epoch (D23), milliseconds here; datetime is the reference
    moments = [datetime(2024, 5, 2, 8, 30, tzinfo=UTC) + timedelta(seconds=61 * k,
                                                                           milliseconds=k)
               for k in range(5)]
    values = [str(round(m.timestamp() * 1000)) for m in moments]
    decision, _ = propose(values, header)
    assert decision.convention["numbers"] == "unix_milliseconds"
    out = outputs(values, header)
    for value, moment in zip(values, moments, strict=True):
        assert datetime.fromisoformat(out[value]) == moment


@pytest.mark.parametrize("header", ["Ref", "Batch", "Invoice no", "SKU", "Lot no"])
def test_date_shaped_codes_under_a_code_header_stay_as_written(header: str) -> None:
    values = ["03.04.05", "12.11.10", "01.02.03", "05.06.07", "10.11.12"]
    assert propose(values, header)[0] is None


def test_a_header_naming_both_a_code_and_a_date_is_a_date_column() -> None:
    assert propose(["03.04.2024", "13.04.2024"], "Invoice date")[0].kind == "date"


# ---------------------------------------------------------------- two-digit years first

def test_two_digit_years_written_first_are_listed_not_read_day_first() -> None:
    # YY-MM-DD: every value also reads day first, as the 24th of a month across 14 years;
    # year first they are days of May to July 2024 (datetime as the reference)
    days = [date(2024, 5, 2) + timedelta(days=5 * k) for k in range(14)]
    values = [d.strftime("%y-%m-%d") for d in days]
    decision, column = propose(values, "Picked")
    assert "YMD" in decision.convention["candidates"]
    assert decision.convention["order"] is None
    assert decision.convention["likely_order"] == "YMD"
    result = ENGINE.convert(column.values.tolist(), decision.convention)
    for k, d in enumerate(days):
        day_first = datetime.strptime(values[k], "%d-%m-%y").date()
        if day_first == d:
            assert result.text[k] == d.isoformat()
        else:
            assert result.outcome[k] == Outcome.UNRESOLVED
            assert sorted(result.candidates[k]) == sorted([d.isoformat(),
                                                           day_first.isoformat()])
            assert result.best[k] == d.isoformat()


def test_a_country_does_not_decide_between_day_first_and_year_first() -> None:
    days = [date(2024, 5, 2) + timedelta(days=5 * k) for k in range(14)]
    values = [d.strftime("%y-%m-%d") for d in days]
    decision, _ = propose(values, "Picked", Country=["Italia"] * len(values))
    assert decision.convention["order"] is None


def test_day_first_short_years_are_not_doubted() -> None:
    # dd.mm.yy over a few months of one year: year first would spread them over decades
    days = [date(2024, 5, 2) + timedelta(days=5 * k) for k in range(14)]
    values = [d.strftime("%d.%m.%y") for d in days]
    decision, _ = propose(values, "Picked")
    assert decision.convention["candidates"] == ["DMY", "MDY"]
    assert decision.convention["order"] == "DMY"
    assert list(outputs(values, "Picked").values()) == [d.isoformat() for d in days]


# ---------------------------------------------------------------- months of a year

def _month(d: date) -> str:
    # ISO 8601:2000 §5.2.1.2 reduced precision, a specific month: YYYY-MM (from memory;
    # the same text as date.isoformat()'s first seven characters)
    return d.isoformat()[:7]


@pytest.mark.parametrize(("header", "pattern"), [
    ("Harvest month", "%B %Y"), ("Période", "%m/%Y"), ("Period", "%Y-%m"),
    ("Month", "%b %Y"), ("Picked", "%Y-%m"), ("Picked", "%B %Y"),
])
def test_a_month_of_a_year_is_written_year_dash_month(header: str, pattern: str) -> None:
    months = [date(2023, 11, 1) + timedelta(days=31 * k) for k in range(6)]
    values = [m.strftime(pattern) for m in months]
    decision, _ = propose(values, header)
    assert decision.kind == "date"
    assert list(outputs(values, header).values()) == [_month(m) for m in months]


def test_month_names_of_other_languages_name_a_month() -> None:
    # CLDR month names via babel (the engine's table) in French, German, Spanish
    import babel.dates as bd
    values = [f"{bd.get_month_names('wide', locale=loc)[5]} 2024" for loc in ("fr", "de", "es")]
    assert set(outputs(values, "Mois").values()) == {"2024-05"}


def test_numeric_month_year_needs_a_reason_to_be_a_month() -> None:
    # "05/2024" alone may be an invoice numbered within its year
    assert propose(["05/2024", "06/2024", "11/2024"], "Notes")[0] is None
    assert propose(["12/2024", "7/2024", "101/2024"], "Invoice no")[0] is None


def test_a_month_beside_full_dates_is_written_as_a_month() -> None:
    values = ["02/05/2024", "17/05/2024", "21/05/2024", "06/2024"]
    out = outputs(values, "Picked")
    assert out["06/2024"] == "2024-06" and out["17/05/2024"] == "2024-05-17"


def test_no_thirteenth_month() -> None:
    result = ENGINE.convert(["13/2024", "2024-00"], {"kind": "date", "candidates": ["DMY"]})
    assert result.outcome.tolist() == [Outcome.UNRESOLVED] * 2


# ---------------------------------------------------------------- C asctime

@pytest.mark.parametrize("moment", [datetime(2024, 5, 2, 14, 30),
                                    datetime(2024, 11, 21, 8, 5, 9)])
def test_asctime_and_a_zone_before_the_year(moment: datetime) -> None:
    # Python's datetime.ctime writes C asctime's "%a %b %e %H:%M:%S %Y"
    zoned = moment.strftime("%a %b %d %H:%M:%S +0200 %Y")
    out = outputs([moment.ctime(), zoned], "Logged")
    assert out[moment.ctime()] == moment.isoformat()
    assert out[zoned] == moment.replace(tzinfo=timezone(timedelta(hours=2))).isoformat()


@pytest.mark.parametrize("values", [
    ["May 2024", "05/2024", "2024-06", "juin 2024"],
    ["2024-05-02 00:00:00", "2024-05-09 00:00:00", "2024-05-16"],
    ["14.30 Uhr", "9 Uhr", "klo 23.59"],
    ["Thu May  2 14:30:00 2024", "Fri May  3 08:05:09 2024"],
])
def test_harmonising_the_output_again_changes_nothing(values: list[str]) -> None:
    once, _, _ = harmonize.harmonize_frame(pd.DataFrame({"Period": values}))
    twice, report, _ = harmonize.harmonize_frame(once)
    assert once["Period"].tolist() == twice["Period"].tolist()
    assert (once["Period"] != "").all()
    assert report["columns"][0]["kind"] in ("date", "datetime", "time")


# ---------------------------------------------------------------- the 1904 date system

def test_serial_numbers_beside_date_cells_of_a_1904_workbook(tmp_path: Path) -> None:
    # ECMA-376 Part 4 §3.17.4.1 (D18): a 1904-system workbook counts days from 1904-01-01,
    # 1462 days after the 1900 system (D19); openpyxl's from_excel with the Mac epoch is
    # the reference (D22)
    from openpyxl.utils.datetime import CALENDAR_MAC_1904, from_excel, to_excel

    book = openpyxl.Workbook()
    book.epoch = CALENDAR_MAC_1904
    sheet = book.active
    sheet.append(["Picked on", "Lot"])
    days = [datetime(2024, 5, 2) + timedelta(days=7 * k) for k in range(6)]
    cells = [d if k % 2 else int(to_excel(d, CALENDAR_MAC_1904)) for k, d in enumerate(days)]
    for k, cell in enumerate(cells):
        sheet.append([cell, f"L{k}"])
    book.save(tmp_path / "mac.xlsx")
    written, column = _picked_on(tmp_path, tmp_path / "mac.xlsx")
    expected = [(from_excel(c, CALENDAR_MAC_1904) if isinstance(c, int) else c).date()
                .isoformat() for c in cells]
    assert written == expected == [d.date().isoformat() for d in days]
    assert column["details"]["numbers"] == "serial1904"


# ---------------------------------------------------------------- CLDR date formats

READ_LOCALES = ["en_US", "en_GB", "de_DE", "fr_FR", "es_ES", "it_IT", "nl_NL", "pt_BR", "sv_SE",
                "da_DK", "nb_NO", "fi_FI", "pl_PL", "cs_CZ", "ca_ES", "ro_RO", "hu_HU", "tr_TR",
                "ja_JP", "zh_CN", "de_AT", "fr_CA", "en_AU", "en_IN", "pt_PT", "es_MX",
                "de_CH", "en_CA", "sk_SK", "sl_SI", "sr_Latn_RS", "lt_LT", "lv_LV", "et_EE",
                "el_GR", "ru_RU", "uk_UA", "bg_BG", "id_ID"]
# written in scripts or with words the engine does not read: never wrong, listed or left
OTHER_LOCALES = ["hr_HR", "vi_VN", "th_TH", "he_IL", "ar_EG", "ko_KR"]


def _cldr_column(locale: str, width: str) -> tuple[list[str], list[date]]:
    import random

    import babel.dates as bd

    pick = random.Random(f"{locale}{width}")
    days = [date(2024, 1, 1) + timedelta(days=pick.randrange(700)) for _ in range(25)]
    return [bd.format_date(d, width, locale=locale) for d in days], days


@pytest.mark.parametrize("locale", READ_LOCALES + OTHER_LOCALES)
def test_dates_written_by_cldr_patterns_are_read_or_listed_never_wrong(locale: str) -> None:
    # babel.dates.format_date (CLDR 49) writes each date in the locale's short, medium,
    # long and full pattern; Python's date is the truth
    for width in ("short", "medium", "long", "full"):
        values, days = _cldr_column(locale, width)
        decision, column = propose(values, "Date")
        if decision is None:
            assert locale in OTHER_LOCALES, (locale, width, values[0])
            continue
        result = ENGINE.convert(column.values.tolist(), decision.convention)
        out = dict(zip(column.values.tolist(), zip(result.text, result.outcome.tolist(),
                                                   strict=True), strict=True))
        for value, day in zip(values, days, strict=True):
            text, outcome = out[value]
            assert outcome != Outcome.CONVERTED or text == day.isoformat(), (locale, value)
            if locale in READ_LOCALES:
                assert text == day.isoformat(), (locale, width, value)


@pytest.mark.parametrize("locale", ["ko_KR", "zh_Hant_HK", "en_US", "es_US"])
def test_an_am_pm_word_before_or_after_the_time(locale: str) -> None:
    # CLDR short time patterns "a h:mm" (ko), "ah:mm" (zh_Hant_HK), "h:mm a" (en, es_US),
    # written by babel.dates.format_time; datetime.time.isoformat is the truth
    import babel.dates as bd

    times = [time(h, m) for h, m in ((6, 5), (11, 59), (12, 0), (18, 43), (0, 30), (23, 1))]
    values = [bd.format_time(t, "short", locale=locale) for t in times]
    out = outputs(values, "Picked at")
    assert [out[v] for v in values] == [t.isoformat() for t in times]


def test_serials_of_a_1904_workbook_follow_its_flag(tmp_path) -> None:
    # ECMA-376 Part 4 §3.17.4.1 (checkvalues D18, D22): in a workbook flagged date1904,
    # serial 0 is 1904-01-01, so 43952 is 2024-05-02 (openpyxl's from_excel agrees)
    import openpyxl
    from openpyxl.utils.datetime import CALENDAR_MAC_1904, from_excel

    from harmonize.options import Options
    from harmonize.pipeline import harmonize_table
    from harmonize.sources import read_tables
    book = openpyxl.Workbook()
    book.epoch = CALENDAR_MAC_1904
    book.active.append(["Packed on"])
    serials = [43952, 43959, 43966]
    for serial in serials:
        book.active.append([serial])   # General-formatted numbers, no date cells beside
    path = tmp_path / "packed.xlsx"
    book.save(path)
    (table,) = read_tables(path)
    _, result = harmonize_table(table, "packed.xlsx", Options(), None)
    expected = [from_excel(s, CALENDAR_MAC_1904).date().isoformat() for s in serials]
    assert expected[0] == "2024-05-02"
    assert result.frame["Packed on"].tolist() == expected
