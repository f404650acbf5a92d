"""The numbers engine's shortcuts read every value exactly as the full pattern does.

``numbers_forms._split`` extracts the regex groups only for values that are not a bare
number body; ``_without`` strips group marks with literal passes. Both must give what the
one-pass regex operations give, on any text.
"""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
from hypothesis import given, settings
from hypothesis import strategies as st

from harmonize.engines.numbers_convert import convert_amounts
from harmonize.engines.numbers_forms import SPLIT_PATTERN, _split, _without, analyse

# digits, every mark the engine reads, signs, currency signs, words and look-alikes
ALPHABET = "0123456789.,' -+()%€$£eEkKMm\u00a0\u2212٣abc"
VALUES = st.lists(st.text(alphabet=ALPHABET, max_size=14), min_size=1, max_size=40)


def full_split(text: pa.Array) -> tuple[list, list, list, list]:
    split = pc.extract_regex(text, SPLIT_PATTERN)
    valid = np.asarray(split.is_valid(), dtype=bool).tolist()
    return (valid, *(split.field(name).to_pylist() for name in ("pre", "num", "post")))


@settings(max_examples=200, deadline=None)
@given(VALUES)
def test_split_matches_the_full_pattern(values: list[str]) -> None:
    text = pa.array(values, type=pa.string())
    matched, pre, num, post = _split(text)
    valid, pre_ref, num_ref, post_ref = full_split(text)
    assert matched.tolist() == valid
    for i, ok in enumerate(valid):
        if ok:   # groups of a value the pattern does not match are never read
            assert (pre[i].as_py(), num[i].as_py(), post[i].as_py()) == (
                pre_ref[i], num_ref[i], post_ref[i])


@settings(max_examples=200, deadline=None)
@given(VALUES)
def test_without_matches_the_regex_rewrite(values: list[str]) -> None:
    text = pa.array(values, type=pa.string())
    assert _without(text, ", '").to_pylist() == pc.replace_substring_regex(
        text, r"[, ']", "").to_pylist()
    assert _without(text, ". '").to_pylist() == [v.replace(".", "").replace(" ", "")
                                                .replace("'", "") for v in values]


def test_a_column_of_bare_bodies_and_a_mixed_one_read_alike() -> None:
    # the same values alone (every one a bare body: the shortcut only) and beside
    # others that need the full pattern must read the same
    bodies = ["1.234,50", "0,5", "12", ",75", "1 234,5", "7'500"]
    mixed = bodies + ["EUR 3,20", "(1.234,50)", "5,-", "n/a"]
    alone, beside = analyse(bodies), analyse(mixed)
    for field in ("status", "dot_digits", "comma_digits", "negative", "currency"):
        assert getattr(alone, field).tolist() == getattr(beside, field)[: len(bodies)].tolist()
    # de-DE (CLDR decimal ",", group "."): 1.234,50 is 1234.5
    result = convert_amounts(mixed, {"decimal_mark": ",", "currency_mode": "single",
                                     "currency": "EUR"})
    assert result.text[:6] == ["1234.5", "0.5", "12", "0.75", "1234.5", "7500"]
    assert result.text[7:9] == ["-1234.5", "5"]
