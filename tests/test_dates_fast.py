"""The bulk path of the dates engine gives exactly the per-value parser's answers.

Large columns are read on whole arrays (``dates_fast``, ``dates_table``,
``dates_convert``). Every value the bulk reading takes must get the record
``dates_parse.parse`` gives it; a column's decision (kind, fit, confidence, convention,
evidence, details) and every converted value (text, outcome, reasons, candidates, best
reading) must be the same as when each value goes through the parser alone. The
reference behind the parser is the rest of the dates tests (ISO 8601, RFC 3339,
Python's calendar); here the outputs are also checked against Python's ``datetime``.
"""

from __future__ import annotations

import calendar
import json
import sys
from datetime import date, datetime
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from harmonize.context import Context
from harmonize.engines import dates_convert, dates_fast, dates_table
from harmonize.engines.base import Converted, Outcome
from harmonize.engines.dates import DateEngine, Settings, _convert_one, finish_column
from harmonize.engines.dates_fast import Scan, ordinal_days, real_day, scan
from harmonize.engines.dates_parse import parse
from harmonize.evidence import TableEvidence
from harmonize.options import Options

sys.path.insert(0, str(Path(__file__).parent))
from corpora.dates import corpus  # noqa: E402

ENGINE = DateEngine()
CONVENTIONS = [
    {"order": "DMY", "kind": "datetime", "year_from": 1950},
    {"order": "MDY", "kind": "date", "year_from": 1947},
    {"order": "YMD", "kind": "date", "year_from": 1950, "candidates": ["DMY", "MDY", "YMD"]},
    {"order": None, "kind": "date", "candidates": ["DMY", "MDY"], "year_from": 1950,
     "likely_order": "DMY"},
    {"order": None, "kind": "datetime", "candidates": ["DMY", "MDY", "YMD"], "year_from": 1990},
    {"order": None, "kind": "date", "candidates": ["DMY", "MDY"], "year_from": 1950,
     "order_shapes": {"DD/MM/YYYY": "DMY", "D/M/YYYY": "DMY", "M.D.YY": "MDY",
                      "MM-DD-YY hh:mm": "MDY"}},
    {"order": "DMY", "kind": "date", "order_shapes": ["DD.MM.YYYY", "D.M.YYYY"]},
    {"order": "MDY", "kind": "time", "year_from": 1950},
    {"order": "DMY", "kind": "datetime", "year_from": 1950,
     "sentinels": ["2020-02-29", "1900-01-01", "not a day", "2024-4-3"]},
]

# ---------------------------------------------------------------- generated values

SEPARATORS = ["/", ".", "-", " "]
ZONES = ["", "", "Z", "+02:00", "-05:30", "+19:00", "+05:61", "-00:00", " +02:00", "z",
         "+0200", " EST"]


@st.composite
def written_values(draw: st.DrawFn) -> str:
    """Numeric dates and date-times, well and badly formed, in every shape the bulk
    reading knows and the ones next to them that it must leave to the parser."""
    number = st.integers(0, 9999).map(str)
    padded = st.sampled_from(["0", "00", "01", "09", "10", "12", "13", "29", "30", "31",
                              "32", "99", "1", "7", "000", "0000", "1900", "2024", "2000",
                              "1999", "9999", "24", "69", "70"])
    part = st.one_of(padded, number)
    sep = draw(st.sampled_from(SEPARATORS))
    text = sep.join(draw(st.tuples(part, part, part)))
    if draw(st.booleans()):
        text = (f"{draw(st.sampled_from(['1985', '2024', '0000', '2000', '1900', '0001']))}-"
                f"{draw(padded).zfill(2)[-2:]}-{draw(padded).zfill(2)[-2:]}")
    if draw(st.booleans()):
        hour = draw(st.sampled_from(["0", "7", "00", "09", "12", "23", "24", "99"]))
        clock = f"{hour}:{draw(st.sampled_from(['00', '05', '59', '60', '7']))}"
        if draw(st.booleans()):
            clock += f":{draw(st.sampled_from(['00', '30', '59', '60', '61']))}"
            if draw(st.booleans()):
                clock += "." + draw(st.text("0123456789", min_size=1, max_size=11))
        gap = draw(st.sampled_from(["T", " ", ", ", "  ", "t", ","]))
        text = f"{text}{gap}{clock}{draw(st.sampled_from(ZONES))}"
    text = draw(st.sampled_from(["", "", "", " ", "\u00a0"])) + text + draw(
        st.sampled_from(["", "", "", " ", "."]))
    return text.translate(draw(st.sampled_from(SCRIPTS)))


# Digits of other scripts, as UnicodeData.txt numbers them (category Nd, field 6 the
# value): Arabic-Indic U+0660, Extended Arabic-Indic (Persian) U+06F0, Devanagari U+0966,
# full-width U+FF10 (with the full-width "-", ":", "/", "." of U+FF01-U+FF5E). The bulk
# reading leaves them to the parser, which folds them; the two must agree.
def _script(zero: int, extra: str = "", wide: str = "") -> dict[int, str]:
    return str.maketrans("0123456789" + extra, "".join(chr(zero + d) for d in range(10)) + wide)


SCRIPTS = [{}, {}, {}, _script(0x0660), _script(0x06F0), _script(0x0966),
           _script(0xFF10, "-:/.", "\uff0d\uff1a\uff0f\uff0e")]


def generated(n: int, seed: int) -> list[str]:
    """Values drawn from the same grammar without hypothesis (a fixed large sample)."""
    rng = np.random.default_rng(seed)
    years = rng.choice(["0000", "0001", "0099", "1600", "1900", "1999", "2000", "2024",
                        "2100", "9999", "24", "99", "7", "69"], n)
    months = rng.integers(0, 14, n)
    days = rng.integers(0, 33, n)
    out = []
    for k in range(n):
        sep = SEPARATORS[rng.integers(0, 4)]
        m, d = f"{months[k]:0{rng.integers(1, 3)}d}", f"{days[k]:0{rng.integers(1, 3)}d}"
        form = rng.integers(0, 6)
        text = [f"{d}{sep}{m}{sep}{years[k]}", f"{m}{sep}{d}{sep}{years[k]}",
                f"{years[k]}{sep}{m}{sep}{d}", f"{years[k]}-{months[k]:02d}-{days[k]:02d}",
                f"{years[k]}-{months[k]:02d}-{days[k]:02d}", f"{d}{sep}{m}{sep}{years[k]}"
                ][form]
        if rng.integers(0, 3) == 0:
            clock = f"{rng.integers(0, 26):0{rng.integers(1, 3)}d}:{rng.integers(0, 61):02d}"
            if rng.integers(0, 2):
                clock += f":{rng.integers(0, 62):02d}"
                if rng.integers(0, 3) == 0:
                    clock += f".{rng.integers(0, 10 ** 6)}"
            gap = ["T", " ", ", "][rng.integers(0, 3)]
            text += gap + clock + ZONES[rng.integers(0, len(ZONES))]
        out.append(text)
    return out


# ---------------------------------------------------------------- the parse level

@settings(max_examples=120, deadline=None)
@given(st.lists(written_values(), min_size=1, max_size=30))
def test_bulk_reading_gives_the_parsers_record(values: list[str]) -> None:
    found = scan(values)
    for i in np.flatnonzero(found.fast).tolist():
        assert found.parsed(i) == parse(values[i]), values[i]


def test_bulk_reading_takes_the_common_shapes() -> None:
    values = ["03/04/2024", "3.4.24", "2024-04-03", "2024/4/3 9:05", "03-04-2024 10:15:00",
              "2024-04-03T10:15:30.25+02:00", "2024-04-03 10:15Z", "03 04 2024, 10:15"]
    found = scan(values)
    assert found.fast.all()
    assert [found.parsed(i) for i in range(len(values))] == [parse(v) for v in values]
    # left to the parser: a zero date, a 24th hour, a leap second, an offset beyond
    # +-18:00, a zone abbreviation, lower-case 't', spaces around the value
    left = ["00/00/0000", "2024-04-03T24:00", "2024-04-03T23:59:60", "2024-04-03T10:00+19:00",
            "2024-04-03 10:00 EST", "2024-04-03t10:00", " 03/04/2024", "03/04/2024 ",
            "03/04/2024T10:00", "3/4/2024 10:00+02:00", "1985-102", "03/04"]
    assert not scan(left).fast.any()


def test_a_large_set_read_again_is_the_same_reading() -> None:
    values = [f"2024-{m:02d}-{d:02d} {h:02d}:00:00" for m in range(1, 13) for d in range(1, 29)
              for h in range(24)] * 7
    values = [f"{v}.{k}" if k % 3 else v for k, v in enumerate(values)]   # distinct texts
    assert len(values) >= dates_fast.MEMO_MIN
    first = scan(values)
    assert scan(list(values)) is first   # equal values: the reading kept, given once
    assert scan(values) is not first
    other = [v.replace("2024", "2023") for v in values]
    again = scan(other)
    assert again is not first and again.parsed(0) == parse(other[0])


# ---------------------------------------------------------------- the calendar

def test_day_numbers_follow_pythons_calendar() -> None:
    # Python's date.toordinal and calendar.isleap as the reference (ISO 8601 uses the
    # Gregorian calendar: 1900 is not a leap year, 2000 is; checkvalues D14)
    rng = np.random.default_rng(2)
    year, month, day = rng.integers(-1, 10002, 20000), rng.integers(-1, 14, 20000), \
        rng.integers(-1, 33, 20000)
    year[:8] = [1900, 2000, 2023, 2024, 1600, 2100, 1, 9999]
    month[:8], day[:8] = 2, 29
    expected = []
    for y, m, d in zip(year.tolist(), month.tolist(), day.tolist(), strict=True):
        try:
            expected.append(date(y, m, d).toordinal())
        except ValueError:
            expected.append(0)
    assert ordinal_days(year, month, day).tolist() == expected
    assert real_day(year, month, day).tolist() == [e > 0 for e in expected]
    assert real_day(year[:8], month[:8], day[:8]).tolist() == [
        calendar.isleap(y) for y in year[:8].tolist()]


def test_output_matches_python_datetime() -> None:
    # datetime.fromisoformat / isoformat as the reference for ISO 8601 extended text
    # (RFC 3339 §5.6 allows the space separator); 'Z' is written +00:00, seconds always.
    # "-00:00" is kept as written: RFC 3339 §4.3 gives it its own meaning
    values = [v.strip() for v in generated(3000, seed=5)]
    values = [v for v in values if len(v) >= 10 and v[4] == "-" and v[7] == "-"
              and "-00:00" not in v]
    result = ENGINE.convert(values, CONVENTIONS[0])
    checked = 0
    for value, text, outcome in zip(values, result.text, result.outcome, strict=True):
        try:   # ISO 8601 shapes Python reads (a one-digit hour it does not)
            moment = datetime.fromisoformat(value.replace(" ", "T"))
        except ValueError:
            continue
        if outcome != Outcome.CONVERTED:   # a leap second, a sentinel: see test_dates.py
            continue
        if "." in value:   # the fraction is kept as written; Python pads it to 6 digits
            assert datetime.fromisoformat(text) == moment
        else:
            assert text == (moment.date().isoformat() if len(value) == 10
                            else moment.isoformat())
        checked += 1
    assert checked > 300


# ---------------------------------------------------------------- convert: bulk vs parser

def slow_convert(values: list[str], convention: dict) -> Converted:
    """Every value through the per-value path (the engine before the bulk path)."""
    result = Converted.empty(len(values))
    s = Settings.of(convention)
    for i, raw in enumerate(values):
        _convert_one(result, i, raw, s)
    return finish_column(result, s)


def assert_same_conversion(values: list[str], convention: dict) -> None:
    fast, slow = ENGINE.convert(values, convention), slow_convert(values, convention)
    assert fast.text == slow.text
    assert fast.outcome.tolist() == slow.outcome.tolist()
    assert fast.reasons == slow.reasons
    assert fast.candidates == slow.candidates
    assert fast.best == slow.best


@pytest.mark.parametrize("convention", CONVENTIONS)
def test_bulk_and_parser_convert_alike(convention: dict) -> None:
    assert_same_conversion(generated(4000, seed=11), convention)


@settings(max_examples=60, deadline=None)
@given(st.lists(written_values(), min_size=1, max_size=30))
def test_bulk_and_parser_convert_alike_on_any_value(values: list[str]) -> None:
    for convention in CONVENTIONS:
        assert_same_conversion(values, convention)


@settings(max_examples=200, deadline=None)
@given(st.datetimes(min_value=datetime(1, 1, 1), max_value=datetime(9999, 12, 31)),
       st.sampled_from(["%Y-%m-%d", "%Y-%m-%d %H:%M:%S", "%Y-%m-%dT%H:%M", "%Y-%m-%dT%H:%M:%SZ",
                        "%Y-%m-%d %H:%M:%S.%f", "%Y-%m-%dT%H:%M:%S+01:00", "%d/%m/%Y %H:%M",
                        "%m.%d.%y", "%Y/%m/%d", "%d-%m-%Y, %H:%M:%S"]))
def test_bulk_and_parser_convert_alike_on_any_datetime(moment: datetime, pattern: str) -> None:
    # strftime's %Y does not pad years below 1000 on every platform: pad it ourselves
    value = moment.strftime(pattern.replace("%Y", f"{moment.year:04d}"))
    for convention in CONVENTIONS:
        assert_same_conversion([value], convention)


# ---------------------------------------------------------------- decisions: bulk vs parser

def decision_json(column, context: Context) -> str:
    decision = ENGINE.propose(column, context)
    if decision is None:
        return "null"
    return json.dumps([decision.kind, decision.fit, decision.confidence, decision.convention,
                       decision.groups and [decision.groups.by, decision.groups.conventions],
                       decision.evidence, decision.details], default=str)


def no_bulk(monkeypatch: pytest.MonkeyPatch) -> None:
    """Every value through the parser, as before the bulk path."""
    monkeypatch.setattr(dates_table, "scan", lambda values: Scan.empty(len(values)))
    monkeypatch.setattr(dates_convert, "scan", lambda values: Scan.empty(len(values)))


def decisions(frame: pd.DataFrame, name: str) -> dict[str, object]:
    """Each column's decision and its conversion (per group where the decision splits)."""
    table = TableEvidence.from_frame(frame, file=name)
    context = Context(table, Options())
    out: dict[str, object] = {}
    for column in table.columns:
        out[column.name] = decision_json(column, context)
        decision = ENGINE.propose(column, context)
        if decision is None:
            continue
        conventions = [decision.convention] + [
            decision.groups.convention_for(decision.convention, label)
            for label in decision.groups.conventions] if decision.groups else [
            decision.convention]
        values = column.values.tolist()
        for k, convention in enumerate(conventions):
            result = ENGINE.convert(values, convention)
            out[f"{column.name}/{k}"] = [result.text, result.outcome.tolist(), result.reasons,
                                         result.candidates, result.best]
    return out


def test_corpus_decisions_unchanged_by_the_bulk_path(monkeypatch: pytest.MonkeyPatch) -> None:
    # invented branch exports (tests/corpora/dates.py): every scenario of the corpus
    files = list(corpus(14, seed=4))
    bulk = {item.name: decisions(item.frame.astype(str), item.name) for item in files}
    no_bulk(monkeypatch)
    for item in files:
        assert decisions(item.frame.astype(str), item.name) == bulk[item.name], item.name


@st.composite
def date_columns(draw: st.DrawFn) -> pd.DataFrame:
    values = draw(st.lists(written_values(), min_size=1, max_size=25))
    frame = pd.DataFrame({"Order date": values})
    if draw(st.booleans()):
        frame["Country"] = draw(st.lists(st.sampled_from(["DE", "US", "United Kingdom"]),
                                         min_size=len(values), max_size=len(values)))
    return frame


@settings(max_examples=40, deadline=None)
@given(date_columns())
def test_decisions_unchanged_by_the_bulk_path(frame: pd.DataFrame) -> None:
    bulk = decisions(frame, "branch.csv")
    with pytest.MonkeyPatch.context() as patch:
        no_bulk(patch)
        assert decisions(frame, "branch.csv") == bulk


def test_a_large_log_is_read_in_bulk() -> None:
    # a log export: every value distinct; the decision and conversion come out as for
    # a few of them through the parser
    stamps = pd.date_range("2020-01-01", periods=200_000, freq="37s")
    values = stamps.strftime("%Y-%m-%d %H:%M:%S").tolist()
    table = TableEvidence.from_frame(pd.DataFrame({"Created": values}))
    decision = ENGINE.propose(table.column("Created"), Context(table))
    assert decision is not None and decision.kind == "datetime" and decision.fit == 1.0
    result = ENGINE.convert(values, decision.convention)
    assert (result.outcome == Outcome.CONVERTED).all()
    assert result.text[:2] == ["2020-01-01T00:00:00", "2020-01-01T00:00:37"]
    assert result.text[-1] == stamps[-1].isoformat()   # pandas Timestamp.isoformat
