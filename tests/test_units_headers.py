"""Header words that are not units: "_min" for minimum, a singular "hour" of the day.

Factors: SI Brochure (9th ed., 2019) Table 8, non-SI units accepted for use with the SI:
1 min = 60 s, 1 h = 3600 s. Hours of the day: ISO 8601-1:2019 §5.3.1.2 (hour 00 to 23).
"""

from __future__ import annotations

from decimal import Decimal

import pandas as pd
import pytest

from harmonize.context import Context
from harmonize.engines.units import UnitEngine
from harmonize.engines.units_parse import header_unit
from harmonize.evidence import TableEvidence

ENGINE = UnitEngine()
HOURS_OF_DAY = [str(h) for h in range(24)]   # ISO 8601: 00 to 23


def propose(header: str, values: list[str]):
    table = TableEvidence.from_frame(pd.DataFrame({header: values}))
    column = table.column(header)
    return column.values.tolist(), ENGINE.propose(column, Context(table))


@pytest.mark.parametrize("header", ["temp_min", "price_min", "Temp Min", "age_min",
                                    "wind_speed_min"])
def test_min_after_a_quantity_name_is_the_minimum(header: str) -> None:
    assert header_unit(header) is None
    _, decision = propose(header, ["5.0", "2.8", "-1.1"])
    assert decision is None


@pytest.mark.parametrize("header", ["Duration (min)", "duration_min", "delay_min",
                                    "Fahrzeit_min", "cook_time_min", "Wartezeit min"])
def test_min_beside_a_time_word_is_the_minute(header: str) -> None:
    values, decision = propose(header, ["5", "12.5"])
    assert decision is not None and decision.unit == "s"
    result = ENGINE.convert(values, decision.convention)
    # SI Brochure Table 8: 1 min = 60 s
    assert [Decimal(t) for t in result.text] == [Decimal(5) * 60, Decimal("12.5") * 60]


@pytest.mark.parametrize("header", ["peak_hour", "start hour", "Abfahrt Stunde", "depart_heure",
                                    "peak_hr"])
def test_a_singular_hour_over_0_to_23_is_an_hour_of_the_day(header: str) -> None:
    assert header_unit(header) is not None   # the header word alone names the hour
    _, decision = propose(header, HOURS_OF_DAY)
    assert decision is None


def test_hours_with_fractions_are_a_duration() -> None:
    values, decision = propose("peak_hour", ["1.5", "2", "23"])
    assert decision is not None and decision.unit == "s"
    result = ENGINE.convert(values, decision.convention)
    assert [Decimal(t) for t in result.text] == [Decimal("5400"), Decimal(7200), Decimal(82800)]


@pytest.mark.parametrize("header", ["car_hours", "Duration (h)", "labour hours"])
def test_plural_or_bracketed_hours_stay_durations(header: str) -> None:
    values, decision = propose(header, HOURS_OF_DAY)
    assert decision is not None and decision.unit == "s"
    result = ENGINE.convert(values, decision.convention)
    # SI Brochure Table 8: 1 h = 3600 s
    assert [Decimal(t) for t in result.text] == [Decimal(v) * 3600 for v in values]
