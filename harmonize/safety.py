"""Guards against hostile or broken inputs and against unsafe outputs.

* ``Limits``: caps on what one input may make harmonize hold in memory (cells, columns,
  characters in one cell, bytes an archive unpacks to, compression ratio), checked
  before parsing wherever the file declares its size. Configurable in code or through
  ``HARMONIZE_MAX_*`` environment variables.
* ``check_archive`` / ``scan_ods_content``: a workbook's zip is vetted from its central
  directory (declared sizes, ratio, encrypted members) before any XML is parsed; an ODS
  sheet's repeat counts are added up with a DTD-refusing parser before calamine
  expands them.
* ``neutralise_frame`` / ``neutralise_cell``: text that a spreadsheet would run as a
  formula gets a leading apostrophe (OWASP "CSV Injection").
* ``failure_line`` / ``map_isolated``: one file's unexpected failure, even a worker
  process that dies, becomes one line for that file while the other files go on.
* ``run_cli``: the console entry point; an unexpected error prints one line, never a
  traceback.
"""

from __future__ import annotations

import multiprocessing
import os
import re
import signal
import sys
import zipfile
from collections.abc import Callable, Iterable, Mapping, Sequence
from concurrent.futures import Future, ProcessPoolExecutor, ThreadPoolExecutor
from concurrent.futures.process import BrokenProcessPool
from dataclasses import dataclass, field, fields, replace
from typing import IO, Any, NoReturn, TypeVar

import numpy as np
import pandas as pd

from harmonize.arrowcsv import CodedColumn, CodedFrame

__all__ = [
    "FORMULA_TRIGGERS",
    "Limits",
    "LimitError",
    "Neutralised",
    "check_archive",
    "failure_line",
    "map_isolated",
    "neutralise_cell",
    "neutralise_frame",
    "run_cli",
    "scan_ods_content",
]

_MIB = 1 << 20


class LimitError(ValueError):
    """An input breaks a limit or is hostile; ``str(e)`` is one line without the path."""


@dataclass(frozen=True)
class Limits:
    """What one input file may make harmonize hold.

    max_cells:          cells in one sheet or table (rows x columns).
    max_columns:        columns in one sheet or table (16 384 is the widest XLSX sheet,
                        ECMA-376 Part 1 §18.3.1.13, from memory).
    max_cell_chars:     characters in one cell.
    max_unpacked_bytes: total uncompressed size an archive (XLSX/ODS) declares.
    max_ratio:          uncompressed/compressed size of one archive member of at least
                        ``ratio_floor_bytes``; ordinary workbook XML compresses 5-30 times
                        (common practice, no source), a single deflate stream at most
                        about 1032 times (RFC 1951 §3.2.5 lengths, derived), so a cap
                        well below 1032 catches single-layer bombs.
    max_members:        files inside one archive.
    """

    max_cells: int = 50_000_000
    max_columns: int = 16_384
    max_cell_chars: int = 10_000_000
    max_unpacked_bytes: int = 2 * 1024 * _MIB
    max_ratio: float = 200.0
    ratio_floor_bytes: int = _MIB
    max_members: int = 10_000

    ENV_PREFIX = "HARMONIZE_"

    @classmethod
    def from_env(cls, environ: Mapping[str, str] | None = None) -> Limits:
        """Defaults overridden by HARMONIZE_MAX_CELLS, HARMONIZE_MAX_COLUMNS, ... when set."""
        environ = os.environ if environ is None else environ
        changes: dict[str, Any] = {}
        for item in fields(cls):
            raw = environ.get(cls.ENV_PREFIX + item.name.upper())
            if raw is None or not raw.strip():
                continue
            kind = float if item.type in ("float", float) else int
            try:
                value = kind(raw.strip().replace("_", ""))
            except ValueError:
                raise LimitError(
                    f"{cls.ENV_PREFIX}{item.name.upper()}={raw!r} is not a number"
                ) from None
            if value <= 0:
                raise LimitError(f"{cls.ENV_PREFIX}{item.name.upper()} must be positive")
            changes[item.name] = value
        return replace(cls(), **changes)


# --------------------------------------------------------------------------
# Archives (XLSX, XLSM, ODS): vetted from the central directory before parsing


def check_archive(archive: zipfile.ZipFile, limits: Limits) -> None:
    """Refuse a zip whose declared contents would be a bomb or cannot be read.

    Python's zipfile never hands out more bytes than a member declares (it stops at
    the declared size and the CRC check then fails), so declared sizes bound the work.
    """
    members = archive.infolist()
    if len(members) > limits.max_members:
        raise LimitError(f"archive holds {len(members)} files, over the limit {limits.max_members}")
    if any(info.flag_bits & 0x1 for info in members):  # APPNOTE 4.4.4 bit 0: encrypted
        raise LimitError("password-protected (encrypted) archive members")
    total = sum(info.file_size for info in members)
    if total > limits.max_unpacked_bytes:
        raise LimitError(
            f"unpacks to {total} bytes, over the limit {limits.max_unpacked_bytes}"
            " (a decompression bomb or a file too large to read)"
        )
    for info in members:
        if info.file_size < limits.ratio_floor_bytes:
            continue
        ratio = info.file_size / max(info.compress_size, 1)
        if ratio > limits.max_ratio:
            raise LimitError(
                f"member {info.filename!r} expands {ratio:.0f} times"
                f" (over the limit {limits.max_ratio:g}): a decompression bomb"
            )


_TABLE_NS = "urn:oasis:names:tc:opendocument:xmlns:table:1.0"
_OFFICE_NS = "urn:oasis:names:tc:opendocument:xmlns:office:1.0"
_ROW = f"{{{_TABLE_NS}}}table-row"
_CELLS = (f"{{{_TABLE_NS}}}table-cell", f"{{{_TABLE_NS}}}covered-table-cell")
_TABLE = f"{{{_TABLE_NS}}}table"
_ROWS_REPEATED = f"{{{_TABLE_NS}}}number-rows-repeated"
_COLS_REPEATED = f"{{{_TABLE_NS}}}number-columns-repeated"
_VALUE_TYPE = f"{{{_OFFICE_NS}}}value-type"


@dataclass
class _SheetExtent:
    name: str
    rows: int = 0  # rows seen so far, repeats expanded
    used_rows: int = 0  # last row holding a value
    used_cols: int = 0  # widest row holding a value


def scan_ods_content(source: IO[bytes], limits: Limits) -> dict[str, tuple[int, int]]:
    """Used rows and columns per sheet of an ODS content.xml, repeats expanded.

    Parsed with defusedxml, which refuses DTDs and entities, so entity expansion is
    refused here whatever calamine would do. Only cells holding a value count towards
    the used area: the empty repeated cells and rows that office suites write up to the
    sheet's edge are padding, not data.
    """
    from defusedxml import DefusedXmlException
    from defusedxml.ElementTree import iterparse

    extents: dict[str, tuple[int, int]] = {}
    sheet: _SheetExtent | None = None
    try:
        for event, element in iterparse(source, events=("start", "end"), forbid_dtd=True):
            if event == "start":
                if element.tag == _TABLE:
                    sheet = _SheetExtent(element.get(f"{{{_TABLE_NS}}}name") or "?")
                continue
            if element.tag == _ROW and sheet is not None:
                _count_row(sheet, element, limits)
                element.clear()
            elif element.tag == _TABLE and sheet is not None:
                extents[sheet.name] = (sheet.used_rows, sheet.used_cols)
                sheet = None
                element.clear()
    except DefusedXmlException as exc:
        raise LimitError(f"refusing XML with a DTD or entities ({type(exc).__name__})") from None
    except SyntaxError as exc:  # xml.etree.ElementTree.ParseError
        raise LimitError(f"malformed content.xml ({exc})") from None
    return extents


def _count_row(sheet: _SheetExtent, row: Any, limits: Limits) -> None:
    repeat = _repeat(row.get(_ROWS_REPEATED))
    width = col = 0
    for cell in row:
        if cell.tag not in _CELLS:
            continue
        col += _repeat(cell.get(_COLS_REPEATED))
        if cell.get(_VALUE_TYPE) is not None or len(cell) or (cell.text or "").strip():
            width = col
    sheet.rows += repeat
    if width:
        sheet.used_rows = sheet.rows
        sheet.used_cols = max(sheet.used_cols, width)
    if sheet.used_cols > limits.max_columns:
        raise LimitError(
            f"sheet '{sheet.name}' has {sheet.used_cols} columns, over the limit"
            f" {limits.max_columns}"
        )
    cells = sheet.used_rows * sheet.used_cols
    if cells > limits.max_cells:
        raise LimitError(
            f"sheet '{sheet.name}' has at least {cells} cells, over the limit {limits.max_cells}"
        )


def _repeat(raw: str | None) -> int:
    if raw is None:
        return 1
    try:
        return max(1, int(raw))
    except ValueError:
        raise LimitError(f"malformed repeat count {raw[:20]!r} in content.xml") from None


# --------------------------------------------------------------------------
# Formula injection
#
# OWASP "CSV Injection": a cell whose text starts with = + - @ tab or carriage return
# may be run as a formula by a spreadsheet; prefix it with a single quote. Exempt:
# values that are plain numbers (-12.5, -1e3, +4420794609, an E.164 phone's digits),
# which a spreadsheet reads as numbers, not formulas, and which harmonize's number,
# quantity and phone outputs must keep exactly.

FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r")
_PLAIN_NUMBER = re.compile(r"[+-]?(?:\d+(?:\.\d*)?|\.\d+)(?:[eE][+-]?\d+)?")


def neutralise_cell(text: str) -> str:
    """The text a spreadsheet shows as written: a formula payload gets a leading '."""
    if text.startswith(FORMULA_TRIGGERS) and not _PLAIN_NUMBER.fullmatch(text):
        return "'" + text
    return text


@dataclass
class Neutralised:
    frame: Any  # a DataFrame, or a CodedFrame from ``neutralise_coded``
    cells: dict[str, int] = field(default_factory=dict)  # output column -> cells changed
    headers: list[str] = field(default_factory=list)  # header texts changed

    def notes(self) -> list[str]:
        """Report lines saying what was prefixed, for the table's warnings."""
        found = [f"{count} cells of column {name!r} start like a formula (= + - @ tab CR):"
                 " prefixed with ' so a spreadsheet shows them as text"
                 for name, count in self.cells.items()]
        if self.headers:
            found.append(f"headers {', '.join(map(repr, self.headers))} prefixed with '")
        return found


def neutralise_frame(frame: pd.DataFrame) -> Neutralised:
    """A copy of ``frame`` safe to open in a spreadsheet, and what was changed.

    Works on each column's distinct values; columns without a trigger are not copied;
    missing cells stay as given.
    """
    import pyarrow as pa
    out = frame.copy(deep=False)
    result = Neutralised(out)
    for position in range(frame.shape[1]):
        column = frame.iloc[:, position]
        codes, uniques = pd.factorize(column, use_na_sentinel=True)
        texts = np.array([v if isinstance(v, str) else "" for v in uniques.tolist()],
                         dtype=object)
        hit = _formula_like(texts, pa.array(texts, type=pa.large_string()))
        if not hit.any():
            continue
        fixed = np.asarray(uniques, dtype=object).copy()
        fixed[hit] = ["'" + t for t in texts[hit].tolist()]
        values = column.to_numpy(dtype=object).copy()
        present = codes >= 0
        values[present] = fixed[codes[present]]
        out.isetitem(position, pd.Series(values, index=column.index, dtype=object,
                                         name=column.name))
        result.cells[str(frame.columns[position])] = int(np.isin(codes,
                                                                 np.flatnonzero(hit)).sum())
    safe, result.headers = _safe_headers([str(c) for c in frame.columns])
    if result.headers:
        out.columns = pd.Index(safe, dtype=object)
    return result


def neutralise_coded(table: CodedFrame) -> Neutralised:
    """As ``neutralise_frame``, on each column's distinct texts (one Arrow scan each)."""
    result = Neutralised(table)
    columns = []
    with ThreadPoolExecutor(max_workers=2) as pool:  # Arrow scans release the GIL
        hits = list(pool.map(lambda c: _formula_like(c.values, c.arrow()), table.columns))
    for name, column, hit in zip(table.names, table.columns, hits):
        if hit.any():
            count = int(np.bincount(column.codes, minlength=len(hit))[hit].sum())
            if count:
                result.cells[name] = count
            fixed = column.values.copy()
            fixed[hit] = ["'" + t for t in fixed[hit].tolist()]
            column = CodedColumn(fixed, column.codes)
        columns.append(column)
    safe, result.headers = _safe_headers(table.names)
    result.frame = CodedFrame(safe, columns, table.n_rows)
    return result


def _safe_headers(names: list[str]) -> tuple[list[str], list[str]]:
    """(every header made safe, the headers that changed)."""
    safe = [neutralise_cell(name) for name in names]
    return safe, [name for name, new in zip(names, safe) if new != name]


def _formula_like(texts: np.ndarray, arrow: Any) -> np.ndarray:
    """Which texts ``neutralise_cell`` would prefix: Arrow finds the few that start with a
    trigger and are not ASCII plain numbers; Python's rule decides those (its \\d also
    takes other scripts' digits)."""
    import pyarrow.compute as pc
    hit = np.zeros(len(texts), dtype=bool)
    if not len(texts):
        return hit
    maybe = pc.and_(pc.match_substring_regex(arrow, r"^[=+\-@\t\r]"),
                    pc.invert(pc.match_substring_regex(arrow, _ASCII_PLAIN_NUMBER)))
    for i in np.flatnonzero(maybe.to_numpy(zero_copy_only=False)).tolist():
        hit[i] = neutralise_cell(texts[i]) != texts[i]
    return hit


_ASCII_PLAIN_NUMBER = r"^[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?$"


# --------------------------------------------------------------------------
# Failures that must stay inside one file

T = TypeVar("T")
R = TypeVar("R")


def failure_line(name: str | os.PathLike[str], exc: BaseException) -> str:
    """One line for an unexpected error while handling one file."""
    if isinstance(exc, MemoryError):
        return f"{name}: out of memory while reading or converting; the file was skipped"
    if isinstance(exc, RecursionError):
        return f"{name}: nested too deeply to process; the file was skipped"
    detail = " ".join(str(exc).split())[:200]
    kind = type(exc).__name__
    return (
        f"{name}: internal error ({kind}{': ' + detail if detail else ''});"
        " the file was skipped, please report this"
    )


def _death_line(name: str, code: int | None) -> str:
    cause = ""
    if code is not None and code < 0:
        try:
            cause = f" (killed by {signal.Signals(-code).name})"
        except ValueError:
            cause = f" (killed by signal {-code})"
    return (
        f"{name}: the worker process handling this file died{cause}, often from running"
        " out of memory; the file was skipped"
    )


def map_isolated(
    func: Callable[[T], R],
    items: Sequence[T],
    jobs: int,
    on_failure: Callable[[T, str], R],
    name_of: Callable[[T], str] = str,
    on_result: Callable[[R], None] | None = None,
) -> list[R]:
    """``[func(item) for item in items]`` on ``jobs`` processes, in order.

    An exception from ``func`` becomes ``on_failure(item, failure_line(...))``. When a
    worker dies (killed, out of memory, a crash in native code), the pool breaks and
    every unfinished item is re-run alone in a fresh process, so only the item that
    kills its worker fails. ``func`` must be picklable (a module-level function).
    """
    results: list[R | None] = [None] * len(items)
    orphans: list[int] = []
    with ProcessPoolExecutor(max_workers=max(1, jobs)) as pool:
        futures = [pool.submit(func, item) for item in items]
        for index, future in enumerate(futures):
            outcome = _collect(future, items[index], on_failure, name_of)
            if outcome is _BROKEN:
                orphans.append(index)
                continue
            results[index] = outcome
            if on_result is not None:
                on_result(outcome)
    for index in orphans:
        results[index] = _run_alone(func, items[index], on_failure, name_of)
        if on_result is not None:
            on_result(results[index])
    return results  # type: ignore[return-value]


_BROKEN: Any = object()


def _collect(
    future: Future[R], item: T, on_failure: Callable[[T, str], R], name_of: Callable[[T], str]
) -> R:
    try:
        return future.result()
    except BrokenProcessPool:
        return _BROKEN
    except Exception as exc:
        return on_failure(item, failure_line(name_of(item), exc))


def _run_alone(
    func: Callable[[T], R], item: T, on_failure: Callable[[T, str], R], name_of: Callable[[T], str]
) -> R:
    """Run one item in its own process; a death is told apart by the exit code."""
    context = multiprocessing.get_context()
    receive, send = context.Pipe(duplex=False)
    child = context.Process(target=_child, args=(func, item, name_of(item), send), daemon=True)
    child.start()
    send.close()
    try:
        succeeded, payload = receive.recv()
    except EOFError:  # the child died before it could answer
        child.join()
        return on_failure(item, _death_line(name_of(item), child.exitcode))
    finally:
        receive.close()
    child.join()
    return payload if succeeded else on_failure(item, payload)


def _child(func: Callable[[T], R], item: T, name: str, send: Any) -> None:
    try:
        answer: tuple[bool, Any] = (True, func(item))
    except Exception as exc:
        answer = (False, failure_line(name, exc))
    send.send(answer)
    send.close()


# --------------------------------------------------------------------------
# The console entry point


def run_cli(command: Any, args: Iterable[str] | None = None) -> NoReturn:
    """Run a click command; an unexpected error prints one line and exits 3."""
    try:
        command.main(args=None if args is None else list(args), standalone_mode=True)
    except SystemExit:
        raise
    except MemoryError:
        _die("out of memory; use smaller inputs or raise the machine's memory")
    except Exception as exc:
        detail = " ".join(str(exc).split())[:300]
        _die(f"internal error ({type(exc).__name__}: {detail}); please report this")
    sys.exit(0)


def _die(message: str) -> NoReturn:
    sys.stderr.write(f"harmonize: {message}\n")
    sys.exit(3)

