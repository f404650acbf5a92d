"""Harmonising the dates engine's own output changes nothing (issue #9.4).

Every form the engine writes (ISO 8601 extended: ``YYYY-MM-DD``, ``YYYY-MM-DDTHH:MM:SS``
with the fraction and UTC offset as read, ``HH:MM:SS``; week and ordinal dates come out
as calendar dates) must read back as the identical text, with high confidence. A bare
digit string is a compact date only with 8 digits (ISO 8601 basic ``YYYYMMDD``) or 6
(``YYMMDD``/``DDMMYY``): seven digits are never a date, so the output of a text column
holding ``8197022`` is not read as 8197-01-22 on the second run.
"""

from __future__ import annotations

from datetime import date, datetime, timedelta

import pandas as pd
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from harmonize import harmonize_frame
from harmonize.context import Context
from harmonize.engines.dates import DateEngine
from harmonize.evidence import TableEvidence

ENGINE = DateEngine()
DATE_KINDS = ("date", "datetime", "time")
SURE = 0.95


def propose(frame: pd.DataFrame, name: str):
    table = TableEvidence.from_frame(frame)
    return ENGINE.propose(table.column(name), Context(table))


def test_seven_digit_strings_are_never_dates() -> None:
    # even under a header that names a date, or beside cells that are dates
    refs = ["8197022", "1985102", "2024001", "2023365", "2020366"]   # all real YYYYDDD
    assert propose(pd.DataFrame({"Order date": refs}), "Order date") is None
    mixed = refs + ["2024-04-03", "2024-04-05"]
    decision = propose(pd.DataFrame({"Posted": mixed}), "Posted")
    assert decision is None or decision.convention["numbers"] != "compact"


def test_a_text_column_of_seven_digit_strings_stays_as_it_is() -> None:
    frame = pd.DataFrame({"Order date": ["8197022", "8197023", "1985102", "2024001"] * 3})
    once, _, _ = harmonize_frame(frame)
    twice, entry, _ = harmonize_frame(once)
    pd.testing.assert_frame_equal(once.astype(str), twice.astype(str))
    assert entry["columns"][0]["kind"] not in DATE_KINDS


def test_eight_and_six_digit_dates_are_still_read() -> None:
    # ISO 8601:2000 §5.2.1.1 basic calendar date (checkvalues D1): 19850412
    frame = pd.DataFrame({"Order date": ["19850412", "19850413", "19850501"]})
    once, _, _ = harmonize_frame(frame)
    assert once["Order date"].tolist() == ["1985-04-12", "1985-04-13", "1985-05-01"]


def test_six_digit_dates_whose_order_is_open_are_listed() -> None:
    # 240403 reads as 2024-04-03 (YYMMDD) and as 2003-04-24 (DDMMYY): with no value
    # deciding, each is listed with both readings rather than converted one way
    values = ["240403", "240415", "231231", "240102", "240229", "230917"]
    decision = propose(pd.DataFrame({"Order date": values}), "Order date")
    assert decision.convention["numbers"] == "compact"
    result = ENGINE.convert(values, decision.convention)
    assert result.text == [""] * len(values)
    assert result.candidates[0] == ["2003-04-24", "2024-04-03"]   # Python's date order


# ---------------------------------------------------------------- every output form

MOMENTS = st.datetimes(min_value=datetime(1950, 1, 1), max_value=datetime(2040, 12, 31))
OFFSETS = st.sampled_from(["", "Z", "+00:00", "+02:00", "-05:30", "+14:00", "-00:00"])


def _fraction(moment: datetime) -> str:
    return f".{moment.microsecond:06d}".rstrip("0") if moment.microsecond else ""


STYLES = {
    # ISO 8601:2004 §4.1.2.2 calendar dates, §4.2.2.2 times of day, §4.2.5.1 offsets
    "iso date": lambda m, z: m.date().isoformat(),
    "iso datetime": lambda m, z: m.strftime("%Y-%m-%d %H:%M:%S") + z,
    "iso fraction": lambda m, z: m.strftime("%Y-%m-%dT%H:%M:%S") + _fraction(m) + z,
    "iso minutes": lambda m, z: m.strftime("%Y-%m-%dT%H:%M") + z,
    # ISO 8601:2000 §5.2.3 week dates and §5.2.2 ordinal dates (checkvalues D2, D3)
    "week date": lambda m, z: "{}-W{:02d}-{}".format(*m.date().isocalendar()),
    "ordinal date": lambda m, z: f"{m.year}-{m.timetuple().tm_yday:03d}",
    "basic date": lambda m, z: m.strftime("%Y%m%d"),
    "day first": lambda m, z: m.strftime("%d/%m/%Y"),
    "month first": lambda m, z: m.strftime("%m/%d/%Y %H:%M"),
    "dotted": lambda m, z: f"{m.day}.{m.month}.{m.strftime('%y')}",
    "time": lambda m, z: m.strftime("%H:%M:%S") + _fraction(m),
    "short time": lambda m, z: m.strftime("%H:%M"),
}


@st.composite
def date_frames(draw: st.DrawFn) -> pd.DataFrame:
    """One or two columns of dates, date-times or times written one way each (a value
    that decides day-first or month-first included where the style needs one), with
    missing-value words and sometimes a country column."""
    rows = draw(st.integers(3, 20))
    data = {}
    for k in range(draw(st.integers(1, 2))):
        style = draw(st.sampled_from(sorted(STYLES)))
        moments = draw(st.lists(MOMENTS, min_size=rows, max_size=rows))
        if style in ("day first", "month first", "dotted"):
            moments[0] = moments[0].replace(day=28)   # the day shows which number it is
        offset = draw(OFFSETS)
        cells = [STYLES[style](m, offset) for m in moments]
        for i in draw(st.lists(st.integers(1, rows - 1), max_size=2)):
            cells[i] = draw(st.sampled_from(["", "N/A", "-", "1900-01-01"]))
        data[["Order date", "Created at", "Posted"][k]] = cells
    if draw(st.booleans()):
        data["Country"] = draw(st.lists(st.sampled_from(["DE", "US", "France"]),
                                        min_size=rows, max_size=rows))
    return pd.DataFrame(data, dtype=object)


@settings(max_examples=50, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(date_frames())
def test_harmonising_the_engines_output_again_changes_nothing(frame: pd.DataFrame) -> None:
    once, first, _ = harmonize_frame(frame)
    twice, second, _ = harmonize_frame(once)
    pd.testing.assert_frame_equal(once.astype(str), twice.astype(str))
    kinds = {c["name"]: c["kind"] for c in first["columns"]}
    for column in second["columns"]:
        written = (once[column["name"]] != "").any()
        if kinds[column["name"]] in DATE_KINDS and written:
            # read back as what it is, and sure of it
            assert column["kind"] in DATE_KINDS, column
            assert column["confidence"] >= SURE, column


def test_every_output_form_reads_back_as_itself() -> None:
    # one value of each form the engine writes (dates_parse.render, Clock.text)
    start = datetime(1985, 4, 12, 10, 15, 30)
    outputs = {
        "date": [(start + timedelta(days=k)).date().isoformat() for k in range(5)],
        "datetime": ["1985-04-12T10:15:30", "1985-04-12T10:15:30.52+00:00",
                     "1996-12-19T16:39:57-08:00", "1937-01-01T12:00:27.87+00:20",
                     "1990-12-31T23:59:60+00:00", "2024-04-03T00:00:00-00:00"],
        "time": ["10:15:30", "23:59:59.5", "00:00:00", "12:00:00+02:00"],
    }
    # RFC 3339 §5.8 examples (checkvalues D11), the leap second kept as written
    for kind, values in outputs.items():
        decision = propose(pd.DataFrame({"Created at": values}), "Created at")
        assert decision is not None and decision.kind == kind, (kind, decision)
        assert decision.confidence >= SURE
        result = ENGINE.convert(values, decision.convention)
        assert result.text == values, kind


def test_a_year_below_1000_reads_back() -> None:
    # date.isoformat pads the year to four digits (ISO 8601 years 0001-9999)
    values = [date(99, 1, 1).isoformat(), date(999, 12, 31).isoformat()]
    decision = propose(pd.DataFrame({"Order date": values}), "Order date")
    assert ENGINE.convert(values, decision.convention).text == values
