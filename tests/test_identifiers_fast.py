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
from harmonize.engines.identifiers import (
    _CODE,
    IdentifierEngine,
    gtin_valid,
    header_names_code,
    iban_valid,
    is_code,
)
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


# ---------------------------------------------------------------- check digits

# GTINs printed as examples with their check digit (GS1 General Specifications and the
# widely reproduced EAN-13 example; from memory)
GTINS = ["4006381333931", "0012345678905", "5901234123457", "96385074", "00012345600012"]
# IBAN examples of ISO 13616 / the SWIFT IBAN registry (from memory), with and without
# the print form's groups of four
IBANS = ["GB82 WEST 1234 5698 7654 32", "DE89370400440532013000", "FR1420041010050500013M02606",
         "NL91 ABNA 0417 1643 00"]


def propose(values: list[str], header: str):
    table = TableEvidence.from_frame(pd.DataFrame({header: values}))
    return IdentifierEngine().propose(table.columns[0], Context(table))


def test_published_examples_pass_their_check() -> None:
    for gtin in GTINS:
        assert gtin_valid([gtin]).tolist() == [True], gtin
    assert all(iban_valid(iban) for iban in IBANS)


@settings(max_examples=200, deadline=None)
@given(st.sampled_from(GTINS + IBANS), st.data())
def test_one_changed_digit_breaks_the_check(code: str, data) -> None:
    # both schemes detect every single-digit substitution (GS1 mod 10; ISO 7064 MOD 97-10)
    places = [i for i, ch in enumerate(code) if ch.isdigit()]
    at = data.draw(st.sampled_from(places))
    digit = data.draw(st.sampled_from([d for d in "0123456789" if d != code[at]]))
    changed = code[:at] + digit + code[at + 1:]
    valid = gtin_valid([changed])[0] if changed.isdigit() else iban_valid(changed)
    assert not valid


@pytest.mark.parametrize("header", ["Article", "Item", "Product"])
def test_gtins_are_identifiers_whatever_the_header(header: str) -> None:
    decision = propose(GTINS, header)
    assert decision is not None and decision.kind == "identifier"
    assert any("GS1" in line for line in decision.evidence)


def test_ibans_are_identifiers_whatever_the_header() -> None:
    decision = propose(IBANS, "Payee")
    assert decision is not None and decision.kind == "identifier" and decision.fit == 1.0


def test_numbers_that_fail_the_check_are_not_claimed_for_it() -> None:
    # amounts of 13 digits: one in ten passes GS1 by chance, not all of them
    amounts = ["4006381333932", "1234567890123", "5901234123450", "9000000000001",
               "7700000000002"]
    assert propose(amounts, "Article") is None
