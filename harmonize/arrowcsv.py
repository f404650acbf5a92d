"""Delimited text parsed and written in Arrow's C++ code, column at a time.

Reading: a well-formed table (every record with as many fields as the first) is parsed
by ``pyarrow.csv`` with every cell kept as the exact text, and each column comes back
dictionary-encoded (distinct values in first-seen order plus one code per row), which is
what the evidence step needs anyway. Anything unusual (ragged rows, blank lines between
records, a record longer than a parse block) makes ``read_coded`` return None and the
caller's general parser takes over, so messages and row numbers stay its own.

Writing: cells are quoted as Python's ``csv.QUOTE_MINIMAL`` would (only cells holding the
delimiter, a quote or a line break), each column is rendered once per distinct value,
and rows are joined in Arrow. The bytes equal ``DataFrame.to_csv`` with the same settings,
except that a carriage return inside a cell is quoted too (``to_csv`` with ``\n`` line
ends leaves it bare, and readers then take it for a line break).
"""

from __future__ import annotations

import csv
import io
import re
from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from typing import IO, Any

import numpy as np
import pandas as pd

_BLOCK_BYTES = 1 << 24  # a record must fit in one block; larger ones fall back
_CHUNK_ROWS = 250_000   # rows joined per write step: bounds the memory of the output text


@dataclass
class CodedColumn:
    """One column: ``values[codes]`` are its cells, row by row."""

    values: np.ndarray  # distinct cell texts, object array, first-seen order
    codes: np.ndarray   # int64 per row
    longest: int | None = None  # characters in the longest value, where known (a bound)

    def cells(self) -> np.ndarray:
        return self.values[self.codes]

    def arrow(self) -> Any:
        """The distinct values as an Arrow array, made once (the formula guard and the
        writer both scan them)."""
        import pyarrow as pa
        made = self.__dict__.get("_arrow")
        if made is None:
            made = self.__dict__["_arrow"] = pa.array(self.values, type=pa.large_string())
        return made


@dataclass
class CodedRead:
    """A delimited text read by Arrow: the header's fields and each column coded."""

    header: list[str]
    columns: list[CodedColumn]
    n_rows: int


def read_coded(body: str, delimiter: str, data: bytes | None = None) -> CodedRead | None:
    """The header record of ``body`` and every later record, one CodedColumn per field;
    None when the text is not a rectangular table Arrow reads the same way.
    ``data``, when given, is ``body`` encoded as UTF-8 (saves encoding it again)."""
    import pyarrow as pa
    import pyarrow.csv as pacsv

    header = _first_record(body, delimiter)
    if header is None:
        return None
    if data is None:
        data = body.encode("utf-8")
    if not _plainly_quoted(data, delimiter):
        return None
    names = [f"f{i}" for i in range(len(header))]
    try:
        table = pacsv.read_csv(
            io.BytesIO(data),
            read_options=pacsv.ReadOptions(column_names=names, skip_rows=1,
                                           block_size=_BLOCK_BYTES),
            parse_options=pacsv.ParseOptions(delimiter=delimiter, quote_char='"',
                                              double_quote=True, escape_char=False,
                                              newlines_in_values=True,
                                              ignore_empty_lines=False),
            convert_options=pacsv.ConvertOptions(
                column_types=dict.fromkeys(names, pa.string()), null_values=[],
                strings_can_be_null=False, quoted_strings_can_be_null=False),
        )
    except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
        return None
    columns = [table.column(i) for i in range(len(header))]
    with ThreadPoolExecutor(max_workers=2) as pool:  # Arrow's hashing releases the GIL
        return CodedRead(header, list(pool.map(_dictionary, columns)), table.num_rows)


def _first_record(body: str, delimiter: str) -> list[str] | None:
    """The header's fields (quote-aware), or None where Arrow's count of rows to skip
    could differ from a record (a line break inside a quoted header cell)."""
    end = min((i for i in (body.find("\n"), body.find("\r")) if i >= 0), default=len(body))
    line = body[:end]
    if '"' in line and line.count('"') % 2:
        return None  # a quoted header cell runs on to the next line
    try:
        return next(csv.reader([line], delimiter=delimiter, strict=True), None)
    except csv.Error:
        return None


def _plainly_quoted(data: bytes, delimiter: str) -> bool:
    """Whether every quote opens or closes a whole quoted field (RFC 4180 without doubled
    quotes): the text on which both parsers certainly agree. Vectorised over the bytes."""
    if b'"' not in data:
        return True
    if b'""' in data:
        return False  # an escaped quote or an empty quoted field: leave it to the general path
    raw = np.frombuffer(data, dtype=np.uint8)
    step = 1 << 22  # blocks: no file-sized temporary array to allocate and fault in
    quotes = np.concatenate([np.flatnonzero(raw[at:at + step] == ord('"')) + at
                             for at in range(0, len(raw), step)])
    if len(quotes) % 2:
        return False
    opening, closing = quotes[0::2], quotes[1::2]
    bounds = np.frombuffer(f"{delimiter}\r\n".encode(), dtype=np.uint8)
    # the byte before each opening quote and after each closing one (file ends count)
    before = raw[np.maximum(opening - 1, 0)]
    after = raw[np.minimum(closing + 1, len(raw) - 1)]
    starts = np.isin(before, bounds) | (opening == 0)
    ends = np.isin(after, bounds) | (closing == len(raw) - 1)
    return bool(starts.all() and ends.all())


def _dictionary(column: object) -> CodedColumn:
    import pyarrow.compute as pc

    encoded = pc.dictionary_encode(column.combine_chunks())  # type: ignore[attr-defined]
    values = encoded.dictionary.to_numpy(zero_copy_only=False).astype(object, copy=False)
    codes = encoded.indices.to_numpy().astype(np.int64)
    longest = pc.max(pc.utf8_length(encoded.dictionary)).as_py() or 0
    return CodedColumn(values, codes, longest)


def drop_unused(column: CodedColumn, rows: slice) -> CodedColumn:
    """The column restricted to ``rows``, values not seen there dropped (order kept)."""
    codes = column.codes[rows]
    used = np.bincount(codes, minlength=len(column.values)) > 0
    if used.all():
        return CodedColumn(column.values, codes, column.longest)
    remap = np.cumsum(used) - 1
    return CodedColumn(column.values[used], remap[codes], column.longest)


# --------------------------------------------------------------------------
# Writing


@dataclass
class CodedFrame:
    """A table of text cells held per column as distinct texts plus row codes."""

    names: list[str]
    columns: list[CodedColumn]
    n_rows: int

    @classmethod
    def from_frame(cls, frame: pd.DataFrame) -> CodedFrame:
        """Each column factorised; a missing cell (None/NaN) becomes the empty text."""
        columns = []
        for i in range(frame.shape[1]):
            codes, uniques = pd.factorize(frame.iloc[:, i].to_numpy(dtype=object),
                                          use_na_sentinel=True)
            values = np.array([v if isinstance(v, str) else str(v) for v in uniques.tolist()]
                              + [""], dtype=object)
            columns.append(CodedColumn(values, np.where(codes < 0, len(values) - 1, codes)))
        return cls([str(c) for c in frame.columns], columns, len(frame))

    def frame(self) -> pd.DataFrame:
        if not self.columns:
            return pd.DataFrame(index=range(self.n_rows), columns=pd.Index([], dtype=object))
        return pd.DataFrame({i: c.cells() for i, c in enumerate(self.columns)},
                            dtype=object).set_axis(pd.Index(self.names, dtype=object), axis=1)


def write_csv(frame: pd.DataFrame | CodedFrame, handle: IO[bytes], delimiter: str = ",",
              *, header: bool = True) -> None:
    """A table of text cells as UTF-8 CSV with ``\\n`` line ends and minimal quoting
    (see the module's note on carriage returns); ``header=False`` for a later chunk."""
    import pyarrow as pa
    import pyarrow.compute as pc

    table = frame if isinstance(frame, CodedFrame) else CodedFrame.from_frame(frame)
    needs_quotes = re.compile(f"[{re.escape(delimiter)}\"\r\n]")
    lone = len(table.names) == 1  # a row of one empty cell is written "" (else a blank line)
    if header:
        names = [_quoted(name, needs_quotes, lone) for name in table.names]
        handle.write((delimiter.join(names) + "\n").encode("utf-8"))
    if not table.columns:
        handle.write(b"\n" * table.n_rows)
        return
    sep, end, none = (pa.scalar(s, pa.large_string()) for s in (delimiter, "\n", ""))

    def lines(start: int) -> Any:
        stop = min(start + _CHUNK_ROWS, table.n_rows)
        parts = [texts.take(pa.array(column.codes[start:stop]))
                 for texts, column in zip(rendered, table.columns)]
        joined = pc.binary_join_element_wise(*parts, sep)
        return pc.binary_join_element_wise(joined, end, none)

    # Arrow does the work and releases the interpreter lock: two threads render columns,
    # then join the next block of rows while this one is written
    with ThreadPoolExecutor(max_workers=2) as pool:
        rendered = list(pool.map(lambda c: _rendered(c.arrow(), delimiter, lone),
                                 table.columns))
        blocks = range(0, table.n_rows, _CHUNK_ROWS)
        pending = [pool.submit(lines, start) for start in blocks[:2]]
        for k in range(len(blocks)):
            block = pending[k].result()
            if k + 2 < len(blocks):
                pending.append(pool.submit(lines, blocks[k + 2]))
            handle.write(_data_bytes(block))
            pending[k] = None  # its text is written: let it go


def _rendered(text: Any, delimiter: str, lone: bool) -> Any:
    """Each distinct text as written in the file, quoted where need be (in Arrow)."""
    import pyarrow as pa
    import pyarrow.compute as pc

    quote = pc.match_substring_regex(text, f"[{re.escape(delimiter)}\"\r\n]")
    if lone:  # a row of one empty cell is written "" (else it reads as a blank line)
        quote = pc.or_(quote, pc.equal(text, ""))
    if not pc.any(quote).as_py():
        return text
    mark = pa.scalar('"', pa.large_string())
    doubled = pc.replace_substring(text, '"', '""')
    quoted = pc.binary_join_element_wise(mark, doubled, mark, pa.scalar("", pa.large_string()))
    return pc.if_else(quote, quoted, text)


def _quoted(text: str, needs_quotes: re.Pattern[str], lone: bool) -> str:
    if needs_quotes.search(text):
        return '"' + text.replace('"', '""') + '"'
    return '""' if lone and text == "" else text


def _data_bytes(lines: object) -> memoryview:
    """The text bytes of a large_string array without nulls, end to end."""
    offsets = np.frombuffer(lines.buffers()[1], dtype=np.int64)  # type: ignore[attr-defined]
    first = int(offsets[lines.offset])  # type: ignore[attr-defined]
    last = int(offsets[lines.offset + len(lines)])  # type: ignore[attr-defined,arg-type]
    return memoryview(lines.buffers()[2])[first:last]  # type: ignore[attr-defined]
