"""Reading the written form of amounts, vectorised over distinct values.

Most amounts are a number body alone, after at most a "-" ("-1.234,50", "12"): two
regular expressions over all values (``FAST_SHAPE``, RE2 in pyarrow) and byte counts
classify those. Every other value is split once by one regular expression into sign,
currency, number body, exponent, magnitude word, percent sign and trailing minus, and
its body is tested against the two families of conventions:

* ``"."`` family: ``.`` is the decimal mark; ``,`` (3-digit or lakh 2-2-3 grouping),
  a space of any kind or an apostrophe (``'`` or ``’``) groups digits.
* ``","`` family: ``,`` is the decimal mark; ``.``, a space or an apostrophe groups.

A body that only one family reads *decides* the mark ("1.234,5", "0,5", "1,234,567");
one that both read with different values is *ambiguous* ("1.234", "2,500"); one that
both read alike says nothing ("1234", "1 234").
"""

from __future__ import annotations

import re
import unicodedata
from dataclasses import dataclass
from decimal import Context, Decimal
from functools import cache, cached_property
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from harmonize.engines.numbers_bytes import COMMA, DOT, MINUS, ZERO, ByteView
from harmonize.engines.numbers_currency import INVISIBLE, iso_codes, literal, sign_pattern
from harmonize.locales import load_entries

MAGNITUDE_FILE = "magnitudes"
LANGUAGE_MAGNITUDE_FILE = "magnitude_languages"   # words whose power depends on the language
CURRENCY_ONLY_SUFFIX = "+currency"
LONG_DIGITS = 16  # digit strings this long are codes (cards, accounts), never amounts

# Exact arithmetic for scaling: Decimal's default 28 digits would round long amounts.
EXACT = Context(prec=200, Emax=10**6, Emin=-(10**6))

# Invisible format characters (``numbers_currency.INVISIBLE``) are dropped before reading.
# The soft hyphen (U+00AD, also Cf) is dropped only between two digits ("3\u00ad456"): some
# legacy code pages wrote a minus sign with its byte, so a leading one is left unread.
SOFT_HYPHEN = "\u00ad"
_SOFT_HYPHEN_INSIDE = re.compile(r"(?<=[0-9])\u00ad(?=[0-9])")   # ASCII digits, as RE2's \d

# Full-width forms (U+FF01-U+FF5E: "１，２３４．５", "１２％") are the ASCII characters set
# wide, as East Asian input methods write them: UnicodeData.txt decomposes each <wide> to
# the ASCII character 0xFEE0 below it.
FULL_WIDTH = {chr(code): chr(code - 0xFEE0) for code in range(0xFF01, 0xFF5F)}
# The number signs of the Arabic script (Unicode names; CLDR "arab" and "arabext" number
# symbols): U+066C ARABIC THOUSANDS SEPARATOR only ever groups digits, so it becomes a
# space, which both notations read as a group mark; U+066A ARABIC PERCENT SIGN, U+0609
# ARABIC-INDIC PER MILLE SIGN and U+060A ARABIC-INDIC PER TEN THOUSAND SIGN are the
# percent signs. U+066B ARABIC DECIMAL SEPARATOR is kept: both notations read it as the
# decimal mark (``ARABIC_DECIMAL``).
ARABIC_SIGNS = {"\u066c": " ", "\u066a": "%", "\u0609": "\u2030", "\u060a": "\u2031"}
ARABIC_DECIMAL = "\u066b"

# Space look-alikes, apostrophe look-alikes and minus look-alikes folded to one form;
# invisible characters dropped. Digits of every other script (Arabic-Indic, Persian,
# Devanagari, Bengali, Thai, ...: Unicode category Nd) become ASCII digits of the same
# value (``unicodedata.decimal``; ``fold_of``).
FOLD_MAP = {
    **FULL_WIDTH, **ARABIC_SIGNS,
    **dict.fromkeys(INVISIBLE, ""),
    "\u00a0": " ", "\u202f": " ", "\u2009": " ", "\u2007": " ", "\u2002": " ",
    "\u2003": " ", "\u2005": " ", "\u2006": " ", "\u3000": " ", "\t": " ",
    "’": "'", "ʼ": "'", "′": "'", "‘": "'",
    "\u2212": "-", "\u2010": "-", "\u2011": "-", "\u2012": "-", "\u2013": "-", "\u2014": "-",
    "\ufe63": "-",
}


def fold_of(char: str) -> str | None:
    """What one character outside ASCII (or a tab) is read as, None when it is kept."""
    found = FOLD_MAP.get(char)
    if found is not None:
        return found
    value = unicodedata.decimal(char, None)
    return None if value is None else str(value)


class _FoldTable(dict[int, str]):
    """``str.translate`` table of ``fold_of``, filled as characters are met."""

    def __missing__(self, code: int) -> str:
        char = chr(code)
        found = fold_of(char) if code >= 0x80 or char == "\t" else None
        self[code] = char if found is None else found
        return self[code]


FOLD = _FoldTable()

# Status of a body under the two families (see module docstring).
NOT_NUMBER, SAME, DOT_ONLY, COMMA_ONLY, AMBIGUOUS = range(5)
FAMILIES = (".", ",")


def _grouped(mark: str) -> str:
    return rf"[1-9]\d{{0,2}}(?:{mark}\d{{3}})+"


_CODE_SHAPE = re.compile(r"[A-Z]{3}")
_LAKH = r"[1-9]\d?(?:,\d\d)+,\d{3}"
_INT_DOT = "|".join([r"\d+", _grouped(","), _grouped(" "), _grouped("'"), _LAKH])
_INT_COMMA = "|".join([r"\d+", _grouped(r"\."), _grouped(" "), _grouped("'")])
# The Arabic decimal separator is a decimal mark in both notations ("١٢٫٥" is 12.5 to any
# writer): a value using it reads alike under either.
DOT_BODY = re.compile(rf"(?:{_INT_DOT})(?:[.{ARABIC_DECIMAL}]\d+)?|[.{ARABIC_DECIMAL}]\d+")
COMMA_BODY = re.compile(rf"(?:{_INT_COMMA})(?:[,{ARABIC_DECIMAL}]\d+)?|[,{ARABIC_DECIMAL}]\d+")

# The fast shape most amounts take: a number body alone, in ASCII, after at most a "-",
# with no leading zero ("0,5" and "12" but not "007"). FAST_SHAPE[m] matches exactly
# the values of that shape which the m family reads (the families above, with ``\d+``
# narrowed to ``0|[1-9]\d*``), so the two matches give a value's status; a value that
# neither matches, or 16 and more bare digits, is read in full.
WHOLE = {".": "|".join([r"0|[1-9]\d*", _grouped(","), _grouped(" "), _grouped("'"), _LAKH]),
         ",": "|".join([r"0|[1-9]\d*", _grouped(r"\."), _grouped(" "), _grouped("'")])}
FAST_SHAPE = {".": rf"^-?(?:(?:{WHOLE['.']})(?:\.\d+)?|\.\d+)$",
              ",": rf"^-?(?:(?:{WHOLE[',']})(?:,\d+)?|,\d+)$"}


@dataclass(frozen=True)
class Magnitudes:
    exponents: dict[str, int]     # word as matched (folded for words) -> power of ten
    currency_only: frozenset[str]
    pattern: str
    by_language: dict[str, dict[str, int]]   # word key -> language -> power (no default)


@cache
def magnitudes() -> Magnitudes:
    exponents: dict[str, int] = {}
    currency_only: set[str] = set()
    for key, words in load_entries(MAGNITUDE_FILE).items():
        power = int(key.removesuffix(CURRENCY_ONLY_SUFFIX).lstrip("e"))
        for word in words:
            exponents[_magnitude_key(word)] = power
            if key.endswith(CURRENCY_ONLY_SUFFIX):
                currency_only.add(_magnitude_key(word))
    by_language: dict[str, dict[str, int]] = {}
    written = {w for ws in load_entries(MAGNITUDE_FILE).values() for w in ws}
    for key, entries in load_entries(LANGUAGE_MAGNITUDE_FILE).items():
        word = key.removesuffix(CURRENCY_ONLY_SUFFIX)
        written.add(word)
        by_language[_magnitude_key(word)] = {
            lang.strip(): int(power) for lang, _, power in (e.partition("=") for e in entries)}
        if key.endswith(CURRENCY_ONLY_SUFFIX):
            currency_only.add(_magnitude_key(word))
    words = sorted(written, key=len, reverse=True)
    parts = [literal(w) if len(w) == 1 else f"(?i:{literal(w)})" for w in words]
    return Magnitudes(exponents, frozenset(currency_only), "|".join(parts), by_language)


def _magnitude_key(word: str) -> str:
    return word if len(word) == 1 else word.casefold()


def is_magnitude_word(word: str) -> bool:
    """Whether ``word`` is a magnitude word or suffix ("k", "Mio.", "bn")."""
    key = _magnitude_key(word)
    return key in magnitudes().exponents or key in magnitudes().by_language


def magnitude_key(word: str) -> str:
    """The key a magnitude word is looked up by (folded, except single letters)."""
    return _magnitude_key(word)


# Percent, per mille and per ten thousand signs: the power of ten each takes off the
# number read as a percentage (1 \u2030 = 0.1 %; Unicode names U+2030 PER MILLE SIGN and U+2031
# PER TEN THOUSAND SIGN).
PERCENT_SHIFT = {"%": 0, "\u2030": -1, "\u2031": -2}

# Credit and debit marks after an amount, as ledgers and statements print them
# ("1,234.50 CR", "980.00 DR"; "DB" in reports edited by COBOL pictures). Common practice,
# no source. Which side is negative depends on whose books they are: see ``numbers``.
# German ledgers print Soll (debit) and Haben (credit), as words or as the letters "S" and
# "H" ("1.234,50 S"). The letters are read only where a German writer is shown
# (``numbers_ledger``): elsewhere they are marked "soll"/"haben" and listed.
SOLL, HABEN = "soll", "haben"
SIDE_WORDS = {"CR": "credit", "Cr": "credit", "cr": "credit",
              "DR": "debit", "Dr": "debit", "dr": "debit", "DB": "debit", "Db": "debit",
              "Soll": "debit", "SOLL": "debit", "Haben": "credit", "HABEN": "credit",
              "S": SOLL, "H": HABEN}
SIDE_PATTERN = "|".join(sorted(SIDE_WORDS, key=len, reverse=True))

# A price per unit after the amount ("2,50 €/kg", "$3.10 per lb", "4 € je Stk."): the
# unit a word of letters (with "²" or "³"), read by the units engine's word lists where it
# is one. Words for "per" in en, it, de, fr, es, nl: common usage, no source.
PER_WORDS = r"(?i:per|pro|je|par|por|al)\b"
PER_TOKEN = r"[^\W\d_][^\W\d_]{0,11}[23\u00b2\u00b3]?\.?"

# The number itself, with whatever comes before and after it; pyarrow (RE2) runs this over
# all values, and the few distinct prefixes and suffixes are then read in Python.
SPLIT_PATTERN = (rf"^(?P<pre>\D*?)(?P<num>\d[\d.,' {ARABIC_DECIMAL}]*\d|\d|[.,{ARABIC_DECIMAL}]\d+)"
                 r"(?P<post>\D*|[eE].*)$")
# The values SPLIT_PATTERN splits into ("", the value, ""): a number body alone.
PLAIN_PATTERN = rf"^(?:\d[\d.,' {ARABIC_DECIMAL}]*\d|\d|[.,{ARABIC_DECIMAL}]\d+)$"


@cache
def prefix_regex() -> re.Pattern[str]:
    cur = sign_pattern()
    # accounting brackets inside or outside a currency sign: "($1.50)", "$(1.50)"; a
    # percent sign before the number, as CLDR tr, ku and eu write it ("%12,5", "-%12")
    return re.compile(rf"(?P<open>\()? *(?P<sign1>[-+])? *(?P<pct1>[%\u2030\u2031])? *"
                      rf"(?P<cur1>{cur})? *(?P<open2>\()? *(?P<sign2>[-+])? *")


@cache
def suffix_regex() -> re.Pattern[str]:
    cur = sign_pattern()
    mag = magnitudes().pattern
    return re.compile(
        rf"(?P<dash>[.,]--?)?(?P<exp>[eE][-+]?\d{{1,3}})?(?: *(?P<mag>{mag}))?"
        rf"(?: *(?P<pct>[%\u2030\u2031]))?(?P<close2> *\))?"
        # "T" glued before an ISO code or the euro sign: thousands ("1.234 TEUR", "5 T€")
        rf"(?: *(?P<kilo>T(?=[A-Z]{{3}}|\u20ac))?(?P<cur2>{cur}))?"
        rf"(?: *(?:/|{PER_WORDS}) *(?P<per>{PER_TOKEN}))?"
        rf"(?: *(?P<side>{SIDE_PATTERN})\.?)?(?P<trail> *-)? *(?P<close>\))?")


def distinct_inverse(values: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Distinct strings and each value's index into them (hashing: no sort of objects)."""
    inverse, distinct = pd.factorize(np.asarray(values, dtype=object))
    return np.asarray(distinct, dtype=object), inverse


class _Affixes:
    """The parts of each distinct prefix (or suffix), matched once and spread over values."""

    def __init__(self, affixes: pa.Array, pattern: re.Pattern[str],
                 names: tuple[str, ...]) -> None:
        encoded = affixes.fill_null("").dictionary_encode()   # a few distinct affixes
        distinct = encoded.dictionary.to_pylist()
        self.inverse = np.asarray(encoded.indices, dtype=np.int64)
        ok = np.zeros(len(distinct), dtype=bool)
        self.distinct = {name: np.full(len(distinct), "", dtype=object) for name in names}
        for k, affix in enumerate(distinct):
            found = pattern.fullmatch(affix)
            if found:
                ok[k] = True
                for name in names:
                    self.distinct[name][k] = found.group(name) or ""
        self.ok = ok[self.inverse]
        self.has = {name: (part != "")[self.inverse] for name, part in self.distinct.items()}

    def part(self, name: str) -> np.ndarray:
        """Each value's part ``name`` as written ("" when absent)."""
        return self.distinct[name][self.inverse]

    def spread(self, name: str, function: Any, dtype: Any) -> np.ndarray:
        """``function`` of each value's part, computed once per distinct affix."""
        return np.array([function(v) for v in self.distinct[name].tolist()],
                        dtype=dtype)[self.inverse]


@dataclass(eq=False)
class Forms:
    """The written form of each distinct value (arrays aligned with the values).

    Values of the fast shape (``FAST_SHAPE``) are classified from their raw text; the
    others carry their parts from the full reading. Text arrays are kept in Arrow and
    turned into Python strings only when a caller asks for them.
    """

    status: np.ndarray      # NOT_NUMBER / SAME / DOT_ONLY / COMMA_ONLY / AMBIGUOUS
    shift: np.ndarray       # power of ten from exponent and magnitude word
    negative: np.ndarray
    percent: np.ndarray
    has_currency: np.ndarray
    bare_digits: np.ndarray  # nothing but digits: "1234", "007"
    has_magnitude: np.ndarray
    length: np.ndarray      # characters in ``text``
    zero_first: np.ndarray  # ``text`` starts with "0"
    raw: pa.Array           # the values as given
    fast: np.ndarray        # read by the fast shape (text is the raw value)
    slow_text: pa.Array     # folded, stripped text of the other values, in order
    slow_body: pa.Array     # their number bodies
    slow_currency: np.ndarray   # their currency signs or codes ("" when none)
    slow_magnitude: np.ndarray  # their magnitude words ("" when none)
    slow_side: np.ndarray       # their credit/debit marks, "credit"/"debit" ("" when none)
    slow_per: np.ndarray        # the unit of a price per unit, as written ("" when none)
    thousands: np.ndarray       # "T" glued before the currency ("TEUR", "T€")

    def __len__(self) -> int:
        return len(self.status)

    def _spread(self, slow_part: np.ndarray) -> np.ndarray:
        full = np.full(len(self), "", dtype=object)
        full[~self.fast] = slow_part
        return full

    @cached_property
    def currency(self) -> np.ndarray:
        """The currency sign or code as written ("" when none)."""
        return self._spread(self.slow_currency)

    @cached_property
    def magnitude(self) -> np.ndarray:
        """The magnitude word as written ("" when none)."""
        return self._spread(self.slow_magnitude)

    @cached_property
    def per(self) -> np.ndarray:
        """The unit of a price per unit as written ("kg" in "2,50 €/kg"; "" when none)."""
        return self._spread(self.slow_per)

    @cached_property
    def side(self) -> np.ndarray:
        """"credit" or "debit" where the value carries such a mark ("" when none)."""
        return self._spread(self.slow_side)

    @property
    def is_number(self) -> np.ndarray:
        return self.status != NOT_NUMBER

    def _merged(self, fast_part: pa.Array, slow_part: pa.Array) -> pa.Array:
        if self.fast.all():
            return fast_part
        return pc.replace_with_mask(fast_part, pa.array(~self.fast), slow_part)

    @cached_property
    def text_array(self) -> pa.Array:
        """Folded, stripped text."""
        return self._merged(self.raw, self.slow_text)

    @cached_property
    def body_array(self) -> pa.Array:
        """The digits and marks of the number itself."""
        return self._merged(pc.utf8_ltrim(self.raw, "-"), self.slow_body)

    @cached_property
    def text(self) -> np.ndarray:
        return _strings(self.text_array)

    @cached_property
    def body(self) -> np.ndarray:
        return _strings(self.body_array)

    @cached_property
    def dot_digits(self) -> np.ndarray:
        """Body read with "." as decimal mark, as Decimal-ready text."""
        return _strings(decimal_digits(self.body_array, "."))

    @cached_property
    def comma_digits(self) -> np.ndarray:
        return _strings(decimal_digits(self.body_array, ","))

    @cached_property
    def arabic_decimal(self) -> np.ndarray:
        """Per value: whether its body holds the Arabic decimal separator (a fraction that
        reads alike under both notations)."""
        found = np.zeros(len(self), dtype=bool)
        if not self.fast.all():   # only values outside ASCII hold it
            found[~self.fast] = np.asarray(pc.match_substring(self.slow_body, ARABIC_DECIMAL)
                                           .fill_null(False), dtype=bool)
        return found

    def text_at(self, i: int) -> str:
        return str(self.text_array[i].as_py())

    def has_char(self, char: str) -> np.ndarray:
        """Per value: whether its body holds ``char`` (one of the marks ". , ' space")."""
        if char not in self._chars:
            # a fast value's body is its raw text without the sign
            chars = "".join(c for c in ".,' " if c not in self._chars)
            for c, found in ByteView.of(self.raw).holds(chars).items():
                self._chars[c] = found & self.fast
            if not self.fast.all():
                for c, found in ByteView.of(self.slow_body).holds(chars).items():
                    self._chars[c][~self.fast] = found
        return self._chars[char]

    @cached_property
    def _chars(self) -> dict[str, np.ndarray]:
        return {}

    def chars_in(self, mask: np.ndarray, chars: str = ".,' ") -> set[str]:
        """Which of ``chars`` the bodies of the values under ``mask`` hold."""
        if not mask.any():
            return set()
        return {c for c in chars if (mask & self.has_char(c)).any()}

    @cached_property
    def body_length(self) -> np.ndarray:
        """Characters in each body."""
        found = self.length - self.negative   # a fast value: its raw text less the sign
        if not self.fast.all():
            found[~self.fast] = np.asarray(pc.utf8_length(self.slow_body), dtype=np.int64)
        return found

    @cached_property
    def body_zero_first(self) -> np.ndarray:
        """Whether each body starts with "0"."""
        return ByteView.of(self.body_array).first_bytes() == ZERO

    def digits_for(self, i: int, mark: str) -> str:
        return self.dot_digits[i] if mark == "." else self.comma_digits[i]

    def swapped_mark(self, i: int) -> str:
        """The one mark of an ambiguous value ("." in "1.234")."""
        return "." if self.has_char(".")[i] else ","

    def swapped_marks(self, indices: np.ndarray) -> np.ndarray:
        return np.where(self.has_char(".")[indices], ".", ",").astype(object)


def analyse(values: list[str] | np.ndarray) -> Forms:
    """Split every distinct value into its parts and classify its body.

    Values of the fast shape are classified from their raw text (``_fast_statuses``);
    the rest are read in full (``analyse_full`` reads every value that way)."""
    raw = pa.array(values, type=pa.string())
    if len(raw) == 0:
        return analyse_full([])
    view = ByteView.of(raw)
    status, digits_only, held = _fast_statuses(raw, view)
    fast = status != NOT_NUMBER
    n = len(raw)
    first = view.first_bytes()
    empty = pa.array([], type=pa.string())
    forms = Forms(
        status=status, shift=np.zeros(n, np.int64), negative=fast & (first == MINUS),
        percent=np.zeros(n, bool), has_currency=np.zeros(n, bool),
        bare_digits=fast & digits_only, has_magnitude=np.zeros(n, bool),
        length=view.lengths, zero_first=first == ZERO, raw=raw, fast=fast,
        slow_text=empty, slow_body=empty, slow_currency=np.zeros(0, object),
        slow_magnitude=np.zeros(0, object), slow_side=np.zeros(0, object),
        slow_per=np.zeros(0, object), thousands=np.zeros(n, bool))
    if fast.all():   # a fast value's body is its raw text less the sign: marks known
        forms._chars.update(held)
    else:
        _fill_slow(forms, _full_parts(raw.filter(pa.array(~fast))))
    return forms


def _fast_statuses(raw: pa.Array, view: ByteView
                   ) -> tuple[np.ndarray, np.ndarray, dict[str, np.ndarray]]:
    """(status, digits only, which of the marks ". , ' space" it holds) per value; the
    status of a value not of the fast shape is NOT_NUMBER (it is read in full).

    One notation's FAST_SHAPE runs over every value, the other's only over the values the
    first does not read: a value both read is one without marks (SAME) or one mark before
    exactly three digits ("1.234", "-12,500": AMBIGUOUS), which its bytes show.
    """
    first, other = _likelier_family(raw)
    read_first = _matches(raw, FAST_SHAPE[first])
    read_other = np.zeros(len(raw), bool)
    unread = ~read_first
    if unread.all():
        read_other = _matches(raw, FAST_SHAPE[other])
    elif unread.any():
        read_other[unread] = _matches(raw.filter(pa.array(unread)), FAST_SHAPE[other])
    digits_only = np.asarray(pc.ascii_is_decimal(raw), dtype=bool)
    lengths = view.lengths
    fast = (read_first | read_other) & ~(digits_only & (lengths >= LONG_DIGITS))
    held = view.holds(".,' ")
    marked = held["."] | held[","]
    # one mark four bytes from the end, one to three digits before it, the first not 0
    signed = view.first_bytes() == MINUS
    body = lengths - signed
    ends, starts = view.offsets[1:], view.offsets[:-1]
    short = read_first & marked & (body >= 5) & (body <= 7)
    mark_at = view.byte_at(ends - 4, short)
    lead = view.byte_at(starts + signed, short)
    ambiguous = short & ((mark_at == DOT) | (mark_at == COMMA)) & (lead != ZERO)
    status = np.full(len(raw), NOT_NUMBER, dtype=np.int8)
    status[read_first & ~marked] = SAME
    status[read_first & marked] = DOT_ONLY if first == "." else COMMA_ONLY
    status[ambiguous] = AMBIGUOUS
    status[read_other] = COMMA_ONLY if first == "." else DOT_ONLY
    status[~fast] = NOT_NUMBER
    return status, digits_only, held


def _likelier_family(raw: pa.Array, sample: int = 2000) -> tuple[str, str]:
    """The notation that reads more of the first values first (either order gives the
    same statuses; this one runs the second pattern over fewer values)."""
    head = raw.slice(0, sample)
    dots, commas = (int(_matches(head, FAST_SHAPE[m]).sum()) for m in FAMILIES)
    return (".", ",") if dots >= commas else (",", ".")


def _fill_slow(forms: Forms, parts: dict[str, Any]) -> None:
    """Put the full reading of the values outside the fast shape in their places."""
    slow = ~forms.fast
    for name in ("status", "shift", "negative", "percent", "has_currency", "bare_digits",
                 "has_magnitude", "length", "zero_first", "thousands"):
        getattr(forms, name)[slow] = parts[name]
    forms.slow_text, forms.slow_body = parts["text"], parts["body"]
    forms.slow_currency, forms.slow_magnitude = parts["currency"], parts["magnitude"]
    forms.slow_side, forms.slow_per = parts["side"], parts["per"]


def analyse_full(values: list[str] | np.ndarray) -> Forms:
    """``analyse`` with every value read in full (the reference for the fast shape)."""
    raw = pa.array(list(values), type=pa.string())
    n = len(raw)
    forms = Forms(
        status=np.zeros(n, np.int8), shift=np.zeros(n, np.int64), negative=np.zeros(n, bool),
        percent=np.zeros(n, bool), has_currency=np.zeros(n, bool),
        bare_digits=np.zeros(n, bool), has_magnitude=np.zeros(n, bool),
        length=np.zeros(n, np.int64), zero_first=np.zeros(n, bool), raw=raw,
        fast=np.zeros(n, bool), slow_text=raw, slow_body=raw,
        slow_currency=np.full(n, "", dtype=object), slow_magnitude=np.full(n, "", dtype=object),
        slow_side=np.full(n, "", dtype=object), slow_per=np.full(n, "", dtype=object),
        thousands=np.zeros(n, bool))
    if n:
        _fill_slow(forms, _full_parts(raw))
    return forms


def _folded(text: pa.Array) -> pa.Array:
    """Space, apostrophe, minus and digit look-alikes folded to one form, invisible
    characters dropped (``fold_of``).

    Every one of them but the tab is outside ASCII, and in UTF-8 the bytes of a character
    outside ASCII are all 0x80 or above: those bytes alone decode to the characters the
    column holds outside ASCII, so only the look-alikes present are rewritten, one literal
    pass each."""
    data = ByteView.of(text).data
    high = data[data >= 0x80]
    present = set(high.tobytes().decode("utf-8", "replace")) if len(high) else set()
    if (data == ord("\t")).any():
        present.add("\t")
    for char in sorted(present):
        target = fold_of(char)
        if target is not None:
            text = pc.replace_substring(text, char, target)
    if SOFT_HYPHEN in present:
        # RE2 has no look-around: matches may not overlap, so two passes ("1\u00ad2\u00ad3")
        for _ in range(2):
            text = pc.replace_substring_regex(text, r"(\d)\x{00ad}(\d)", r"\1\2")
    return text


def fold_chars(text: str) -> str:
    """``_folded`` for one Python string (the units engine reads cells this way)."""
    text = text.translate(FOLD)
    return _SOFT_HYPHEN_INSIDE.sub("", text) if SOFT_HYPHEN in text else text


def _full_parts(raw: pa.Array) -> dict[str, Any]:
    """Every part of each value, read by the full patterns (see the module docstring)."""
    # folded first: a dropped invisible character may leave spaces at either end
    text = pc.utf8_trim_whitespace(_folded(raw))
    matched, pre_text, num, post_text = _split(text)
    before = _Affixes(pre_text, prefix_regex(), _PREFIX)
    after = _Affixes(post_text, suffix_regex(), _SUFFIX)
    has = before.has | after.has
    percent = has["pct"] | has["pct1"]
    # a credit/debit mark is a sign of its own: "-5 CR" says the side twice
    opened = has["open"].astype(int) + has["open2"]
    closed = has["close"].astype(int) + has["close2"]
    n_signs = (has["sign1"].astype(int) + has["sign2"] + has["trail"] + opened
               + has["side"])
    currency = np.where(has["cur1"], before.part("cur1"), after.part("cur2"))
    named = has["cur1"] | has["cur2"]   # currency != ""
    magnitude = after.part("mag")
    known = np.where(has["cur1"], before.spread("cur1", _known_code, bool),
                     after.spread("cur2", _known_code, bool))
    valid = (matched & before.ok & after.ok & (opened == closed) & (n_signs <= 1)
             & ~(has["cur1"] & has["cur2"]) & ~(percent & named) & ~(has["pct1"] & has["pct"])
             & known & ~(after.spread("mag", _currency_only, bool) & ~named)
             & ~(has["per"] & (percent | ~after.spread("per", per_key, bool))))

    # "5,-" and "5.–" are whole amounts written with the decimal mark: read as "5,0"/"5.0"
    body = num
    if has["dash"].any():
        dash_mark = after.spread("dash", lambda d: d[:1] + "0" if d else "", object)
        body = pc.binary_join_element_wise(num, pa.array(dash_mark.tolist(), type=pa.string()),
                                           "")
    dot_ok = _fullmatch(body, DOT_BODY) & valid
    comma_ok = _fullmatch(body, COMMA_BODY) & valid
    bare = _fullmatch(body, re.compile(r"\d+")) & valid & (n_signs == 0) & ~named & ~(
        percent | has["mag"] | has["exp"])
    too_long = bare & (np.asarray(pc.utf8_length(body).fill_null(0)) >= LONG_DIGITS)
    dot_ok &= ~too_long
    comma_ok &= ~too_long

    dot_np = _strings(decimal_digits(body, "."))
    comma_np = _strings(decimal_digits(body, ","))
    status = np.full(len(text), NOT_NUMBER, dtype=np.int8)
    same = dot_np == comma_np
    status[dot_ok & comma_ok & same] = SAME
    status[dot_ok & comma_ok & ~same] = AMBIGUOUS
    status[dot_ok & ~comma_ok] = DOT_ONLY
    status[comma_ok & ~dot_ok] = COMMA_ONLY

    exp = after.spread("exp", lambda e: int(e[1:]) if e else 0, np.int64)
    exp += after.spread("pct", lambda p: PERCENT_SHIFT.get(p, 0), np.int64)
    exp += before.spread("pct1", lambda p: PERCENT_SHIFT.get(p, 0), np.int64)
    minus = before.spread("sign1", _is_minus, bool) | before.spread("sign2", _is_minus, bool)
    return {"status": status, "shift": exp + _magnitude_powers(magnitude),
            "negative": minus | has["trail"] | (opened > 0), "percent": percent,
            "currency": currency, "has_currency": named, "bare_digits": bare,
            "magnitude": magnitude, "has_magnitude": has["mag"],
            "side": after.spread("side", lambda w: SIDE_WORDS.get(w, ""), object),
            "per": after.part("per"), "thousands": has["kilo"],
            "length": np.asarray(pc.utf8_length(text), dtype=np.int64),
            "zero_first": np.asarray(pc.starts_with(text, "0"), dtype=bool),
            "text": text, "body": body.fill_null("")}


def _matches(array: pa.Array, pattern: str) -> np.ndarray:
    return np.asarray(pc.match_substring_regex(array, pattern), dtype=bool)


def _is_minus(sign: str) -> bool:
    return sign == "-"


def _split(text: pa.Array) -> tuple[np.ndarray, pa.Array, pa.Array, pa.Array]:
    """(matched, pre, num, post) of ``SPLIT_PATTERN`` for every value.

    A value that is a number body and nothing else splits into ("", itself, ""); a plain
    match finds those far faster than extracting groups, so only the rest is extracted."""
    plain = np.asarray(pc.match_substring_regex(text, PLAIN_PATTERN), dtype=bool)
    empty = pc.utf8_slice_codeunits(text, 0, 0)
    if plain.all():
        return plain, empty, text, empty
    rest = pa.array(~plain)
    split = pc.extract_regex(text.filter(rest), SPLIT_PATTERN)
    matched = plain.copy()
    matched[~plain] = np.asarray(split.is_valid(), dtype=bool)
    return (matched, pc.replace_with_mask(empty, rest, split.field("pre")),
            pc.replace_with_mask(text, rest, split.field("num")),
            pc.replace_with_mask(empty, rest, split.field("post")))


def decimal_digits(body: pa.Array, mark: str) -> pa.Array:
    """Bodies read with ``mark`` as the decimal mark, as Decimal-ready text: the group
    marks dropped, the decimal mark (or an Arabic decimal separator) made "."."""
    digits = _without(body, ", '" if mark == "." else ". '")
    for point in ((",", ARABIC_DECIMAL) if mark == "," else (ARABIC_DECIMAL,)):
        if pc.any(pc.match_substring(digits, point)).as_py():
            digits = pc.replace_substring(digits, point, ".")
    return digits


def _without(array: pa.Array, marks: str) -> pa.Array:
    """The strings with every one of ``marks`` removed (literal passes: no regex; a
    mark no value holds costs one scan, not a rewrite)."""
    for mark in marks:
        if pc.any(pc.match_substring(array, mark)).as_py():
            array = pc.replace_substring(array, mark, "")
    return array


_PREFIX = ("open", "sign1", "pct1", "cur1", "open2", "sign2")
_SUFFIX = ("dash", "exp", "mag", "pct", "close2", "kilo", "cur2", "per", "side", "trail",
           "close")


def _strings(array: pa.Array) -> np.ndarray:
    return np.asarray(array.fill_null("").to_numpy(zero_copy_only=False), dtype=object)


def _fullmatch(array: pa.Array, pattern: re.Pattern[str]) -> np.ndarray:
    found = pc.match_substring_regex(array, f"^(?:{pattern.pattern})$")
    return np.asarray(found.fill_null(False), dtype=bool)


def _magnitude_powers(magnitude: np.ndarray) -> np.ndarray:
    powers = np.zeros(len(magnitude), dtype=np.int64)
    used = magnitude != ""
    if used.any():
        table = magnitudes().exponents
        words, inverse = distinct_inverse(magnitude[used])
        powers[used] = np.array([table.get(_magnitude_key(w), 0) for w in words])[inverse]
    return powers


@cache
def piece_words() -> frozenset[str]:
    """Words for one piece after a price per unit (``locales/number_per_words.txt``)."""
    return frozenset(w.casefold() for w in load_entries("number_per_words").get("piece", ()))


@cache
def per_key(token: str) -> str:
    """What a price is per: a unit id of the units engine ("kg" for "Kilo"), "piece" for
    a word such as "Stk.", "" for anything else (then the value is not a price per unit)."""
    from harmonize.engines.units_registry import read_token  # numbers load without units
    word = token.rstrip(".")
    if word.casefold() in piece_words():
        return "piece"
    reading = read_token(word)
    if len(word) == 1 and reading.how == "case-folded":
        return ""   # "$5/M" is more likely per thousand than per metre
    return next(iter(reading.units)) if len(reading.units) == 1 else ""


def _known_code(token: str) -> bool:
    """Three capital letters match the currency pattern; only ISO 4217 codes count."""
    return token in iso_codes() or not _CODE_SHAPE.fullmatch(token)


def _currency_only(word: str) -> bool:
    """A magnitude word that only follows a currency ("5 Mio €"), not a bare number."""
    return bool(word) and _magnitude_key(word) in magnitudes().currency_only


def to_decimal(digits: str, shift: int, negative: bool) -> Decimal:
    """The exact value of a normalised body ("1234.5") scaled and signed."""
    value = Decimal(digits)
    if shift:
        value = value.scaleb(shift, EXACT)
    return -value if negative else value


def format_decimal_plain(value: Decimal, keep_trailing_zeros: bool = False) -> str:
    """Plain text: "." as decimal mark, no grouping, no exponent, no "-0".

    Trailing fractional zeros are dropped by default ("12.50" -> "12.5", "1200.0" ->
    "1200"), so equal amounts give equal text; ``keep_trailing_zeros`` keeps them as
    written.
    """
    if not value.is_finite():
        raise ValueError(f"not a finite number: {value}")
    if value.is_zero():
        value = value.copy_abs()
    if not keep_trailing_zeros:
        value = value.normalize(EXACT)
    return format(value, "f")
