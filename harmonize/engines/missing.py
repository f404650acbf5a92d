"""Missing values: the cells that say "no value", set aside before any engine decides.

Three kinds are recognised, each reported per column with counts:
* words: empty or white space, and the words in ``locales/missing_words.txt``
  (N/A, null, -, k.A., n.d., ...), matched after trimming and case folding;
* placeholders: e-mail addresses at reserved example domains (RFC 2606 / RFC 6761:
  example.com/.net/.org, .example, .invalid, .test) and all-zero phone numbers;
* sentinels: numbers such as -999 or 9999 in a numeric column, where every other value
  lies far from them (so the column itself shows they stand for "no value").
The rule is stored in the plan as a list of folded tokens, so re-applying is a lookup.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from harmonize.evidence import ColumnEvidence
from harmonize.locales import all_entries
from harmonize.options import Options

_EMAIL_PLACEHOLDER = re.compile(
    r"^[^@\s]+@(?:[\w-]+\.)*(?:example\.(?:com|net|org)|example|invalid|test|localhost)$",
    re.IGNORECASE)
_ZERO_PHONE = re.compile(r"^\+?[0\s().\-/]{6,}$")
_PHONE_HEADER = re.compile(r"phone|tel|mobile|handy|fax|cell|portable|telefon|móvil|movil",
                           re.IGNORECASE)
_SENTINEL = re.compile(r"^[-+]?9{2,}(?:[.,]0+)?$")
_PLAIN_NUMBER = re.compile(r"^[-+]?\d+(?:[.,]\d+)?$")
MIN_NUMERIC_SHARE = 0.9   # a column must be this numeric before a sentinel is believed
SENTINEL_GAP = 5.0        # a sentinel lies this many times beyond the other values' range


def fold_token(raw: str) -> str:
    return raw.strip().lower()


def fold_values(values: np.ndarray) -> pd.Series:
    """Trimmed, lower-cased text of distinct values (Arrow-backed strings: fast)."""
    return pd.Series(values, dtype="str").str.strip().str.lower()


@dataclass(frozen=True)
class MissingRule:
    """Folded tokens that count as missing in one column, with why each was chosen."""

    tokens: frozenset[str]
    reasons: dict[str, str] = field(default_factory=dict, compare=False)

    def mask(self, values: np.ndarray) -> np.ndarray:
        """True for each distinct raw value that is missing under this rule."""
        return self.mask_folded(fold_values(values))

    def mask_folded(self, folded: pd.Series) -> np.ndarray:
        """``mask`` of values already folded by ``fold_values``."""
        return (folded.eq("") | folded.isin(self.tokens)).to_numpy(dtype=bool)


def _words(options: Options) -> frozenset[str]:
    return frozenset(fold_token(w) for w in all_entries("missing_words")) | frozenset(
        fold_token(w) for w in options.missing_words)


def _sentinels(folded: pd.Series, counts: np.ndarray) -> set[str]:
    numeric = folded.str.match(_PLAIN_NUMBER)
    if counts[numeric.to_numpy()].sum() < MIN_NUMERIC_SHARE * max(counts.sum(), 1):
        return set()
    candidates = numeric & folded.str.match(_SENTINEL)
    others = pd.to_numeric(folded[numeric & ~candidates].str.replace(",", "."), errors="coerce")
    if candidates.sum() == 0 or others.count() < 5:
        return set()
    low, high = others.min(), others.max()
    span = max(abs(low), abs(high), 1.0)
    found = set()
    for token in folded[candidates].unique():
        value = float(token.replace(",", "."))
        if value < 0 <= low or abs(value) >= SENTINEL_GAP * span:
            found.add(token)
    return found


def _zero_digits(folded: pd.Series) -> np.ndarray:
    """How many "0" each value holds (a literal count in Arrow: no regex engine)."""
    return np.asarray(pc.count_substring(pa.array(folded), "0"))


def find_missing(column: ColumnEvidence, options: Options | None = None) -> MissingRule:
    """Decide which of a column's distinct values mean "no value"."""
    return missing_with_mask(column, options)[0]


def missing_with_mask(column: ColumnEvidence, options: Options | None = None
                      ) -> tuple[MissingRule, np.ndarray]:
    """``find_missing`` and its ``mask`` of the column's values (folded once for both)."""
    options = options or Options()
    folded = fold_values(column.values)
    words = _words(options)
    reasons: dict[str, str] = {}
    for token in folded[folded.isin(words)].unique():
        reasons[token] = "missing-value word"
    emails = folded[folded.str.contains("@", regex=False)]
    for token in emails[emails.str.match(_EMAIL_PLACEHOLDER)].unique():
        reasons[token] = "placeholder e-mail at a reserved example domain"
    zeros = folded[_zero_digits(folded) >= 6]
    if not _PHONE_HEADER.search(column.name):
        # bare "0000000" may be a real code; only a phone's punctuation marks a placeholder
        zeros = zeros[zeros.str.contains(r"[\s()+\-./]")]
    for token in zeros[zeros.str.match(_ZERO_PHONE)].unique():
        reasons[token] = "all-zero phone number"
    rest = ~(folded.isin(reasons) | folded.eq("")).to_numpy()
    for token in _sentinels(folded[rest], column.counts[rest]):
        reasons[token] = "sentinel number far outside the column's other values"
    rule = MissingRule(frozenset(reasons), reasons)
    return rule, rule.mask_folded(folded)
