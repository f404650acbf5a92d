"""Currency signs and ISO 4217 codes, for the numbers engine.

babel has no sign-to-code lookup, so one is built once from every CLDR locale's
``currency_symbols`` (about 1.5 s, then kept in the user's cache folder), plus the signs in
``locales/number_currency_symbols.txt`` that CLDR does not carry ("Fr.", "kr", "lei").
A sign that several currencies share ("$", "¥", "kr") stays ambiguous unless that file
names a preferred reading; the engine then resolves it from the data's context.
"""

from __future__ import annotations

import re
from collections import Counter
from functools import cache

from babel import Locale
from babel import numbers as babel_numbers
from babel.core import UnknownLocaleError
from babel.localedata import locale_identifiers

from harmonize.diskcache import cached_json
from harmonize.locales import load_entries

SIGN_FILE = "number_currency_symbols"
PREFERRED_SUFFIX = "+preferred"

# Invisible format characters (Unicode general category Cf, all Default_Ignorable): a
# copy from a web page or a right-to-left system leaves them inside numbers ("1\u200b234",
# "\u200e-12,5") and CLDR writes some into signs (ar "ر.س.\u200f"); they carry no meaning
# there, so numbers and signs are read without them.
INVISIBLE = ("\u061c\u180e\u200b\u200c\u200d\u200e\u200f\u202a\u202b\u202c\u202d"
             "\u202e\u2060\u2066\u2067\u2068\u2069\ufeff")
# The same folding the number parser applies to raw text, so table keys match it.
SIGN_FOLD = str.maketrans({"\u00a0": " ", "\u202f": " ", "\u2009": " ", "’": "'",
                           **dict.fromkeys(INVISIBLE, None)})


@cache
def iso_codes() -> frozenset[str]:
    """Every ISO 4217 code CLDR knows (babel.numbers.list_currencies)."""
    return frozenset(babel_numbers.list_currencies())


def _is_symbolic(sign: str) -> bool:
    """Keep CLDR signs that cannot be mistaken for a unit or a word: they hold a
    character outside plain ASCII letters, digits, dots and spaces ("$", "€", "zł").
    Plain-letter signs such as "KM" or "Br" would swallow "5 KM" or "5 Br"."""
    if any(ch.isdigit() for ch in sign):
        return False
    return any(not (ch.isascii() and (ch.isalpha() or ch in ". ")) for ch in sign)


@cache
def _cldr_sign_use() -> dict[str, Counter[str]]:
    """Sign -> how many CLDR locales write each currency with it (reading every locale
    costs about a second, so the table is kept in the user's cache folder)."""
    import babel
    stored = cached_json("cldr-currency-signs", babel.__version__, _read_cldr_sign_use)
    found: dict[str, Counter[str]] = {}
    for sign, codes in stored.items():   # folded again: a table kept by an older folding
        found.setdefault(sign.translate(SIGN_FOLD).strip(), Counter()).update(codes)
    return found


def _read_cldr_sign_use() -> dict[str, dict[str, int]]:
    table: dict[str, Counter[str]] = {}
    for identifier in locale_identifiers():
        try:
            symbols = Locale.parse(identifier).currency_symbols
        except (UnknownLocaleError, ValueError):
            continue
        for code, sign in symbols.items():
            sign = sign.translate(SIGN_FOLD).strip()
            if sign and sign != code and _is_symbolic(sign):
                table.setdefault(sign, Counter())[code] += 1
    return table


def _cldr_signs() -> dict[str, frozenset[str]]:
    return {sign: frozenset(codes) for sign, codes in _cldr_sign_use().items()}


def ranked_candidates(token: str) -> list[str]:
    """The codes a token may mean, those most locales write with it first."""
    use = _cldr_sign_use().get(token, Counter())
    return sorted(candidates(token), key=lambda code: (-use[code], code))


@cache
def sign_table() -> dict[str, frozenset[str]]:
    """Currency sign (folded) -> the ISO codes it may stand for."""
    table = {sign: set(codes) for sign, codes in _cldr_signs().items()}
    for key, signs in load_entries(SIGN_FILE).items():
        code = key.removesuffix(PREFERRED_SUFFIX)
        for sign in signs:
            table.setdefault(sign.translate(SIGN_FOLD), set()).add(code)
    return {sign: frozenset(codes) for sign, codes in table.items()}


@cache
def preferred_readings() -> dict[str, str]:
    """Shared signs that trade practice reads one way when nothing else decides."""
    return {sign.translate(SIGN_FOLD): key.removesuffix(PREFERRED_SUFFIX)
            for key, signs in load_entries(SIGN_FILE).items()
            if key.endswith(PREFERRED_SUFFIX) for sign in signs}


def literal(text: str) -> str:
    """Escape regex syntax in a way both Python's re and RE2 (pyarrow) accept."""
    return "".join("\\" + ch if ch in _SPECIAL else ch for ch in text)


_SPECIAL = frozenset(r".^$*+?()[]{}|\/-")


@cache
def sign_pattern() -> str:
    """A regex alternation matching any known sign or an upper-case three-letter code
    (the caller anchors the pattern, so "USDX" cannot match as "USD")."""
    signs = sorted(sign_table(), key=len, reverse=True)
    return "|".join([*(literal(s) for s in signs), r"[A-Z]{3}"])


@cache
def candidates(token: str) -> frozenset[str]:
    """The ISO codes a written token may mean (empty when it is no currency)."""
    if token in iso_codes():
        return frozenset({token})
    return sign_table().get(token, frozenset())


def resolve_alone(token: str) -> str | None:
    """The one currency a token means on its own, or None when it is ambiguous."""
    codes = candidates(token)
    if len(codes) == 1:
        return next(iter(codes))
    return preferred_readings().get(token)


@cache
def territory_currencies(territory: str) -> frozenset[str]:
    """Currencies in use in an ISO 3166 territory now (CLDR via babel)."""
    try:
        return frozenset(babel_numbers.get_territory_currencies(territory))
    except Exception:  # babel raises several types for unknown territories
        return frozenset()


def codes_in_text(text: str) -> frozenset[str]:
    """Currencies a header names: ISO codes as words, or unambiguous signs."""
    found = {w for w in re.findall(r"\b[A-Z]{3}\b", text) if w in iso_codes()}
    folded = text.translate(SIGN_FOLD)
    for sign in sign_table():
        if len(sign) > 1 and sign.isalpha():
            continue  # letter signs inside a header are usually just words
        if sign in folded and (code := resolve_alone(sign)):
            found.add(code)
    return frozenset(found)
