"""Harmonising a quantity column's own output changes nothing (issue #9.4).

The output is plain numbers in one unit under a header naming it ("Weight (kg)"); read
again, the header gives the unit and the numbers follow the numbers engine's rules, so a
value such as "1.272" (one to three digits, ".", exactly three digits) is settled only by
the column: a value showing "." as a decimal mark, or whole numbers written without
group marks with at least as many digits ("1.272" beside "2000";
test_numbers_idempotence.py says why "12.345" needs five). Cells are rendered by babel
(CLDR) in the locale's own notation; factors are those of NIST SP 811 App. B
(checkvalues.md A1), through the engine's registry.
"""

from __future__ import annotations

from decimal import Decimal

import pandas as pd
import pytest
from babel import numbers as babel_numbers
from hypothesis import HealthCheck, assume, given, settings
from hypothesis import strategies as st
from test_numbers_idempotence import (
    check_column,
    other_engines_claim,
    shows_decimal_point,
    twice,
)

from harmonize.engines.numbers import format_decimal_plain
from harmonize.pipeline import harmonize_frame

LOCALES = ["de_DE", "en_US", "fr_FR", "es_ES", "en_GB", "pt_BR"]
PROPERTY = settings(max_examples=50, deadline=None, database=None,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much])


@st.composite
def weight_columns(draw: st.DrawFn) -> list[str]:
    """One writer's weights: CLDR notation (babel), grouped or not, in kg, g and lb."""
    locale = draw(st.sampled_from(LOCALES))
    grouped = draw(st.booleans())
    values = draw(st.lists(st.decimals(min_value=Decimal("0.001"), max_value=Decimal(99999),
                                       places=3, allow_nan=False, allow_infinity=False),
                           min_size=1, max_size=10))
    units = draw(st.lists(st.sampled_from(["kg", " kg", "g", " lb"]), min_size=len(values),
                          max_size=len(values)))
    return [babel_numbers.format_decimal(v, locale=locale, group_separator=grouped) + u
            for v, u in zip(values, units, strict=True)]


@PROPERTY
@given(weight_columns())
def test_a_weight_column_read_again_keeps_its_values(values: list[str]) -> None:
    once, again, listed = twice(pd.DataFrame({"Weight": values}))
    assume("Weight (kg)" in once.columns)   # the column is read as a quantity at first
    assume(not other_engines_claim(once["Weight (kg)"].tolist()))
    assert list(again.columns) == list(once.columns)
    first, second = once["Weight (kg)"].tolist(), again["Weight (kg)"].tolist()
    check_column(first, second, listed)
    if any(shows_decimal_point(t) for t in first):
        assert second == first


@PROPERTY
@given(st.lists(st.decimals(min_value=Decimal(-(10**9)), max_value=Decimal(10**9),
                            allow_nan=False, allow_infinity=False, places=6),
                min_size=1, max_size=8))
def test_every_written_quantity_is_read_back_as_itself(values: list[Decimal]) -> None:
    # the engine writes kg as plain numbers (Python's decimal); beside one value showing
    # "." as the decimal mark, they come back unchanged under their own header
    texts = [format_decimal_plain(v) for v in values] + ["0.5"]
    once, entry, _ = harmonize_frame(pd.DataFrame({"Weight (kg)": texts}))
    assert entry["columns"][0]["kind"] == "quantity"
    assert once["Weight (kg)"].tolist() == texts


@pytest.mark.parametrize(("values", "expected"), [
    # 1 lb = 0.45359237 kg exactly (NIST SP 811 B.8; checkvalues.md A1)
    (["1,272 kg", "2 lb", "3,5 kg"], ["1.272", "0.90718474", "3.5"]),
    (["1.272 kg", "2000 kg"], ["1.272", "2000"]),
])
def test_weights_come_back_unchanged(values: list[str], expected: list[str]) -> None:
    once, again, _ = twice(pd.DataFrame({"Weight": values}))
    assert once["Weight (kg)"].tolist() == expected == again["Weight (kg)"].tolist()


def test_a_weight_nothing_settles_stays_listed() -> None:
    # "1.272 kg" beside "2 kg": 1272 grouped or 1.272; nothing in the column says
    once, entry, _ = harmonize_frame(pd.DataFrame({"Weight": ["1.272 kg", "2 kg"]}))
    assert once["Weight (kg)"].tolist() == ["", "2"]
    assert [u["candidates"] for u in entry["unresolved"]] == [["1.272", "1272"]]
