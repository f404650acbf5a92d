"""Deciding: every engine reads a column's evidence, the best-fitting proposal wins."""

from __future__ import annotations

import logging
from collections.abc import Callable
from concurrent.futures import ThreadPoolExecutor
from typing import TypeVar

import numpy as np

from harmonize.column_apply import ColumnResult, apply_column, harmonised_sentinels
from harmonize.context import Context
from harmonize.engines import ENGINES, FALLBACK
from harmonize.engines.base import Decision
from harmonize.engines.missing import MissingRule, missing_with_mask
from harmonize.evidence import ColumnEvidence, TableEvidence, most_frequent
from harmonize.options import Options
from harmonize.plan import ColumnPlan, TablePlan

log = logging.getLogger(__name__)
T = TypeVar("T")


SCREEN_SIZE = 400     # distinct values an engine sees first on a large column
SCREEN_SLACK = 0.15   # an engine reading this much less than min_fit of the sample is dropped


def screening_sample(column: ColumnEvidence) -> ColumnEvidence | None:
    """The most frequent distinct values plus an even spread of the rest, or None when
    the column is small enough to read whole."""
    n = len(column.values)
    if n <= 2 * SCREEN_SIZE:
        return None
    keep = np.zeros(n, dtype=bool)
    keep[most_frequent(column.counts, SCREEN_SIZE // 2)] = True
    keep[np.linspace(0, n - 1, SCREEN_SIZE // 2).astype(int)] = True
    return column.subset(keep)


def proposals(present: ColumnEvidence, context: Context) -> list[Decision]:
    """Every engine's proposal. On a large column an engine first reads a sample, and
    only an engine that reads most of the sample goes on to read every value."""
    sample = screening_sample(present)
    floor = context.options.min_fit - SCREEN_SLACK
    found = []
    for engine in ENGINES:
        if sample is not None:
            first = engine.propose(sample, context)
            if first is None or first.fit < floor:
                continue
        decision = engine.propose(present, context)
        if decision is not None:
            found.append(decision)
    return found


def choose(present: ColumnEvidence, context: Context) -> Decision:
    """The proposal with the highest fit above the threshold; ties go to the engine
    registered first; the fallback (text) when nothing fits well enough."""
    best: Decision | None = None
    for decision in proposals(present, context):
        if decision.fit >= context.options.min_fit and (best is None or decision.fit > best.fit):
            best = decision
    if best is not None:
        return best
    fallback = FALLBACK.propose(present, context)
    assert fallback is not None, "the fallback engine always proposes"
    return fallback


def empty_plan(name: str, rule: MissingRule) -> ColumnPlan:
    return ColumnPlan(name=name, kind="empty", engine="missing", confidence=1.0,
                      missing=sorted(rule.tokens),
                      evidence=["every cell is empty or a missing-value word"])


def decide_column(column: ColumnEvidence, context: Context) -> ColumnPlan:
    return settled_column(column, context)[0]


SETTLE_ROUNDS = 3   # a column whose sentinels still change after this keeps the last plan
SENTINEL_KINDS = ("number", "quantity")   # kinds written as plain numbers


def settled_column(column: ColumnEvidence, context: Context
                   ) -> tuple[ColumnPlan, ColumnResult | None]:
    """A column's plan, with the column converted under it when deciding needed that.

    Sentinels are found in the values as written, and again in the values as harmonised:
    a second run over the output reads only those, with every number written plainly
    ("20,001 g" is 0.020001 kg there, not a number near 20001) and every cell the engine
    could not decide empty (so "-7,088", a group or a decimal mark?, is no other negative
    value beside "-999"). A value that either look finds a sentinel is set aside, so that
    both runs set aside the same values. Converted quantities are looked at always, since a unit
    conversion may write a run of nines the raw values did not show."""
    rule, missing = missing_with_mask(column, context.options)
    plan = _plan_for(column, rule, missing, context)
    result = None
    extra: frozenset[str] = frozenset()
    for _ in range(SETTLE_ROUNDS):
        if plan.kind not in SENTINEL_KINDS or not (rule.sentinel_candidates
                                                   or plan.kind == "quantity"):
            break
        result = apply_column(column, plan, context)
        found = harmonised_sentinels(column, plan, result, context) - rule.tokens
        if not found:
            break
        extra |= found
        rule, missing = missing_with_mask(column, context.options, harmonised=extra)
        plan, result = _plan_for(column, rule, missing, context), None
    return plan, result


def _plan_for(column: ColumnEvidence, rule: MissingRule, missing: np.ndarray,
              context: Context) -> ColumnPlan:
    present = column.subset(~missing) if missing.any() else column  # nothing to set aside
    if present.total == 0:
        return empty_plan(column.name, rule)
    decision = choose(present, context)
    plan = ColumnPlan.from_decision(column.name, decision, sorted(rule.tokens))
    if rule.reasons:
        plan.details.setdefault("missing_reasons", dict(sorted(rule.reasons.items())))
    return plan


def decide_table(table: TableEvidence, options: Options | None = None, *,
                 workers: int = 1) -> TablePlan:
    """Every column's plan; ``workers`` threads share the columns of a large table."""
    context = Context(table, options)
    columns = each_column(lambda column: decide_column(column, context), table, context,
                          workers)
    return TablePlan(file=table.file, sheet=table.sheet, columns=columns)


THREADED_ROWS = 50_000  # smaller tables are done in one thread: nothing to gain


def each_column(work: Callable[[ColumnEvidence], T], table: TableEvidence, context: Context,
                workers: int) -> list[T]:
    """``work`` on each column, in order. With several workers, columns run in threads:
    the heavy parts of the engines (Arrow, numpy) release the interpreter lock. What the
    context finds once per table is found before the threads start."""
    if workers <= 1 or table.n_rows < THREADED_ROWS or len(table.columns) < 2:
        return [work(column) for column in table.columns]
    context.prepare()
    # the columns with the most distinct values first, so that no thread is left with
    # the largest one at the end while the other waits
    order = sorted(range(len(table.columns)), key=lambda i: -len(table.columns[i].values))
    with ThreadPoolExecutor(max_workers=workers) as pool:
        futures = {i: pool.submit(work, table.columns[i]) for i in order}
        return [futures[i].result() for i in range(len(table.columns))]
