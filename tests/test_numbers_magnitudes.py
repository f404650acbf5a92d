"""Magnitude words whose power depends on the writer's language ("bn", "billion", "B").

Reference: CLDR compact decimal formats as babel renders them
(``babel.numbers.format_compact_decimal``): every word the engine reads one way must mean
that power in every major language CLDR gives it, and every language-dependent reading in
``locales/magnitude_languages.txt`` must be what CLDR gives that language.
"""

from __future__ import annotations

import re
from decimal import Decimal
from itertools import product

import babel
import pandas as pd
import pytest
from babel import numbers as babel_numbers

from harmonize.engines.base import Outcome
from harmonize.engines.numbers_forms import magnitude_key, magnitudes
from harmonize.locales import load_entries
from harmonize.options import Options

try:
    from tests.test_numbers_rows import convert_column
except ImportError:  # tests/ is not a package: pytest puts tests/ itself on sys.path
    from test_numbers_rows import convert_column  # type: ignore[no-redef]

# languages whose exports the project reads (its branch locales and their neighbours)
MAJOR = ["en", "en_GB", "en_IN", "de", "fr", "es", "it", "nl", "sv", "da", "nb", "fi", "pl",
         "pt", "pt_PT", "ru", "ja", "ko", "zh", "hi", "tr", "hu", "ca", "cs", "is"]


def _compact_words(locale: str) -> dict[str, int]:
    """Word -> power of ten in the locale's short and long compact formats (CLDR)."""
    found: dict[str, int] = {}
    for width, lead, power in product(("short", "long"), (1, 2), range(3, 13)):
        # 1 and 2 give the singular and the plural ("1 billion", "2 billions" in fr)
        text = babel_numbers.format_compact_decimal(lead * 10 ** power, locale=locale,
                                                    format_type=width)
        word = re.sub(r"[\d\s\u00a0\u202f.,]+", " ", text).strip()
        # "20 Mio." is 2 * 10^1 of a million; "mille" alone is one thousand
        digits = max(len(re.sub(r"\D", "", text)), 1)
        if word and " " not in word:
            found.setdefault(word, power - (digits - 1))
            found.setdefault(word.rstrip("."), power - (digits - 1))
    return found


@pytest.mark.parametrize("locale", MAJOR)
def test_words_read_one_way_mean_that_power_in_cldr(locale: str) -> None:
    table = magnitudes().exponents
    for word, power in _compact_words(locale).items():
        key = magnitude_key(word)
        if key in table:
            assert table[key] == power, (locale, word, power)


def test_language_readings_are_cldr_readings() -> None:
    seen = 0
    for key, entries in load_entries("magnitude_languages").items():
        word = magnitude_key(key.removesuffix("+currency"))
        for entry in entries:
            language, _, power = entry.partition("=")
            locales = [loc for loc in babel.localedata.locale_identifiers()
                       if loc.split("_")[0] == language]
            readings = {p for loc in locales for w, p in _compact_words(loc).items()
                        if magnitude_key(w) == word}
            assert int(power) in readings, (word, language, readings)
            seen += 1
    assert seen >= 20


def test_bn_has_two_readings_in_cldr() -> None:
    # en_GB: "2bn" = 2 * 10^9; sv: "2 bn" = 2 * 10^12 (babel 2.19, CLDR 47)
    assert _compact_words("en_GB")["bn"] == 9
    assert _compact_words("sv")["bn"] == 12
    assert magnitudes().exponents.get("bn") is None


AMOUNTS = ["5 bn", "2.5 bn", "300", "12.5"]


def test_bn_alone_is_listed_with_both_readings() -> None:
    frame = pd.DataFrame({"Amount": AMOUNTS})
    decision, text, outcome = convert_column(frame, "Amount")
    assert list(outcome[:2]) == [Outcome.UNRESOLVED] * 2
    assert text[2:] == ["300", "12.5"]
    assert any("bn" in e and "10^9 or 10^12" in e for e in decision.evidence)


@pytest.mark.parametrize(("country", "power"), [("Sverige", 12), ("United Kingdom", 9),
                                                ("France", 12)])
def test_the_rows_country_decides(country: str, power: int) -> None:
    frame = pd.DataFrame({"Amount": AMOUNTS, "Country": [country] * 4})
    _, text, outcome = convert_column(frame, "Amount")
    assert (outcome == Outcome.CONVERTED).all()
    assert [Decimal(t) for t in text[:2]] == [Decimal(5).scaleb(power),
                                              Decimal("2.5").scaleb(power)]


def test_a_merged_file_reads_each_country_its_way() -> None:
    frame = pd.DataFrame({"Amount": AMOUNTS * 2,
                          "Country": ["Sverige"] * 4 + ["United Kingdom"] * 4})
    _, text, outcome = convert_column(frame, "Amount")
    assert (outcome == Outcome.CONVERTED).all()
    assert text[0] == str(5 * 10 ** 12) and text[4] == str(5 * 10 ** 9)


def test_a_language_without_the_word_reads_nothing() -> None:
    # de CLDR writes "Mrd." and "Bio.": a German branch's "bn" is not read either way
    frame = pd.DataFrame({"Amount": AMOUNTS, "Country": ["Deutschland"] * 4})
    _, _, outcome = convert_column(frame, "Amount")
    assert list(outcome[:2]) == [Outcome.UNRESOLVED] * 2


def test_the_run_locale_decides() -> None:
    frame = pd.DataFrame({"Amount": ["€5B", "€2.5B", "€300M", "€12"]})
    _, text, _ = convert_column(frame, "Amount", Options(locale="es_ES"))
    # es CLDR short: "2 B" = 2 * 10^12 (billón), "2 M" = 2 * 10^6
    assert text == [str(5 * 10 ** 12), str(25 * 10 ** 11), "300000000", "12"]


def test_the_column_decides_when_it_writes_the_milliard_otherwise() -> None:
    # sv/fr CLDR: "md"/"Md" = 10^9, so the same writer's "bn" is 10^12
    frame = pd.DataFrame({"Amount": ["5 bn", "2,5 bn", "300 Md", "12"]})
    _, text, outcome = convert_column(frame, "Amount")
    assert (outcome == Outcome.CONVERTED).all()
    assert text == [str(5 * 10 ** 12), str(25 * 10 ** 11), str(3 * 10 ** 11), "12"]
