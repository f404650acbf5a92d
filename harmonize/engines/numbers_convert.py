"""Converting distinct values under a numbers convention (see ``numbers`` for the keys).

The values of the fast shape ("-1.234,50") are written by ``numbers_fast`` with byte
operations over all of them. The rest take the full reading, where everything that can
be is done on whole arrays too: the mark each value is read with, its plain output text
(regex rewrites in pyarrow), the currency each sign names and the checks against the
convention. Python touches a value one at a time only to write the reason for an
unresolved one, or to scale a value by a magnitude word or exponent.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from decimal import Context as DecimalContext
from decimal import Decimal
from fractions import Fraction
from functools import cache
from typing import Any

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
from babel import numbers as babel_numbers

from harmonize.engines.base import Converted, Outcome
from harmonize.engines.numbers_currency import ranked_candidates, resolve_alone
from harmonize.engines.numbers_fast import fast_convert
from harmonize.engines.numbers_forms import (
    AMBIGUOUS,
    COMMA_ONLY,
    DOT_ONLY,
    NOT_NUMBER,
    SAME,
    Forms,
    analyse,
    distinct_inverse,
    format_decimal_plain,
    per_key,
    to_decimal,
)
from harmonize.engines.numbers_ledger import (
    THOUSAND,
    TRILLION,
    letter_reason,
    sides_of,
    thousands_reason,
    thousands_shift,
    unread_letters,
    unread_thousands,
)
from harmonize.engines.numbers_magnitudes import (
    language_shift,
    language_words,
    open_reason,
    powers_of,
)
from harmonize.engines.numbers_percent import (
    FRACTION,
    FRACTION_SHIFT,
    LISTED,
    POINTS,
    bare_mode,
    bare_percent_reason,
    bare_values,
    fraction_reading,
)

MAX_LISTED_CANDIDATES = 6
# Two numbers joined by a dash or a word for "to" ("5-10 kg", "10–15 €", "6 to 8"): a range,
# which no single value stands for (words in en, de, fr, it, es: common usage, no source).
_RANGE = re.compile(r"\d\s*(?:[-\u2013\u2014]|\b(?:to|bis|à|a)\b)\s*[-+]?\D{0,3}\d",
                    re.IGNORECASE)


def range_reason(raw: str) -> str | None:
    """Why a value that is a range is listed, or None when it is not one."""
    if not _RANGE.search(raw):
        return None
    return (f"{raw!r} is a range, not one value: listed (split it into two columns, or keep "
            "one end, by hand)")
UNKNOWN = "?"   # a currency sign the convention does not resolve
# The decimal mark left open; written as a word (not null) so that a group's convention
# keeps it when a plan file that drops null values is read back.
UNDECIDED = "undecided"


def decimal_mark_of(convention: Mapping[str, Any]) -> str | None:
    """The convention's decimal mark, None when it is undecided."""
    mark = convention.get("decimal_mark")
    return mark if mark in (".", ",") else None


def mark_name(mark: str | None) -> str:
    return {".": "'.'", ",": "','"}.get(mark or "", "undecided")


def settled_marks(convention: Mapping[str, Any]) -> Sequence[str]:
    settled = convention.get("settled_marks")
    return (".", ",") if settled is None else settled


def ungrouped_digits_of(convention: Mapping[str, Any]) -> int:
    return int(convention.get("ungrouped_digits") or 0)


# ``side_marks`` values: how credit/debit marks ("1,234.50 CR") are read (see ``numbers``).
SIDE_COLUMN = "column"
NEGATIVE_SIDE = {"credit-negative": "credit", "debit-negative": "debit"}
SIDE_MODES = (SIDE_COLUMN, *NEGATIVE_SIDE)


PER_DIGITS = 15   # significant digits of a price rescaled to another unit (as units)


@cache
def per_ratio(source: str, target: str) -> Fraction | None:
    """Price per ``source`` unit -> price per ``target`` unit: times the number of source
    units in one target unit (NIST SP 811 factors via the units engine); None when the
    two are not units of one dimension (or are temperatures, which have no ratio)."""
    from harmonize.engines.units_registry import UNITS, linear_map
    if source == target:
        return Fraction(1)
    known = source in UNITS and target in UNITS
    if not known or UNITS[source].dimension != UNITS[target].dimension \
            or UNITS[source].dimension == "temperature":
        return None
    return linear_map(target, source)[0]


def _per_keys(forms: Forms) -> np.ndarray:
    keys = np.full(len(forms), "", dtype=object)
    held = np.flatnonzero(forms.per != "")
    keys[held] = [per_key(t) for t in forms.per[held].tolist()]
    return keys


def _rescale(texts: np.ndarray, forms: Forms, keys: np.ndarray, target: str | None,
             keep: bool) -> np.ndarray:
    """Per value: "" where it reads in the convention's unit of price, else "per" (listed);
    values priced per another unit of the same dimension are rewritten per ``target``."""
    problem = np.full(len(forms), "", dtype=object)
    for i in np.flatnonzero(keys != "").tolist():
        ratio = per_ratio(keys[i], target) if target else None
        if ratio is None:
            problem[i] = "per"
        elif ratio != 1:
            value = Fraction(Decimal(texts[i])) * ratio
            rounded = DecimalContext(prec=PER_DIGITS).divide(Decimal(value.numerator),
                                                             Decimal(value.denominator))
            texts[i] = format_decimal_plain(rounded, keep)
    return problem


def signed(forms: Forms, convention: Mapping[str, Any]) -> np.ndarray:
    """Per value: whether it is negative, its credit/debit mark read as the convention
    says (a mark read into the companion column leaves the amount as written)."""
    negative_side = NEGATIVE_SIDE.get(convention.get("side_marks") or "")
    if negative_side is None:
        return forms.negative
    return forms.negative | (sides_of(forms, convention) == negative_side)


def choose_marks(forms: Forms, mark: str | None,
                 settled: Sequence[str] = (".", ",")) -> np.ndarray:
    """Per value: the mark to read it with ('' where the convention does not read it)."""
    status = forms.status
    chosen = np.full(len(forms), "", dtype=object)
    if mark is None:
        chosen[(status == SAME) | (status == DOT_ONLY)] = "."
        chosen[status == COMMA_ONLY] = ","
        return chosen
    wrong = DOT_ONLY if mark == "," else COMMA_ONLY
    chosen[(status != NOT_NUMBER) & (status != wrong) & (status != AMBIGUOUS)] = mark
    ambiguous = np.flatnonzero(status == AMBIGUOUS)
    if len(ambiguous):
        swapped = forms.swapped_marks(ambiguous)
        chosen[ambiguous[np.isin(swapped, list(settled))]] = mark
    return chosen


def read_ungrouped(forms: Forms, chosen: np.ndarray, mark: str | None, ungrouped: int) -> None:
    """An ambiguous value still unread whose group reading has ``ungrouped`` digits or
    fewer is read with its own mark as the decimal mark, unless the column's decided
    mark is the other one (see ``numbers_marks.ungrouped_digits``). A value naming a
    currency is left to it ("¥41,787": yen have no minor unit, yuan have)."""
    open_ = np.flatnonzero((forms.status == AMBIGUOUS) & (chosen == "") & ~forms.has_currency)
    if not ungrouped or not len(open_):
        return
    swapped = forms.swapped_marks(open_)
    read = (forms.body_length[open_] - 1 <= ungrouped) & (mark is None or swapped == mark)
    chosen[open_[read]] = swapped[read]


def plain_texts(digits: np.ndarray, shift: np.ndarray, negative: np.ndarray,
                keep_trailing_zeros: bool) -> np.ndarray:
    """Output text for Decimal-ready digit strings, as ``format_decimal_plain`` writes it.

    Unscaled values are rewritten as strings in one pass each (leading zeros, trailing
    fractional zeros, sign); scaled ones go through ``Decimal``.
    """
    text = pa.array(digits.tolist(), type=pa.string())
    # "0" before a leading "." first: ".0" loses its fraction below and must leave "0"
    text = _rewrite_where(text, r"^\.", r"^\.", "0.")
    if not keep_trailing_zeros:
        text = _rewrite_where(text, r"\.\d*0$", r"(\.\d*?)0+$", r"\1")
        text = _rewrite_where(text, r"\.$", r"\.$", "")
    text = _rewrite_where(text, r"^0\d", r"^0+(\d)", r"\1")
    is_zero = np.asarray(pc.match_substring_regex(text, r"^0(\.0*)?$"), dtype=bool)
    out = np.asarray(text.to_numpy(zero_copy_only=False), dtype=object)
    signed = negative & ~is_zero
    out[signed] = "-" + out[signed]
    for i in np.flatnonzero(shift != 0).tolist():
        value = to_decimal(digits[i], int(shift[i]), bool(negative[i]))
        out[i] = format_decimal_plain(value, keep_trailing_zeros)
    return out


def _rewrite_where(text: pa.Array, found: str, pattern: str, replacement: str) -> pa.Array:
    """``pattern`` replaced, skipping the pass when no value matches ``found`` (exactly the
    values the pattern changes): a match is much cheaper than a rewrite."""
    if not pc.any(pc.match_substring_regex(text, found)).as_py():
        return text
    return pc.replace_substring_regex(text, pattern, replacement)


def _whole_currencies(forms: Forms, codes: np.ndarray, chosen: np.ndarray) -> None:
    """An amount in a currency without minor units (ISO 4217 exponent 0: JPY, KRW, ...)
    has no decimal part, so its one ambiguous mark ("¥35,984") can only group digits."""
    open_ = np.flatnonzero((forms.status == AMBIGUOUS) & (chosen == "") & (codes != "")
                           & (codes != UNKNOWN))
    for i in open_.tolist():
        if _minor_digits(str(codes[i])) == 0:
            chosen[i] = "," if forms.swapped_mark(i) == "." else "."


@cache
def _minor_digits(code: str) -> int | None:
    try:
        return babel_numbers.get_currency_precision(code)
    except Exception:  # babel raises several types for codes it does not know
        return None


def value_currencies(forms: Forms, convention: Mapping[str, Any]) -> np.ndarray:
    """Per value: the ISO code its sign names ("" none, UNKNOWN if not resolved)."""
    symbols = convention.get("symbols") or {}
    codes = np.full(len(forms), "", dtype=object)
    named = forms.has_currency
    if named.any():
        tokens, inverse = distinct_inverse(forms.currency[named])
        found = [resolve_alone(t) or symbols.get(t) or UNKNOWN for t in tokens]
        codes[named] = np.asarray(found, dtype=object)[inverse]
    return codes


def convert_amounts(values: Sequence[str], convention: Mapping[str, Any]) -> Converted:
    """Convert distinct values under a convention.

    The values of the fast shape ("-1.234,50") are written in one pass over all of them
    (``numbers_fast``); the rest are read in full (``convert_amounts_full``, which gives
    the same result for every value).
    """
    values = values if isinstance(values, list) else list(values)
    keep = convention.get("trailing_zeros", "drop") == "keep"
    if bare_mode(convention) == POINTS:
        texts, read = fast_convert(values, decimal_mark_of(convention),
                                   settled_marks(convention), keep)
    else:   # every value of the fast shape is a bare number the convention rereads
        texts, read = np.full(len(values), "", dtype=object), np.zeros(len(values), bool)
    if read.all():
        result = Converted(text=texts, outcome=np.full(len(values), Outcome.CONVERTED,
                                                        dtype=np.int8))
    else:
        rest = np.flatnonzero(~read)
        slow = convert_amounts_full([values[i] for i in rest.tolist()], convention)
        texts[rest] = slow.text
        outcome = np.full(len(values), Outcome.CONVERTED, dtype=np.int8)
        outcome[rest] = slow.outcome
        at = rest.tolist()
        result = Converted(text=texts.tolist(), outcome=outcome,
                           reasons={at[i]: r for i, r in slow.reasons.items()},
                           candidates={at[i]: c for i, c in slow.candidates.items()},
                           best={at[i]: b for i, b in slow.best.items()})
        # a fast value names no currency (the column's, if any) and carries no side mark
        fills = {"currency": convention.get("currency") or "", "side": ""}
        for suffix, slow_extra in slow.extra.items():
            column = np.full(len(values), fills[suffix], dtype=object)
            column[rest] = slow_extra
            result.extra[suffix] = column.tolist()
    if convention.get("currency_mode") == "mixed" and "currency" not in result.extra:
        result.extra["currency"] = [convention.get("currency") or ""] * len(values)
    if convention.get("side_marks") == SIDE_COLUMN and "side" not in result.extra:
        result.extra["side"] = [""] * len(values)
    return result


def convert_amounts_full(values: Sequence[str], convention: Mapping[str, Any]) -> Converted:
    """Convert distinct values under a convention, each read in full."""
    forms = analyse(list(values))
    n = len(forms)
    result = Converted.empty(n)
    keep = convention.get("trailing_zeros", "drop") == "keep"
    mark = decimal_mark_of(convention)
    chosen = choose_marks(forms, mark, settled_marks(convention))
    codes = value_currencies(forms, convention)
    _whole_currencies(forms, codes, chosen)   # a currency without decimals comes first
    read_ungrouped(forms, chosen, mark, ungrouped_digits_of(convention))
    digits = np.where(chosen == ",", forms.comma_digits, forms.dot_digits)
    digits[chosen == ""] = "0"  # unreadable values ("1.2.3e1") have no digits to scale
    shift, open_words = language_shift(forms, convention)
    thousands = thousands_shift(forms, convention)
    shift = shift + thousands
    bare = bare_values(forms) & (bare_mode(convention) != POINTS)
    if bare_mode(convention) == FRACTION:
        shift = shift + np.where(bare, FRACTION_SHIFT, 0)
    negative = signed(forms, convention)   # once: the loop below reads it per value
    texts = plain_texts(digits, shift, negative, keep)
    problem = _problems(forms, codes, convention)
    problem[open_words & (problem == "")] = "magnitude"
    if bare_mode(convention) == LISTED:   # a zero reads alike either way
        problem[bare & (texts != "0") & (problem == "")] = "bare-percent"
    if (forms.per != "").any():
        per_problem = _rescale(texts, forms, _per_keys(forms), convention.get("per_unit"),
                               keep)
        problem = np.where(problem == "", per_problem, problem)
    converted = (chosen != "") & (problem == "")
    result.text = np.where(converted, texts, "").tolist()
    result.outcome[converted] = Outcome.CONVERTED
    for i in np.flatnonzero(~converted).tolist():
        minus = bool(negative[i])
        if problem[i] == "magnitude" and chosen[i]:
            _unresolved_magnitude(result, forms, i, digits[i], minus, keep)
        elif problem[i] == "thousands" and chosen[i]:
            readings = [format_decimal_plain(to_decimal(digits[i], int(shift[i]) + power,
                                                        minus), keep)
                        for power in (THOUSAND, TRILLION)]
            result.unresolved(i, thousands_reason(forms.text[i]), candidates=readings)
        elif problem[i] == "bare-percent" and chosen[i]:
            fraction = fraction_reading(digits[i], int(shift[i]), minus, keep)
            result.unresolved(i, bare_percent_reason(forms.text[i], texts[i], fraction),
                              candidates=[texts[i], fraction])
        elif chosen[i]:
            result.unresolved(i, _describe(problem[i], forms, i, codes[i], convention),
                              best=texts[i])
        else:
            _unresolved_mark(result, forms, i, convention, keep,
                             (minus, int(forms.shift[i] + thousands[i])))
    if convention.get("currency_mode") == "mixed":
        default = convention.get("currency") or ""
        filled = np.where(codes == "", default, codes)
        result.extra["currency"] = np.where(converted, filled, "").tolist()
    if convention.get("side_marks") == SIDE_COLUMN:
        result.extra["side"] = np.where(converted, sides_of(forms, convention), "").tolist()
    return result


def _problems(forms: Forms, codes: np.ndarray, convention: Mapping[str, Any]) -> np.ndarray:
    """Per value: why a readable amount still breaks the convention ("" when it does not)."""
    problem = np.full(len(forms), "", dtype=object)
    mode = convention.get("currency_mode", "none")
    column_code = convention.get("currency")
    named = codes != ""
    if mode == "single" and column_code:
        problem[named & (codes != column_code)] = "other-currency"
    elif mode == "none":
        problem[named] = "currency"
    if not (mode == "single" and not column_code):
        # one unresolved sign for the whole column ("$" alone) leaves the amounts right:
        # the report says the currency is unknown; elsewhere the cell's currency matters
        problem[codes == UNKNOWN] = "unknown-currency"
    if not convention.get("percent"):
        problem[forms.percent] = "percent"
    letters = unread_letters(forms, convention)
    if convention.get("side_marks") not in SIDE_MODES:
        problem[(forms.side != "") & ~letters] = "side"
    problem[letters] = "letter"
    problem[unread_thousands(forms, convention)] = "thousands"
    return problem


def _describe(problem: str, forms: Forms, i: int, code: str,
              convention: Mapping[str, Any]) -> str:
    raw, token = forms.text[i], forms.currency[i]
    if problem == "percent":
        return f"{raw!r} is a percentage in a column of plain numbers"
    if problem == "unknown-currency":
        options = ", ".join(ranked_candidates(token)[:MAX_LISTED_CANDIDATES])
        return (f"{token!r} may stand for several currencies ({options}); a country column, "
                "a currency code elsewhere in the column or in its header would decide")
    if problem == "currency":
        return f"{raw!r} names a currency ({code}) in a column of plain numbers"
    if problem == "per":
        return (f"{raw!r} is a price per {forms.per[i]!r}, which is not a unit of what the "
                f"column's prices are per ({convention.get('per_unit') or 'nothing'})")
    if problem == "letter":
        return letter_reason(raw, forms.side[i])
    if problem == "side":
        crore = " or crore (10^7)" if forms.side[i] == "credit" else ""
        return (f"{raw!r} carries a {forms.side[i]} mark{crore} in a column whose plan reads "
                "no credit/debit marks (side_marks)")
    return f"{raw!r} is in {code} but the column is in {convention.get('currency')}"


def _unresolved_magnitude(result: Converted, forms: Forms, i: int, digits: str,
                          negative: bool, keep: bool) -> None:
    """A value whose magnitude word means different powers in different languages."""
    key = language_words(forms)[i]
    readings = [format_decimal_plain(to_decimal(digits, int(forms.shift[i]) + power, negative),
                                     keep) for power in powers_of(key)]
    result.unresolved(i, open_reason(forms.text[i], key), candidates=readings)


def _reading(forms: Forms, i: int, mark: str, keep: bool, signed_shift: tuple[bool, int]
             ) -> str:
    negative, shift = signed_shift
    return format_decimal_plain(to_decimal(forms.digits_for(i, mark), shift, negative), keep)


def _unresolved_mark(result: Converted, forms: Forms, i: int, convention: Mapping[str, Any],
                     keep: bool, signed_shift: tuple[bool, int]) -> None:
    """A value the convention's mark does not read; ``signed_shift``: (negative, power of
    ten) of the value as the convention signs and scales it."""
    status, raw = forms.status[i], forms.text[i]
    if status == NOT_NUMBER:
        result.unresolved(i, range_reason(raw) or
                          f"{raw!r} is not an amount in a form this column's values take")
        return
    if status == AMBIGUOUS:
        readings = {m: _reading(forms, i, m, keep, signed_shift) for m in (".", ",")}
        result.unresolved(
            i, f"{raw!r} reads {readings['.']} with '.' as the decimal mark or "
               f"{readings[',']} with ',' as the decimal mark; no value of its column or "
               f"group shows the role of {forms.swapped_mark(i)!r} (a value such as "
               "'1.234,5', '0,5', '1,234.5' or '1,234,567' would decide)",
            candidates=[readings["."], readings[","]],
            best=readings.get(convention.get("likely_decimal_mark") or ""))
        return
    own = "." if status == DOT_ONLY else ","
    reading = _reading(forms, i, own, keep, signed_shift)
    result.unresolved(i, f"{raw!r} is written with {mark_name(own)} as the decimal mark but "
                         f"its column or group uses {mark_name(decimal_mark_of(convention))}",
                      candidates=[reading], best=reading)


def parse_amounts(values: Sequence[str], convention: Mapping[str, Any]) -> list[Decimal | None]:
    """Each number string's exact value under a convention, None where it does not read.

    Signs, magnitude words, currency signs and percent signs are read; the value is the
    number itself (a currency or percent sign does not change it).
    """
    return amounts_of(analyse(list(values)), convention)


def amounts_of(forms: Forms, convention: Mapping[str, Any]) -> list[Decimal | None]:
    """``parse_amounts`` of values already analysed."""
    mark = decimal_mark_of(convention)
    chosen = choose_marks(forms, mark, settled_marks(convention))
    read_ungrouped(forms, chosen, mark, ungrouped_digits_of(convention))
    # a credit/debit mark gives a value only where the convention signs it
    unsigned = (forms.side != "") & (convention.get("side_marks") not in NEGATIVE_SIDE)
    chosen[unsigned | unread_letters(forms, convention)] = ""
    chosen[unread_thousands(forms, convention)] = ""
    shift, open_words = language_shift(forms, convention)
    shift = shift + thousands_shift(forms, convention)
    chosen[open_words] = ""
    negative = signed(forms, convention)
    return [to_decimal(forms.digits_for(i, chosen[i]), int(shift[i]),
                       bool(negative[i])) if chosen[i] else None
            for i in range(len(forms))]


def parse_amount(text: str, convention: Mapping[str, Any]) -> Decimal | None:
    """One number string under a convention (see ``parse_amounts``)."""
    return parse_amounts([text], convention)[0]
