"""Applying a plan: each distinct raw value is converted once, then mapped onto rows.

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
import pandas as pd

from harmonize.context import Context
from harmonize.engines import engine_named
from harmonize.engines.base import Converted, Outcome, companions_of
from harmonize.engines.missing import MissingRule
from harmonize.evidence import ColumnEvidence, TableEvidence
from harmonize.options import Options
from harmonize.plan import ColumnPlan, TablePlan

EXAMPLES = 5


@dataclass
class ColumnResult:
    plan: ColumnPlan
    output_name: str
    text: np.ndarray                      # output text per row (object)
    outcome: np.ndarray                   # Outcome per row (int8)
    extra: dict[str, np.ndarray] = field(default_factory=dict)  # companion columns
    unresolved: list[dict[str, Any]] = field(default_factory=list)  # row offset, value, ...
    examples: list[tuple[str, str]] = field(default_factory=list)
    missing: dict[str, int] = field(default_factory=dict)
    drift: list[str] = field(default_factory=list)

    def counts(self) -> dict[str, int]:
        tally = np.bincount(self.outcome, minlength=len(Outcome))
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
    text = np.full(n, "", dtype=object)
    outcome = np.full(n, Outcome.MISSING, dtype=np.int8)
    result = ColumnResult(plan, plan.output_name or plan.name, text, outcome)
    result.missing = {str(v).strip(): int(c) for v, c in
                      zip(column.values[is_missing], column.counts[is_missing])}
    if plan.kind == "empty":
        return result
    engine = engine_named(plan.engine)
    fill = context.options.unresolved_fill
    extra_cols: dict[str, np.ndarray] = {}
    row_present = ~is_missing[codes] if is_missing.any() else np.ones(n, dtype=bool)
    for mask, convention, wanted in _conversions(plan, column, context, result.drift,
                                                 row_present):
        rows = mask & row_present
        if column.typed and plan.kind in ("number", "quantity"):
            rows &= np.isin(codes, wanted)  # typed and text values are converted apart
        values = column.values[wanted]
        converted = engine.convert(values.tolist(), convention)
        lookup_text = np.full(len(column.values), "", dtype=object)
        lookup_outcome = np.full(len(column.values), Outcome.MISSING, dtype=np.int8)
        lookup_text[wanted] = _fill(converted, values, fill)
        lookup_outcome[wanted] = converted.outcome
        if rows.all():   # one convention for every row, none missing: a plain take
            np.take(lookup_text, codes, out=text)
            np.take(lookup_outcome, codes, out=outcome)
        else:
            text[rows] = lookup_text[codes[rows]]
            outcome[rows] = lookup_outcome[codes[rows]]
        for suffix, extra in converted.extra.items():
            target = extra_cols.setdefault(suffix, np.full(n, "", dtype=object))
            lookup = np.full(len(column.values), "", dtype=object)
            lookup[wanted] = extra
            target[rows] = lookup[codes[rows]]
        _note_unresolved(result, converted, wanted, column, codes, rows)
        _note_examples(result, converted, wanted, column)
    for suffix in companions_of(engine, plan.convention):
        extra_cols.setdefault(suffix, np.full(n, "", dtype=object))
    for suffix, values_out in extra_cols.items():
        result.extra[f"{result.output_name} {suffix}"] = values_out
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
    order = changed[np.argsort(-column.counts[wanted[changed]], kind="stable")]
    for i in order[: EXAMPLES - len(result.examples)]:
        result.examples.append((str(column.values[wanted[i]]), converted.text[i]))


@dataclass
class TableResult:
    plan: TablePlan
    frame: pd.DataFrame            # output, same columns in the same order (+ companions)
    columns: list[ColumnResult]
    drift: list[str] = field(default_factory=list)


def apply_table(evidence: TableEvidence, plan: TablePlan,
                options: Options | None = None) -> TableResult:
    context = Context(evidence, options)
    results, drift = [], []
    out: dict[str, np.ndarray] = {}
    for column in evidence.columns:
        column_plan = plan.column(column.name)
        if column_plan is None:
            drift.append(f"column {column.name!r} is not in the plan; passed through as text")
            column_plan = ColumnPlan(column.name, "text", "text", 0.0, {"trim": False})
        result = apply_column(column, column_plan, context)
        results.append(result)
        out[result.output_name] = result.text
        out.update(result.extra)
    for column_plan in plan.columns:
        if column_plan.name not in {c.name for c in evidence.columns}:
            drift.append(f"column {column_plan.name!r} of the plan is absent from the data")
    frame = pd.DataFrame(out, dtype=object) if out else pd.DataFrame(index=range(0))
    return TableResult(plan=plan, frame=frame, columns=results, drift=drift)
