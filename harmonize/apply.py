"""Applying a plan to a table: every column converted under its plan, or decided and
converted in one pass (``harmonize.column_apply`` converts one column)."""

from __future__ import annotations

import pandas as pd

from harmonize.arrowcsv import CodedColumn, CodedFrame
from harmonize.column_apply import ColumnResult, apply_column
from harmonize.context import Context
from harmonize.decide import each_column, settled_column
from harmonize.evidence import ColumnEvidence, TableEvidence
from harmonize.options import Options
from harmonize.plan import ColumnPlan, TablePlan

__all__ = ["ColumnResult", "TableResult", "apply_column", "apply_table", "decide_and_apply"]


class TableResult:
    """A table's output: the plan, each column's coded result, and the output frame
    (same columns in the same order, plus companions), built when first asked for."""

    def __init__(self, plan: TablePlan, columns: list[ColumnResult], n_rows: int,
                 drift: list[str] | None = None) -> None:
        self.plan = plan
        self.columns = columns
        self.n_rows = n_rows
        self.drift = drift or []
        self._frame: pd.DataFrame | None = None

    def coded_frame(self) -> CodedFrame:
        """The output as distinct texts plus row codes per column (what writers take)."""
        pairs = [(name, CodedColumn(lookup, column.codes)) for column in self.columns
                 for name, lookup in column.coded()]
        return CodedFrame([n for n, _ in pairs], [c for _, c in pairs], self.n_rows)

    @property
    def frame(self) -> pd.DataFrame:
        if self._frame is None:
            self._frame = self.coded_frame().frame()
        return self._frame


def decide_and_apply(evidence: TableEvidence, options: Options | None = None, *,
                     workers: int = 1) -> tuple[TablePlan, TableResult]:
    """Decide each column and convert it at once (one pass over the columns, each
    column's readings still warm in the engines' caches)."""
    context = Context(evidence, options)

    def one(column: ColumnEvidence) -> tuple[ColumnPlan, ColumnResult]:
        plan, result = settled_column(column, context)
        return plan, result if result is not None else apply_column(column, plan, context)

    pairs = each_column(one, evidence, context, workers)
    table_plan = TablePlan(file=evidence.file, sheet=evidence.sheet,
                           columns=[plan for plan, _ in pairs])
    return table_plan, TableResult(table_plan, [r for _, r in pairs], evidence.n_rows)


def apply_table(evidence: TableEvidence, plan: TablePlan,
                options: Options | None = None, *, workers: int = 1) -> TableResult:
    """Every column converted under its plan; ``workers`` threads share a large table."""
    context = Context(evidence, options)
    drift = []
    plans = []
    for column in evidence.columns:
        column_plan = plan.column(column.name)
        if column_plan is None:
            drift.append(f"column {column.name!r} is not in the plan; passed through as text")
            column_plan = ColumnPlan(column.name, "text", "text", 0.0, {"trim": False})
        plans.append(column_plan)
    plan_of = {id(column): p for column, p in zip(evidence.columns, plans)}
    results = each_column(lambda column: apply_column(column, plan_of[id(column)], context),
                          evidence, context, workers)
    for column_plan in plan.columns:
        if column_plan.name not in {c.name for c in evidence.columns}:
            drift.append(f"column {column_plan.name!r} of the plan is absent from the data")
    return TableResult(plan, results, evidence.n_rows, drift)
