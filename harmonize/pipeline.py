"""Files in, harmonised files and a report out: the road from read to write.

One file is handled by ``process_file`` (read every sheet, gather evidence, decide or
take the plan's decisions, apply, write). ``run`` walks the inputs, optionally on
several processes, and gathers the report. A file that cannot be read is reported and
the others go on.
"""

from __future__ import annotations

import os
from collections import Counter
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from harmonize import report as rpt
from harmonize.apply import TableResult, apply_table, decide_and_apply
from harmonize.arrowcsv import CodedFrame
from harmonize.decide import decide_table
from harmonize.evidence import ColumnEvidence, TableEvidence
from harmonize.options import Options
from harmonize.plan import Plan, TablePlan
from harmonize.safety import failure_line, map_isolated, neutralise_coded
from harmonize.sources import SourceError, Table, find_inputs, read_tables, write_table

WORKBOOK_SUFFIXES = frozenset({".xlsx", ".xlsm", ".xls", ".ods"})
OUTPUT_FORMATS = ("csv", "xlsx", "parquet")


class RunError(ValueError):
    """A problem with the run as a whole (bad output folder, output over an input)."""


@dataclass
class FileOutcome:
    """Everything one input produced; plain data so it crosses process boundaries."""

    input: str
    entries: list[dict[str, Any]] = field(default_factory=list)
    unresolved: list[dict[str, Any]] = field(default_factory=list)
    plans: list[TablePlan] = field(default_factory=list)
    outputs: list[str] = field(default_factory=list)
    error: str | None = None


@dataclass
class RunResult:
    report: dict[str, Any]
    plan: Plan
    outcomes: list[FileOutcome]

    @property
    def errors(self) -> list[dict[str, str]]:
        return self.report["errors"]

    @property
    def drift(self) -> bool:
        return any(e.get("drift") or any(c.get("drift") for c in e["columns"])
                   for e in self.report["files"]) or any(
            cell["reason"].startswith("drift") for cell in self.report["unresolved"])


def _output_names(rel: Path, table: Table, fmt: str | None) -> tuple[Path, str]:
    """Where a table's output goes, and the writer format."""
    suffix = rel.suffix.lower()
    if fmt is None:
        if suffix in {".xlsx", ".xlsm", ".xls"}:   # no legacy writer: .xls becomes .xlsx
            return rel.with_suffix(".xlsx"), "xlsx"
        if suffix == ".parquet":
            return rel, "parquet"
        if suffix == ".ods":
            fmt = "csv"  # no ODS writer: each sheet goes to CSV, as with --format csv
        else:
            return rel.with_suffix(suffix or ".csv"), "csv"
    if fmt == "csv" and table.sheet is not None and suffix in WORKBOOK_SUFFIXES:
        return rel.with_name(f"{rel.stem}.{table.sheet}.csv"), "csv"
    ext = {"csv": ".csv", "xlsx": ".xlsx", "parquet": ".parquet"}[fmt]
    return rel.with_suffix(ext), fmt


def evidence_of(table: Table, name: str) -> TableEvidence:
    if table.coded is not None:  # the reader already found each column's distinct values
        columns = [ColumnEvidence.from_codes(label, i, c.values, c.codes)
                   for i, (label, c) in enumerate(zip(table.column_names, table.coded))]
        return TableEvidence(file=name, sheet=table.sheet, n_rows=table.n_rows,
                             columns=columns)
    found = TableEvidence.from_frame(table.frame, file=name, sheet=table.sheet,
                                     typed=table.typed, formats=table.formats)
    found.date1904 = table.date1904
    return found


def harmonize_table(table: Table, name: str, options: Options, plan: Plan | None,
                    workers: int = 1) -> tuple[TablePlan, TableResult]:
    evidence = evidence_of(table, name)
    table_plan = None
    if plan is not None:
        table_plan = plan.table_for(name, table.sheet, [c.name for c in evidence.columns])
    if table_plan is None:
        table_plan, result = decide_and_apply(evidence, options, workers=workers)
        if plan is not None:
            result.drift.append("no entry of the plan matches this file; decisions were inferred")
        return table_plan, result
    result = apply_table(evidence, table_plan, options, workers=workers)
    result.drift += contradictions(table_plan, decide_table(evidence, options, workers=workers))
    for column in result.columns:
        stuck = column.counts()["unresolved"]
        if stuck:
            column.drift.append(f"{stuck} cells the plan cannot read")
    return table_plan, result


def contradictions(saved: TablePlan, fresh: TablePlan) -> list[str]:
    """Decisions of a saved plan that the new data's own evidence contradicts."""
    found = []
    for new in fresh.columns:
        old = saved.column(new.name)
        if old is None or new.confidence < 0.9:
            continue
        if new.kind != old.kind:
            found.append(f"column {new.name!r}: the plan says {old.kind}, the new data reads "
                         f"as {new.kind} (confidence {new.confidence:.2f})")
            continue
        for key, value in new.convention.items():
            if isinstance(value, str | int | float) and key in old.convention \
                    and old.convention[key] != value:
                found.append(f"column {new.name!r}: the plan says {key} = "
                             f"{old.convention[key]!r}, the new data suggests {value!r}")
    return found


def _write_outputs(pending: list[tuple[Path, str, CodedFrame, str | None]],
                   out_dir: Path, inputs: set[Path]) -> None:
    from harmonize.sources import write_workbook
    workbooks: dict[Path, dict[str, pd.DataFrame]] = {}
    for rel_out, fmt, frame, sheet in pending:
        dest = out_dir / rel_out
        if dest.resolve() in inputs:
            raise RunError(f"{dest}: refusing to overwrite an input file")
        dest.parent.mkdir(parents=True, exist_ok=True)
        if fmt == "xlsx" and sheet is not None:
            workbooks.setdefault(dest, {})[sheet] = frame.frame()
        else:
            write_table(frame, dest, fmt=fmt)
    for dest, sheets in workbooks.items():
        write_workbook(sheets, dest)


def _streams(path: Path, fmt: str | None, chunk_rows: int | None, dask: bool) -> bool:
    """Stream a delimited file when asked to, or when it is too big to hold at ease."""
    from harmonize.stream import STREAM_ABOVE_BYTES
    if path.suffix.lower() not in {".csv", ".tsv", ".txt"} or fmt not in (None, "csv"):
        return False
    return dask or bool(chunk_rows) or path.stat().st_size > STREAM_ABOVE_BYTES


def _process_stream(path: Path, rel: Path, out_dir: Path | None, options: Options,
                    plan: Plan | None, inputs: set[Path], chunk_rows: int | None,
                    outcome: FileOutcome, dask: bool = False,
                    on_rows: Callable[[str, int], None] | None = None) -> None:
    from harmonize.stream import CHUNK_ROWS, harmonize_stream
    rel_out = rel.with_suffix(rel.suffix.lower() if rel.suffix.lower() != ".tsv" else ".csv")
    dest = None
    if out_dir is not None:
        dest = out_dir / rel_out
        if dest.resolve() in inputs:
            raise RunError(f"{dest}: refusing to overwrite an input file")
        dest.parent.mkdir(parents=True, exist_ok=True)
    if dask:
        from harmonize.distributed import harmonize_csv_dask
        from harmonize.stream import layout
        shape = layout(path)
        table_plan = plan.table_for(str(rel), None, []) if plan is not None else None
        found = harmonize_csv_dask(str(path), str(rel), dest, options, table_plan,
                                   note_lines=len(shape.below), names=shape.names,
                                   sep=shape.delimiter, encoding=shape.encoding,
                                   skiprows=shape.skip_lines)
        notes = {"dask": True, "partitions": found["partitions"],
                 "header_row": shape.header_row, "warnings": shape.warnings()}
    else:
        on_chunk = (lambda done: on_rows(str(rel), done)) if on_rows else None
        result = harmonize_stream(path, str(rel), dest, options, plan,
                                  chunk_rows or CHUNK_ROWS, on_chunk=on_chunk)
        found = {"plan": result.plan, "sample": result.sample, "rows": result.rows,
                 "counts": result.counts, "missing": result.missing,
                 "unresolved": result.unresolved}
        notes = result.notes
    header_row = notes.pop("header_row")
    warnings = notes.pop("warnings")
    entry, _ = rpt.table_entry(found["sample"], input_name=str(rel), sheet=None,
                               output=str(rel_out) if out_dir else None,
                               header_row=header_row, warnings=warnings)
    entry["rows"] = found["rows"]
    entry["streamed"] = notes
    for column in entry["columns"]:
        column["counts"] = found["counts"].get(column["name"], column["counts"])
        column["missing"] = found["missing"].get(column["name"], {})
    outcome.entries.append(entry)
    outcome.unresolved += [rpt.unresolved_entry(cell, file=str(rel), sheet=None, column=name,
                                                header_row=header_row)
                           for name, cells in found["unresolved"].items() for cell in cells]
    outcome.plans.append(found["plan"])
    outcome.outputs.append(str(rel_out))


def process_file(path: Path, rel: Path, out_dir: Path | None, options: Options,
                 plan: Plan | None, fmt: str | None, inputs: set[Path],
                 chunk_rows: int | None = None, dask: bool = False,
                 on_rows: Callable[[str, int], None] | None = None,
                 workers: int = 1) -> FileOutcome:
    """One input file through the whole road; ``workers`` threads share a large table's
    columns (1 when files already run in parallel processes)."""
    outcome = FileOutcome(input=str(rel))
    try:
        if _streams(path, fmt, chunk_rows, dask):
            _process_stream(path, rel, out_dir, options, plan, inputs, chunk_rows, outcome,
                            dask, on_rows)
            return outcome
        tables = read_tables(path)
        pending = []
        for table in tables:
            table_plan, result = harmonize_table(table, str(rel), options, plan, workers)
            rel_out, writer = _output_names(rel, table, fmt)
            frame, notes = _safe_to_open(result.coded_frame(), writer, options)
            pending.append((rel_out, writer, frame, table.sheet))
            entry, unresolved = rpt.table_entry(
                result, input_name=str(rel), sheet=table.sheet,
                output=str(rel_out) if out_dir else None, header_row=table.header_row,
                warnings=table.warnings + notes)
            outcome.entries.append(entry)
            outcome.unresolved += unresolved
            outcome.plans.append(table_plan)
            if str(rel_out) not in outcome.outputs:
                outcome.outputs.append(str(rel_out))
        if out_dir is not None:
            _write_outputs(pending, out_dir, inputs)
    except (SourceError, RunError) as exc:
        outcome.error = str(exc)
    except (OSError, ValueError) as exc:
        outcome.error = f"{rel}: {exc}"
    except Exception as exc:  # one file's surprise must not stop the others
        outcome.error = failure_line(rel, exc)
    return outcome


def _safe_to_open(table: CodedFrame, writer: str, options: Options
                  ) -> tuple[CodedFrame, list[str]]:
    """Text that a spreadsheet would run as a formula gets a leading quote (OWASP "CSV
    Injection"); numbers, negative ones included, stay as they are. Parquet is data, not
    a sheet, and is written as is."""
    if writer == "parquet" or not options.neutralise_formulas:
        return table, []
    safe = neutralise_coded(table)
    return safe.frame, safe.notes()


def _relative_names(paths: Sequence[str | Path]) -> list[tuple[Path, Path]]:
    """(path, name relative to the folder it was found in) for every input file, each
    file once, and no two with the same name (outputs are written under these names)."""
    found: dict[Path, Path] = {}
    for given in paths:
        given = Path(given)
        for path in find_inputs([given]):
            rel = path.relative_to(given) if given.is_dir() else Path(path.name)
            found.setdefault(path.resolve(), rel)
    return _told_apart([(path, rel) for path, rel in found.items()])


def _told_apart(found: list[tuple[Path, Path]]) -> list[tuple[Path, Path]]:
    """Files that would share a name (two folders' "ledger.csv") are named with as many
    of their folders as tell them apart ("north/ledger.csv", "south/ledger.csv"), so that
    no output overwrites another. Names are compared case-folded, as some disks do."""
    names = [rel for _, rel in found]
    folders = [path.parts[1:] if path.is_absolute() else path.parts for path, _ in found]
    for _ in range(max(map(len, folders), default=0)):
        seen = Counter(str(n).casefold() for n in names)
        clashes = [i for i, n in enumerate(names) if seen[str(n).casefold()] > 1]
        if not clashes:
            break
        for i in clashes:   # one more folder in front, never the root: names stay relative
            names[i] = Path(*folders[i][-min(len(names[i].parts) + 1, len(folders[i])):])
    return [(path, name) for (path, _), name in zip(found, names)]


def run(paths: Sequence[str | Path], out_dir: str | Path | None = None, *,
        plan: Plan | None = None, options: Options | None = None, fmt: str | None = None,
        jobs: int = 1, on_file: Callable[[FileOutcome], None] | None = None,
        plan_source: str | Path | None = None, chunk_rows: int | None = None,
        dask: bool = False, on_rows: Callable[[str, int], None] | None = None) -> RunResult:
    """Harmonise every input; write outputs and reports to ``out_dir`` when given.

    ``chunk_rows`` streams delimited files that many rows at a time (bounded memory);
    files above ``stream.STREAM_ABOVE_BYTES`` stream anyway. ``dask`` sends delimited
    files through Dask (``harmonize.distributed``) on whatever scheduler is active.
    ``on_file`` hears of each finished file, ``on_rows`` of rows done in a streamed file
    (in this process only)."""
    options = options or Options()
    if fmt is not None and fmt not in OUTPUT_FORMATS:
        raise RunError(f"unknown output format {fmt!r}; use one of {', '.join(OUTPUT_FORMATS)}")
    out = Path(out_dir) if out_dir is not None else None
    files = _relative_names(paths)
    if out is not None:
        out_resolved = out.resolve()
        files = [(p, r) for p, r in files if out_resolved not in p.resolve().parents]
    inputs = {p.resolve() for p, _ in files}
    args = [(p, r, out, options, plan, fmt, inputs, chunk_rows, dask) for p, r in files]
    outcomes = []
    if jobs > 1 and len(args) > 1:
        # a worker that dies (out of memory, a crash in native code) fails its file only
        outcomes = map_isolated(_process_star, args, jobs, name_of=lambda a: str(a[1]),
                                on_failure=lambda a, why: FileOutcome(str(a[1]), error=why),
                                on_result=on_file)
    else:
        workers = min(2, cpu_count())  # columns in threads: the file is alone
        for arg in args:
            result = process_file(*arg, on_rows=on_rows, workers=workers)
            outcomes.append(result)
            if on_file:
                on_file(result)
    report = _assemble(files, outcomes, options, plan_source)
    new_plan = Plan(tables=[t for o in outcomes for t in o.plans], options=options.to_dict())
    if out is not None:
        _write_reports(out, report)
    return RunResult(report=report, plan=new_plan, outcomes=outcomes)


def _process_star(args: tuple) -> FileOutcome:
    return process_file(*args)


def _assemble(files: list[tuple[Path, Path]], outcomes: list[FileOutcome], options: Options,
              plan_source: str | Path | None) -> dict[str, Any]:
    entries = [e for o in outcomes for e in o.entries]
    report: dict[str, Any] = {
        "files": entries,
        "unresolved": [u for o in outcomes for u in o.unresolved],
        "errors": [{"file": o.input, "message": o.error} for o in outcomes if o.error],
        "summary": rpt.summarise(entries),
        "caution": rpt.CAUTION,
        "provenance": rpt.provenance(),
        "options": options.to_dict(),
        "inputs": [{"file": str(rel), "sha256": rpt.sha256_file(path)} for path, rel in files],
    }
    if plan_source is not None:
        report["plan"] = {"file": str(plan_source),
                          "sha256": rpt.sha256_file(Path(plan_source))}
    return report


def _write_reports(out: Path, report: dict[str, Any]) -> None:
    import json

    from harmonize.html import render_html
    from harmonize.sources import atomic_write_text
    out.mkdir(parents=True, exist_ok=True)
    atomic_write_text(out / rpt.REPORT_NAME, json.dumps(report, ensure_ascii=False, indent=1))
    atomic_write_text(out / rpt.UNRESOLVED_NAME, rpt.unresolved_csv(report["unresolved"]))
    atomic_write_text(out / rpt.HTML_NAME, render_html(report))


def frame_as_text(frame: pd.DataFrame) -> tuple[pd.DataFrame, dict[str, dict[str, str]]]:
    """A DataFrame's cells as text, as a reader would give them, and the typed-cell tags:
    typed columns (numbers, datetimes, booleans) are typed evidence, as in a workbook."""
    texts, typed = {}, {}
    for position, label in enumerate(frame.columns):
        name = str(label) if str(label).strip() else f"column_{position + 1}"
        texts[name], tags = _column_text(frame.iloc[:, position])
        if tags:
            typed[name] = tags
    return pd.DataFrame(texts, dtype=object, index=range(len(frame))), typed


def _column_text(column: pd.Series) -> tuple[np.ndarray, dict[str, str]]:
    missing = column.isna().to_numpy()
    tag = None
    if pd.api.types.is_bool_dtype(column):
        text, tag = column.map({True: "TRUE", False: "FALSE"}), "boolean"
    elif pd.api.types.is_datetime64_any_dtype(column):
        stamps = column.dt.tz_localize(None) if column.dt.tz is not None else column
        midnight = bool((stamps.dropna() == stamps.dropna().dt.normalize()).all())
        pattern = "%Y-%m-%d" if midnight and column.dt.tz is None else "%Y-%m-%dT%H:%M:%S"
        text, tag = column.dt.strftime(pattern), ("date" if pattern == "%Y-%m-%d" else
                                                  "datetime")
        if column.dt.tz is not None:
            text = _per_distinct(column, lambda t: t.isoformat())
    elif pd.api.types.is_integer_dtype(column):
        text, tag = column.astype("Int64").astype(str), "number"
    elif pd.api.types.is_float_dtype(column):
        # shortest round-trip digits, never scientific notation: 1e-05 -> 0.00001
        text = _per_distinct(column, lambda v: np.format_float_positional(v, unique=True,
                                                                          trim="-"))
        tag = "number"
    else:
        text = column.astype(object).where(~missing, "").map(str)
    values = text.astype(object).to_numpy().copy()
    values[missing] = ""
    tags = dict.fromkeys(pd.unique(values[~missing]).tolist(), tag) if tag else {}
    return values, tags


def _per_distinct(column: pd.Series, render: Callable[[Any], str]) -> pd.Series:
    """``render`` each distinct non-missing value once, then map back onto the rows."""
    codes, uniques = pd.factorize(column, use_na_sentinel=True)
    texts = np.array([render(u) for u in uniques] + [""], dtype=object)
    return pd.Series(texts[codes], index=column.index, dtype=object)


def harmonize_frame(frame: pd.DataFrame, *, options: Options | None = None,
                    plan: TablePlan | None = None, name: str = "<frame>"
                    ) -> tuple[pd.DataFrame, dict[str, Any], TablePlan]:
    """Harmonise a DataFrame: (output frame of text, report entry with its unresolved
    cells under "unresolved", the plan used). Text columns are read like a CSV's cells;
    typed columns (numbers, datetimes, booleans) count as typed evidence, as a
    workbook's typed cells do. Rows are numbered as a spreadsheet would (header = 1)."""
    options = options or Options()
    text, typed = frame_as_text(frame)
    evidence = TableEvidence.from_frame(text, file=name, typed=typed)
    table_plan = plan or decide_table(evidence, options)
    result = apply_table(evidence, table_plan, options)
    entry, unresolved = rpt.table_entry(result, input_name=name, sheet=None, output=None)
    entry["unresolved"] = unresolved
    return result.frame, entry, table_plan


def cpu_count() -> int:
    return max(1, len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity")
               else os.cpu_count() or 1)
