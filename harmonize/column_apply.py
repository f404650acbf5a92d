"""Converting one column under its plan: each distinct raw value is converted once, then
mapped onto rows.

Every cell ends in exactly one outcome (converted, missing, unresolved, passed). Rows
of a column with per-group conventions are partitioned by convention, and each part's
distinct values are converted under its own convention.
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from harmonize.context import Context
from harmonize.engines import engine_named
from harmonize.engines.base import Converted, Outcome, companions_of
from harmonize.engines.missing import MissingRule, fold_values, sentinels_among
from harmonize.evidence import ColumnEvidence, most_frequent
from harmonize.plan import ColumnPlan

EXAMPLES = 5


@dataclass
class ColumnResult:
    """A column's output, coded: row i's text is ``lookup[codes[i]]`` and its outcome
    ``lookup_outcome[codes[i]]``. One lookup entry per (distinct value, convention) pair,
    entry 0 for missing cells, so writers and the formula guard work on distinct texts."""

    plan: ColumnPlan
    output_name: str
    lookup: np.ndarray                    # output text per entry (object)
    lookup_outcome: np.ndarray            # Outcome per entry (int8)
    codes: np.ndarray                     # entry per row (int64)
    extra_lookup: dict[str, np.ndarray] = field(default_factory=dict)  # companions, by name
    unresolved: list[dict[str, Any]] = field(default_factory=list)  # row offset, value, ...
    examples: list[tuple[str, str]] = field(default_factory=list)
    missing: dict[str, int] = field(default_factory=dict)
    drift: list[str] = field(default_factory=list)

    @property
    def text(self) -> np.ndarray:
        return self.lookup[self.codes]

    @property
    def outcome(self) -> np.ndarray:
        return self.lookup_outcome[self.codes]

    @property
    def extra(self) -> dict[str, np.ndarray]:
        return {name: values[self.codes] for name, values in self.extra_lookup.items()}

    def coded(self) -> list[tuple[str, np.ndarray]]:
        """(output column name, per-entry text) for this column and its companions."""
        return [(self.output_name, self.lookup), *self.extra_lookup.items()]

    def counts(self) -> dict[str, int]:
        per_entry = np.bincount(self.codes, minlength=len(self.lookup))
        tally = np.bincount(self.lookup_outcome, weights=per_entry, minlength=len(Outcome))
        return {o.label: int(tally[o]) for o in Outcome}


def _partitions(plan: ColumnPlan, column: ColumnEvidence, context: Context,
                drift: list[str]) -> list[tuple[np.ndarray, Mapping[str, Any]]]:
    """(row mask, convention) pairs covering every row exactly once."""
    n = column.n_rows
    base = plan.convention
    if plan.groups is None:
        return [(np.ones(n, dtype=bool), base)]
    split = context.split(plan.groups.by)
    if split is None:
        drift.append(f"group column {plan.groups.by!r} is missing or no longer splits the "
                     "rows; the base convention was used for every row")
        return [(np.ones(n, dtype=bool), base)]
    by_key: dict[str, tuple[list[int], Mapping[str, Any]]] = {}
    for g, label in enumerate(split.labels):
        convention = plan.groups.convention_for(base, label)
        key = json.dumps(convention, sort_keys=True, default=str)
        by_key.setdefault(key, ([], convention))[0].append(g)
    base_key = json.dumps(dict(base), sort_keys=True, default=str)
    by_key.setdefault(base_key, ([], base))
    parts = []
    for key, (groups, convention) in by_key.items():
        mask = np.isin(split.codes, groups)
        if key == base_key:
            mask |= split.codes < 0
        parts.append((mask, convention))
    return parts


# Typed workbook numbers arrive as plain text ("1234.5") whatever the column's text cells
# use as decimal mark, so they are converted under these keys instead.
TYPED_NUMBER_KEYS = {"decimal_mark": "."}


def _conversions(plan: ColumnPlan, column: ColumnEvidence, context: Context,
                 drift: list[str], row_present: np.ndarray
                 ) -> list[tuple[np.ndarray, Mapping[str, Any], np.ndarray]]:
    """(row mask, convention, distinct value codes) for each convert call."""
    codes = column.codes if column.codes is not None else np.zeros(0, dtype=np.int64)
    typed = np.zeros(len(column.values), dtype=bool)
    if plan.kind in ("number", "quantity") and column.typed:
        typed = np.array([column.typed.get(v) == "number" for v in column.values.tolist()],
                         dtype=bool)
    found = []
    for mask, convention in _partitions(plan, column, context, drift):
        wanted = _codes_used(codes[mask & row_present], len(column.values))
        for subset, conv in ((wanted[~typed[wanted]], convention),
                             (wanted[typed[wanted]], {**convention, **TYPED_NUMBER_KEYS})):
            if len(subset):
                found.append((mask, conv, subset))
    return found


def _codes_used(codes: np.ndarray, n_values: int) -> np.ndarray:
    """The distinct codes present, ascending (a count per value: linear, no sort)."""
    if len(codes) and codes.min() < 0:
        return np.unique(codes)
    return np.flatnonzero(np.bincount(codes, minlength=n_values))


def _fill(result: Converted, values: np.ndarray, mode: str) -> list[str]:
    text = list(result.text)
    for i in np.nonzero(result.outcome == Outcome.UNRESOLVED)[0]:
        if mode == "raw":
            text[i] = str(values[i])
        elif mode == "best":
            text[i] = result.best.get(int(i), "")
    return text


def apply_column(column: ColumnEvidence, plan: ColumnPlan, context: Context) -> ColumnResult:
    n = column.n_rows
    codes = column.codes if column.codes is not None else np.zeros(0, dtype=np.int64)
    rule = MissingRule(frozenset(plan.missing))
    is_missing = rule.mask(column.values)
    result = ColumnResult(plan, plan.output_name or plan.name, np.array([""], dtype=object),
                          np.array([Outcome.MISSING], dtype=np.int8), np.zeros(n, np.int64))
    result.missing = {str(v).strip(): int(c) for v, c in
                      zip(column.values[is_missing], column.counts[is_missing])}
    if plan.kind == "empty":
        return result
    engine = engine_named(plan.engine)
    fill = context.options.unresolved_fill
    texts, outcomes = [result.lookup], [result.lookup_outcome]
    extras: dict[str, list[tuple[int, list[str]]]] = {}  # companion -> (first entry, texts)
    row_present = ~is_missing[codes] if is_missing.any() else np.ones(n, dtype=bool)
    size = 1
    for mask, convention, wanted in _conversions(plan, column, context, result.drift,
                                                 row_present):
        rows = mask & row_present
        if column.typed and plan.kind in ("number", "quantity"):
            rows &= np.isin(codes, wanted)  # typed and text values are converted apart
        values = column.values[wanted]
        converted = engine.convert(values.tolist(), convention)
        entry = np.zeros(len(column.values), dtype=np.int64)
        entry[wanted] = np.arange(size, size + len(wanted))
        if rows.all():   # one convention for every row, none missing: a plain take
            result.codes = entry[codes]
        else:
            result.codes[rows] = entry[codes[rows]]
        texts.append(np.array(_fill(converted, values, fill), dtype=object))
        outcomes.append(np.asarray(converted.outcome, dtype=np.int8))
        for suffix, extra in converted.extra.items():
            extras.setdefault(suffix, []).append((size, list(extra)))
        size += len(wanted)
        _note_unresolved(result, converted, wanted, column, codes, rows)
        _note_examples(result, converted, wanted, column)
    result.lookup = np.concatenate(texts)
    result.lookup_outcome = np.concatenate(outcomes)
    for suffix in companions_of(engine, plan.convention):
        extras.setdefault(suffix, [])
    for suffix, pieces in extras.items():
        lookup = np.full(size, "", dtype=object)
        for first, values_out in pieces:
            lookup[first:first + len(values_out)] = values_out
        result.extra_lookup[f"{result.output_name} {suffix}"] = lookup
    return result


def _note_unresolved(result: ColumnResult, converted: Converted, wanted: np.ndarray,
                     column: ColumnEvidence, codes: np.ndarray, rows: np.ndarray) -> None:
    bad = np.nonzero(converted.outcome == Outcome.UNRESOLVED)[0]
    if len(bad) == 0:
        return
    local = {int(wanted[i]): int(i) for i in bad}
    hit_rows = np.nonzero(rows & np.isin(codes, wanted[bad]))[0]
    for row in hit_rows.tolist():
        i = local[int(codes[row])]
        result.unresolved.append({
            "offset": row, "value": str(column.values[codes[row]]),
            "reason": converted.reasons.get(i, "could not be read"),
            "candidates": converted.candidates.get(i, []), "best": converted.best.get(i)})


def _note_examples(result: ColumnResult, converted: Converted, wanted: np.ndarray,
                   column: ColumnEvidence) -> None:
    changed = np.nonzero(converted.outcome == Outcome.CONVERTED)[0]
    room = EXAMPLES - len(result.examples)
    for i in changed[most_frequent(column.counts[wanted[changed]], room)]:
        result.examples.append((str(column.values[wanted[i]]), converted.text[i]))


def harmonised_sentinels(column: ColumnEvidence, plan: ColumnPlan, result: ColumnResult,
                         context: Context) -> frozenset[str]:
    """Folded raw values whose harmonised text is a sentinel among the column's harmonised
    texts: what a second run over the output would set aside.

    Evidence merged from chunks or partitions has no rows to map outputs back through;
    there each present value is converted under the plan's base convention instead."""
    if column.codes is not None:
        texts = result.lookup
        counts = np.bincount(result.codes, minlength=len(texts))
    else:
        present = np.flatnonzero(~MissingRule(frozenset(plan.missing)).mask(column.values))
        values = column.values[present]
        converted = engine_named(plan.engine).convert(values.tolist(), plan.convention)
        texts = np.array(_fill(converted, values, context.options.unresolved_fill), dtype=object)
        counts = column.counts[present]
    shown = np.flatnonzero((counts > 0) & (texts != ""))
    found = sentinels_among(texts[shown], counts[shown], context.options)
    if not found:
        return frozenset()
    flagged = shown[fold_values(texts[shown]).isin(found).to_numpy()]
    if column.codes is None:
        raw = column.values[present[flagged]]
    else:
        rows = np.isin(result.codes, flagged)
        raw = column.values[np.unique(column.codes[rows])]
    return frozenset(fold_values(raw).tolist())
