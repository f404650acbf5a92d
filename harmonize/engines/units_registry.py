"""The units the units engine knows, their exact factors, and how written tokens map to them.

Each unit has a stable id (used in plan files, e.g. ``"lb"``, ``"gal_us"``), the pint name
that defines it, its dimension and the symbol written in output headers. Factors come from
one hardened pint registry (``on_redefinition="raise"``, case-sensitive, exact
``Fraction`` arithmetic), computed once per unit and cached: a unit's value in SI is
``value * scale + offset`` (the offset is non-zero for °C and °F only, so temperatures are
converted as absolute temperatures: NIST SP 811 B.9).

Written tokens never reach pint's parser (it reads "37 C" as coulomb, "10 fl oz" as
femtolitre-ounce). They are looked up in two word lists instead:

* ``locales/unit_symbols.txt``: symbols, matched exactly as written after Unicode NFKC
  ("mg" and "Mg" differ); when no symbol matches exactly, a case-folded match is tried,
  which never reads a unit marked ``rare`` (megagram, megametre), so "MG" is milligram.
* ``locales/unit_names.txt``: names in any language, matched case-folded ("Kilogramm").
* CLDR's names and symbols in languages written outside the Latin script ("кг", "كغم",
  "公斤"; ``units_cldr``), matched like names, after the two lists.

A token listed under several units is ambiguous ("ton", "oz", "gal"); the engine narrows
it by the column's dimension and evidence, or lists the cell.
"""

from __future__ import annotations

import hashlib
import re
import unicodedata
from collections.abc import Iterable
from dataclasses import dataclass
from fractions import Fraction
from functools import cache

import pint

from harmonize.diskcache import cached_json
from harmonize.engines.units_cldr import cldr_index, cldr_tokens
from harmonize.locales import load_entries


@dataclass(frozen=True)
class UnitDef:
    id: str
    pint_name: str
    dimension: str
    symbol: str
    system: str = ""     # "US" or "imperial" for the customary measures that differ
    rare: bool = False   # read only from an exact-case symbol (never by case folding)


def _units() -> tuple[UnitDef, ...]:
    u = UnitDef
    return (
        # mass
        u("kg", "kilogram", "mass", "kg"), u("g", "gram", "mass", "g"),
        u("mg", "milligram", "mass", "mg"), u("ug", "microgram", "mass", "µg"),
        u("t", "metric_ton", "mass", "t"), u("Mg", "megagram", "mass", "Mg", rare=True),
        u("lb", "pound", "mass", "lb"), u("oz", "ounce", "mass", "oz"),
        u("st", "stone", "mass", "st"), u("ton_short", "short_ton", "mass", "short ton"),
        u("ton_long", "long_ton", "mass", "long ton"), u("gr", "grain", "mass", "gr"),
        u("ct", "carat", "mass", "ct"),
        # length
        u("m", "meter", "length", "m"), u("km", "kilometer", "length", "km"),
        u("cm", "centimeter", "length", "cm"), u("mm", "millimeter", "length", "mm"),
        u("dm", "decimeter", "length", "dm"), u("um", "micrometer", "length", "µm"),
        u("nm", "nanometer", "length", "nm"),
        u("Mm", "megameter", "length", "Mm", rare=True),
        u("in", "inch", "length", "in"), u("ft", "foot", "length", "ft"),
        u("yd", "yard", "length", "yd"), u("mi", "mile", "length", "mi"),
        u("nmi", "nautical_mile", "length", "nmi"),
        # area
        u("m2", "meter**2", "area", "m²"), u("km2", "kilometer**2", "area", "km²"),
        u("cm2", "centimeter**2", "area", "cm²"), u("mm2", "millimeter**2", "area", "mm²"),
        u("ha", "hectare", "area", "ha"), u("a", "are", "area", "a"),
        u("ac", "international_acre", "area", "ac"), u("in2", "inch**2", "area", "in²"),
        u("ft2", "foot**2", "area", "ft²"), u("yd2", "yard**2", "area", "yd²"),
        u("mi2", "mile**2", "area", "mi²"),
        # volume
        u("m3", "meter**3", "volume", "m³"), u("cm3", "centimeter**3", "volume", "cm³"),
        u("mm3", "millimeter**3", "volume", "mm³"), u("L", "liter", "volume", "L"),
        u("mL", "milliliter", "volume", "mL"), u("cL", "centiliter", "volume", "cL"),
        u("dL", "deciliter", "volume", "dL"), u("hL", "hectoliter", "volume", "hL"),
        u("in3", "inch**3", "volume", "in³"), u("ft3", "foot**3", "volume", "ft³"),
        u("yd3", "yard**3", "volume", "yd³"),
        u("gal_us", "gallon", "volume", "US gal", "US"),
        u("gal_imp", "imperial_gallon", "volume", "imp gal", "imperial"),
        u("qt_us", "quart", "volume", "US qt", "US"),
        u("qt_imp", "imperial_quart", "volume", "imp qt", "imperial"),
        u("pt_us", "pint", "volume", "US pt", "US"),
        u("pt_imp", "imperial_pint", "volume", "imp pt", "imperial"),
        u("floz_us", "fluid_ounce", "volume", "US fl oz", "US"),
        u("floz_imp", "imperial_fluid_ounce", "volume", "imp fl oz", "imperial"),
        u("cup_us", "cup", "volume", "US cup", "US"),
        u("tbsp_us", "tablespoon", "volume", "US tbsp", "US"),
        u("tsp_us", "teaspoon", "volume", "US tsp", "US"),
        u("bbl", "oil_barrel", "volume", "bbl"),
        # temperature
        u("degC", "degree_Celsius", "temperature", "°C"),
        u("degF", "degree_Fahrenheit", "temperature", "°F"),
        # exact case only: a lower-case "k" is kilo (or "thousand"), never kelvin
        u("K", "kelvin", "temperature", "K", rare=True),
        u("degR", "degree_Rankine", "temperature", "°R"),
        # speed
        u("m/s", "meter/second", "speed", "m/s"), u("km/h", "kilometer/hour", "speed", "km/h"),
        u("mph", "mile/hour", "speed", "mph"), u("kn", "knot", "speed", "kn"),
        u("ft/s", "foot/second", "speed", "ft/s"),
        # duration
        u("s", "second", "duration", "s"), u("ms", "millisecond", "duration", "ms"),
        u("min", "minute", "duration", "min"), u("h", "hour", "duration", "h"),
        u("d", "day", "duration", "d"), u("wk", "week", "duration", "wk"),
        # energy
        u("J", "joule", "energy", "J"), u("kJ", "kilojoule", "energy", "kJ"),
        u("MJ", "megajoule", "energy", "MJ"), u("GJ", "gigajoule", "energy", "GJ"),
        u("Wh", "watt_hour", "energy", "Wh"), u("kWh", "kilowatt_hour", "energy", "kWh"),
        u("MWh", "megawatt_hour", "energy", "MWh"),
        u("cal", "calorie", "energy", "cal"),  # pint: the thermochemical calorie
        u("kcal", "kilocalorie", "energy", "kcal"),
        u("cal_IT", "international_calorie", "energy", "cal_IT"),
        u("Btu", "Btu_it", "energy", "Btu"),
        # pressure
        u("Pa", "pascal", "pressure", "Pa"), u("hPa", "hectopascal", "pressure", "hPa"),
        u("kPa", "kilopascal", "pressure", "kPa"), u("MPa", "megapascal", "pressure", "MPa"),
        u("bar", "bar", "pressure", "bar"), u("mbar", "millibar", "pressure", "mbar"),
        u("psi", "psi", "pressure", "psi"), u("atm", "standard_atmosphere", "pressure", "atm"),
        u("mmHg", "millimeter_Hg", "pressure", "mmHg"), u("inHg", "inch_Hg", "pressure", "inHg"),
        u("Torr", "torr", "pressure", "Torr"),
        # power
        u("W", "watt", "power", "W"), u("kW", "kilowatt", "power", "kW"),
        u("MW", "megawatt", "power", "MW"), u("hp", "horsepower", "power", "hp"),
        u("PS", "metric_horsepower", "power", "PS"),
    )


UNITS: dict[str, UnitDef] = {unit.id: unit for unit in _units()}

# The SI unit of each dimension: the default output (°C rather than K for temperature;
# the degree Celsius is an SI derived unit, SI Brochure 9th ed. §2.3.4 Table 4).
SI_TARGETS: dict[str, str] = {
    "mass": "kg", "length": "m", "area": "m2", "volume": "m3", "temperature": "degC",
    "speed": "m/s", "duration": "s", "energy": "J", "pressure": "Pa", "power": "W"}
DIMENSIONS: tuple[str, ...] = tuple(SI_TARGETS)

# pint's dimensionality of each dimension, to check the table against the registry.
PINT_DIMENSIONS: dict[str, str] = {
    "mass": "[mass]", "length": "[length]", "area": "[length] ** 2",
    "volume": "[length] ** 3", "temperature": "[temperature]", "speed": "[length] / [time]",
    "duration": "[time]", "energy": "[mass] * [length] ** 2 / [time] ** 2",
    "pressure": "[mass] / [length] / [time] ** 2",
    "power": "[mass] * [length] ** 2 / [time] ** 3"}


# ------------------------------------------------------------------ pint and factors


@cache
def registry() -> pint.UnitRegistry:
    """The one registry: redefinitions raise, case-sensitive, exact fractions.

    pint's ``acre`` is the US survey acre (defined from the survey foot, retired by NIST
    after 2022); the international acre (43 560 ft², 4046.8564224 m²) is added here.
    """
    ureg = pint.UnitRegistry(non_int_type=Fraction, on_redefinition="raise",
                             case_sensitive=True, autoconvert_offset_to_baseunit=False)
    for definition in _EXTRA_DEFINITIONS:
        ureg.define(definition)
    return ureg


_EXTRA_DEFINITIONS = ("international_acre = 43560 * foot ** 2",)


@dataclass(frozen=True)
class Factor:
    """SI value = written value * scale + offset (exact)."""

    scale: Fraction
    offset: Fraction


def factor(unit_id: str) -> Factor:
    """The exact factor of a unit to its dimension's SI unit."""
    return factors()[unit_id]


@cache
def factors() -> dict[str, Factor]:
    """Every unit's factor, kept in the user's cache folder between runs: building pint's
    registry costs about half a second a process, and the factors depend only on pint's
    version and the unit table (both in the cache key)."""
    table = sorted((u.id, u.pint_name, u.dimension) for u in UNITS.values())
    key = hashlib.sha256(repr((table, sorted(SI_TARGETS.items()), _EXTRA_DEFINITIONS))
                         .encode()).hexdigest()[:16]
    stored = cached_json("unit-factors", f"{pint.__version__}-{key}", _all_factor_texts)
    return {unit_id: Factor(Fraction(scale), Fraction(offset))
            for unit_id, (scale, offset) in stored.items()}


def _all_factor_texts() -> dict[str, list[str]]:
    found = {}
    for unit_id in UNITS:
        computed = _pint_factor(unit_id)
        found[unit_id] = [str(computed.scale), str(computed.offset)]
    return found


def _pint_factor(unit_id: str) -> Factor:
    unit = UNITS[unit_id]
    ureg = registry()
    si = UNITS[SI_TARGETS[unit.dimension]].pint_name
    if unit.dimension == "temperature":
        si = "kelvin"  # absolute temperatures; °C is then an offset from kelvin
    zero = ureg.Quantity(Fraction(0), unit.pint_name).to(si).magnitude
    one = ureg.Quantity(Fraction(1), unit.pint_name).to(si).magnitude
    return Factor(Fraction(one) - Fraction(zero), Fraction(zero))


@cache
def linear_map(source: str, target: str) -> tuple[Fraction, Fraction]:
    """(a, b) such that a value in ``source`` is ``value * a + b`` in ``target``."""
    src, tgt = factor(source), factor(target)
    return src.scale / tgt.scale, (src.offset - tgt.offset) / tgt.scale


# ------------------------------------------------------------------- token lookup

_SPACE_AROUND_SLASH = re.compile(r"\s*/\s*")
_DOT_AFTER_WORD = re.compile(r"(?<=[^\W\d])\.(?=\s|$)")
_SPACES = re.compile(r"\s+")


def normalise_token(token: str) -> str:
    """NFKC ("℃" -> "°C", "m²" -> "m2", "µ" -> "μ"), "^" and spaces around "/" dropped,
    abbreviation dots dropped ("lbs." -> "lbs", "fl. oz." -> "fl oz"), spaces collapsed."""
    text = unicodedata.normalize("NFKC", token).strip()
    text = text.replace("^", "").replace("·", " ")
    text = _SPACE_AROUND_SLASH.sub("/", text)
    text = _DOT_AFTER_WORD.sub("", text)
    return _SPACES.sub(" ", text).strip()


def fold(token: str) -> str:
    return normalise_token(token).casefold()


def _index(entries: dict[str, tuple[str, ...]], key) -> dict[str, frozenset[str]]:
    table: dict[str, set[str]] = {}
    for unit_id, words in entries.items():
        if unit_id not in UNITS:
            raise ValueError(f"unit word list names an unknown unit id {unit_id!r}")
        for word in words:
            table.setdefault(key(word), set()).add(unit_id)
    return {k: frozenset(v) for k, v in table.items()}


@cache
def symbol_index() -> dict[str, frozenset[str]]:
    return _index(load_entries("unit_symbols"), normalise_token)


@cache
def folded_symbol_index() -> dict[str, frozenset[str]]:
    table: dict[str, set[str]] = {}
    for symbol, ids in symbol_index().items():
        common = {i for i in ids if not UNITS[i].rare}
        if common:
            table.setdefault(symbol.casefold(), set()).update(common)
    return {k: frozenset(v) for k, v in table.items()}


@cache
def name_index() -> dict[str, frozenset[str]]:
    return _index(load_entries("unit_names"), fold)


@dataclass(frozen=True)
class Reading:
    """What a written unit token may mean."""

    units: frozenset[str]   # unit ids; empty when the token is unknown
    how: str                # "symbol", "name", "case-folded" or "unknown"

    def in_dimension(self, dimension: str) -> frozenset[str]:
        return frozenset(u for u in self.units if UNITS[u].dimension == dimension)

    @property
    def dimensions(self) -> frozenset[str]:
        return frozenset(UNITS[u].dimension for u in self.units)


@cache
def read_token(token: str) -> Reading:
    """The units a written token may mean (cached: each distinct token is read once)."""
    norm = normalise_token(token)
    exact = cldr_tokens().get(token.strip()) if not norm.isascii() else None
    if exact:   # as CLDR writes it, dots and all: el "μ." is the metre, "µ" the micrometre
        return Reading(frozenset(exact), "name")
    if norm in symbol_index():
        return Reading(symbol_index()[norm], "symbol")
    folded = norm.casefold()
    if folded in name_index():
        return Reading(name_index()[folded], "name")
    if not norm.isascii() and folded in cldr_index():   # other scripts: CLDR's names
        return Reading(cldr_index()[folded], "name")
    if folded in folded_symbol_index():
        return Reading(folded_symbol_index()[folded], "case-folded")
    return Reading(frozenset(), "unknown")


def resolve_target(text: str, dimension: str) -> str | None:
    """A unit id for a user's target ("L", "litre", "degF", "m2") in a dimension."""
    if text in UNITS and UNITS[text].dimension == dimension:
        return text
    found = read_token(text).in_dimension(dimension)
    return next(iter(found)) if len(found) == 1 else None


def describe(unit_ids: Iterable[str]) -> str:
    return ", ".join(UNITS[u].symbol for u in sorted(unit_ids))
