"""Reading and writing harmonize's inputs and outputs.

Every cell comes back as the exact text the file holds (no NA guessing, no
stripping). Cells that a workbook or Parquet file stores *typed* (dates,
numbers, booleans) are rendered as ISO / plain-decimal text and tagged in
``Table.typed``, so engines can tell a real date cell from a date-looking
string. Every write goes through a temp file in the destination folder and
``os.replace``, so a destination is never seen half-written.

Choices the interface leaves open:

* An empty worksheet comes back as a Table with zero columns and a warning;
  a workbook whose sheets are all empty raises ``SourceError`` ("empty file"),
  like an empty CSV.
* A delimited file with a single column reports ``CsvDialect.delimiter == ""``.
* Trailing fully-empty rows are dropped everywhere; trailing columns whose
  header and cells are all empty are dropped too (spreadsheet padding or a
  trailing delimiter on every line, never data).
* Workbook durations (``[h]:mm`` formats) are tagged ``"duration"``.
"""

from __future__ import annotations

import collections
import contextlib
import csv
import dataclasses
import datetime as dt
import decimal
import io
import os
import re
import tempfile
import unicodedata
import warnings
import zipfile
from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from pathlib import Path
from typing import IO, Any

import numpy as np
import pandas as pd

from harmonize.arrowcsv import (
    CodedColumn,
    CodedFrame,
    CodedRead,
    drop_unused,
    read_coded,
    write_csv,
)
from harmonize.delimited import (
    FIELD_SEPARATOR,
    MAX_TITLE_LINES,
    ROWS_BELOW_HEADER,
    SPACES,
    header_index,
    note_lines_below,
    set_aside_notes,
    spaced_fields,
    table_start,
)
from harmonize.delimited import LINE_BREAK as _LINE_BREAK
from harmonize.delimited import SNIFF_CHARS as _SNIFF_CHARS
from harmonize.delimited import shown_line as _shown
from harmonize.header_units import ROWS_LOOKED_AT, names_with_units, units_note
from harmonize.safety import LimitError, Limits, check_archive, scan_ods_content

__all__ = [
    "SUPPORTED_SUFFIXES",
    "CsvDialect",
    "Limits",
    "SourceError",
    "Table",
    "atomic_write_text",
    "find_inputs",
    "read_tables",
    "sniff_csv",
    "write_table",
    "write_workbook",
]

SUPPORTED_SUFFIXES: frozenset[str] = frozenset(
    {".csv", ".tsv", ".txt", ".xlsx", ".xlsm", ".xls", ".ods", ".parquet"}
)
_DELIMITED = frozenset({".csv", ".tsv", ".txt"})
_WORKBOOKS = frozenset({".xlsx", ".xlsm"})
# Separators for parsing a one-column file: control characters that text data
# practically never holds (the first one absent from the text is used).
_NO_SPLIT_SEPARATORS = ("\x1f", "\x1e", "\x1d", "\x1c")
_ENCODING_CANDIDATES = ["cp1252", "cp1250", "cp1251", "latin_1", "shift_jis", "gb18030"]
_OLE_MAGIC = b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1"
_XLSX_MAX_ROWS = 1_048_576
_XLSX_MAX_CELL_CHARS = 32_767  # Excel specifications and limits (from memory)
_MAX_LISTED_ROWS = 10


class SourceError(ValueError):
    """One clear line naming file (and sheet/row/column where known).

    ``str(e)`` reads "path: sheet 'S': row 7: reason"; absent parts are left out.
    """

    def __init__(
        self,
        path: str | os.PathLike[str],
        reason: str,
        *,
        sheet: str | None = None,
        row: int | None = None,
        column: str | None = None,
    ) -> None:
        self.path = str(path)
        self.sheet = sheet
        self.row = row
        self.column = column
        self.reason = re.sub(r"\s*[\r\n]+\s*", " ", str(reason))  # always one line
        parts = [self.path]
        if sheet is not None:
            parts.append(f"sheet '{sheet}'")
        if row is not None:
            parts.append(f"row {row}")
        parts.append(self.reason)
        super().__init__(": ".join(parts))

    def __reduce__(self) -> tuple[Any, ...]:
        # keyword-only fields: the default exception pickling would lose them,
        # and errors cross process boundaries when folders are read in a pool
        return (_rebuild_source_error, (self.path, self.reason, self.sheet, self.row, self.column))


def _rebuild_source_error(
    path: str, reason: str, sheet: str | None, row: int | None, column: str | None
) -> SourceError:
    return SourceError(path, reason, sheet=sheet, row=row, column=column)


@dataclass
class CsvDialect:
    encoding: str  # Python codec name actually used
    delimiter: str  # "" for a one-column file
    bom: bool
    skip_lines: int = 0  # lines above the header: blank ones and titles set aside
    set_aside: tuple[str, ...] = ()  # the title lines among them


@dataclass
class Table:
    """One sheet (or the one table of a CSV/Parquet file), every cell as text."""

    path: Path
    sheet: str | None
    frame: pd.DataFrame
    header_row: int
    typed: dict[str, dict[str, str]]
    formats: dict[str, collections.Counter[str]]
    dialect: CsvDialect | None
    date1904: bool = False
    warnings: list[str] = field(default_factory=list)
    # the frame's columns dictionary-encoded, when the reader had them (saves the
    # evidence step a second pass over every cell)
    coded: list[CodedColumn] | None = None

    @property
    def n_rows(self) -> int:
        return len(self.frame)

    @property
    def column_names(self) -> list[str]:
        return [str(c) for c in self.frame.columns]


class CodedTable(Table):
    """A Table read dictionary-encoded: ``frame`` is built from the codes when first
    asked for (the pipeline works on the codes and never needs it)."""

    @property  # type: ignore[override]
    def frame(self) -> pd.DataFrame:
        if isinstance(self._frame, CodedFrame):
            self._frame = self._frame.frame()
        return self._frame

    @frame.setter
    def frame(self, value: pd.DataFrame | CodedFrame) -> None:
        self._frame = value

    @property
    def n_rows(self) -> int:
        return self._frame.n_rows if isinstance(self._frame, CodedFrame) else len(self._frame)

    @property
    def column_names(self) -> list[str]:
        if isinstance(self._frame, CodedFrame):
            return list(self._frame.names)
        return [str(c) for c in self._frame.columns]


# --------------------------------------------------------------------------
# Finding inputs


def find_inputs(paths: Sequence[str | Path]) -> list[Path]:
    """Files as given plus supported files found under folders, in order.

    Folders are walked recursively and sorted; hidden files/folders and
    "~$" lock files are skipped. A missing path, or a file given by name
    with an unsupported suffix, raises SourceError.
    """
    found: dict[Path, None] = {}  # ordered set: a file named twice is read once
    for given in paths:
        path = Path(given)
        if path.is_dir():
            found.update(dict.fromkeys(_walk(path)))
        elif path.is_file():
            _check_suffix(path)
            found[path] = None
        else:
            raise SourceError(path, "no such file or folder")
    return list(found)


def _walk(folder: Path) -> list[Path]:
    """Supported files under folder, sorted by path."""
    files: list[Path] = []
    for root, dirs, names in os.walk(folder):
        dirs[:] = [d for d in dirs if not _skipped_name(d)]  # prunes the walk
        files.extend(
            Path(root, n)
            for n in sorted(names)
            if not _skipped_name(n) and Path(n).suffix.lower() in SUPPORTED_SUFFIXES
        )
    return sorted(files)


def _skipped_name(name: str) -> bool:
    # dot-files are hidden; "~$book.xlsx" is an office lock file, not data
    return name.startswith((".", "~$"))


def _check_suffix(path: Path) -> None:
    if path.suffix.lower() not in SUPPORTED_SUFFIXES:
        supported = ", ".join(sorted(SUPPORTED_SUFFIXES))
        raise SourceError(path, f"unsupported file type '{path.suffix}' (supported: {supported})")


# --------------------------------------------------------------------------
# Reading: dispatch


def read_tables(
    path: Path, *, max_cells: int | None = None, limits: Limits | None = None
) -> list[Table]:
    """Read one input file: one Table per worksheet, one for CSV/Parquet.

    ``limits`` caps what the file may make us hold (default: ``Limits.from_env()``);
    ``max_cells`` overrides its cell cap. Whatever the bytes, the only exception that
    leaves is SourceError: a parser choking on damaged content is reported as such.
    """
    path = Path(path)
    limits = _effective_limits(path, limits, max_cells)
    if path.is_dir():
        raise SourceError(path, "is a folder, not a file")
    if not path.exists():
        raise SourceError(path, "no such file")
    _check_suffix(path)
    try:
        if path.stat().st_size == 0:
            raise SourceError(path, "empty file")
        return _dispatch(path, limits)
    except SourceError:
        raise
    except LimitError as exc:
        raise SourceError(path, str(exc)) from None
    except OSError as exc:
        raise SourceError(path, f"cannot read: {exc.strerror or exc}") from exc
    except MemoryError:
        raise SourceError(path, "out of memory while reading; the file is too large") from None
    except Exception as exc:  # third-party parsers raise anything on damaged bytes
        detail = " ".join(str(exc).split())[:160]
        raise SourceError(
            path, f"damaged or unreadable content ({type(exc).__name__}: {detail})"
        ) from exc


def _effective_limits(path: Path, limits: Limits | None, max_cells: int | None) -> Limits:
    if limits is None:
        try:
            limits = Limits.from_env()
        except LimitError as exc:
            raise SourceError(path, str(exc)) from None
    return limits if max_cells is None else dataclasses.replace(limits, max_cells=max_cells)


def _dispatch(path: Path, limits: Limits) -> list[Table]:
    suffix = path.suffix.lower()
    if suffix == ".parquet":
        return [_read_parquet(path, limits)]   # typed columns: no row of units
    if suffix in _DELIMITED:
        tables = [_read_delimited(path, limits)]
    elif suffix in _WORKBOOKS:
        tables = _read_xlsx(path, limits)
    elif suffix == ".ods":
        tables = _read_ods(path, limits)
    else:
        tables = _read_xls(path, limits)
    return [_join_units_row(t) for t in tables]


def _join_units_row(table: Table) -> Table:
    """The table with a row of units under its header joined to the header's names."""
    if table.n_rows < 2:
        return table
    first = ROWS_LOOKED_AT + 1
    if isinstance(table, CodedTable) and table.coded is not None:
        rows = [list(r) for r in zip(*(c.values[c.codes[:first]] for c in table.coded))]
    else:
        rows = table.frame.iloc[:first].astype(str).values.tolist()
    names = names_with_units(table.column_names, rows)
    if names is None:
        return table
    renamed = dict(zip(table.column_names, names))
    notes = [*table.warnings, units_note(table.header_row)]
    typed = {renamed[k]: v for k, v in table.typed.items()}
    formats = {renamed[k]: v for k, v in table.formats.items()}
    if isinstance(table, CodedTable) and table.coded is not None:
        n = table.n_rows
        columns = [drop_unused(c, slice(1, n)) for c in table.coded]
        return CodedTable(table.path, table.sheet, CodedFrame(names, columns, n - 1),
                          table.header_row + 1, typed, formats, table.dialect,
                          table.date1904, notes, coded=columns)
    frame = table.frame.iloc[1:].reset_index(drop=True)
    frame.columns = pd.Index(names, dtype=object)
    return Table(table.path, table.sheet, frame, table.header_row + 1, typed, formats,
                 table.dialect, table.date1904, notes)


def _check_cells(path: Path, sheet: str | None, rows: int, cols: int, limits: Limits) -> None:
    where = f"sheet '{sheet}' has" if sheet is not None else "has"
    if cols > limits.max_columns:
        raise SourceError(path, f"{where} {cols} columns, over the limit {limits.max_columns}")
    if rows * cols > limits.max_cells:
        raise SourceError(path, f"{where} {rows * cols} cells, over the limit {limits.max_cells}")


def _check_cell_sizes(
    path: Path, sheet: str | None, frame: pd.DataFrame, header_row: int, limits: Limits
) -> None:
    """Refuse a cell longer than the limit, naming its column (vectorised per column)."""
    cap = limits.max_cell_chars
    for position in range(frame.shape[1]):
        lengths = frame.iloc[:, position].str.len()
        longest = lengths.max() if len(lengths) else 0
        if pd.notna(longest) and longest > cap:
            row = int(np.argmax(lengths.to_numpy(dtype=float)))
            name = str(frame.columns[position])
            raise SourceError(
                path,
                f"column '{name}' holds {int(longest)} characters in one cell,"
                f" over the limit {cap}",
                sheet=sheet,
                row=header_row + 1 + row,
                column=name,
            )


# --------------------------------------------------------------------------
# Delimited text: encoding


def sniff_csv(raw: bytes, forced: str | None = None) -> CsvDialect:
    """Encoding, BOM, delimiter and title lines of delimited text given as bytes (the
    start of a file; ``forced`` is the delimiter its name implies)."""
    text, encoding, bom = _decode(raw, "<data>")
    start = table_start(text[:_SNIFF_CHARS], forced)
    return CsvDialect(encoding, start.delimiter, bom,
                      len(_LINE_BREAK.findall(text, 0, start.offset)), tuple(start.above))


_BOMS = (  # UTF-32 first: its LE BOM starts with the UTF-16 LE BOM
    (b"\xff\xfe\x00\x00", "utf-32"),
    (b"\x00\x00\xfe\xff", "utf-32"),
    (b"\xef\xbb\xbf", "utf-8-sig"),
    (b"\xff\xfe", "utf-16"),
    (b"\xfe\xff", "utf-16"),
)


def _decode(
    raw: bytes, where: str | Path, notes: list[str] | None = None
) -> tuple[str, str, bool]:
    """Return (text, codec, had_bom); SourceError for binary content.

    A file that is UTF-8 except for some lines (exports pasted together from a UTF-8
    and a legacy source) is read line by line: UTF-8 where the line is valid UTF-8,
    the legacy code page elsewhere, and those lines are named in ``notes``.
    """
    for bom, codec in _BOMS:
        if raw.startswith(bom):
            return _strict(raw, codec, where), codec, True
    if b"\x00" in raw:
        codec = _bomless_utf16(raw[:_SNIFF_CHARS])
        if codec is None:
            raise _nul_error(raw, where)
        return _strict(raw, codec, where), codec, False
    text: str | None = _decodes(raw, "utf-8")
    codec = "utf-8"
    if text is None:
        text = _mixed_utf8(raw, notes)
    if text is None:
        codec, text = _legacy_decode(raw)
        if text is None:
            raise _binary(where)
    if _mostly_control(text[:_SNIFF_CHARS]):
        raise _binary(where)
    return text, codec, False


def _nul_error(raw: bytes, where: str | Path) -> SourceError:
    """Binary content, or text damaged by NUL bytes: say which, and where."""
    rest = raw.replace(b"\x00", b"")
    readable = _decodes(rest, "utf-8") or _decodes(rest, "cp1252")
    if readable is None or _mostly_control(readable[:_SNIFF_CHARS]):
        return _binary(where)
    line = raw.count(b"\n", 0, raw.index(b"\x00")) + 1
    return SourceError(where, f"NUL bytes in the text (first on line {line}): a damaged file")


# Well-formed UTF-8 sequences of two to four bytes (Unicode Standard, Table 3-7)
_UTF8_MULTIBYTE = re.compile(
    rb"[\xc2-\xdf][\x80-\xbf]|\xe0[\xa0-\xbf][\x80-\xbf]|[\xe1-\xec\xee\xef][\x80-\xbf]{2}"
    rb"|\xed[\x80-\x9f][\x80-\xbf]|\xf0[\x90-\xbf][\x80-\xbf]{2}"
    rb"|[\xf1-\xf3][\x80-\xbf]{3}|\xf4[\x80-\x8f][\x80-\xbf]{2}"
)


def _mixed_utf8(raw: bytes, notes: list[str] | None) -> str | None:
    """Text of a UTF-8 file with some non-UTF-8 lines, or None if it is not one."""
    lines = raw.splitlines(keepends=True)
    texts = [_decodes(line, "utf-8") for line in lines]
    bad = [i for i, t in enumerate(texts) if t is None]
    good_non_ascii = any(
        t is not None and not lines[i].isascii() for i, t in enumerate(texts)
    )
    if not good_non_ascii or not _UTF8_MULTIBYTE.search(raw):
        return None  # no line shows UTF-8: a legacy code page throughout
    codec, legacy = _legacy_decode(b"".join(lines[i] for i in bad))
    if legacy is None:
        return None
    for i in bad:
        texts[i] = _decodes(lines[i], codec)
        if texts[i] is None:
            return None
    if notes is not None:
        shown = _row_list([i + 1 for i in bad])
        label = "line" if len(bad) == 1 else "lines"
        notes.append(f"{label} {shown} not valid UTF-8: read as {codec}")
    return "".join(t for t in texts if t is not None)


def _legacy_decode(raw: bytes) -> tuple[str, str | None]:
    """Guess on a sample first; the whole file only if the sample's guess fails."""
    codec = _guess_codec(raw[:_SNIFF_CHARS])
    text = _decodes(raw, codec) if codec else None
    if text is None and len(raw) > _SNIFF_CHARS:
        codec = _guess_codec(raw)
        text = _decodes(raw, codec) if codec else None
    return codec or "", text


def _binary(where: str | Path) -> SourceError:
    return SourceError(where, "not a text file (binary content)")


def _strict(raw: bytes, codec: str, where: str | Path) -> str:
    try:
        return raw.decode(codec)
    except UnicodeDecodeError:
        raise _binary(where) from None


def _bomless_utf16(sample: bytes) -> str | None:
    # UTF-16 text of mostly Latin script has NUL in every other byte.
    even, odd = sample[0::2], sample[1::2]
    if not odd:
        return None
    even_nul, odd_nul = even.count(0) / len(even), odd.count(0) / len(odd)
    if odd_nul > 0.3 and even_nul < 0.05:
        return "utf-16-le"
    if even_nul > 0.3 and odd_nul < 0.05:
        return "utf-16-be"
    return None


def _guess_codec(raw: bytes) -> str | None:
    """Pick a legacy codec, leaning to cp1252 where the detector cannot tell.

    charset-normalizer reports cp1250 (or others) for short Western samples
    with full confidence, although cp1252 produced them. So when it has not
    ruled cp1252 out, cp1252 competes with the other Latin code pages on one
    sign of a wrong code page, symbols wedged inside words ('Wroc³aw'), and
    wins ties.
    """
    from charset_normalizer import from_bytes

    matches = list(from_bytes(raw, cp_isolation=_ENCODING_CANDIDATES))
    western = _decodes(raw, "cp1252")
    if not matches:
        return "cp1252" if western is not None and not _mostly_control(western) else None
    best = matches[0]
    rival = next((m for m in matches if "cp1252" in (m.encoding, *m.could_be_from_charset)), None)
    if western is None or rival is None:
        return best.encoding
    if best.encoding not in _LATIN_CODECS and best.coherence > rival.coherence:
        return best.encoding  # e.g. Cyrillic the detector recognises as a language
    pool = [("cp1252", western)]
    pool += [(m.encoding, str(m)) for m in matches if m.encoding in _LATIN_CODECS]
    return min(pool, key=lambda item: _midword_symbols(item[1]))[0]  # min keeps the first on ties


_LATIN_CODECS = ("cp1252", "cp1250", "latin_1")


def _decodes(raw: bytes, codec: str) -> str | None:
    try:
        return raw.decode(codec)
    except UnicodeDecodeError:
        return None


_LETTER_CLASS = r"[^\W\d_]"


def _midword_symbols(text: str) -> int:
    """Count non-letters wedged between letters ('Wroc³aw'): typical of a wrong codepage."""
    odd = {
        c for c in set(text) if ord(c) > 127 and not unicodedata.category(c).startswith(("L", "M"))
    }
    if not odd:
        return 0
    cls = "[" + "".join(re.escape(c) for c in odd) + "]"
    return len(re.findall(f"(?<={_LETTER_CLASS}){cls}(?={_LETTER_CLASS})", text))


def _mostly_control(text: str) -> bool:
    if not text:
        return False
    controls = sum(text.count(chr(c)) for c in range(32) if chr(c) not in "\t\n\r\f\v")
    return controls / len(text) > 0.05


# --------------------------------------------------------------------------
# Delimited text: delimiter


# --------------------------------------------------------------------------
# Delimited text: parsing


def _read_delimited(path: Path, limits: Limits) -> Table:
    notes: list[str] = []
    data = path.read_bytes()
    text, encoding, bom = _decode(data, path, notes)
    if not text or text.isspace():  # (no stripped copy of a large text)
        raise SourceError(path, "empty file")
    forced = "\t" if path.suffix.lower() == ".tsv" else None
    start = table_start(text, forced)
    delim = start.delimiter
    end, below = note_lines_below(text, delim)
    body = text[start.offset:end]
    header_row = len(_LINE_BREAK.findall(text, 0, start.offset)) + 1
    dialect = CsvDialect(encoding, delim, bom, header_row - 1)
    # the file's own bytes when they are the body's UTF-8
    utf8 = encoding in ("utf-8", "utf-8-sig") and not notes and delim != SPACES
    if delim == SPACES:
        body, delim = spaced_fields(body), FIELD_SEPARATOR
        notes.append("fields separated by runs of spaces")
    _precheck_size(path, body, delim, limits)
    notes += set_aside_notes(start.above, below)
    coded = _read_coded(body, delim, _body_bytes(data, text, bom, start.offset, end)
                        if utf8 else None)
    if coded is not None:
        return _coded_table(path, coded, header_row, dialect, limits, notes,
                            check_sizes=len(text) > limits.max_cell_chars)
    raw = _parse_body(path, body, delim, header_row)
    padded = _padded_rows(body, delim, raw, header_row)
    if padded:
        notes.append(f"ragged rows {_row_list(padded)} padded with empty cells")
    frame = _drop_trailing_empty(raw.iloc[1:].reset_index(drop=True), raw.iloc[0])
    header = [str(v) for v in raw.iloc[0, : frame.shape[1]]]
    frame.columns = pd.Index(_name_columns(path, None, header, notes), dtype=object)
    _check_cells(path, None, *frame.shape, limits)
    if len(text) > limits.max_cell_chars:  # otherwise no cell can be that long
        _check_cell_sizes(path, None, frame, header_row, limits)
    return Table(path, None, frame, header_row, {}, {}, dialect, False, notes)


def _body_bytes(data: bytes, text: str, bom: bool, start: int, end: int) -> bytes:
    """The bytes of ``text[start:end]`` within ``data``, the file's UTF-8 (lines above
    and below the table are short, so only they are encoded again)."""
    first = (3 if bom else 0) + len(text[:start].encode("utf-8"))
    return data[first:len(data) - len(text[end:].encode("utf-8"))]


def _read_coded(body: str, delim: str, data: bytes | None) -> CodedRead | None:
    """The fast, dictionary-encoded parse of a rectangular table; None otherwise."""
    sep = delim or next((s for s in _NO_SPLIT_SEPARATORS if s not in body), None)
    if sep is None:
        return None
    return read_coded(body, sep, data)


def _coded_table(path: Path, read: CodedRead, header_row: int, dialect: CsvDialect,
                 limits: Limits, notes: list[str], *, check_sizes: bool) -> Table:
    """A Table from dictionary-encoded columns, trimmed as the general path trims:
    trailing empty rows, and trailing columns empty in header and cells."""
    coded = read.columns
    filled = [c.values != "" for c in coded]
    n_rows = _rows_to_keep(coded, filled, read.n_rows)
    if n_rows == read.n_rows:  # every value occurs in the rows kept
        keep_cols = [bool(nonempty.any()) for nonempty in filled]
    else:
        keep_cols = [bool(nonempty[c.codes[:n_rows]].any()) for c, nonempty in zip(coded, filled)]
    keep_cols = [k or h.strip() != "" for k, h in zip(keep_cols, read.header)]
    n_cols = max((i + 1 for i, k in enumerate(keep_cols) if k), default=0)
    names = _name_columns(path, None, read.header[:n_cols], notes)
    _check_cells(path, None, n_rows, n_cols, limits)
    columns = [c if n_rows == read.n_rows else drop_unused(c, slice(0, n_rows))
               for c in coded[:n_cols]]
    if check_sizes:
        _check_coded_sizes(path, names, columns, header_row, limits)
    return CodedTable(path, None, CodedFrame(names, columns, n_rows), header_row, {}, {},
                      dialect, False, notes, coded=columns)


def _rows_to_keep(coded: list[CodedColumn], filled: list[np.ndarray], n_rows: int) -> int:
    """Rows up to the last one with a non-empty cell (trailing empty rows dropped)."""
    if n_rows == 0 or any(nonempty[c.codes[-1]] for c, nonempty in zip(coded, filled)):
        return n_rows  # the last row holds something: the usual case, no scan
    rows_filled = np.zeros(n_rows, dtype=bool)
    for column, nonempty in zip(coded, filled):
        rows_filled |= nonempty[column.codes]
    rows = np.flatnonzero(rows_filled)
    return int(rows[-1]) + 1 if len(rows) else 0


def _check_coded_sizes(path: Path, names: list[str], columns: list[CodedColumn],
                       header_row: int, limits: Limits) -> None:
    """As ``_check_cell_sizes``, on each column's distinct values."""
    for name, column in zip(names, columns):
        if column.longest is not None and column.longest <= limits.max_cell_chars:
            continue
        lengths = np.fromiter((len(v) for v in column.values), dtype=np.int64,
                              count=len(column.values))
        if len(lengths) and lengths.max() > limits.max_cell_chars:
            row = int(np.flatnonzero(column.codes == int(np.argmax(lengths)))[0])
            raise SourceError(
                path,
                f"column '{name}' holds {int(lengths.max())} characters in one cell,"
                f" over the limit {limits.max_cell_chars}",
                row=header_row + 1 + row,
                column=name,
            )


def _precheck_size(path: Path, body: str, delim: str, limits: Limits) -> None:
    """Refuse a table too wide or too large before the parser builds it.

    Columns come from the header line, rows from the line count: quoted line breaks
    can only make the estimate too high, never let a large file through.
    """
    end = _LINE_BREAK.search(body)
    first = body[: end.start() if end else len(body)]
    columns = first.count(delim) + 1 if delim else 1
    if columns > limits.max_columns:
        raise SourceError(path, f"has {columns} columns, over the limit {limits.max_columns}")
    rows = body.count("\n") + 1
    if "\r" in body:  # old Mac line ends count as breaks too
        rows += body.count("\r") - body.count("\r\n")
    if rows * columns > limits.max_cells:
        _check_cells(path, None, len(_csv_field_counts(body, delim)), columns, limits)


def _parse_body(path: Path, body: str, delim: str, header_row: int) -> pd.DataFrame:
    """All records as object-dtype text; the first row is the header."""
    sep = delim or next((s for s in _NO_SPLIT_SEPARATORS if s not in body), None)
    if sep is None:
        raise SourceError(path, "cannot split a one-column file (control characters in the text)")
    try:
        return pd.read_csv(
            io.StringIO(body),
            sep=sep,
            header=None,
            dtype=object,
            keep_default_na=False,
            na_filter=False,
            skip_blank_lines=False,  # blank lines are rows: keeps spreadsheet row numbers
            quotechar='"',
            doublequote=True,
            engine="c",
            low_memory=False,
        )
    except pd.errors.ParserError as exc:
        raise _parse_error(path, body, delim, header_row, exc) from None


def _parse_error(path: Path, body: str, delim: str, header_row: int, exc: Exception) -> SourceError:
    """Turn the parser's message into one naming the spreadsheet row."""
    unclosed = re.search(r"EOF inside string starting at row (\d+)", str(exc))
    if unclosed:  # the parser counts records from 0, the header being record 0
        row = header_row + int(unclosed.group(1))
        return SourceError(path, "unclosed quote: the field runs to the end of the file", row=row)
    # error path only, so the exact (slower) csv-module count is fine here
    counts = _csv_field_counts(body, delim)
    over = np.flatnonzero(counts > counts[0]) if len(counts) else counts
    if not len(over):
        return SourceError(path, f"cannot parse: {exc}")
    first = int(over[0])
    return SourceError(
        path, f"expected {counts[0]} fields, found {counts[first]}", row=header_row + first
    )


def _csv_field_counts(body: str, delim: str) -> np.ndarray:
    reader = csv.reader(io.StringIO(body, newline=""), delimiter=delim or "\x1f", strict=False)
    return np.array([max(len(r), 1) for r in reader], dtype=int)


def _record_field_counts(body: str, delim: str, records: int) -> np.ndarray:
    """Fields per record, quote-aware, computed on whole columns of lines.

    Quoted fields (which may hold delimiters and line breaks) are cut out
    first, so each remaining line is one record. If a stray quote makes the
    record count disagree with the parser's, the csv module counts instead.
    """
    quoted = re.compile(rf'(?:^|(?<=[{re.escape(delim)}\r\n]))"[^"]*(?:""[^"]*)*"')
    lines = _LINE_BREAK.split(quoted.sub("", body) if '"' in body else body)
    if lines and lines[-1] == "":
        lines.pop()  # the final line break ends the last record
    if len(lines) != records:
        return _csv_field_counts(body, delim)
    return pd.Series(lines, dtype=object).str.count(re.escape(delim)).to_numpy() + 1


def _padded_rows(body: str, delim: str, raw: pd.DataFrame, header_row: int) -> list[int]:
    """Spreadsheet row numbers of data rows that had fewer fields than the header."""
    if not delim or raw.shape[1] < 2 or len(raw) < 2:
        return []
    data = raw.iloc[1:]
    maybe = data.iloc[:, -1].eq("").to_numpy() & data.ne("").any(axis=1).to_numpy()
    if not maybe.any():
        return []  # a padded row always ends empty: skip counting fields
    counts = _record_field_counts(body, delim, len(raw))[1:]
    if len(counts) != len(maybe):
        return []  # a stray quote the two parsers read differently: cannot tell
    short = np.flatnonzero((counts < raw.shape[1]) & maybe)
    return [header_row + 1 + int(i) for i in short]


def _row_list(rows: list[int]) -> str:
    shown = ", ".join(str(r) for r in rows[:_MAX_LISTED_ROWS])
    extra = len(rows) - _MAX_LISTED_ROWS
    return f"{shown} and {extra} more" if extra > 0 else shown


def _drop_trailing_empty(frame: pd.DataFrame, header: pd.Series) -> pd.DataFrame:
    """Drop trailing all-empty rows, and trailing columns empty in header and cells."""
    filled = frame.ne("").to_numpy()
    rows = np.flatnonzero(filled.any(axis=1))
    frame = frame.iloc[: rows[-1] + 1 if len(rows) else 0]
    col_filled = filled[: len(frame)].any(axis=0) | header.astype(str).str.strip().ne("").to_numpy()
    cols = np.flatnonzero(col_filled)
    return frame.iloc[:, : cols[-1] + 1 if len(cols) else 0].reset_index(drop=True)


def _name_columns(path: Path, sheet: str | None, header: list[str], notes: list[str]) -> list[str]:
    """Header texts as column labels: blanks get column_<n>, duplicates are an error."""
    seen: dict[str, int] = {}
    for i, name in enumerate(header):
        if name.strip() and name in seen:
            where = _column_ref(i, sheet)
            raise SourceError(
                path,
                f"duplicate header '{name}' in {where} (first in {_column_ref(seen[name], sheet)})",
                sheet=sheet,
                column=name,
            )
        seen.setdefault(name, i)
    names = list(header)
    blank = [i for i, n in enumerate(names) if not n.strip()]
    for i in blank:
        candidate = f"column_{i + 1}"
        while candidate in seen:
            candidate += "_"
        names[i] = candidate
        seen[candidate] = i
    if blank:
        refs = ", ".join(_column_ref(i, sheet) for i in blank)
        notes.append(f"blank header in {refs} named {', '.join(names[i] for i in blank)}")
    return names


def _column_ref(index: int, sheet: str | None) -> str:
    if sheet is None:
        return f"column {index + 1}"
    from openpyxl.utils import get_column_letter

    return f"column {get_column_letter(index + 1)}"


# --------------------------------------------------------------------------
# Typed cells -> text


def _cell_text(value: Any, number_format: str | None = None) -> tuple[str, str | None]:
    """Text and type tag of one workbook value (tag None for text cells)."""
    if value is None:
        return "", None
    if isinstance(value, str):
        return value, None
    if isinstance(value, bool):
        return ("TRUE" if value else "FALSE"), "boolean"
    if isinstance(value, (int, np.integer, float, np.floating)) and _scales_to_percent(
            number_format):
        return _percent_text(value), "number"
    if isinstance(value, (int, np.integer)):
        return str(int(value)), "number"
    if isinstance(value, (float, np.floating)):
        return _float_text(float(value)), "number"
    if isinstance(value, decimal.Decimal):
        return format(value, "f"), "number"
    if isinstance(value, dt.datetime):
        return _datetime_text(value, number_format)
    if isinstance(value, dt.date):
        return value.isoformat(), "date"
    if isinstance(value, dt.time):
        return _iso(value), "time"
    if isinstance(value, dt.timedelta):
        return _duration_text(value), "duration"
    return str(value), None


_FORMAT_LITERALS = re.compile(r'"[^"]*"|\\.')


def _scales_to_percent(number_format: str | None) -> bool:
    """Whether a number format shows the value times 100 with "%" (a "%" outside quoted
    text and escapes: ECMA-376 Part 1, §18.8.31 numFmts)."""
    return bool(number_format) and "%" in _FORMAT_LITERALS.sub("", number_format or "")


def _percent_text(value: float | int) -> str:
    """A number the sheet shows as a percentage, written as it shows it: 0.125 -> 12.5%
    (exact decimal arithmetic on the value's shortest digits)."""
    digits = str(int(value)) if isinstance(value, (int, np.integer)) else _float_text(
        float(value))
    if not np.isfinite(float(value)):
        return digits
    return f"{decimal.Decimal(digits).scaleb(2).normalize():f}%"


def _float_text(value: float) -> str:
    if not np.isfinite(value):
        return "NaN" if np.isnan(value) else ("inf" if value > 0 else "-inf")
    # shortest digits that round-trip, always positional: 1234.5, 42, 0.0001
    return np.format_float_positional(value, unique=True, trim="-")


def _iso(value: dt.datetime | dt.time) -> str:
    """ISO 8601 with a 'T', seconds always, a fraction only when present."""
    if not value.microsecond:
        return value.isoformat(timespec="seconds")
    head, _, tail = value.isoformat(timespec="microseconds").partition(".")
    return f"{head}.{tail[:6].rstrip('0')}{tail[6:]}"


_FORMAT_NOISE = re.compile(r'"[^"]*"|\\.|\[(?![hms]+\])[^\]]*\]', re.I)


def _format_shows_time(number_format: str | None) -> bool:
    if not number_format:
        return False
    section = _FORMAT_NOISE.sub("", number_format.split(";")[0]).lower()
    return re.search(r"[hs]|am/pm|a/p", section) is not None


def _datetime_text(value: dt.datetime, number_format: str | None) -> tuple[str, str]:
    midnight = value.time() == dt.time(0) and value.tzinfo is None
    if midnight and not _format_shows_time(number_format):
        return value.date().isoformat(), "date"
    return _iso(value), "datetime"


def _duration_text(value: dt.timedelta) -> str:
    micros = round(value.total_seconds() * 1_000_000)
    sign, micros = ("-" if micros < 0 else ""), abs(micros)
    seconds, frac = divmod(micros, 1_000_000)
    hours, rest = divmod(seconds, 3600)
    text = f"{sign}{hours:02d}:{rest // 60:02d}:{rest % 60:02d}"
    return f"{text}.{frac:06d}".rstrip("0") if frac else text


# --------------------------------------------------------------------------
# Workbooks: shared


class _SheetBuilder:
    """Collects one sheet's converted rows, per-column type tags and formats.

    The first rows wait until the header is known: title rows above it (one cell each,
    ``delimited.header_index``) are set aside, not read as data."""

    def __init__(self) -> None:
        self.header: list[str] | None = None
        self.header_row = 1
        self.rows: list[list[str]] = []
        self.typed: dict[int, dict[str, str]] = collections.defaultdict(dict)
        self.formats: dict[int, collections.Counter[str]] = collections.defaultdict(
            collections.Counter
        )
        self.waiting: list[tuple[int, list[tuple[Any, str | None]]]] = []
        self.titles: list[str] = []

    def add(self, row_number: int, cells: Iterable[tuple[Any, str | None]]) -> None:
        if self.header is not None:
            self._add_data(list(cells))
            return
        self.waiting.append((row_number, list(cells)))
        if len(self.waiting) >= MAX_TITLE_LINES + ROWS_BELOW_HEADER:
            self._settle()

    def _settle(self) -> None:
        """Find the header among the rows waiting, then take the rows below it."""
        waiting, self.waiting = self.waiting, []
        texts = [[_cell_text(value, fmt)[0] for value, fmt in cells] for _, cells in waiting]
        filled = [sum(1 for t in row if t.strip()) for row in texts]
        found = header_index(filled, lone_title=True)
        first = found if found is not None else next(
            (i for i, n in enumerate(filled) if n), None)
        if first is None:
            return
        self.titles = [" ".join(t.strip() for t in row if t.strip())
                       for row, n in zip(texts[:first], filled) if n]
        self.header, self.header_row = texts[first], waiting[first][0]
        for _, cells in waiting[first + 1:]:
            self._add_data(cells)

    def _add_data(self, cells: list[tuple[Any, str | None]]) -> None:
        texts: list[str] = []
        for col, (value, number_format) in enumerate(cells):
            text, tag = _cell_text(value, number_format)
            texts.append(text)
            if value is None:
                continue
            if tag is not None:
                self.typed[col][text] = tag
            if number_format:
                self.formats[col][number_format] += 1
        self.rows.append(texts)

    def table(
        self, path: Path, sheet: str, date1904: bool, notes: list[str], with_formats: bool
    ) -> Table:
        if self.header is None:
            self._settle()
        notes += set_aside_notes([_shown(t) for t in self.titles], [])
        if self.header is None:
            notes.append(f"sheet '{sheet}' is empty")
            frame = pd.DataFrame(
                index=pd.RangeIndex(0), columns=pd.Index([], dtype=object), dtype=object
            )
            return Table(path, sheet, frame, 1, {}, {}, None, date1904, notes)
        width = max([len(self.header), *map(len, self.rows)])
        rows = [r + [""] * (width - len(r)) for r in self.rows]  # sheets store no trailing empties
        header = self.header + [""] * (width - len(self.header))
        frame = pd.DataFrame(rows, columns=range(width), dtype=object)
        frame = _drop_trailing_empty(frame, pd.Series(header, dtype=object))
        names = _name_columns(path, sheet, header[: frame.shape[1]], notes)
        frame.columns = pd.Index(names, dtype=object)
        typed = {names[c]: tags for c, tags in self.typed.items() if c < len(names) and tags}
        formats = (
            {n: self.formats.get(c, collections.Counter()) for c, n in enumerate(names)}
            if with_formats
            else {}
        )
        return Table(path, sheet, frame, self.header_row, typed, formats, None, date1904, notes)


def _all_empty(path: Path, tables: list[Table]) -> list[Table]:
    if all(t.frame.shape[1] == 0 for t in tables):
        raise SourceError(path, "empty file (no sheet holds any cell)")
    return tables


# --------------------------------------------------------------------------
# XLSX / XLSM (openpyxl, streaming read-only)


def _read_xlsx(path: Path, limits: Limits) -> list[Table]:
    import openpyxl
    from openpyxl.utils.datetime import CALENDAR_MAC_1904

    _check_zip_container(path, "xl/workbook.xml", "workbook", limits)
    if not openpyxl.xml.DEFUSEDXML:
        raise SourceError(
            path, "refusing to read a workbook: XML protection (defusedxml) is not active"
        )
    try:
        book = openpyxl.load_workbook(path, read_only=True, data_only=True, keep_links=False)
    except (
        zipfile.BadZipFile,
        KeyError,
        ValueError,
        TypeError,
        AttributeError,
        SyntaxError,
    ) as exc:
        raise SourceError(path, f"not a readable workbook ({_parser_detail(exc)})") from exc
    try:
        date1904 = book.epoch == CALENDAR_MAC_1904
        tables = [_xlsx_sheet(path, ws, date1904, limits) for ws in book.worksheets]
    finally:
        book.close()
    return _all_empty(path, tables)


def _parser_detail(exc: Exception) -> str:
    from defusedxml import DefusedXmlException

    cause: BaseException | None = exc
    while cause is not None:  # openpyxl wraps the parser's error in its own
        if isinstance(cause, DefusedXmlException):
            return "XML with a DTD or entity declarations refused: possible entity expansion"
        cause = cause.__cause__ or cause.__context__
    return f"{type(exc).__name__}: {' '.join(str(exc).split())[:160]}"


def _check_zip_container(path: Path, member: str, kind: str, limits: Limits) -> None:
    """Refuse what is not this kind of zip, or a zip whose declared contents are hostile."""
    with path.open("rb") as handle:
        head = handle.read(8)
    if head.startswith(_OLE_MAGIC):
        raise SourceError(
            path,
            f"password-protected (encrypted) or legacy binary {kind}:"
            f" save it unprotected in {path.suffix} format",
        )
    if not head.startswith(b"PK"):
        raise SourceError(path, f"not a {kind} (not a zip archive)")
    try:
        with zipfile.ZipFile(path) as archive:
            names = set(archive.namelist())
            check_archive(archive, limits)
    except (zipfile.BadZipFile, zipfile.LargeZipFile, EOFError) as exc:
        raise SourceError(path, f"corrupt or truncated {kind} ({exc})") from exc
    except LimitError as exc:
        raise SourceError(path, f"{kind} refused: {exc}") from None
    if member not in names:
        raise SourceError(path, f"not a {kind} (zip archive without {member})")


def _xlsx_sheet(path: Path, ws: Any, date1904: bool, limits: Limits) -> Table:
    declared = (ws.max_row or 0) * (ws.max_column or 0)
    ws.reset_dimensions()  # stated dimensions can be wrong; read what is there
    builder = _SheetBuilder()
    width = cells = 0
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            for number, row in enumerate(ws.iter_rows(min_row=1, min_col=1), start=1):
                width = max(width, len(row))
                cells = number * width
                if width > limits.max_columns:
                    raise SourceError(
                        path,
                        f"sheet '{ws.title}' has {width} columns,"
                        f" over the limit {limits.max_columns}",
                    )
                if cells > limits.max_cells:
                    size = f"{declared}" if declared >= cells else f"at least {cells}"
                    raise SourceError(
                        path,
                        f"sheet '{ws.title}' has {size} cells, over the limit {limits.max_cells}",
                    )
                builder.add(number, ((c.value, c.number_format) for c in row))
        except SourceError:
            raise
        except (zipfile.BadZipFile, KeyError, ValueError, TypeError, SyntaxError) as exc:
            detail = _parser_detail(exc)
            raise SourceError(path, f"corrupt sheet ({detail})", sheet=ws.title) from exc
    notes = [" ".join(str(w.message).split()) for w in caught]
    table = builder.table(path, ws.title, date1904, notes, with_formats=True)
    _check_cell_sizes(path, ws.title, table.frame, table.header_row, limits)
    return table


# --------------------------------------------------------------------------
# ODS (python-calamine)


def _read_ods(path: Path, limits: Limits) -> list[Table]:
    _check_zip_container(path, "content.xml", "spreadsheet", limits)
    _vet_ods(path, limits)
    return _calamine_tables(path, limits, "spreadsheet")


def _read_xls(path: Path, limits: Limits) -> list[Table]:
    """A legacy binary workbook (BIFF, in an OLE compound file), read by calamine. Systems
    also write a workbook or tab-separated text under the name .xls: those are read as
    what they are."""
    with path.open("rb") as handle:
        head = handle.read(512)
    if head.startswith(_OLE_MAGIC):
        return _calamine_tables(path, limits, "legacy workbook")
    if head.startswith(b"PK"):
        return _read_xlsx(path, limits)
    if head.lstrip(b"\xef\xbb\xbf\xff\xfe \t\r\n").lower().startswith((b"<", b"\x00<", b"<\x00")):
        raise SourceError(path, "a web page (HTML or XML) named .xls, not a workbook:"
                                " save it as .xlsx or .csv")
    return [_read_delimited(path, limits)]


def _calamine_tables(path: Path, limits: Limits, kind: str) -> list[Table]:
    from python_calamine import CalamineError, CalamineWorkbook

    try:
        book = CalamineWorkbook.from_path(str(path))
        try:
            tables = [_calamine_sheet(path, book, name, limits) for name in book.sheet_names]
        finally:
            book.close()
    except (CalamineError, ValueError, OSError) as exc:
        detail = " ".join(str(exc).split())[:160]
        hint = " (password-protected?)" if "password" in detail.lower() or \
            "encrypt" in detail.lower() else ""
        raise SourceError(path, f"not a readable {kind}{hint}: {detail}") from exc
    return _all_empty(path, tables)


def _vet_ods(path: Path, limits: Limits) -> None:
    """Before calamine expands anything: refuse encryption, entities and repeat bombs."""
    with zipfile.ZipFile(path) as archive:
        names = set(archive.namelist())
        manifest = "META-INF/manifest.xml"
        # OpenDocument 1.2 Part 3 §4.8: encrypted members carry <manifest:encryption-data>
        if manifest in names and b"encryption-data" in archive.read(manifest):
            raise SourceError(
                path, "password-protected (encrypted) spreadsheet: save it unprotected"
            )
        with archive.open("content.xml") as content:
            try:
                scan_ods_content(content, limits)
            except LimitError as exc:
                raise SourceError(path, f"spreadsheet refused: {exc}") from None


def _calamine_sheet(path: Path, book: Any, name: str, limits: Limits) -> Table:
    sheet = book.get_sheet_by_name(name)
    _check_cells(path, name, sheet.total_height, sheet.total_width, limits)
    builder = _SheetBuilder()
    # skip_empty_area=False keeps leading empty rows so row numbers match the sheet
    for number, row in enumerate(sheet.to_python(skip_empty_area=False), start=1):
        builder.add(number, ((None if v == "" else v, None) for v in row))
    table = builder.table(path, name, False, [], with_formats=False)
    _check_cell_sizes(path, name, table.frame, table.header_row, limits)
    return table


# --------------------------------------------------------------------------
# Parquet (pyarrow)


def _read_parquet(path: Path, limits: Limits) -> Table:
    import pyarrow as pa
    import pyarrow.parquet as pq

    try:
        meta = pq.read_metadata(path)
        _check_cells(path, None, meta.num_rows, meta.num_columns, limits)
        _check_parquet_size(path, meta, limits)
        # text columns stay dictionary-encoded: a value repeated on a million rows is
        # held once, and its decoded size is checked before anything is expanded
        arrow = pq.read_table(path, read_dictionary=_text_fields(pq.read_schema(path)))
        _check_decoded_text(path, arrow, limits)
    except (pa.ArrowException, OSError) as exc:
        if isinstance(exc, (FileNotFoundError, PermissionError)):
            raise
        raise SourceError(path, f"not a readable Parquet file ({exc})") from exc
    notes: list[str] = []
    names = _name_columns(path, None, [str(n) for n in arrow.column_names], notes)
    columns: dict[str, np.ndarray] = {}
    typed: dict[str, dict[str, str]] = {}
    for name, column in zip(names, arrow.columns, strict=True):
        columns[name], tag = _arrow_text(path, name, column)
        present = pd.unique(columns[name][columns[name] != ""])
        if tag is not None and len(present):
            typed[name] = dict.fromkeys(present, tag)
    frame = pd.DataFrame(columns, dtype=object, index=pd.RangeIndex(arrow.num_rows))
    frame.columns = pd.Index(names, dtype=object)
    return Table(path, None, frame, 1, typed, {}, None, False, notes)


def _text_fields(schema: Any) -> list[str]:
    import pyarrow as pa

    kinds = (pa.types.is_string, pa.types.is_large_string, pa.types.is_binary,
             pa.types.is_large_binary)
    return [f.name for f in schema if any(test(f.type) for test in kinds)]


def _check_decoded_text(path: Path, arrow: Any, limits: Limits) -> None:
    """Refuse text that would decode past the limits (a dictionary bomb)."""
    import pyarrow as pa
    import pyarrow.compute as pc

    total = 0
    for name, column in zip(arrow.column_names, arrow.columns, strict=True):
        if not pa.types.is_dictionary(column.type):
            continue
        for chunk in column.chunks:
            lengths = pc.binary_length(chunk.dictionary)
            longest = pc.max(lengths).as_py() or 0
            if longest > limits.max_cell_chars:
                raise SourceError(
                    path,
                    f"column '{name}' holds a value of {longest} bytes,"
                    f" over the limit {limits.max_cell_chars}",
                    column=str(name),
                )
            total += pc.sum(pc.take(lengths, chunk.indices)).as_py() or 0
    if total > limits.max_unpacked_bytes:
        raise SourceError(
            path, f"text decodes to {total} bytes, over the limit {limits.max_unpacked_bytes}"
        )


def _check_parquet_size(path: Path, meta: Any, limits: Limits) -> None:
    """Refuse a file whose row groups declare more bytes than an archive may unpack to."""
    total = sum(meta.row_group(i).total_byte_size for i in range(meta.num_row_groups))
    if total > limits.max_unpacked_bytes:
        raise SourceError(
            path, f"declares {total} bytes of data, over the limit {limits.max_unpacked_bytes}"
        )


def _arrow_text(path: Path, name: str, column: Any) -> tuple[np.ndarray, str | None]:
    """A whole Arrow column as object text (nulls -> "") plus its type tag."""
    import pyarrow as pa
    import pyarrow.compute as pc

    kind = column.type
    if pa.types.is_dictionary(kind):
        if _is_text(kind.value_type):
            return _dictionary_text(path, name, column)
        column, kind = column.cast(kind.value_type), kind.value_type
    if pa.types.is_string(kind) or pa.types.is_large_string(kind) or pa.types.is_string_view(kind):
        return _filled(column), None
    if pa.types.is_null(kind):
        return np.full(len(column), "", dtype=object), None
    if pa.types.is_boolean(kind):
        return _filled(pc.if_else(column, "TRUE", "FALSE")), "boolean"
    if pa.types.is_integer(kind) or pa.types.is_decimal(kind):
        return _filled(column.cast(pa.string())), "number"
    if pa.types.is_timestamp(kind):
        return _via_uniques(column, _timestamp_texts)
    for test, tag in (
        (pa.types.is_floating, "number"),
        (pa.types.is_date, "date"),
        (pa.types.is_time, "time"),
        (pa.types.is_duration, "duration"),
    ):
        if test(kind):
            return _via_uniques(
                column, lambda values, tag=tag: ([_cell_text(v)[0] for v in values], tag)
            )
    if pa.types.is_binary(kind) or pa.types.is_large_binary(kind):
        try:
            return _filled(column.cast(pa.string())), None
        except pa.ArrowInvalid as exc:
            raise SourceError(
                path, f"column '{name}' holds binary data that is not UTF-8 text", column=name
            ) from exc
    raise SourceError(path, f"column '{name}' has unsupported type {kind}", column=name)


def _is_text(kind: Any) -> bool:
    import pyarrow as pa

    return pa.types.is_string(kind) or pa.types.is_large_string(kind) or pa.types.is_binary(
        kind
    ) or pa.types.is_large_binary(kind)


def _dictionary_text(path: Path, name: str, column: Any) -> tuple[np.ndarray, None]:
    """Rows as references to each distinct text (nulls -> ""), without decoding per row."""
    import pyarrow as pa
    import pyarrow.compute as pc

    parts = []
    for chunk in column.chunks:
        values = chunk.dictionary
        if pa.types.is_binary(values.type) or pa.types.is_large_binary(values.type):
            try:
                values = values.cast(pa.string())
            except pa.ArrowInvalid as exc:
                raise SourceError(
                    path, f"column '{name}' holds binary data that is not UTF-8 text",
                    column=name,
                ) from exc
        lookup = np.array([*values.to_pylist(), ""], dtype=object)
        lookup[:-1][pd.isna(lookup[:-1])] = ""
        codes = pc.fill_null(chunk.indices, len(values)).to_numpy(zero_copy_only=False)
        parts.append(lookup[codes])
    return (np.concatenate(parts) if parts else np.array([], dtype=object)), None


def _filled(column: Any) -> np.ndarray:
    import pyarrow.compute as pc

    return pc.fill_null(column, "").to_numpy(zero_copy_only=False).astype(object)


def _via_uniques(
    column: Any, convert: Callable[[list[Any]], tuple[list[str], str]]
) -> tuple[np.ndarray, str | None]:
    """Convert each distinct value once, then map the texts back onto the rows."""
    import pyarrow.compute as pc

    encoded = pc.dictionary_encode(column).combine_chunks()
    uniques = encoded.dictionary.to_pylist()
    texts, tag = convert(uniques)
    lookup = np.array([*texts, ""], dtype=object)  # last slot stands for null
    codes = pc.fill_null(encoded.indices, len(uniques)).to_numpy(zero_copy_only=False)
    return lookup[codes], (tag if uniques else None)


def _timestamp_texts(values: list[Any]) -> tuple[list[str], str]:
    # Parquet types a whole column, so decide for the whole column:
    # naive timestamps that are all at midnight are dates.
    if all(v.tzinfo is None and v.time() == dt.time(0) for v in values):
        return [v.date().isoformat() for v in values], "date"
    return [_iso(v) for v in values], "datetime"


# --------------------------------------------------------------------------
# Writing (always atomic)


def atomic_write_text(dest: Path, text: str) -> None:
    """Write UTF-8 text with the newlines exactly as given."""
    _atomic_write(Path(dest), lambda handle: handle.write(text.encode("utf-8")))


def write_table(table: pd.DataFrame | CodedFrame, dest: Path, *, fmt: str) -> None:
    """Write one table as text cells: fmt is "csv", "xlsx" or "parquet".

    "csv" writes tab-separated text when ``dest`` ends in .tsv, comma-separated otherwise.
    """
    dest = Path(dest)

    def frame() -> pd.DataFrame:
        return table.frame() if isinstance(table, CodedFrame) else table

    writers: dict[str, Callable[[IO[bytes]], None]] = {
        "csv": lambda handle: write_csv(table, handle, _delimiter_for(dest)),
        "xlsx": lambda handle: _write_xlsx({"Sheet1": frame()}, dest, handle),
        "parquet": lambda handle: _write_parquet(frame(), handle),
    }
    if fmt not in writers:
        raise SourceError(dest, f"unknown output format '{fmt}' (csv, xlsx, parquet)")
    _atomic_write(dest, writers[fmt])


def write_workbook(sheets: dict[str, pd.DataFrame], dest: Path) -> None:
    """Write several tables as the sheets of one XLSX workbook."""
    dest = Path(dest)
    _check_sheet_names(dest, list(sheets))
    _atomic_write(dest, lambda handle: _write_xlsx(sheets, dest, handle))


def _atomic_write(dest: Path, write: Callable[[IO[bytes]], object]) -> None:
    """Write to a hidden temp file beside dest, fsync, then rename over dest."""
    try:
        fd, tmp = tempfile.mkstemp(prefix=f".{dest.name}.", suffix=".tmp", dir=dest.parent)
    except OSError as exc:
        raise SourceError(dest, f"cannot write: {exc.strerror or exc}") from exc
    try:
        with os.fdopen(fd, "wb") as handle:
            write(handle)
            handle.flush()
            os.fsync(handle.fileno())
        os.chmod(tmp, _file_mode(dest))
        os.replace(tmp, dest)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(tmp)
        raise
    _fsync_folder(dest.parent)


def _file_mode(dest: Path) -> int:
    # mkstemp makes 0600 files; give the result the mode a plain open() would
    with contextlib.suppress(OSError):
        return dest.stat().st_mode & 0o7777
    umask = os.umask(0)
    os.umask(umask)
    return 0o666 & ~umask


def _fsync_folder(folder: Path) -> None:
    # makes the rename itself durable; not possible on every platform
    with contextlib.suppress(OSError, AttributeError):
        fd = os.open(folder, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)


def _text_columns(frame: pd.DataFrame) -> list[np.ndarray]:
    """Each column as an object array of str or None (missing)."""
    out = []
    for i in range(frame.shape[1]):
        col = frame.iloc[:, i]
        values = col.astype(object).to_numpy()
        missing = col.isna().to_numpy()
        if missing.any():
            values = values.copy()
            values[missing] = None
        out.append(values)
    return out


def _delimiter_for(dest: Path) -> str:
    # a .tsv output must read back as tab-separated (the reader forces tabs for .tsv)
    return "\t" if dest.suffix.lower() == ".tsv" else ","


def _write_parquet(frame: pd.DataFrame, handle: IO[bytes]) -> None:
    import pyarrow as pa
    import pyarrow.parquet as pq

    arrays = [pa.array(_as_str(v), type=pa.string()) for v in _text_columns(frame)]
    pq.write_table(pa.Table.from_arrays(arrays, names=[str(c) for c in frame.columns]), handle)


def _as_str(values: np.ndarray) -> list[str | None]:
    return [v if v is None or isinstance(v, str) else str(v) for v in values]


_SHEET_NAME_BAD = re.compile(r"[\[\]:*?/\\]")


def _check_sheet_names(dest: Path, names: list[str]) -> None:
    if not names:
        raise SourceError(dest, "a workbook needs at least one sheet")
    seen: set[str] = set()
    for name in names:
        if not name or len(name) > 31 or _SHEET_NAME_BAD.search(name) or name.startswith("'"):
            raise SourceError(
                dest, f"invalid sheet name '{name}' (1-31 characters, none of []:*?/\\)"
            )
        if name.casefold() in seen:
            raise SourceError(dest, f"duplicate sheet name '{name}'")
        seen.add(name.casefold())


def _write_xlsx(sheets: dict[str, pd.DataFrame], dest: Path, handle: IO[bytes]) -> None:
    from openpyxl import Workbook

    for name, frame in sheets.items():
        _check_xlsx_text(dest, name, frame)  # fail before writing anything
    book = Workbook(write_only=True)
    try:
        for name, frame in sheets.items():
            ws = book.create_sheet(title=name)
            ws.append([_xlsx_text(ws, c) for c in frame.columns])
            columns = _text_columns(frame)
            for i in range(len(frame)):
                ws.append([_xlsx_text(ws, col[i]) for col in columns])
        book.save(handle)
    except BaseException:
        _discard_sheets(book)
        raise


def _check_xlsx_text(dest: Path, sheet: str, frame: pd.DataFrame) -> None:
    from openpyxl.cell.cell import ILLEGAL_CHARACTERS_RE

    if len(frame) + 1 > _XLSX_MAX_ROWS:
        raise SourceError(dest, f"{len(frame)} rows do not fit in one XLSX sheet", sheet=sheet)
    labels = pd.Series([str(c) for c in frame.columns], dtype=object)
    for row, values in [(1, labels), *((None, pd.Series(c)) for c in _text_columns(frame))]:
        bad = np.flatnonzero(values.str.contains(ILLEGAL_CHARACTERS_RE, na=False).to_numpy())
        if len(bad):
            text = values.iloc[bad[0]]
            raise SourceError(
                dest,
                f"control character not allowed in XLSX: {text[:40]!r}",
                sheet=sheet,
                row=row or int(bad[0]) + 2,
            )
        long = np.flatnonzero(values.str.len().fillna(0).to_numpy() > _XLSX_MAX_CELL_CHARS)
        if len(long):
            raise SourceError(
                dest,
                f"a cell of {len(values.iloc[long[0]])} characters does not fit XLSX"
                f" (at most {_XLSX_MAX_CELL_CHARS}); write CSV or Parquet instead",
                sheet=sheet,
                row=row or int(long[0]) + 2,
            )


def _xlsx_text(ws: Any, value: Any) -> Any:
    """A value openpyxl will store as a string: '=…' must not become a formula, '#N/A' no error."""
    from openpyxl.cell import WriteOnlyCell
    from openpyxl.cell.cell import ERROR_CODES

    if value is None:
        return None
    text = value if isinstance(value, str) else str(value)
    if not text.startswith("=") and text not in ERROR_CODES:
        return text
    cell = WriteOnlyCell(ws, value=text)
    cell.data_type = "s"
    return cell


def _discard_sheets(book: Any) -> None:
    # close half-written write-only sheets and delete openpyxl's own temp files
    for ws in book.worksheets:
        with contextlib.suppress(Exception):
            ws.close()
        with contextlib.suppress(Exception):
            ws._writer.cleanup()
