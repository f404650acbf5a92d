"""The identifiers engine's code test runs in Arrow and agrees with its written pattern.

``_CODE`` (Python ``re``, with look-arounds) states what a code looks like; ``is_code``
is the form without look-arounds that Arrow's regex engine runs on whole columns.
"""

from __future__ import annotations

import re

import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from harmonize.context import Context
from harmonize.engines.identifiers import _CODE, IdentifierEngine, header_names_code, is_code
from harmonize.evidence import TableEvidence

ALPHABET = "Ab09 -_/.#\t\n\u00a0é٣:"


def reference(trimmed: pd.Series) -> list[bool]:
    return [re.match(_CODE, t) is not None for t in trimmed.tolist()]


@settings(max_examples=200, deadline=None)
@given(st.lists(st.text(alphabet=ALPHABET, max_size=10), min_size=1, max_size=30))
def test_is_code_agrees_with_the_written_pattern(values: list[str]) -> None:
    trimmed = pd.Series(values, dtype="str").str.strip()
    assert is_code(trimmed).tolist() == reference(trimmed)


def test_codes_and_non_codes() -> None:
    trimmed = pd.Series(["00123", "AB-12 7", "AB  12", "ABC", "12,5", "QP-01234", "٣٣"],
                        dtype="str")
    assert is_code(trimmed).tolist() == [True, True, False, False, False, True, False]


def test_convert_passes_values_through_trimmed() -> None:
    result = IdentifierEngine().convert([" 00123 ", "AB-7"], {"trim": True})
    assert result.text == ["00123", "AB-7"]
    assert IdentifierEngine().convert([" 00123 "], {"trim": False}).text == [" 00123 "]


@pytest.mark.parametrize(("header", "named"), [
    ("CustomerID", True), ("IDNumber", True), ("userIDs", True), ("Individual ID", True),
    ("species_id", True), ("UUID", True),
    # "ID" inside an upper-case word: acid concentration (statsmodels' stackloss.csv),
    # an amount paid, a validity flag
    ("ACIDCONC", False), ("PAID", False), ("VALID", False),
])
def test_header_names_a_code(header: str, named: bool) -> None:
    # common practice, no source: "ID" is a word of its own, or a camel-case part
    assert header_names_code(header) is named


def test_two_digit_measurements_under_a_plain_header_are_not_codes() -> None:
    # stackloss.csv (statsmodels; Brownlee 1965): acid concentration, two-digit numbers
    values = ["89", "88", "90", "87", "93", "89", "86", "72", "79", "80", "82", "91"]
    table = TableEvidence.from_frame(pd.DataFrame({"ACIDCONC": values}))
    assert IdentifierEngine().propose(table.columns[0], Context(table, None)) is None
