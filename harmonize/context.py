"""What an engine may know about a column besides its own values.

The context holds the whole table's evidence, the run options, and the columns that
could explain a split of the rows into groups with different conventions (a country,
branch, currency or source column). A country column also gives each row a locale
hint: its ISO 3166 territory.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from functools import cached_property
from pathlib import PurePath

import numpy as np
import pandas as pd

from harmonize.evidence import ColumnEvidence, TableEvidence
from harmonize.options import Options
from harmonize.territory import territory_of

MAX_GROUPS = 60          # a column with more labels than this explains no split
MIN_GROUP_ROWS = 5       # on average, else near-unique columns (amounts) would "explain"
MIN_LABELLED = 0.9       # share of rows a split column must label
COUNTRY_SHARE = 0.8      # share of labelled rows naming a territory for a country column


@dataclass(frozen=True)
class Split:
    """Rows grouped by the trimmed value of one column."""

    column: str
    labels: tuple[str, ...]
    codes: np.ndarray                      # per row, index into labels; -1 = blank
    territories: tuple[str | None, ...]    # ISO 3166 alpha-2 per label, where one is named

    @property
    def n_groups(self) -> int:
        return len(self.labels)

    @property
    def territory_share(self) -> float:
        labelled = self.codes >= 0
        if not labelled.any():
            return 0.0
        has = np.asarray([t is not None for t in self.territories] + [False])
        return float(has[self.codes[labelled]].mean())


# Two-letter words that name an ISO 3166 code but, in a file name, are mostly English
# or shorthand (common practice, no source).
_NOT_A_COUNTRY = frozenset({"am", "an", "as", "at", "be", "by", "do", "go", "id", "if", "in",
                            "is", "it", "me", "my", "no", "of", "on", "or", "pm", "so", "to",
                            "tv", "up", "vs"})


def territory_in_name(file: str) -> str | None:
    """A territory named by the first or last word of a file name ("sales_uk.csv",
    "DE-orders.xlsx", "ventes France.csv", "orders_it.csv"), else None. A lower-case
    two-letter word that is usually English counts only as a suffix after _ or -."""
    stem = PurePath(file).stem
    words = [w for w in re.split(r"[\s_\-.,()\[\]]+", stem) if w]
    suffix = re.search(r"[_\-]([A-Za-z]{2})$", stem)
    for word in dict.fromkeys([words[-1], words[0]] if words else []):
        if len(word) == 2 and not word.isupper() and word in _NOT_A_COUNTRY and not (
                suffix and word == suffix.group(1) and len(words) > 1):
            continue
        if word.isalpha() and (len(word) > 3 or word.isupper() or len(word) == 2):
            found = territory_of(word)
            if found:
                return found
    return None


BRANCH_DIGITS = 4   # a branch code's number is short; "DE 123 456 789" is a tax number


def _label_territory(label: str) -> str | None:
    found = territory_of(label)
    if (found is None and len(label) > 3 and label[2] in "-_ /" and label[:2].isalpha()
            and sum(c.isdigit() for c in label[3:]) <= BRANCH_DIGITS):
        found = territory_of(label[:2])  # branch codes such as "DE-04"
    return found


def _too_many_labels(values: np.ndarray, limit: int) -> bool:
    """More than ``limit`` distinct trimmed, non-blank values, seen from the first blocks
    (a near-unique column is told apart without trimming all its values)."""
    seen: set[str] = set()
    for start in range(0, len(values), 256):
        seen.update(str(v).strip() for v in values[start:start + 256].tolist())
        seen.discard("")
        if len(seen) > limit:
            return True
    return False


def split_from(column: ColumnEvidence, min_groups: int = 2) -> Split | None:
    """Group rows by a column's trimmed values, or None when it cannot be a split.

    ``min_groups=1`` accepts a column with one label (one branch's export names its
    country on every row: no split, but still a locale hint)."""
    if column.codes is None or len(column.values) == 0:
        return None
    if len(column.values) > MAX_GROUPS and _too_many_labels(column.values, MAX_GROUPS):
        return None
    trimmed = pd.Series(column.values, dtype=object).str.strip()
    label_codes, labels = pd.factorize(trimmed.replace("", None), use_na_sentinel=True)
    if not min_groups <= len(labels) <= MAX_GROUPS:
        return None
    lookup = np.append(label_codes, -1)
    codes = lookup[column.codes]
    labelled = int((codes >= 0).sum())
    if labelled < MIN_LABELLED * len(codes):
        return None
    labels_t = tuple(str(x) for x in labels)
    territories = tuple(_label_territory(x) for x in labels_t)
    named = sum(t is not None for t in territories) >= COUNTRY_SHARE * len(labels_t)
    if not named and len(labels) > max(2, labelled // MIN_GROUP_ROWS):
        return None  # a country column splits even a small file; anything else needs rows
    return Split(column.name, labels_t, codes, territories)


class Context:
    """Shared, lazily computed knowledge about one table."""

    def __init__(self, table: TableEvidence, options: Options | None = None) -> None:
        self.table = table
        self.options = options or Options()

    def prepare(self) -> None:
        """Find now what is otherwise found on first use (before threads share this)."""
        _ = self._splits, self.file_territory, self.country_split

    @property
    def file(self) -> str:
        return self.table.file

    @property
    def sheet(self) -> str | None:
        return self.table.sheet

    @cached_property
    def _splits(self) -> dict[str, Split]:
        found = {}
        for column in self.table.columns:
            split = split_from(column)
            if split is not None:
                found[column.name] = split
        return found

    def splits(self, exclude: str | None = None) -> list[Split]:
        """Candidate grouping columns, the column being decided left out."""
        return [s for name, s in self._splits.items() if name != exclude]

    def split(self, column: str) -> Split | None:
        """The split by a named column (as a plan's group rule names it)."""
        if column in self._splits:
            return self._splits[column]
        try:
            return split_from(self.table.column(column), min_groups=1)
        except KeyError:
            return None

    @cached_property
    def file_territory(self) -> str | None:
        """The territory the file's own name points to, a weak locale hint."""
        return territory_in_name(self.table.file)

    @cached_property
    def country_split(self) -> Split | None:
        """The column that best names each row's country, if any does (it may name one
        country only: then it splits nothing but still hints every row's locale)."""
        found = (self._splits.get(column.name) or split_from(column, min_groups=1)
                 for column in self.table.columns)
        best = max((s for s in found if s is not None), key=lambda s: s.territory_share,
                   default=None)
        if best is None or best.territory_share < COUNTRY_SHARE:
            return None
        return best
