"""Quantities written in scripts other than Latin: CLDR's unit names and symbols.

References: CLDR unit formats via babel 2.19's public ``babel.units.format_unit`` (what a
Russian, Arabic or Chinese export writes after a number); SI Brochure 9th ed. (2019)
Table 7 for the prefixes (1 g = 0.001 kg, 1 mL = 0.001 L); NIST SP 811 App. B.8 for
1 lb = 0.45359237 kg (checkvalues.md U1); Unicode names via ``unicodedata``.
"""

from __future__ import annotations

import unicodedata
from decimal import Decimal

import pandas as pd
import pytest
from babel import units as babel_units

from harmonize.context import Context
from harmonize.engines.units import UnitEngine
from harmonize.engines.units_cldr import CLDR_KEYS, cldr_tokens, outside_latin, token_of
from harmonize.engines.units_registry import UNITS, read_token
from harmonize.evidence import TableEvidence

ENGINE = UnitEngine()
LANGUAGES = ("ru", "uk", "ar", "zh", "ja", "ko", "el", "he", "hi", "th")
COMMON = ("kg", "g", "m", "km", "cm", "L", "mL", "h", "min", "m2", "lb")


def written(unit_id: str, length: str, locale: str) -> str:
    """The unit part CLDR writes after 5 (babel.units.format_unit), number removed."""
    text = babel_units.format_unit(5, CLDR_KEYS[unit_id], length=length, locale=locale)
    return token_of(text.replace("5", "{0}", 1))


@pytest.mark.parametrize("locale", LANGUAGES)
@pytest.mark.parametrize("length", ["short", "long"])
def test_cldr_unit_forms_read_as_their_unit(locale: str, length: str) -> None:
    for unit_id in COMMON:
        token = written(unit_id, length, locale)
        if not outside_latin(token):
            continue   # Latin-script tokens ("kg" in ja) are the curated lists' business
        reading = read_token(token)
        assert unit_id in reading.units, (locale, length, unit_id, token)
        assert reading.dimensions == {UNITS[unit_id].dimension}, (locale, token)


def test_only_tokens_outside_latin_are_taken() -> None:
    # Unicode names: a Cyrillic letter is not LATIN; "kg" and "°C" are left to the lists
    assert unicodedata.name("к").startswith("CYRILLIC")
    assert outside_latin("кг") and outside_latin("公斤") and not outside_latin("kg")
    assert all(outside_latin(token) for token in cldr_tokens())


def test_a_token_languages_read_apart_takes_the_first_language() -> None:
    # CLDR ru writes the gram "г" and the metric tonne "тонна" (babel.units.format_unit)
    assert written("g", "short", "ru") == "г"
    assert babel_units.format_unit(5, "mass-tonne", length="long", locale="ru").endswith(
        "тонн")
    assert read_token("г").units == {"g"}
    assert read_token("тонна").units == {"t"}


def run(values: list[str], header: str):
    table = TableEvidence.from_frame(pd.DataFrame({header: values}))
    decision = ENGINE.propose(table.column(header), Context(table))
    assert decision is not None
    return decision, ENGINE.convert(values, decision.convention)


def test_a_russian_column_of_weights() -> None:
    # SI prefixes: 500 г = 0.5 kg, 1,2 т = 1200 kg (1 t = 1000 kg, SI Brochure Table 8)
    decision, result = run(["5 кг", "2,5 кг", "500 г", "1,2 т"], "Вес")
    assert decision.convention["dimension"] == "mass"
    assert result.text == ["5", "2.5", "0.5", "1200"]


def test_arabic_digits_and_arabic_units_together() -> None:
    # CLDR ar short "كغم", narrow "كغ", long "كيلوغرام"; digits by their Unicode values
    values = ["٥ كغم", "٢٫٥ كغ", "١٢ كيلوغرام", "٣ رطل"]
    assert written("kg", "short", "ar") == "كغم" and written("kg", "narrow", "ar") == "كغ"
    decision, result = run(values, "الوزن")
    pound = Decimal("0.45359237") * 3   # NIST SP 811 B.8
    assert result.text == ["5", "2.5", "12", format(pound.normalize(), "f")]


def test_a_header_in_cyrillic_names_the_unit_of_bare_numbers() -> None:
    decision, result = run(["12", "7,5"], "Вес (кг)")
    assert decision.convention["bare_unit"] == "kg"
    assert result.text == ["12", "7.5"]


def test_chinese_and_japanese_names() -> None:
    decision, result = run(["10 公斤", "500 克", "2.5千克"], "重量")
    assert result.text == ["10", "0.5", "2.5"]
    decision, result = run(["250 ミリリットル", "1.5 リットル"], "容量")
    assert decision.convention["dimension"] == "volume"
    assert result.text == ["0.00025", "0.0015"]   # m³: 1 L = 0.001 m³ (SI Brochure)
