"""Evidence: each column's distinct raw values with their counts.

A million-row column usually holds a few thousand distinct strings, so everything
downstream works on ``values``/``counts``. ``codes`` keeps the row order (row i holds
``values[codes[i]]``, -1 for a row whose value was set aside, e.g. as missing) for the
engines that read it (day-after-day sequences) and for mapping results back.
Evidence from several chunks or files merges by adding counts.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Mapping
from dataclasses import dataclass, field

import numpy as np
import pandas as pd


@dataclass
class ColumnEvidence:
    name: str
    index: int
    values: np.ndarray  # distinct raw strings (object array)
    counts: np.ndarray  # int64, one per value
    codes: np.ndarray | None = None  # int64 per row into ``values``; None once merged
    typed: Mapping[str, str] = field(default_factory=dict)  # raw text -> workbook type tag
    formats: Counter[str] = field(default_factory=Counter)  # workbook number formats

    @classmethod
    def from_series(cls, name: str, index: int, series: pd.Series,
                    typed: Mapping[str, str] | None = None,
                    formats: Counter[str] | None = None) -> ColumnEvidence:
        codes, uniques = pd.factorize(series.to_numpy(dtype=object), use_na_sentinel=False)
        counts = np.bincount(codes, minlength=len(uniques)).astype(np.int64)
        return cls(name=name, index=index, values=np.asarray(uniques, dtype=object),
                   counts=counts, codes=codes.astype(np.int64, copy=False),
                   typed=dict(typed or {}),
                   formats=Counter(formats or {}))

    @classmethod
    def from_codes(cls, name: str, index: int, values: np.ndarray,
                   codes: np.ndarray) -> ColumnEvidence:
        """From a column already dictionary-encoded (every value used, first-seen order,
        as ``from_series`` would find them)."""
        counts = np.bincount(codes, minlength=len(values)).astype(np.int64)
        return cls(name=name, index=index, values=values, counts=counts, codes=codes)

    @property
    def total(self) -> int:
        """Number of cells this evidence covers (rows set aside are not counted)."""
        return int(self.counts.sum())

    @property
    def n_rows(self) -> int:
        return 0 if self.codes is None else len(self.codes)

    def subset(self, keep: np.ndarray) -> ColumnEvidence:
        """Evidence restricted to the distinct values where ``keep`` is true."""
        keep = np.asarray(keep, dtype=bool)
        new_codes = None
        if self.codes is not None:
            remap = np.full(len(self.values) + 1, -1, dtype=np.int64)
            remap[:-1][keep] = np.arange(int(keep.sum()))
            new_codes = remap[self.codes]  # -1 stays -1 through remap[-1]
        values = self.values[keep]
        typed: dict[str, str] = {}
        if self.typed:   # the set of kept values once, not once per typed value
            kept = set(values.tolist())
            typed = {v: t for v, t in self.typed.items() if v in kept}
        return ColumnEvidence(self.name, self.index, values, self.counts[keep], new_codes,
                              typed, self.formats)

    def by_group(self, group_codes: np.ndarray, n_groups: int) -> list[ColumnEvidence]:
        """Split by a per-row group code (-1 = no group): one evidence per group."""
        if self.codes is None:
            raise ValueError(f"column {self.name!r}: row order was not kept, cannot split")
        parts = []
        present = self.codes >= 0
        for g in range(n_groups):
            rows = present & (group_codes == g)
            counts = np.bincount(self.codes[rows], minlength=len(self.values))
            keep = counts > 0
            part = ColumnEvidence(self.name, self.index, self.values, counts.astype(np.int64),
                                  np.where(rows, self.codes, -1), self.typed, self.formats)
            parts.append(part.subset(keep))
        return parts

    def merge(self, other: ColumnEvidence) -> ColumnEvidence:
        """Add another chunk's or file's evidence for the same column (row order dropped)."""
        tally: Counter[str] = Counter(dict(zip(self.values.tolist(), self.counts.tolist())))
        tally.update(dict(zip(other.values.tolist(), other.counts.tolist())))
        values = np.asarray(list(tally), dtype=object)
        counts = np.asarray(list(tally.values()), dtype=np.int64)
        return ColumnEvidence(self.name, self.index, values, counts, None,
                              {**self.typed, **other.typed}, self.formats + other.formats)


@dataclass
class TableEvidence:
    """All columns of one table (a CSV file, or one sheet of a workbook)."""

    file: str
    sheet: str | None
    n_rows: int
    columns: list[ColumnEvidence]
    date1904: bool = False   # a workbook counting serial days from 1904 (its flag)

    @classmethod
    def from_frame(cls, frame: pd.DataFrame, file: str = "<frame>", sheet: str | None = None,
                   typed: Mapping[str, Mapping[str, str]] | None = None,
                   formats: Mapping[str, Counter[str]] | None = None) -> TableEvidence:
        typed, formats = typed or {}, formats or {}
        columns = [ColumnEvidence.from_series(str(name), i, frame.iloc[:, i],
                                              typed.get(name), formats.get(name))
                   for i, name in enumerate(frame.columns)]
        return cls(file=file, sheet=sheet, n_rows=len(frame), columns=columns)

    def column(self, name: str) -> ColumnEvidence:
        for col in self.columns:
            if col.name == name:
                return col
        raise KeyError(name)


def most_frequent(counts: np.ndarray, k: int) -> np.ndarray:
    """Positions of the ``k`` largest counts, largest first, ties in position order (as a
    stable sort would give them) without sorting a column of a million values."""
    if k <= 0 or not len(counts):
        return np.zeros(0, dtype=np.int64)
    if len(counts) <= k:
        return np.argsort(-counts, kind="stable")
    # the k-th largest count, from a histogram of the counts (a partition of a column
    # whose values mostly occur once is many times slower)
    at_least = np.cumsum(np.bincount(counts)[::-1])[::-1]  # values counted >= c, per c
    cut = int(np.flatnonzero(at_least >= k)[-1])
    above = np.flatnonzero(counts > cut)
    tied = np.flatnonzero(counts == cut)[: k - len(above)]
    picked = np.concatenate([above, tied])
    return picked[np.argsort(-counts[picked], kind="stable")]
