"""Word tables for written dates: month, weekday and day-period names from CLDR (babel),
plus the joining words, ordinal suffixes and zone abbreviations of
``locales/date_words.txt``. Built once, on first use.
"""

from __future__ import annotations

import re
from functools import cache

import babel.dates as bd
from babel import Locale, UnknownLocaleError

from harmonize.locales import load_entries

# Languages whose month, weekday and am/pm names are read (CLDR via babel).
LANGUAGES = ("en", "de", "fr", "es", "it", "nl", "pt", "sv", "da", "nb", "fi", "pl", "cs",
             "ca", "ro", "hu", "tr", "ja", "zh", "ko", "sk", "sl", "sr_Latn", "lt", "lv", "et",
             "el", "ru", "uk", "bg", "id", "is", "gl", "eu")
# Croatian is left out: its "srp" (July), "lis" and "listopad" (October) are Czech
# August and November, and a name two languages give two months is read as neither.

_DOTS_AND_SPACES = re.compile(r"[.\s\u00a0\u202f]+")


def fold_word(word: str) -> str:
    """Casefolded, trailing dots stripped: 'Sept.' -> 'sept' (en_GB writes 'Sept')."""
    return word.casefold().rstrip(".")


# Regional locales whose CLDR names differ from their language's ('juill.' in fr_CA,
# 'Jänner' in de_AT, 'Sept' in en_GB, 'set.' in pt_PT).
REGIONAL = ("fr_CA", "fr_CH", "fr_BE", "de_AT", "de_CH", "en_GB", "en_AU", "en_IN", "en_CA",
            "es_MX", "es_US", "pt_PT", "nl_BE", "it_CH", "sv_FI")


def _named(getter, key_shift: int = 0) -> dict[str, set[int]]:
    table: dict[str, set[int]] = {}
    for lang in (*LANGUAGES, *REGIONAL):
        for context in ("format", "stand-alone"):
            for width in ("wide", "abbreviated"):
                for key, name in getter(width, context, lang).items():
                    table.setdefault(fold_word(name), set()).add(int(key) + key_shift)
    return table


@cache
def month_table() -> dict[str, int]:
    """Month name or abbreviation (folded) -> month number; names two months share are left out."""
    return {word: next(iter(months)) for word, months in _named(bd.get_month_names).items()
            if len(months) == 1}


@cache
def weekday_table() -> dict[str, int | None]:
    """Weekday name (folded) -> ISO weekday 1-7, or None where languages disagree ('so')."""
    found = _named(bd.get_day_names, key_shift=1)  # babel: 0 = Monday; ISO 8601: 1 = Monday
    return {word: (next(iter(days)) if len(days) == 1 else None) for word, days in found.items()}


def fold_period(word: str) -> str:
    """'a. m.', 'A.M.', 'p.\u202fm.' -> 'am' / 'pm': dots and spaces removed, casefolded."""
    return _DOTS_AND_SPACES.sub("", word.casefold())


@cache
def period_table() -> dict[str, str]:
    """am/pm marker (folded) -> 'am' or 'pm', from CLDR day periods in every width."""
    table: dict[str, str] = {"am": "am", "pm": "pm", "a": "am", "p": "pm"}
    for lang in (*LANGUAGES, *REGIONAL):
        for width in ("abbreviated", "wide", "narrow"):
            names = bd.get_period_names(width, "format", lang)
            for period in ("am", "pm"):
                if period in names:
                    table.setdefault(fold_period(names[period]), period)
    return table


@cache
def word_list(key: str) -> frozenset[str]:
    return frozenset(fold_word(w) for w in load_entries("date_words").get(key, ()))


def is_filler(word: str) -> bool:
    return word in word_list("filler")


@cache
def ordinal_pattern() -> re.Pattern[str]:
    """A day number with an ordinal suffix: '3rd', '1er', '1º', '1:a' (group 1 = the number)."""
    suffixes = sorted(word_list("ordinal"), key=len, reverse=True)
    alternatives = "|".join(re.escape(s) for s in suffixes)
    return re.compile(rf"\b(\d{{1,2}})(?:{alternatives})(?![^\W\d_])", re.IGNORECASE)


@cache
def word_clock_pattern() -> re.Pattern[str]:
    """A time of day marked by a word ('14.30 Uhr', '14 Uhr', 'klo 14.30'): groups
    hour, minute, second (before the word) then hour, minute, second (after it)."""
    after = "|".join(re.escape(w) for w in sorted(word_list("clock_after")))
    before = "|".join(re.escape(w) for w in sorted(word_list("clock_before")))
    clock = r"(\d{1,2})(?:[.:](\d{2})(?:[.:](\d{2}))?)?"
    return re.compile(rf"(?<![\d.:]){clock}\s*(?:{after})(?![^\W\d_])"
                      rf"|(?<![^\W\d_])(?:{before})\.?\s*{clock}(?![\d.:])", re.IGNORECASE)


@cache
def header_says_month(header: str) -> bool:
    """Whether a column header names months or periods ('Month', 'Periodo', 'Monat')."""
    return any(w in word_list("month_header")
               for w in re.findall(r"[^\W\d_]+", header.casefold()))


@cache
def header_says_duration(header: str) -> bool:
    """Whether a column header names lengths of time ('Duration', 'Dauer (h:mm)')."""
    return any(w in word_list("duration") for w in re.findall(r"[^\W\d_]+", header.casefold()))


@cache
def header_says_date(header: str) -> bool:
    """Whether a column header names a date or time ('Order date', 'created_at', 'Fecha')."""
    words = re.findall(r"[^\W\d_]+", header.casefold())
    hints = word_list("header")
    return any(w in hints for w in words) or any(
        w.endswith(("date", "datum", "zeit", "time")) for w in words)


@cache
def territory_order(territory: str) -> str | None:
    """The field order of a territory's CLDR short date pattern ('US' -> 'MDY'), if any."""
    try:
        locale = Locale.parse(f"und_{territory}")
    except (UnknownLocaleError, ValueError):
        return None
    return locale_order(str(locale))


@cache
def locale_order(locale: str) -> str | None:
    """The field order of a locale's CLDR short date pattern ('de_DE' -> 'DMY')."""
    fields = {"d": "D", "M": "M", "L": "M", "y": "Y", "u": "Y"}
    try:
        pattern = bd.get_date_format("short", locale=locale).pattern
    except (UnknownLocaleError, ValueError):
        return None
    tokens = bd.tokenize_pattern(pattern)  # handles quoted literals such as 'de'
    order = "".join(dict.fromkeys(fields[v[0]] for kind, v in tokens
                                  if kind == "field" and v[0] in fields))
    return order if order in ("DMY", "MDY", "YMD") else None
