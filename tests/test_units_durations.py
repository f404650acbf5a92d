"""Units engine: lengths of time written as a clock under a duration header, and epoch
stamps that are moments, not durations."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import pandas as pd
import pytest

from harmonize.context import Context
from harmonize.engines.base import Outcome
from harmonize.engines.units import UnitEngine
from harmonize.evidence import TableEvidence

ENGINE = UnitEngine()


def decide(values: list[str], header: str):
    table = TableEvidence.from_frame(pd.DataFrame({header: values}))
    column = table.column(header)
    return column.values.tolist(), ENGINE.propose(column, Context(table))


def seconds(**parts: float) -> str:
    """Python's timedelta, whose hour is 3600 s and minute 60 s as in the SI Brochure
    (9th ed., 2019) Table 8; written as the engine writes plain numbers."""
    total = timedelta(**parts).total_seconds()
    return str(int(total)) if total == int(total) else str(total)


@pytest.mark.parametrize("header", ["Duration", "Fahrzeit", "Dauer", "Elapsed time"])
def test_clock_written_durations_are_hours_and_minutes(header: str) -> None:
    values = ["3:30", "0:45", "2:15", "26:30", "1:05:10", "0:00:07.5", "3:75"]
    distinct, decision = decide(values, header)
    assert decision is not None and decision.kind == "quantity" and decision.unit == "s"
    assert decision.convention["clock_form"] == "h:mm"
    assert decision.fit >= 0.8
    assert any("written as a clock" in e for e in decision.evidence)
    result = ENGINE.convert(distinct, decision.convention)
    out = dict(zip(distinct, result.text, strict=True))
    assert out["3:30"] == seconds(hours=3, minutes=30)
    assert out["0:45"] == seconds(minutes=45)
    assert out["2:15"] == seconds(hours=2, minutes=15)
    assert out["26:30"] == seconds(hours=26, minutes=30)   # past 24 h: still a duration
    assert out["1:05:10"] == seconds(hours=1, minutes=5, seconds=10)
    assert out["0:00:07.5"] == seconds(seconds=7.5)
    bad = distinct.index("3:75")   # minutes run 00-59 (ISO 8601:2004 §4.2.2.2)
    assert result.outcome[bad] == Outcome.UNRESOLVED
    assert "00-59" in result.reasons[bad]
    assert 0.5 < decision.confidence < 0.95   # h:mm against m:ss rests on the header


def test_a_header_naming_minutes_reads_two_parts_as_minutes_and_seconds() -> None:
    distinct, decision = decide(["3:30", "4:05", "1:02:03"], "Duration (min)")
    assert decision is not None and decision.convention["clock_form"] == "m:ss"
    out = dict(zip(distinct, ENGINE.convert(distinct, decision.convention).text, strict=True))
    assert out["3:30"] == seconds(minutes=3, seconds=30)
    assert out["1:02:03"] == seconds(hours=1, minutes=2, seconds=3)


def test_clock_durations_in_other_digits() -> None:
    # Arabic-Indic digits (U+0660-U+0669) and the full-width colon U+FF1A (UnicodeData.txt
    # <wide> ":"); the values are those of the ASCII forms
    distinct, decision = decide(["٣:٣٠", "２：１５", "0:45"], "Duration")
    assert decision is not None
    out = dict(zip(distinct, ENGINE.convert(distinct, decision.convention).text, strict=True))
    assert out["٣:٣٠"] == seconds(hours=3, minutes=30)
    assert out["２：１５"] == seconds(hours=2, minutes=15)


def test_times_of_day_without_a_duration_header_are_not_durations() -> None:
    assert decide(["9:30", "10:00", "14:15"], "Opening")[1] is None
    assert decide(["9:30", "10:00", "14:15"], "Start")[1] is None


def test_a_saved_convention_converts_the_same_without_the_proposal() -> None:
    distinct, decision = decide(["3:30", "0:45", "12 min"], "Duration")
    assert decision is not None
    again = ENGINE.convert(["3:30", "0:45", "12 min", "7:05"], dict(decision.convention))
    assert again.text == [seconds(hours=3, minutes=30), seconds(minutes=45),
                          seconds(minutes=12), seconds(hours=7, minutes=5)]


def posix(moment: datetime, scale: int) -> str:
    """POSIX time of a moment (IEEE Std 1003.1 §4.16, via Python's datetime), in seconds
    or milliseconds."""
    return str(int(moment.replace(tzinfo=UTC).timestamp()) * scale)


STAMPS = [datetime(2024, 5, 2, 8, 30), datetime(2024, 5, 2, 8, 31), datetime(2024, 5, 3)]


@pytest.mark.parametrize(("header", "scale"), [("Scan ms", 1000), ("Scan s", 1),
                                               ("ts_ms", 1000)])
def test_epoch_stamps_are_not_durations(header: str, scale: int) -> None:
    assert decide([posix(m, scale) for m in STAMPS], header)[1] is None


def test_epoch_sized_numbers_under_a_duration_word_stay_durations() -> None:
    values = [posix(m, 1000) for m in STAMPS]
    distinct, decision = decide(values, "Elapsed ms")
    assert decision is not None and decision.unit == "s"
    out = ENGINE.convert(distinct, decision.convention).text
    assert out[0] == posix(STAMPS[0], 1)   # 1 ms = 10^-3 s (SI Brochure Table 7)


def test_milliseconds_outside_the_epoch_range_stay_durations() -> None:
    distinct, decision = decide(["1500", "250", "3000"], "Timeout ms")
    assert decision is not None
    assert ENGINE.convert(distinct, decision.convention).text == ["1.5", "0.25", "3"]
