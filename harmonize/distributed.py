"""Beyond one machine: the same evidence and plan over a Dask dataframe.

Evidence is gathered per partition and merged (Dask's ``value_counts`` is a tree
reduction over partitions); row order and the columns that split rows into groups are
read from the first partition, as the streaming mode reads them from the first chunk.
The plan is then applied to every partition with ``map_partitions``: each partition
converts its own distinct values, so nothing but the plan travels to the workers.
Whatever scheduler is active runs it: the local one by default, or a cluster after
``dask.distributed.Client("tcp://scheduler:8786")``.

    import dask.dataframe as dd
    from harmonize.distributed import decide_dask, apply_dask
    ddf = dd.read_csv("exports/*.csv", dtype=str, keep_default_na=False, na_filter=False)
    plan = decide_dask(ddf)
    apply_dask(ddf, plan).to_csv("out/part-*.csv", index=False)
"""

from __future__ import annotations

from collections.abc import Sequence
from typing import TYPE_CHECKING, Any

import numpy as np
import pandas as pd

from harmonize.apply import apply_table
from harmonize.decide import decide_table
from harmonize.engines.base import Outcome
from harmonize.evidence import ColumnEvidence, TableEvidence
from harmonize.options import Options
from harmonize.plan import TablePlan

if TYPE_CHECKING:
    import dask.dataframe as dd


def _as_text(frame: pd.DataFrame) -> pd.DataFrame:
    """Partition cells as Python str, "" for nulls (Dask strings are Arrow-backed)."""
    return frame.astype(object).where(frame.notna(), "").astype(str).astype(object)


def gather_dask(ddf: dd.DataFrame, name: str = "<dask>") -> TableEvidence:
    """Whole-frame distinct values and counts, with row codes from the first partition."""
    import dask

    first = TableEvidence.from_frame(_as_text(ddf.get_partition(0).compute()), file=name)
    tallies = dask.compute(*[ddf[c].fillna("").astype(str).value_counts(sort=False)
                             for c in ddf.columns])
    columns = [_merged(col, tally) for col, tally in zip(first.columns, tallies)]
    return TableEvidence(file=name, sheet=None, n_rows=first.n_rows, columns=columns)


def _merged(first: ColumnEvidence, tally: pd.Series) -> ColumnEvidence:
    values = tally.index.to_numpy(dtype=object)
    position = pd.Index(values).get_indexer(first.values)
    codes = None
    if first.codes is not None:
        codes = np.where(first.codes >= 0, position[first.codes], -1)
    return ColumnEvidence(first.name, first.index, values, tally.to_numpy(dtype=np.int64),
                          codes, first.typed, first.formats)


def decide_dask(ddf: dd.DataFrame, options: Options | None = None,
                name: str = "<dask>") -> TablePlan:
    """Decide every column of a Dask dataframe of text."""
    return decide_table(gather_dask(ddf, name), options)


def _apply_partition(part: pd.DataFrame, plan: TablePlan, options: Options | None,
                     name: str) -> pd.DataFrame:
    evidence = TableEvidence.from_frame(_as_text(part), file=name)
    frame = apply_table(evidence, plan, options).frame
    frame.index = part.index
    return frame


def apply_dask(ddf: dd.DataFrame, plan: TablePlan, options: Options | None = None,
               name: str = "<dask>") -> dd.DataFrame:
    """The harmonised frame, lazily: one ``map_partitions`` over the plan."""
    meta = _apply_partition(_as_text(ddf._meta), plan, options, name)
    return ddf.map_partitions(_apply_partition, plan, options, name, meta=meta)


def _partition_counts(part: pd.DataFrame, plan: TablePlan, options: Options | None,
                      name: str) -> pd.DataFrame:
    evidence = TableEvidence.from_frame(_as_text(part), file=name)
    result = apply_table(evidence, plan, options)
    rows = [{"column": c.plan.name, **c.counts()} for c in result.columns]
    return pd.DataFrame(rows, columns=["column", *(o.label for o in Outcome)])


def outcome_counts(ddf: dd.DataFrame, plan: TablePlan, options: Options | None = None,
                   name: str = "<dask>") -> dict[str, dict[str, Any]]:
    """Cells per column and outcome over the whole frame (converted, missing, ...)."""
    meta = pd.DataFrame({"column": pd.Series(dtype=object),
                         **{o.label: pd.Series(dtype=np.int64) for o in Outcome}})
    parts = ddf.map_partitions(_partition_counts, plan, options, name, meta=meta)
    totals = parts.groupby("column").sum().compute()
    return {column: {k: int(v) for k, v in row.items()} for column, row in totals.iterrows()}


def _run_partition(part: pd.DataFrame, index: int, plan: TablePlan, options: Options | None,
                   name: str, folder: str) -> dict[str, Any]:
    """Convert one partition, write it as part-<index>.csv, return its counts and cells."""
    from harmonize.arrowcsv import write_csv
    evidence = TableEvidence.from_frame(_as_text(part), file=name)
    result = apply_table(evidence, plan, options)
    coded = result.coded_frame()
    if options is None or options.neutralise_formulas:
        from harmonize.safety import neutralise_coded
        coded = neutralise_coded(coded).frame
    with open(f"{folder}/part-{index:06d}.csv", "wb") as handle:
        write_csv(coded, handle, header=index == 0)
    return {"rows": len(part), "sample": result if index == 0 else None,
            "counts": {c.plan.name: c.counts() for c in result.columns},
            "missing": {c.plan.name: c.missing for c in result.columns},
            "unresolved": {c.plan.name: c.unresolved for c in result.columns if c.unresolved}}


def _without_units_row(part: pd.DataFrame,
                       partition_info: dict[str, Any] | None = None) -> pd.DataFrame:
    """The first partition less its first row, the units joined to the header."""
    if partition_info is None or partition_info["number"] != 0:
        return part
    return part.iloc[1:]


def _trimmed_end(part: pd.DataFrame, note_lines: int, last: int,
                 partition_info: dict[str, Any] | None = None) -> pd.DataFrame:
    """The last partition less the note lines and empty rows that end the file."""
    from harmonize.stream import trim_tail
    if partition_info is None or partition_info["number"] != last:
        return part
    return trim_tail(part, note_lines)


def harmonize_csv_dask(path: str, name: str, dest: Any, options: Options | None,
                       plan: TablePlan | None = None, note_lines: int = 0,
                       names: Sequence[str] | None = None,
                       **read_options: Any) -> dict[str, Any]:
    """A delimited file through Dask: decide over all partitions, convert each partition
    in parallel, write one output (atomically) and return what the report needs.
    ``note_lines`` rows at the end of the file are notes, not data; ``names``, when
    given, are the header's names with the row of units under it joined."""
    import shutil
    import tempfile

    import dask
    import dask.dataframe as dd

    from harmonize.sources import _atomic_write
    ddf = dd.read_csv(path, dtype=str, keep_default_na=False, na_filter=False,
                      skip_blank_lines=False, **read_options)
    ddf = ddf.map_partitions(_trimmed_end, note_lines, ddf.npartitions - 1, meta=ddf._meta)
    if names is not None:
        ddf = ddf.map_partitions(_without_units_row, meta=ddf._meta)
        ddf.columns = list(names)
    table_plan = plan or decide_dask(ddf, options, name)
    near = dest.parent if dest is not None else None  # same disk: the rename stays cheap
    with tempfile.TemporaryDirectory(prefix=".harmonize-parts-", dir=near) as folder:
        tasks = [dask.delayed(_run_partition)(part, i, table_plan, options, name, folder)
                 for i, part in enumerate(ddf.to_delayed())]
        parts = dask.compute(*tasks)

        def concatenate(handle: Any) -> None:
            for i in range(len(parts)):
                with open(f"{folder}/part-{i:06d}.csv", "rb") as piece:
                    shutil.copyfileobj(piece, handle)
        if dest is not None:
            _atomic_write(dest, concatenate)
    return _summarise(parts, table_plan)


def _summarise(parts: tuple[dict[str, Any], ...], plan: TablePlan) -> dict[str, Any]:
    counts: dict[str, dict[str, int]] = {}
    missing: dict[str, dict[str, int]] = {}
    unresolved: dict[str, list[dict[str, Any]]] = {}
    start = 0
    for part in parts:
        for column, tally in part["counts"].items():
            total = counts.setdefault(column, dict.fromkeys(tally, 0))
            for label, n in tally.items():
                total[label] += n
        for column, tokens in part["missing"].items():
            into = missing.setdefault(column, {})
            for token, n in tokens.items():
                into[token] = into.get(token, 0) + n
        for column, cells in part["unresolved"].items():
            unresolved.setdefault(column, []).extend(
                {**cell, "offset": cell["offset"] + start} for cell in cells)
        start += part["rows"]
    return {"plan": plan, "sample": parts[0]["sample"], "rows": start, "counts": counts,
            "missing": missing, "unresolved": unresolved, "partitions": len(parts)}
