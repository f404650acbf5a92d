"""Missing values: the cells that say "no value", set aside before any engine decides.

Three kinds are recognised, each reported per column with counts:
* words: empty or white space, and the words in ``locales/missing_words.txt``
  (N/A, null, -, k.A., n.d., ...), matched after trimming, case folding and removing
  invisible characters ("N/A\u200b" is "N/A"); a short word of one language ("nd") is
  a code, not missing, in a column of capital-letter codes of its length (state "ND");
* placeholders: e-mail addresses at reserved example domains (RFC 2606 / RFC 6761:
  example.com/.net/.org, .example, .invalid, .test) and all-zero phone numbers;
* sentinels: numbers such as -999 or 9999 in a numeric column, where every other value
  lies far from them (so the column itself shows they stand for "no value"). Numbers
  count in any notation ("1.234,50 €", "(12)", "5 kg"), so that a column of harmonize's
  own plain output holds the same sentinels as the column it came from.
The rule is stored in the plan as a list of folded tokens, so re-applying is a lookup.
Every test runs in Arrow on the whole column of distinct values.
"""

from __future__ import annotations

import re
import weakref
from collections.abc import Callable
from dataclasses import dataclass, field
from functools import cache
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from harmonize.evidence import ColumnEvidence
from harmonize.locales import all_entries, load_entries
from harmonize.options import Options

_EMAIL_PLACEHOLDER = re.compile(
    r"^[^@\s]+@(?:[\w-]+\.)*(?:example\.(?:com|net|org)|example|invalid|test|localhost)$",
    re.IGNORECASE)
# Format characters that hide in copied cells (zero-width spaces and joiners, word joiner,
# byte order mark, soft hyphen, Mongolian vowel separator: Unicode category Cf)
_INVISIBLE_CHARS = "\u200b\u200c\u200d\u2060\ufeff\u00ad\u180e"
_INVISIBLE = dict.fromkeys(map(ord, _INVISIBLE_CHARS))
_INVISIBLE_PATTERN = f"[{_INVISIBLE_CHARS}]"
_ZERO_PHONE = re.compile(r"^\+?[0\s().\-/]{6,}$")
_PHONE_HEADER = re.compile(r"phone|tel|mobile|handy|fax|cell|portable|telefon|móvil|movil",
                           re.IGNORECASE)
# Numbers as exports write them, in RE2 syntax for Arrow, on folded (lower-case) text: a
# sign or an opening parenthesis, a currency or unit of up to three characters before or
# four after (a formula such as "=-1" is no number), one kind of group mark between groups
# of three digits (the first group 1-3 digits, not led by 0), a fraction after the other
# mark, an exponent. Dates, times, phone numbers and words with a number ("room 12") do not
# match. RE2's \d and \s are ASCII.
_SPACE = r"[\s\x{00a0}\x{202f}]"
# a currency or unit: letters (µ too), currency signs, % ‰ ° ² ³ ' " . / (not = @ # ...)
_AFFIX = r"[\p{L}\p{Sc}%‰°²³'\"./]"
_GROUPINGS = ((",", r"\."), (r"\.", ","), (_SPACE, "[.,]"), ("['’]", "[.,]"))  # mark, decimal
_EXPONENT = r"e[-+]?\d{1,3}"


def _number(body: str, exponent: str = f"(?:{_EXPONENT})?") -> str:
    return (rf"^[-+−(]?(?:{_AFFIX}{{1,3}}{_SPACE}?)?[-+−(]?(?:{body}){exponent}"
            rf"\)?(?:{_SPACE}?{_AFFIX}{{1,4}})?$")


def _grouped(first: str, groups: str, fraction: str = r"\d+") -> list[str]:
    """Grouped numbers, one pattern per kind of group mark."""
    return [rf"{first}(?:{mark}\d{{3}}){groups}(?:{decimal}{fraction})?"
            for mark, decimal in _GROUPINGS]


_NUMBER = _number("|".join([*_grouped(r"[1-9]\d{0,2}", "+"), r"\d+(?:[.,]\d+)?"]))
# runs of nines, with zeros after a decimal mark; "99.000" is 99000 (a mark before three
# digits groups them), so two or three nines take one, two, or four or more zeros
_NINES = _number("|".join([
    *(rf"9{{1,3}}(?:{mark}999)+(?:{decimal}0+)?" for mark, decimal in _GROUPINGS),
    r"9{4,}(?:[.,]0+)?", r"9{2,3}(?:[.,](?:0{1,2}|0{4,}))?"]), exponent="")
_NEGATIVE = r"^[^\d]*[-−(]"      # on a number: a minus or parenthesis before its digits
# A mantissa's group marks, as the patterns above read them (Python's re, a few values)
_MANTISSA_GROUPS = (re.compile(r"[1-9][0-9]{0,2}(?:,[0-9]{3})+(?:\.[0-9]+)?"),
                    re.compile(r"[1-9][0-9]{0,2}(?:\.[0-9]{3})+(?:,[0-9]+)?"),
                    re.compile("[1-9][0-9]{0,2}(?:[\t\n\f\r \u00a0\u202f][0-9]{3})+"
                               "(?:[.,][0-9]+)?"),
                    re.compile(r"[1-9][0-9]{0,2}(?:['’][0-9]{3})+(?:[.,][0-9]+)?"))
_GROUP_MARKS = (",", r"\.", "[\t\n\f\r \u00a0\u202f]", "['’]")
_SCALED = re.compile("([0-9][0-9.,'’\t\n\f\r \u00a0\u202f]*)e([-+]?[0-9]{1,3})")
SENTINEL_GAP = 5.0        # a sentinel lies this many times beyond the other values' range


def fold_token(raw: str) -> str:
    return raw.translate(_INVISIBLE).strip().lower()


def arrow_text(values: np.ndarray) -> pa.Array:
    """A column's distinct values as Arrow text, converted once per array: deciding a
    column's missing values, reading it as identifiers and setting its missing values aside
    all read the same array of distinct values, which nothing changes in place."""
    return _memo("text", values, lambda v: pa.array(v, type=pa.large_string()))


def fold_values(values: np.ndarray) -> pd.Series:
    """Trimmed, lower-cased text of distinct values without invisible characters, so that
    "N/A\u200b" is as missing as "N/A" (Arrow-backed strings, folded once per array)."""
    return pd.Series(pd.array(_folded_text(values), dtype="str"))


def _folded_text(values: np.ndarray) -> pa.Array:
    return _memo("folded", values, _fold)


def _fold(values: np.ndarray) -> pa.Array:
    text = arrow_text(values)
    if len(text) and not pc.all(pc.string_is_ascii(text)).as_py():
        text = pc.replace_substring_regex(text, _INVISIBLE_PATTERN, "")
    return pc.utf8_lower(pc.utf8_trim_whitespace(text))


_MEMO: dict[tuple[str, int], tuple[weakref.ref[np.ndarray], Any]] = {}
MEMO_SIZE = 8   # the arrays of the column being decided and applied, with room to spare


def _memo(kind: str, values: np.ndarray, make: Callable[[np.ndarray], Any]) -> Any:
    key = (kind, id(values))
    hit = _MEMO.get(key)
    if hit is not None and hit[0]() is values:
        return hit[1]
    made = make(values)
    if isinstance(values, np.ndarray):   # an array can be referred to weakly, a list not
        while len(_MEMO) >= MEMO_SIZE:
            _MEMO.pop(next(iter(_MEMO)))
        _MEMO[key] = (weakref.ref(values), made)
    return made


@dataclass(frozen=True)
class MissingRule:
    """Folded tokens that count as missing in one column, with why each was chosen."""

    tokens: frozenset[str]
    reasons: dict[str, str] = field(default_factory=dict, compare=False)
    # whether some value looked like a sentinel (a run of nines)
    sentinel_candidates: bool = field(default=False, compare=False)

    def mask(self, values: np.ndarray) -> np.ndarray:
        """True for each distinct raw value that is missing under this rule."""
        return self.mask_folded(fold_values(values))

    def mask_folded(self, folded: pd.Series) -> np.ndarray:
        """``mask`` of values already folded by ``fold_values``."""
        return (folded.eq("") | folded.isin(self.tokens)).to_numpy(dtype=bool)


# A short word of one language ("nd", "nc": French for "not available") that a column of
# codes of the same shape also holds (US state codes ND and NC, ISO 3166-1 NC) is a code
# there. The words every export uses ("NA", "nil") stay missing, as do the user's own.
CODE_MIN_VALUES = 10    # distinct codes a column needs to show the shape
CODE_MIN_SHARE = 0.9    # of the column's other distinct values


@cache
def _code_like_words() -> frozenset[str]:
    universal = {fold_token(w) for w in load_entries("missing_words").get("any", ())}
    return frozenset(fold_token(w) for w in all_entries("missing_words")
                     if w.isalpha() and len(w) <= 3 and fold_token(w) not in universal)


def _codes_not_words(column: ColumnEvidence, folded: pd.Series, tokens: set[str],
                     options: Options) -> set[str]:
    """The missing words among ``tokens`` that the column uses as codes: written in
    capitals like the column's other values, which are codes of their length."""
    maybe = (tokens & _code_like_words()) - {fold_token(w) for w in options.missing_words}
    if not maybe:
        return set()
    trimmed = pc.utf8_trim_whitespace(arrow_text(column.values))
    words = folded.isin(maybe).to_numpy()
    kept = set()
    for token in maybe:
        capitals = _flags(pc.match_substring_regex(trimmed, f"^[A-Z]{{{len(token)}}}$"))
        written = words & folded.eq(token).to_numpy()
        others = ~words & folded.ne("").to_numpy()
        if (capitals[written].all() and capitals[others].sum() >= CODE_MIN_VALUES
                and capitals[others].mean() >= CODE_MIN_SHARE):
            kept.add(token)
    return kept


def _words(options: Options) -> frozenset[str]:
    return frozenset(fold_token(w) for w in all_entries("missing_words")) | frozenset(
        fold_token(w) for w in options.missing_words)


def _sentinels(folded: pd.Series, counts: np.ndarray, min_share: float,
               text: pa.Array | None = None) -> set[str]:
    """The sentinels ``_sentinel_search`` finds."""
    return _sentinel_search(folded, counts, min_share, text)[0]


def sentinels_among(values: np.ndarray, counts: np.ndarray, options: Options) -> set[str]:
    """The sentinels among distinct non-empty texts (folded, as a rule holds them):
    the rule run on a column's harmonised values, as a second run would read them."""
    return _sentinels(fold_values(values), counts, options.min_fit)


def _sentinel_search(folded: pd.Series, counts: np.ndarray, min_share: float,
                     text: pa.Array | None = None) -> tuple[set[str], bool]:
    """Sentinel numbers (99, -999, 9.999,00 ...) among a column's folded values.

    The column must be as numeric as an engine needs it to be to claim it (``min_share``),
    counting numbers in any notation ("1.234,50 €", "(12)", "5 kg"), so that it reads the
    same before and after its numbers are written plainly: "-999" beside "1.234,50" is set
    aside on a first run just as beside "1234.5" on a second. A sentinel is negative where
    no other number is, or at least ``SENTINEL_GAP`` times the size of every other number.
    A number's size is its whole part; one mark before exactly three digits ("1.234") is
    read as a group mark, so that an amount and its plain rewriting have the same size.
    Every test is a regular expression run in Arrow (on ``text``, the same values as Arrow
    text, when given): no value is parsed one at a time.
    Returns the sentinels and whether any value was a candidate.
    """
    if text is None:
        text = pa.array(folded, type=pa.large_string())
    nines = _flags(pc.match_substring(text, "99"))   # a sentinel holds two nines in a row
    if nines.any():
        maybe = np.flatnonzero(nines)
        nines[maybe] = _flags(pc.match_substring_regex(text.take(maybe), _NINES))
    if not nines.any():
        return set(), False
    numeric = _flags(pc.match_substring_regex(text, _NUMBER))
    others = numeric & ~nines
    if counts[numeric].sum() < min_share * max(counts.sum(), 1) or others.sum() < 5:
        return set(), True
    other_text = text.filter(pa.array(others))
    tokens = set(folded[nines].tolist())
    found = {t for t in tokens if re.match(_NEGATIVE, t)}
    if found and _any_negative(other_text):
        found = set()
    for nines_written in sorted({t.count("9") for t in tokens - found}):
        if not _reaches(other_text, nines_written):
            found |= {t for t in tokens if t.count("9") == nines_written}
    return found, True


def _any_negative(numbers: pa.Array) -> bool:
    below = _flags(pc.match_substring_regex(numbers, _NEGATIVE))
    if not below.any():
        return False
    return bool(_flags(pc.match_substring_regex(numbers.filter(pa.array(below)), "[1-9]")).any())


def _reaches(numbers: pa.Array, nines: int) -> bool:
    """Whether a number is at least a fifth of 10**nines - 1 (a sentinel of that many nines
    is not ``SENTINEL_GAP`` times beyond it): a whole part of 2 * 10**(nines - 1) or more."""
    pattern = _number(_whole_at_least(nines, lead="2"), exponent="")
    if _flags(pc.match_substring_regex(numbers, pattern)).any():
        return True
    scaled = numbers.filter(pc.match_substring(numbers, "e"))
    threshold = (10**nines - 1) / SENTINEL_GAP
    return any(_scaled_size(t) > threshold for t in scaled.to_pylist())


def _whole_at_least(digits: int, lead: str) -> str:
    """Numbers whose whole part (plain or grouped) has more than ``digits`` digits, or
    ``digits`` digits and a first digit of at least ``lead``."""
    options = [rf"0*(?:[1-9]\d{{{digits},}}|[{lead}-9]\d{{{digits - 1}}})(?:[.,]\d+)?"]
    for first in (1, 2, 3):   # digits in the first group of a grouped number
        more = max(1, -(-(digits + 1 - first) // 3))
        options += _grouped(rf"[1-9]\d{{{first - 1}}}", f"{{{more},}}")
        groups, left = divmod(digits - first, 3)
        if groups >= 1 and left == 0:
            options += _grouped(rf"[{lead}-9]\d{{{first - 1}}}", f"{{{groups}}}")
    return "|".join(options)


def _scaled_size(text: str) -> float:
    """Size of a number written with an exponent ("2,5e3": 2500, "1,234e3": 1234000)."""
    found = _SCALED.search(text)
    if found is None:
        return 0.0
    mantissa = found[1]
    for marks, pattern in zip(_GROUP_MARKS, _MANTISSA_GROUPS, strict=True):
        if pattern.fullmatch(mantissa):
            mantissa = re.sub(marks, "", mantissa)
            break
    mantissa = mantissa.replace(",", ".")
    if not re.fullmatch(r"[0-9]+(?:\.[0-9]+)?", mantissa):
        return 0.0   # not a number the patterns read
    return abs(float(mantissa)) * 10.0 ** int(found[2])


def _flags(mask: pa.Array) -> np.ndarray:
    return np.asarray(pc.fill_null(mask, False), dtype=bool)


def find_missing(column: ColumnEvidence, options: Options | None = None) -> MissingRule:
    """Decide which of a column's distinct values mean "no value"."""
    return missing_with_mask(column, options)[0]


def missing_with_mask(column: ColumnEvidence, options: Options | None = None,
                      harmonised: frozenset[str] = frozenset()
                      ) -> tuple[MissingRule, np.ndarray]:
    """``find_missing`` and its ``mask`` of the column's values (folded once for both).

    ``harmonised`` names further sentinels, as folded raw values: values whose
    harmonised form the rule finds a sentinel (see ``decide.settled_column``).
    Each test runs in Arrow on the whole column; Python sees only the few values a test
    picks out (words, e-mail addresses, strings of zeros, sentinel numbers)."""
    options = options or Options()
    text = _folded_text(column.values)
    folded = fold_values(column.values)
    reasons: dict[str, str] = {}
    words = pa.array(sorted(_words(options)), type=text.type)
    found = _picked(folded, _flags(pc.is_in(text, value_set=words)))
    for token in found - _codes_not_words(column, folded, found, options):
        reasons[token] = "missing-value word"
    for token in _picked(folded, _flags(pc.match_substring(text, "@"))):
        if _EMAIL_PLACEHOLDER.match(token):
            reasons[token] = "placeholder e-mail at a reserved example domain"
    for token in _zero_strings(text, folded, phone=bool(_PHONE_HEADER.search(column.name))):
        reasons[token] = "all-zero phone number"
    rest = ~(folded.isin(reasons) | folded.eq("")).to_numpy()
    everything = rest.all()
    others = folded if everything else folded[rest]
    others_text = text if everything else text.filter(pa.array(rest))
    sentinels, candidates = _sentinel_search(others, column.counts[rest], options.min_fit,
                                             others_text)
    for token in sentinels:
        reasons[token] = "sentinel number far outside the column's other values"
    for token in harmonised - sentinels:
        reasons[token] = ("sentinel number far outside the column's other values "
                          "once they are harmonised")
    rule = MissingRule(frozenset(reasons), reasons, sentinel_candidates=candidates)
    return rule, rule.mask_folded(folded)


def _picked(folded: pd.Series, mask: np.ndarray) -> set[str]:
    return set(folded[mask].tolist()) if mask.any() else set()


def _zero_strings(text: pa.Array, folded: pd.Series, phone: bool) -> set[str]:
    """Placeholder phone numbers: six or more zeros and nothing else but a phone's marks."""
    # outside a phone column, bare "0000000" may be a real code: only a phone's
    # punctuation marks a placeholder, so digit strings need no look
    looked = np.arange(len(text)) if phone else np.flatnonzero(
        ~_flags(pc.ascii_is_decimal(text)))
    if len(looked) == 0:
        return set()
    many = np.asarray(pc.count_substring(text.take(looked), "0")) >= 6
    found = set()
    for token in folded.iloc[looked[many]].tolist():
        if _ZERO_PHONE.match(token) and (phone or re.search(r"[\s()+\-./]", token)):
            found.add(token)
    return found
