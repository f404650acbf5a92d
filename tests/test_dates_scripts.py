"""Dates engine: dates and times written with the digits of other scripts."""

from __future__ import annotations

import unicodedata
from datetime import date, datetime

import pandas as pd
import pytest

from harmonize.context import Context
from harmonize.engines.base import Outcome
from harmonize.engines.dates import DateEngine
from harmonize.engines.dates_parse import fold_digits
from harmonize.evidence import TableEvidence

ENGINE = DateEngine()

# First digit (zero) of each script; UnicodeData.txt numbers its ten digits in order
# (category Nd, field 6 = 0..9): Arabic-Indic, Extended Arabic-Indic (Persian and Urdu),
# Devanagari, Bengali, Thai, full-width.
ZEROS = {"arab": 0x0660, "arabext": 0x06F0, "deva": 0x0966, "beng": 0x09E6, "thai": 0x0E50,
         "fullwide": 0xFF10}


def in_script(text: str, zero: int) -> str:
    return "".join(chr(zero + int(c)) if c.isascii() and c.isdigit() else c for c in text)


def convert_all(values: list[str], header: str = "Date") -> dict[str, tuple[str, int]]:
    table = TableEvidence.from_frame(pd.DataFrame({header: values}))
    column = table.column(header)
    decision = ENGINE.propose(column, Context(table))
    assert decision is not None and decision.fit >= 0.8
    distinct = column.values.tolist()
    result = ENGINE.convert(distinct, decision.convention)
    return {v: (result.text[i], int(result.outcome[i])) for i, v in enumerate(distinct)}


def test_the_fold_follows_the_unicode_digit_values() -> None:
    for zero in ZEROS.values():
        for digit in range(10):
            char = chr(zero + digit)
            assert unicodedata.decimal(char) == digit   # UnicodeData.txt field 6
            assert fold_digits(char) == str(digit)


DAYS = [date(2024, 5, 2), date(2024, 6, 13), date(2023, 12, 31), date(2024, 2, 29)]


@pytest.mark.parametrize("script", sorted(ZEROS))
@pytest.mark.parametrize("pattern", ["%Y-%m-%d", "%d/%m/%Y", "%d.%m.%Y"])
def test_dates_in_other_digits_read_as_their_ascii_forms(script: str, pattern: str) -> None:
    # expected: Python's datetime, ISO 8601 calendar date YYYY-MM-DD
    written = {in_script(d.strftime(pattern), ZEROS[script]): d for d in DAYS}
    out = convert_all(list(written))
    for value, day in written.items():
        assert out[value] == (day.isoformat(), Outcome.CONVERTED)


@pytest.mark.parametrize("script", ["arab", "fullwide"])
def test_datetimes_in_other_digits_keep_ascii_fractions_and_offsets(script: str) -> None:
    moments = [datetime(2024, 5, 2, 13, 45, 0, 123000), datetime(2024, 6, 13, 8, 0),
               datetime(2023, 12, 31, 23, 59, 59, 500000)]
    written = {in_script(m.isoformat(timespec="milliseconds") + "Z", ZEROS[script]): m
               for m in moments}
    out = convert_all(list(written), "When")
    for value, moment in written.items():
        # RFC 3339 §5.6: "Z" is the offset +00:00; the fraction kept as written (".000")
        expected = moment.isoformat(timespec="milliseconds") + "+00:00"
        assert out[value] == (expected, Outcome.CONVERTED)
        assert out[value][0].isascii()


def test_full_width_signs_between_full_width_digits() -> None:
    # UnicodeData.txt: U+FF0D, U+FF1A, U+FF0F are <wide> "-", ":", "/"
    out = convert_all(["２０２４－０５－０２", "２０２３／１２／３１", "２０２４－０６－１３"])
    assert out["２０２４－０５－０２"][0] == date(2024, 5, 2).isoformat()
    assert out["２０２３／１２／３１"][0] == date(2023, 12, 31).isoformat()


def test_cjk_dates_in_full_width_digits() -> None:
    # 年/月/日 (year, month, day) as CLDR ja/zh write dates (y年M月d日)
    out = convert_all(["２０２４年５月２日", "２０２４年６月１３日", "２０２３年１２月３１日"])
    assert out["２０２４年５月２日"][0] == date(2024, 5, 2).isoformat()
    assert out["２０２３年１２月３１日"][0] == date(2023, 12, 31).isoformat()


def test_a_day_that_does_not_exist_is_listed_in_any_digits() -> None:
    # 2023 is not a leap year (calendar.isleap, Gregorian rule ISO 8601 §3.2.1)
    out = convert_all([in_script(v, ZEROS["arab"]) for v in
                       ["2023-02-29", "2024-05-02", "2024-06-13", "2023-12-31", "2024-01-01"]])
    assert out[in_script("2023-02-29", ZEROS["arab"])][1] == Outcome.UNRESOLVED
