"""Unit names and symbols of languages written outside the Latin script, from CLDR.

Exports from Russia, Greece, the Arab world, Israel, India, Thailand, China, Japan or
Korea write "5 кг", "2,5 л", "٥ كغم", "3 ק״ג", "10 公里". The word lists in ``locales/``
hold the Latin-script spellings; the others come from CLDR's unit patterns and display
names (babel 2.19: the short, long and narrow forms of every plural category, e.g. ru
"{0} кг", "{0} килограмма"), for the languages in ``LANGUAGES``. Only tokens holding a
letter outside the Latin script are taken, so the curated Latin lists keep deciding what
"t", "oz" or "Kilo" mean. A token that CLDR gives to several units stays ambiguous and is
narrowed as any other (by the column's dimension).

The table is built once (about a second) and kept in the user's cache folder.
"""

from __future__ import annotations

import re
import unicodedata
from functools import cache

from harmonize.diskcache import cached_json

# The engine's unit ids and CLDR unit keys (https://unicode.org/reports/tr35/
# tr35-general.html#Unit_Elements). Left out: units whose CLDR key means another
# definition than the engine's (the Btu, the food calorie).
CLDR_KEYS = {
    "kg": "mass-kilogram", "g": "mass-gram", "mg": "mass-milligram", "ug": "mass-microgram",
    "t": "mass-tonne", "lb": "mass-pound", "oz": "mass-ounce", "st": "mass-stone",
    "ton_short": "mass-ton", "gr": "mass-grain", "ct": "mass-carat",
    "m": "length-meter", "km": "length-kilometer", "cm": "length-centimeter",
    "mm": "length-millimeter", "dm": "length-decimeter", "um": "length-micrometer",
    "nm": "length-nanometer", "in": "length-inch", "ft": "length-foot", "yd": "length-yard",
    "mi": "length-mile", "nmi": "length-nautical-mile",
    "m2": "area-square-meter", "km2": "area-square-kilometer",
    "cm2": "area-square-centimeter", "ha": "area-hectare", "ac": "area-acre",
    "in2": "area-square-inch", "ft2": "area-square-foot", "yd2": "area-square-yard",
    "mi2": "area-square-mile",
    "m3": "volume-cubic-meter", "cm3": "volume-cubic-centimeter", "L": "volume-liter",
    "mL": "volume-milliliter", "cL": "volume-centiliter", "dL": "volume-deciliter",
    "hL": "volume-hectoliter", "in3": "volume-cubic-inch", "ft3": "volume-cubic-foot",
    "yd3": "volume-cubic-yard", "gal_us": "volume-gallon", "gal_imp": "volume-gallon-imperial",
    "qt_us": "volume-quart", "qt_imp": "volume-quart-imperial", "pt_us": "volume-pint",
    "pt_imp": "volume-pint-imperial", "floz_us": "volume-fluid-ounce",
    "floz_imp": "volume-fluid-ounce-imperial", "cup_us": "volume-cup",
    "tbsp_us": "volume-tablespoon", "tsp_us": "volume-teaspoon", "bbl": "volume-barrel",
    "degC": "temperature-celsius", "degF": "temperature-fahrenheit",
    "K": "temperature-kelvin", "degR": "temperature-rankine",
    "m/s": "speed-meter-per-second", "km/h": "speed-kilometer-per-hour",
    "mph": "speed-mile-per-hour", "kn": "speed-knot",
    "s": "duration-second", "ms": "duration-millisecond", "min": "duration-minute",
    "h": "duration-hour", "d": "duration-day", "wk": "duration-week",
    "J": "energy-joule", "kJ": "energy-kilojoule", "kWh": "energy-kilowatt-hour",
    "cal": "energy-calorie", "kcal": "energy-kilocalorie", "cal_IT": "energy-calorie-it",
    "Pa": "pressure-pascal", "hPa": "pressure-hectopascal", "kPa": "pressure-kilopascal",
    "MPa": "pressure-megapascal", "bar": "pressure-bar", "mbar": "pressure-millibar",
    "psi": "pressure-pound-force-per-square-inch", "atm": "pressure-atmosphere",
    "mmHg": "pressure-millimeter-ofhg", "inHg": "pressure-inch-ofhg",
    "W": "power-watt", "kW": "power-kilowatt", "MW": "power-megawatt",
    "hp": "power-horsepower",
}

# Languages written outside the Latin script in which trade data is commonly exported
# (Chinese, Japanese, Korean, Cyrillic, Arabic script, Indic scripts, Greek, Hebrew, Thai,
# Georgian, Armenian, Ethiopic). Where two give one token to units of different
# dimensions, the one listed first is read (ru "г" is the gram; uk's narrow "г" is also
# the hour): roughly the order of how much trade data each writes (common practice, no
# source).
LANGUAGES = ("zh", "zh_Hant", "ja", "ko", "ru", "ar", "hi", "uk", "el", "he", "th", "fa",
             "ur", "bg", "sr", "mk", "be", "kk", "ky", "mn", "ps", "mr", "ne", "bn", "gu",
             "pa", "ta", "te", "kn", "ml", "si", "lo", "km", "my", "ka", "hy", "am")
VERSION = 3   # of the table's making: part of the cache file's name
LENGTHS = ("short", "long", "narrow")
_PLACEHOLDER = re.compile(r"\{0\}")
# direction and joining marks CLDR puts around numbers (Unicode category Cf)
_MARKS = dict.fromkeys(map(ord, "\u200e\u200f\u061c\u200b\u2068\u2069\u202a\u202b\u202c"))


def outside_latin(token: str) -> bool:
    """Whether a token holds a letter of a script other than Latin (Unicode names)."""
    return any(unicodedata.category(ch).startswith("L")
               and not unicodedata.name(ch, "LATIN").startswith("LATIN") for ch in token)


def token_of(pattern: str) -> str:
    """The unit part of a CLDR unit pattern ("{0} кг" -> "кг")."""
    return _PLACEHOLDER.sub("", pattern).translate(_MARKS).strip()


def _read_locale(language: str) -> dict[str, set[str]]:
    from babel import Locale
    locale = Locale.parse(language)
    # babel exposes the per-plural unit patterns only through the locale data that
    # babel.units.format_unit itself reads
    patterns = locale._data["unit_patterns"]
    names = locale.unit_display_names
    found: dict[str, set[str]] = {}
    for unit_id, key in CLDR_KEYS.items():
        written: set[str] = set()
        for length in LENGTHS:
            forms = patterns.get(key, {}).get(length, {})
            written |= {token_of(p) for count, p in forms.items() if count != "per"}
            name = names.get(key, {}).get(length)
            if name:
                written.add(name.translate(_MARKS).strip())
        for token in written:
            if token and outside_latin(token):
                found.setdefault(token, set()).add(unit_id)
    # a token the language itself gives to units of several dimensions reads as none
    return {token: ids for token, ids in found.items() if len(_dimensions(ids)) == 1}


def _dimensions(unit_ids: set[str]) -> set[str]:
    from harmonize.engines.units_registry import UNITS
    return {UNITS[u].dimension for u in unit_ids}


def _build() -> dict[str, list[str]]:
    """Token -> unit ids, as the first language in ``LANGUAGES`` that writes it reads it
    (ru "тонна" is the metric tonne, whatever uk's CLDR data says)."""
    table: dict[str, list[str]] = {}
    for language in LANGUAGES:
        for token, ids in _read_locale(language).items():
            table.setdefault(token, sorted(ids))
    return table


@cache
def cldr_tokens() -> dict[str, list[str]]:
    """Token as CLDR writes it -> unit ids (see the module docstring)."""
    import babel
    return cached_json(f"cldr-unit-tokens-v{VERSION}", babel.__version__, _build)


@cache
def cldr_index() -> dict[str, frozenset[str]]:
    """``cldr_tokens`` keyed as the registry looks names up (``units_registry.fold``);
    where two tokens fold alike, the one met first (by language priority) is kept."""
    from harmonize.engines.units_registry import fold
    index: dict[str, frozenset[str]] = {}
    for token, ids in cldr_tokens().items():
        index.setdefault(fold(token), frozenset(ids))
    return index
