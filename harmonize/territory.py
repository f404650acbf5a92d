"""Recognise countries (and territories) written as names or ISO 3166 codes.

Names come from CLDR via babel in the languages listed below, codes from ISO 3166-1
via pycountry (alpha-2 and alpha-3), plus the short forms in
``locales/territory_aliases.txt``. Other engines use a recognised country column as a
per-row locale hint (date order, decimal marks, phone region).
"""

from __future__ import annotations

import inspect
import unicodedata
from functools import cache

import pycountry
from babel import Locale

from harmonize.diskcache import cached_json
from harmonize.locales import load_entries

NAME_LANGUAGES = ("en", "de", "fr", "es", "it", "nl", "pt", "sv", "da", "nb", "fi", "pl",
                  "cs", "hu", "ro", "el", "tr", "ru", "ja", "zh", "ko", "ar", "fa", "he",
                  "uk", "bg", "id", "th")
# Not read: Hindi (folding drops its vowel signs, leaving skeletons such as अरब, "Arab",
# for Aruba) and Vietnamese (short names fold to common tokens: "Séc" to "sec").


def fold(text: str) -> str:
    """Case, accents, punctuation and spacing folded away: 'Côte d’Ivoire' -> 'cotedivoire'."""
    # Turkish dotless ı does not fold to i under casefold; "IŞIK" and "Işık" must meet.
    decomposed = unicodedata.normalize("NFKD", text.casefold().replace("ı", "i"))
    return "".join(ch for ch in decomposed if ch.isalnum())


def _cldr_names() -> dict[str, str]:
    table: dict[str, str] = {}
    for lang in NAME_LANGUAGES:
        for code, name in Locale.parse(lang).territories.items():
            if len(code) == 2 and code.isalpha() and code not in ("ZZ", "EU", "EZ", "UN", "QO"):
                table.setdefault(fold(name), code)
    return table


@cache
def _name_table() -> dict[str, str]:
    import hashlib

    import babel
    # the key changes with babel, the languages read, and the folding rule (its source)
    recipe = ",".join(NAME_LANGUAGES) + inspect.getsource(fold)
    version = f"{babel.__version__}-{hashlib.sha1(recipe.encode()).hexdigest()[:10]}"
    table: dict[str, str] = dict(cached_json("cldr-territory-names", version, _cldr_names))
    for code, names in load_entries("territory_aliases").items():
        for name in names:
            table[fold(name)] = code
    return table


@cache
def _code_table() -> dict[str, str]:
    codes: dict[str, str] = {}
    for country in pycountry.countries:
        codes[country.alpha_2] = country.alpha_2
        codes[country.alpha_3] = country.alpha_2
    codes["UK"] = "GB"  # exceptionally reserved ISO 3166-1 code, common practice
    return codes


def territory_of(value: str) -> str | None:
    """ISO 3166-1 alpha-2 code for a country name or code, else None."""
    text = value.strip()
    if not text:
        return None
    if len(text) <= 3 and text.isascii() and text.isalpha():
        found = _code_table().get(text.upper())
        if found:
            return found
    return _name_table().get(fold(text))  # also short names: "Irã", "日本"


def territory_share(values: list[str], counts: list[int]) -> float:
    """Share of cells (by count) naming a territory."""
    total = sum(counts)
    if not total:
        return 0.0
    hits = sum(c for v, c in zip(values, counts) if territory_of(v))
    return hits / total
