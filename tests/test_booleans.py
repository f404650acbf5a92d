"""Booleans engine: which columns are boolean, and how each word reads."""

from __future__ import annotations

import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from harmonize.context import Context
from harmonize.engines.base import Outcome
from harmonize.engines.booleans import BooleanEngine, fold_word, header_is_flag, vocabulary
from harmonize.evidence import TableEvidence

ENGINE = BooleanEngine()


def propose(values: list[str], header: str = "col", typed: dict[str, str] | None = None):
    frame = pd.DataFrame({header: values})
    table = TableEvidence.from_frame(frame, typed={header: typed} if typed else None)
    return table.columns[0], ENGINE.propose(table.columns[0], Context(table))


def convert_all(values: list[str], header: str = "col") -> dict[str, str]:
    column, decision = propose(values, header)
    assert decision is not None
    result = ENGINE.convert(column.values.tolist(), decision.convention)
    return dict(zip(column.values.tolist(), result.text, strict=True))


# Everyday yes/no words per language: common practice, no source (from memory).
@pytest.mark.parametrize(("yes", "no"), [
    ("yes", "no"), ("Y", "N"), ("TRUE", "FALSE"), ("t", "f"), ("On", "Off"),
    ("ja", "nein"), ("oui", "non"), ("sí", "no"), ("Si", "No"), ("sim", "não"), ("ja", "nee"),
    ("tak", "nie"), ("vero", "falso"), ("ja", "nej"), ("kyllä", "ei"), ("ano", "ne"),
    ("✓", "✗"), ("✔", "✘"), ("☑", "☐"), ("✓", "x"), ("J", "N"), ("O", "N"), ("S", "N"),
    ("да", "нет"), ("так", "ні"), ("ναι", "όχι"), ("はい", "いいえ"), ("是", "否"),
    ("예", "아니요"), ("☒", "☐"),   # ☒ U+2612: a ticked box in form exports
    # Arabic, Persian (also typed with the Arabic yeh), Hebrew, Hindi: common usage, no source
    ("نعم", "لا"), ("بله", "خیر"), ("بله", "خير"), ("כן", "לא"), ("हाँ", "नहीं"), ("हां", "नहीं"),
])
def test_language_pairs_read_as_true_and_false(yes: str, no: str) -> None:
    out = convert_all([yes, no, yes, f" {yes.upper()} ", no.lower() + "."])
    assert out[yes] == "true" and out[no] == "false"
    assert out[f" {yes.upper()} "] == "true" and out[no.lower() + "."] == "false"


@pytest.mark.parametrize("hidden", ["\u200b", "\ufeff", "\u00ad", "\u2060"])
def test_invisible_characters_do_not_hide_a_word(hidden: str) -> None:
    # Unicode 15 ch. 23.2 (format characters): U+200B ZERO WIDTH SPACE, U+FEFF ZERO WIDTH
    # NO-BREAK SPACE (byte order mark), U+00AD SOFT HYPHEN, U+2060 WORD JOINER are invisible;
    # "y<U+200B>es" is "yes" to a reader, and the text engine writes it so on a second run
    assert fold_word(f"y{hidden}es") == "yes" and fold_word(f"{hidden}Nein") == "nein"
    out = convert_all([f"{hidden}yes", "no", f"n{hidden}o", "yes"])
    assert out == {f"{hidden}yes": "true", "no": "false", f"n{hidden}o": "false", "yes": "true"}


@pytest.mark.parametrize("values", [
    ["x", "x", "x"],                 # a mark alone: ticked or crossed?
    ["M", "F", "M", "F"],            # a two-valued category
    ["A", "B", "A"],
    ["Y", "Y", "Y"],                 # one letter, nothing shows the other value
    ["1", "1", "1"],
    ["0", "1", "2", "1"],            # a count, not a flag
    ["F", "M", "M", "M", "F", "F"],  # F would read as false, M as nothing
    ["red", "green", "blue"],
    ["N", "S", "E", "W", "NE", "SW"],  # compass points
])
def test_not_boolean(values: list[str]) -> None:
    _, decision = propose(values)
    assert decision is None or decision.fit < 0.8


def test_zero_one_needs_a_flag_header() -> None:
    _, flag = propose(["1", "0", "0", "1"], header="is_active")
    assert flag is not None and flag.fit == 1.0 and flag.confidence > 0.8
    assert convert_all(["1", "0"], header="hasPhone") == {"1": "true", "0": "false"}


@pytest.mark.parametrize("header", ["sex", "nchildren", "choice", "OWNRENT", "score"])
def test_zero_one_codes_and_counts_are_not_booleans(header: str) -> None:
    # 0/1 columns of statsmodels' data sets (fair_pt.csv, modechoice.csv, ccard.csv): a
    # sex code, a count of children, the mode chosen, own (1) or rent (0). Common practice,
    # no source: a 0/1 column is a flag only when something says so
    _, plain = propose(["1", "0", "0", "1"], header=header)
    assert plain is None


@pytest.mark.parametrize(("header", "flag"), [
    ("is_active", True), ("isActive", True), ("Has account", True), ("Active", True),
    ("Newsletter", True), ("Paid?", True), ("Score", False), ("Quantity", False),
    ("Island", False), ("hash", False),
])
def test_flag_headers(header: str, flag: bool) -> None:
    assert header_is_flag(header) is flag


def test_typed_workbook_booleans_are_most_confident() -> None:
    typed = {"TRUE": "boolean", "FALSE": "boolean"}
    _, decision = propose(["TRUE", "FALSE", "TRUE"], typed=typed)
    _, untyped = propose(["TRUE", "FALSE", "TRUE"])
    assert decision is not None and untyped is not None
    assert decision.confidence > untyped.confidence
    assert any("typed workbook" in line for line in decision.evidence)


def test_other_values_in_a_boolean_column_are_unresolved() -> None:
    values = ["yes"] * 10 + ["no"] * 10 + ["maybe", "2"]
    column, decision = propose(values)
    assert decision is not None and decision.fit == pytest.approx(20 / 22)
    result = ENGINE.convert(column.values.tolist(), decision.convention)
    by_value = dict(zip(column.values.tolist(), result.outcome.tolist(), strict=True))
    assert by_value["maybe"] == by_value["2"] == Outcome.UNRESOLVED
    assert by_value["yes"] == Outcome.CONVERTED
    assert all(i in result.reasons for i, o in enumerate(result.outcome) if o == Outcome.UNRESOLVED)


def test_unread_values_lower_the_confidence() -> None:
    _, clean = propose(["yes", "no"] * 10)
    _, noisy = propose(["yes", "no"] * 9 + ["perhaps", "later"])
    assert clean is not None and noisy is not None
    assert noisy.confidence < clean.confidence


def test_convention_is_all_convert_needs() -> None:
    """A saved convention re-applies to new values, with no other state."""
    convention = {"true": ["ja", "j"], "false": ["nein", "n"]}
    result = ENGINE.convert(["JA", "Nein.", " j ", "yes"], convention)
    assert result.text[:3] == ["true", "false", "true"]
    assert result.outcome[3] == Outcome.UNRESOLVED


def test_conflicting_convention_is_refused() -> None:
    with pytest.raises(ValueError, match="both true and false"):
        ENGINE.convert(["ja"], {"true": ["ja"], "false": ["JA"]})


def test_word_list_has_no_word_of_both_polarities() -> None:
    vocab = vocabulary()  # raises on a conflict when it loads
    assert vocab.words["oui"][0] is True and vocab.words["nein"][0] is False
    assert {"de", "fr", "es", "pt", "nl", "pl", "it", "fi", "cs", "sv"} <= set(vocab.by_language)


def test_fold_word() -> None:
    assert fold_word("  Sí. ") == "si"
    assert fold_word("NÃO") == "nao"
    assert fold_word("Kyllä") == "kylla"


WORDS = sorted((word, truth) for word, (truth, _) in vocabulary().words.items())


@settings(max_examples=200, deadline=None)
@given(entry=st.sampled_from(WORDS), case=st.sampled_from([str.upper, str.lower, str.title]),
       pad=st.sampled_from(["", " ", "  ", "\u00a0", "\t"]), dot=st.booleans())
def test_listed_words_read_whatever_their_case_and_padding(entry, case, pad, dot) -> None:
    word, truth = entry
    opposite = next(w for w, t in WORDS if t is not truth and len(w) > 1)
    cell = pad + case(word) + ("." if dot else "") + pad
    out = convert_all([cell, opposite, cell])
    assert out[cell] == ("true" if truth else "false")
