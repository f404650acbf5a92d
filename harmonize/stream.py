"""Large delimited files in bounded memory: evidence from a full pass, then apply by chunks.

Pass one reads the file chunk by chunk and adds up each column's distinct values and
counts (up to ``EVIDENCE_CAP`` distinct values a column; beyond that, further new values
are counted but not kept, and the report says so). Row order and the columns that split
rows into groups are read from the first chunk, which keeps its row codes. The engines
decide on that evidence exactly as for a small file. Pass two converts chunk by chunk
under the resulting plan and appends each chunk to one temporary output, renamed into
place at the end, so memory stays flat however long the file is.
"""

from __future__ import annotations

import io
from collections.abc import Callable, Iterator
from dataclasses import dataclass, replace
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from harmonize.apply import TableResult, apply_table
from harmonize.arrowcsv import write_csv
from harmonize.decide import decide_table
from harmonize.delimited import SPACES, note_lines_below, set_aside_notes
from harmonize.engines.base import Outcome
from harmonize.evidence import ColumnEvidence, TableEvidence
from harmonize.header_units import ROWS_LOOKED_AT, names_with_units, units_note
from harmonize.options import Options
from harmonize.plan import Plan, TablePlan
from harmonize.safety import neutralise_coded
from harmonize.sources import SourceError, _atomic_write, _name_columns, sniff_csv

CHUNK_ROWS = 250_000
EVIDENCE_CAP = 300_000   # distinct values kept per column for deciding
SNIFF_BYTES = 1 << 16
STREAM_ABOVE_BYTES = 256 << 20  # delimited files larger than this stream by default


class _Tally:
    """Distinct values and counts of one column over every chunk, in first-seen order as
    for a whole file (hash lookups, no sorting, no loops over values)."""

    def __init__(self) -> None:
        self.values = pd.Index([], dtype=object)
        self.counts = np.zeros(0, dtype=np.int64)
        self.overflow_rows = 0

    def add(self, series: pd.Series) -> None:
        chunk = series.value_counts(sort=False)
        counts = chunk.to_numpy(dtype=np.int64)
        where = self.values.get_indexer(chunk.index)
        seen = where >= 0
        self.counts[where[seen]] += counts[seen]  # each value once per chunk
        new = np.flatnonzero(~seen)
        room = max(EVIDENCE_CAP - len(self.values), 0)
        self.overflow_rows += int(counts[new[room:]].sum())
        if room and len(new):
            kept = new[:room]
            self.values = self.values.append(chunk.index[kept])
            self.counts = np.concatenate([self.counts, counts[kept]])


@dataclass(frozen=True)
class Layout:
    """How a delimited file is laid out: what the whole-file reader finds, so that a
    streamed file gives the same table (title lines above, note lines below set aside)."""

    encoding: str
    delimiter: str
    skip_lines: int = 0    # lines above the header
    above: tuple[str, ...] = ()   # title lines among them
    below: tuple[str, ...] = ()   # note lines below the data (each one record)
    names: tuple[str, ...] | None = None   # the header with a row of units joined

    @property
    def header_row(self) -> int:
        return self.skip_lines + (2 if self.names else 1)

    def warnings(self) -> list[str]:
        joined = [units_note(self.skip_lines + 1)] if self.names else []
        return set_aside_notes(self.above, self.below) + joined


def layout(path: Path) -> Layout:
    with path.open("rb") as handle:
        head = handle.read(SNIFF_BYTES)
        handle.seek(max(0, path.stat().st_size - SNIFF_BYTES))
        tail = handle.read()
    cut = max(head.rfind(b"\n"), 0) if len(head) == SNIFF_BYTES else len(head)
    forced = "\t" if path.suffix.lower() == ".tsv" else None
    dialect = sniff_csv(head[:cut] or head, forced)  # whole lines: no character cut in two
    # a one-column file: split on a control character that text does not hold
    delimiter = dialect.delimiter or "\x1f"
    if delimiter == SPACES:
        delimiter = r"\s+"   # runs of spaces, as the whole-file reader splits them
    ending = tail.decode(dialect.encoding.replace("-sig", ""), errors="replace")
    notes = note_lines_below(ending, dialect.delimiter)[1]
    shape = Layout(dialect.encoding, delimiter, dialect.skip_lines, dialect.set_aside,
                   tuple(notes))
    return replace(shape, names=_units_joined(head[:cut] or head, shape))


def _units_joined(head: bytes, shape: Layout) -> tuple[str, ...] | None:
    """The header with the units of the row under it joined, when that row holds units."""
    text = head.decode(shape.encoding, errors="replace")
    try:
        first = pd.read_csv(io.StringIO(text), sep=shape.delimiter, dtype=object, header=None,
                            keep_default_na=False, na_filter=False, quotechar='"',
                            skiprows=shape.skip_lines, nrows=ROWS_LOOKED_AT + 2,
                            skip_blank_lines=False)
    except (pd.errors.ParserError, pd.errors.EmptyDataError):
        return None
    rows = first.astype(str).values.tolist()
    if len(rows) < 3:
        return None
    names = names_with_units(rows[0], rows[1:])
    return tuple(names) if names else None


def chunks(path: Path, rows: int = CHUNK_ROWS) -> Iterator[pd.DataFrame]:
    """The file's rows as text frames of at most ``rows`` rows, header names checked."""
    shape = layout(path)
    names: list[str] | None = None
    try:
        reader = pd.read_csv(path, sep=shape.delimiter, encoding=shape.encoding, dtype=object,
                             keep_default_na=False, na_filter=False, chunksize=rows,
                             quotechar='"', doublequote=True, engine="c", header=0,
                             skiprows=shape.skip_lines, skip_blank_lines=False)
        for frame in _without_last(reader, len(shape.below)):
            if names is None:
                header = list(shape.names or [str(c) for c in frame.columns])
                names = _name_columns(path, None, header, [])
                if shape.names:
                    frame = frame.iloc[1:]   # the row of units
            frame.columns = pd.Index(names, dtype=object)
            yield frame
    except (pd.errors.ParserError, UnicodeDecodeError) as exc:
        raise SourceError(path, f"cannot read while streaming: {exc}") from None


def _without_last(frames: Iterator[pd.DataFrame], n: int) -> Iterator[pd.DataFrame]:
    """The frames, the last one trimmed by ``trim_tail`` (one frame is held back to
    know which is last)."""
    held: pd.DataFrame | None = None
    for frame in frames:
        if held is not None:
            yield held
        held = frame
    if held is not None:
        held = trim_tail(held, n)
        if len(held):
            yield held


def trim_tail(frame: pd.DataFrame, note_lines: int) -> pd.DataFrame:
    """A file's last rows less its ``note_lines`` note lines and the empty rows that end
    it, as the whole-file reader trims them (blank lines within stay as empty rows)."""
    frame = frame.iloc[:max(len(frame) - note_lines, 0)]
    filled = np.flatnonzero(frame.fillna("").ne("").any(axis=1).to_numpy())
    return frame.iloc[:filled[-1] + 1 if len(filled) else 0]


def gather(path: Path, name: str, rows: int = CHUNK_ROWS) -> tuple[TableEvidence, int, dict]:
    """Evidence over the whole file (row codes from the first chunk), total rows, notes."""
    tallies: dict[str, _Tally] = {}
    first: TableEvidence | None = None
    total = 0
    for frame in chunks(path, rows):
        if first is None:
            first = TableEvidence.from_frame(frame, file=name)
        for column in frame.columns:
            tallies.setdefault(column, _Tally()).add(frame[column])
        total += len(frame)
    if first is None:
        raise SourceError(path, "no data rows")
    columns = [_with_tally(col, tallies[col.name]) for col in first.columns]
    shape = layout(path)
    notes = {"streamed": True, "chunk_rows": rows, "row_order_rows": first.n_rows,
             "capped_columns": [c for c, t in tallies.items() if t.overflow_rows],
             "header_row": shape.header_row, "warnings": shape.warnings()}
    return TableEvidence(file=name, sheet=None, n_rows=first.n_rows, columns=columns), total, notes


def _with_tally(first: ColumnEvidence, tally: _Tally) -> ColumnEvidence:
    values = tally.values.to_numpy(dtype=object)
    counts = tally.counts
    position = pd.Index(values).get_indexer(first.values)
    codes = np.where(first.codes >= 0, position[first.codes], -1) if first.codes is not None \
        else None
    return ColumnEvidence(first.name, first.index, values, counts, codes, first.typed,
                          first.formats)


@dataclass
class StreamResult:
    plan: TablePlan
    sample: TableResult            # the first chunk's result (examples, evidence)
    counts: dict[str, dict[str, int]]
    missing: dict[str, dict[str, int]]
    unresolved: dict[str, list[dict[str, Any]]]
    rows: int
    notes: dict


def harmonize_stream(path: Path, name: str, dest: Path | None, options: Options,
                     plan: Plan | None = None, rows: int = CHUNK_ROWS,
                     on_chunk: Callable[[int], None] | None = None) -> StreamResult:
    """Decide (or take the plan), then convert and write chunk by chunk."""
    evidence, total, notes = gather(path, name, rows)
    table_plan = None
    if plan is not None:
        table_plan = plan.table_for(name, None, [c.name for c in evidence.columns])
    table_plan = table_plan or decide_table(evidence, options)
    state: dict[str, Any] = {"done": 0, "sample": None, "counts": {}, "missing": {},
                             "unresolved": {}}

    def convert_all(handle: Any) -> None:
        for frame in chunks(path, rows):
            result = apply_table(TableEvidence.from_frame(frame, file=name), table_plan, options)
            _accumulate(state, result)
            if handle is not None:
                coded = result.coded_frame()
                if options.neutralise_formulas:
                    coded = neutralise_coded(coded).frame
                write_csv(coded, handle, header=state["done"] == 0)
            state["done"] += len(frame)
            if on_chunk:
                on_chunk(state["done"])

    if dest is None:
        convert_all(None)
    else:
        _atomic_write(dest, convert_all)
    return StreamResult(table_plan, state["sample"], state["counts"], state["missing"],
                        state["unresolved"], total, notes)


def _accumulate(state: dict[str, Any], result: TableResult) -> None:
    if state["sample"] is None:
        state["sample"] = result
    for column in result.columns:
        name = column.plan.name
        tally = state["counts"].setdefault(name, dict.fromkeys((o.label for o in Outcome), 0))
        for label, n in column.counts().items():
            tally[label] += n
        missing = state["missing"].setdefault(name, {})
        for token, n in column.missing.items():
            missing[token] = missing.get(token, 0) + n
        for cell in column.unresolved:
            state["unresolved"].setdefault(name, []).append(
                {**cell, "offset": cell["offset"] + state["done"]})
