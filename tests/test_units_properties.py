"""Property tests: quantities rendered in random units convert back exactly enough."""

from __future__ import annotations

from decimal import Decimal
from fractions import Fraction

from hypothesis import given, settings
from hypothesis import strategies as st

from harmonize.engines.units import UnitEngine
from harmonize.engines.units_registry import (
    DIMENSIONS,
    SI_TARGETS,
    UNITS,
    linear_map,
    read_token,
)
from harmonize.locales import load_entries

ENGINE = UnitEngine()


def _unique_tokens() -> dict[str, list[tuple[str, str]]]:
    """Per dimension: (token, unit id) pairs whose token reads that one unit only."""
    found: dict[str, list[tuple[str, str]]] = {d: [] for d in DIMENSIONS}
    for name in ("unit_symbols", "unit_names"):
        for unit_id, words in load_entries(name).items():
            for word in words:
                units = read_token(word).units
                if units == {unit_id} and not any(c.isdigit() for c in word[:1]):
                    found[UNITS[unit_id].dimension].append((word, unit_id))
    return found


TOKENS = _unique_tokens()


@st.composite
def quantities(draw):
    """One dimension, a target in it, and up to 20 values written in its units."""
    dimension = draw(st.sampled_from([d for d in DIMENSIONS if TOKENS[d]]))
    targets = [u.id for u in UNITS.values() if u.dimension == dimension]
    target = draw(st.sampled_from([SI_TARGETS[dimension], *targets]))
    cases = []
    for _ in range(draw(st.integers(min_value=1, max_value=20))):
        token, unit_id = draw(st.sampled_from(TOKENS[dimension]))
        digits = draw(st.integers(min_value=1, max_value=10 ** 9))
        places = draw(st.integers(min_value=0, max_value=6))
        negative = dimension == "temperature" and draw(st.booleans())
        value = Decimal(digits).scaleb(-places) * (-1 if negative else 1)
        space = draw(st.sampled_from(["", " "]))
        cases.append((unit_id, value, f"{value}{space}{token}"))
    return dimension, target, cases


@settings(max_examples=150, deadline=None)
@given(quantities())
def test_random_quantities_convert_back(drawn) -> None:
    # exactness of the conversion: the factors are exact (NIST SP 811 B.8/B.9, checked in
    # test_units.py); the output keeps 15 significant digits, so 1e-12 relative must hold
    dimension, target, cases = drawn
    convention = {"dimension": dimension, "target": target, "bare_unit": None,
                  "column_units": [], "units": {}, "customary": None, "decimal_mark": ".",
                  "likely_decimal_mark": ".", "significant_digits": 15}
    written = list(dict.fromkeys(c[2] for c in cases))
    result = ENGINE.convert(written, convention)
    for unit_id, value, text in cases:
        out = result.text[written.index(text)]
        kelvin = linear_map(unit_id, "K") if dimension == "temperature" else None
        if kelvin and Fraction(value) * kelvin[0] + kelvin[1] < 0:
            # SI Brochure, 9th ed., §2.3.1: nothing is below 0 K; such a cell is listed
            assert out == "" and "below absolute zero" in result.reasons[written.index(text)]
            continue
        assert out, (text, result.reasons)
        a, b = linear_map(unit_id, target)
        exact = Fraction(value) * a + b
        got = Fraction(Decimal(out))
        # relative error in the target unit; temperatures on a scale with a zero point
        # (°C, °F) are compared to at least one degree (relative error is undefined at 0)
        reference = max(abs(exact), Fraction(1)) if dimension == "temperature" else abs(exact)
        assert abs(got - exact) <= Fraction(1, 10 ** 12) * reference, text
        back = (got - b) / a  # and back in the unit written
        assert abs(back - Fraction(value)) <= Fraction(1, 10 ** 12) * reference / abs(a), text
