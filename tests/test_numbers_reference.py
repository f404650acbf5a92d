"""The numbers engine against outside references: CLDR via babel, ISO 4217 via babel,
Python's decimal module, and an invented corpus with known truth."""

from __future__ import annotations

import time
from decimal import Decimal

import numpy as np
import pandas as pd
import pytest
from babel import numbers as babel_numbers
from hypothesis import given, settings
from hypothesis import strategies as st

from harmonize.context import Context
from harmonize.engines.base import Outcome
from harmonize.engines.numbers import NumberEngine, format_decimal_plain
from harmonize.engines.numbers_convert import plain_texts
from harmonize.engines.numbers_currency import candidates, iso_codes, resolve_alone
from harmonize.evidence import TableEvidence

try:
    from tests.corpora.numbers import Score, apply_engine, make_table, score
except ImportError:  # tests/ is not a package: pytest puts tests/ itself on sys.path
    from corpora.numbers import Score, apply_engine, make_table, score  # type: ignore[no-redef]

ENGINE = NumberEngine()

# checkvalues.md A3 (babel 2.19.0 = CLDR 49): locale -> (decimal symbol, group symbol)
A3_SYMBOLS = {
    "en_US": (".", ","),
    "de_DE": (",", "."),
    "fr_FR": (",", "\u202f"),
    "de_CH": (".", "'"),
    "en_IN": (".", ","),
    "es_ES": (",", "."),
    "it_IT": (",", "."),
    "nl_NL": (",", "."),
    "pt_BR": (",", "."),
    "sv_SE": (",", "\u00a0"),
    "pl_PL": (",", "\u00a0"),
    "ja_JP": (".", ","),
}
# Locales whose babel formatting of numbers with two or more group separators is faulty
# (checkvalues.md A3: the quote-stripping regex eats ASCII-apostrophe group marks).
BABEL_SWISS_FAULT = {"de_CH", "fr_CH", "it_CH", "de_LI"}


def convert_column(values: list[str]) -> tuple[list[str], np.ndarray]:
    applied = apply_engine(ENGINE, pd.DataFrame({"Amount": values}), "Amount")
    assert applied is not None
    return applied.text, applied.outcome


class TestCldrSymbols:
    @pytest.mark.parametrize("locale", sorted(A3_SYMBOLS))
    def test_babel_gives_the_a3_symbols(self, locale: str) -> None:
        # checkvalues.md A3 table, computed with babel.numbers.get_decimal/group_symbol
        assert (babel_numbers.get_decimal_symbol(locale),
                babel_numbers.get_group_symbol(locale)) == A3_SYMBOLS[locale]

    @pytest.mark.parametrize("locale", sorted(A3_SYMBOLS))
    def test_reads_babel_formatted_values(self, locale: str) -> None:
        # round trip: format_decimal in the locale, read back by the engine
        amounts = [Decimal("1234567.891"), Decimal("1234.5"), Decimal("0.5"), Decimal("-17.25")]
        if locale in BABEL_SWISS_FAULT:
            amounts = amounts[1:]   # checkvalues.md A3: babel drops the Swiss groups here
        texts = [babel_numbers.format_decimal(a, locale=locale) for a in amounts]
        out, outcome = convert_column(texts)
        assert list(outcome) == [Outcome.CONVERTED] * len(texts), texts
        assert [Decimal(t) for t in out] == amounts

    def test_babel_swiss_fault_is_still_there(self) -> None:
        # checkvalues.md A3: format_decimal(1234567.891, 'de_CH') -> '1234567.891'
        assert babel_numbers.format_decimal(Decimal("1234567.891"), locale="de_CH") == \
            "1234567.891"

    def test_swiss_apostrophes_old_and_new(self) -> None:
        # CLDR 48+ uses U+0027, earlier exports U+2019 (checkvalues.md A3, CLDR-13542)
        out, _ = convert_column(["1'234'567.891", "1\u2019234\u2019567.891", "12.5"])
        assert out == ["1234567.891", "1234567.891", "12.5"]

    def test_minimum_grouping_digits(self) -> None:
        # checkvalues.md A3: CLDR es/pl print 1234 ungrouped, babel prints 1.234; read both
        out, _ = convert_column(["1234,5", "1.234,5", "1.234.567,5"])
        assert out == ["1234.5", "1234.5", "1234567.5"]
        out, _ = convert_column(["1234,5", "1\u00a0234,5"])
        assert out == ["1234.5", "1234.5"]

    def test_space_look_alikes(self) -> None:
        # checkvalues.md A3: fr groups with U+202F, sv/pl with U+00A0, people type U+0020
        texts = ["1\u202f234,5", "1\u00a0234,5", "1 234,5", "12\u202f345\u202f678,9"]
        out, _ = convert_column(texts)
        assert out == ["1234.5", "1234.5", "1234.5", "12345678.9"]

    def test_agrees_with_babel_strict_parse(self) -> None:
        # babel.numbers.parse_decimal(strict=True) as reference where it accepts the value
        texts = ["1.234.567,891", "12,5", "0,25", "1.000"]
        out, _ = convert_column(texts)
        assert [Decimal(t) for t in out] == [
            babel_numbers.parse_decimal(t, locale="de_DE", strict=True) for t in texts]


class TestIso4217:
    def test_every_iso_code_reads_and_is_kept(self) -> None:
        codes = sorted(babel_numbers.list_currencies())
        assert len(codes) > 250   # libnotes §1: 307 codes in babel 2.19.0
        values = [f"{code} 1,234.50" for code in codes] + ["9,876,543.21"]
        applied = apply_engine(ENGINE, pd.DataFrame({"Amount": values}), "Amount")
        assert applied.decision.convention["currency_mode"] == "mixed"
        assert applied.extra["currency"][:-1] == codes
        assert set(applied.text[:-1]) == {"1234.5"}
        assert set(codes) == set(iso_codes())

    @pytest.mark.parametrize(("code", "locale"), [
        ("EUR", "de_DE"), ("GBP", "en_GB"), ("INR", "en_IN"), ("CHF", "de_CH"),
        ("BRL", "pt_BR"), ("PLN", "pl_PL"), ("KRW", "ko_KR"), ("USD", "en_CA"),
        ("JPY", "ja_JP"), ("USD", "en_US"), ("CAD", "en_CA"), ("SEK", "sv_SE"),
    ])
    def test_cldr_signs_name_their_currency(self, code: str, locale: str) -> None:
        # babel.numbers.get_currency_symbol is the reference for the signs
        sign = babel_numbers.get_currency_symbol(code, locale=locale)
        result = ENGINE.convert([f"{sign} 12.50"], {"decimal_mark": ".",
                                                    "currency_mode": "mixed"})
        if resolve_alone(sign) is None:   # shared signs ("$", "kr", "¥") need context
            assert code in candidates(sign)
            assert result.outcome[0] == Outcome.UNRESOLVED
        else:
            assert result.extra["currency"][0] == code


# ------------------------------------------------------------------ properties

LOCALES = sorted(set(A3_SYMBOLS) - BABEL_SWISS_FAULT | {"de_AT", "en_GB", "fr_CA", "da_DK"})
amounts = st.decimals(min_value=Decimal("-99999999.999"), max_value=Decimal("99999999.999"),
                      places=3, allow_nan=False, allow_infinity=False)


@settings(max_examples=120, deadline=None)
@given(locale=st.sampled_from(LOCALES), values=st.lists(amounts, min_size=1, max_size=12))
def test_babel_rendered_columns_come_back_exact(locale: str, values: list[Decimal]) -> None:
    # one deciding value per column (both marks present) makes every value decidable
    deciding = Decimal("1234567.891")
    texts = [babel_numbers.format_decimal(v, locale=locale) for v in [deciding, *values]]
    out, outcome = convert_column(texts)
    assert list(outcome) == [Outcome.CONVERTED] * len(texts), texts
    assert [Decimal(t) for t in out] == [deciding, *values]
    assert all(t == format_decimal_plain(Decimal(t)) for t in out)


@settings(max_examples=200, deadline=None)
@given(st.lists(st.tuples(st.decimals(allow_nan=False, allow_infinity=False, places=4,
                                      min_value=0, max_value=10**12), st.booleans()),
                min_size=1, max_size=20), st.booleans())
def test_vectorised_text_matches_decimal_formatting(pairs: list[tuple[Decimal, bool]],
                                                   keep: bool) -> None:
    # Python's decimal module is the reference for the plain text
    digits = np.array([f"{d:f}" for d, _ in pairs], dtype=object)
    negative = np.array([n for _, n in pairs], dtype=bool)
    got = plain_texts(digits, np.zeros(len(pairs), np.int64), negative, keep)
    expected = [format_decimal_plain(-d if n else d, keep) for d, n in pairs]
    assert got.tolist() == expected


# ------------------------------------------------------------------ corpus, speed


def test_corpus_targets() -> None:
    total = Score()
    for seed in range(6):
        table = make_table(seed, rows=300)
        for column, truth in table.truth.items():
            applied = apply_engine(ENGINE, table.frame, column)
            assert applied is not None, (seed, column)
            total.add(score(applied, truth))
    rates = total.rates()
    assert total.undecidable > 0 and total.decidable > 1000
    assert rates["wrong_unlisted"] <= 0.002
    assert rates["decidable_correct"] >= 0.995
    assert rates["undecidable_listed"] >= 0.98
    assert rates["decidable_listed"] <= 0.02


def test_fifty_thousand_distinct_amounts_are_fast() -> None:
    rng = np.random.default_rng(7)
    cents = rng.choice(10**10, size=50_000, replace=False)
    values = [f"{c // 100:,}.{c % 100:02d}" for c in cents.tolist()]
    table = TableEvidence.from_frame(pd.DataFrame({"Amount": values}))
    ENGINE.convert(["1"], {"decimal_mark": "."})   # warm the currency tables
    start = time.perf_counter()
    decision = ENGINE.propose(table.column("Amount"), Context(table))
    result = ENGINE.convert(values, decision.convention)
    elapsed = time.perf_counter() - start
    assert (result.outcome == Outcome.CONVERTED).all()
    assert result.text[0] == f"{Decimal(int(cents[0])).scaleb(-2).normalize():f}"
    assert elapsed < 2.0, f"{elapsed:.2f} s"


# babel.numbers.format_currency as the reference rendering of amounts with signs
CURRENCY_LOCALES = [("de_DE", "EUR"), ("fr_FR", "EUR"), ("en_GB", "GBP"), ("en_IN", "INR"),
                    ("pt_BR", "BRL"), ("pl_PL", "PLN"), ("nl_NL", "EUR"), ("es_ES", "EUR"),
                    ("it_IT", "EUR"), ("ja_JP", "JPY"), ("en_US", "EUR"), ("de_AT", "EUR")]


@settings(max_examples=80, deadline=None)
@given(pair=st.sampled_from(CURRENCY_LOCALES),
       values=st.lists(st.decimals(min_value=Decimal("-9999999.99"),
                                   max_value=Decimal("9999999.99"), places=2,
                                   allow_nan=False, allow_infinity=False),
                       min_size=1, max_size=8))
def test_babel_currency_amounts_come_back_exact(pair: tuple[str, str],
                                                values: list[Decimal]) -> None:
    locale, code = pair
    digits = babel_numbers.get_currency_precision(code)
    values = [v.quantize(Decimal(1).scaleb(-digits)) for v in values]
    deciding = Decimal("1234567.25") if digits else Decimal("1234567")
    texts = [babel_numbers.format_currency(v, code, locale=locale) for v in [deciding, *values]]
    # a country column settles shared signs ("￥" is JPY in ja_JP and CNY elsewhere)
    frame = pd.DataFrame({"Amount": texts, "Country": [locale[-2:]] * len(texts)})
    applied = apply_engine(ENGINE, frame, "Amount")
    assert list(applied.outcome) == [Outcome.CONVERTED] * len(texts), texts
    assert [Decimal(t) for t in applied.text] == [deciding, *values]
    assert applied.decision.unit == code


class TestWordLists:
    def test_every_magnitude_word_reads(self) -> None:
        from harmonize.locales import load_entries

        for key, words in load_entries("magnitudes").items():
            power = int(key.split("+")[0].lstrip("e"))
            needs_currency = key.endswith("+currency")
            for word in words:
                text = f"€2 {word}" if needs_currency else f"2 {word}"
                result = ENGINE.convert([text], {"decimal_mark": ".",
                                                 "currency_mode": "single", "currency": "EUR"})
                assert result.text == [f"{Decimal(2).scaleb(power):f}"], (text, result.reasons)

    def test_every_listed_currency_sign_names_its_codes(self) -> None:
        from harmonize.locales import load_entries

        for key, signs in load_entries("number_currency_symbols").items():
            code = key.split("+")[0]
            assert code in babel_numbers.list_currencies()   # ISO 4217 via babel
            for sign in signs:
                assert code in candidates(sign)
