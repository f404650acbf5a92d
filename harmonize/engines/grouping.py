"""Per-group decisions, shared by every engine that decides a convention.

A merged multi-region export may follow one convention in some rows and another in
the rest, so that no single convention admits every value. The engine says which
conventions each set of values admits; this module looks for a column that splits
the rows into groups each of which is consistent on its own, preferring a country
column, then the split with the fewest groups.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

from harmonize.context import Context, Split
from harmonize.evidence import ColumnEvidence

# Conventions that no value of the given evidence contradicts.
Admits = Callable[[ColumnEvidence], frozenset[str]]


@dataclass(frozen=True)
class GroupSplit:
    split: Split
    parts: tuple[ColumnEvidence, ...]   # the column's evidence per group, label order
    admitted: tuple[frozenset[str], ...]  # what each group admits

    def label_admits(self) -> dict[str, frozenset[str]]:
        return dict(zip(self.split.labels, self.admitted))


def explaining_split(column: ColumnEvidence, context: Context, admits: Admits,
                     all_conventions: frozenset[str]) -> GroupSplit | None:
    """The split under which every group admits some convention, or None.

    Only splits that actually separate conventions count: at least two groups must be
    pinned to different conventions (otherwise the split explains nothing).
    """
    candidates = context.splits(exclude=column.name)
    country = context.country_split
    country_name = country.column if country is not None else None
    candidates.sort(key=lambda s: (s.column != country_name, s.n_groups))
    for split in candidates:
        parts = column.by_group(split.codes, split.n_groups)
        admitted = tuple(admits(part) if part.total else all_conventions for part in parts)
        if any(not a for a in admitted):
            continue
        pinned = {next(iter(a)) for a in admitted if len(a) == 1}
        if len(pinned) >= 2:
            return GroupSplit(split, tuple(parts), admitted)
    return None
