"""The Arrow parse and write of delimited text agree with the general path byte for byte.

The reference is the project's own general reader (pandas' C parser, row by row) and
pandas' ``DataFrame.to_csv`` with Python's ``csv.QUOTE_MINIMAL`` rule (Python's csv module
documentation: a field is quoted when it holds the delimiter, the quote character or a
line break); the fast path must give the same table, warnings and errors, or decline.
"""

from __future__ import annotations

import csv
import io
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from harmonize import arrowcsv, sources
from harmonize.sources import SourceError, read_tables

SETTINGS = settings(max_examples=200, deadline=None,
                    suppress_health_check=[HealthCheck.function_scoped_fixture])
CELL = st.text(alphabet=list('ab ,;"\n\r\té€0-'), max_size=6)


def _read(path: Path, fast: bool, monkeypatch: pytest.MonkeyPatch):
    with monkeypatch.context() as patch:
        if not fast:
            patch.setattr(sources, "read_coded", lambda *args: None)
        try:
            table = read_tables(path)[0]
        except SourceError as exc:
            return ("error", str(exc))
    return ("table", table.frame, table.warnings, table.coded is not None)


@SETTINGS
@given(st.text(alphabet=list('ab,;"\n\r\té'), min_size=1, max_size=60))
def test_any_text_reads_as_the_general_parser_reads_it(tmp_path: Path,
                                                       monkeypatch: pytest.MonkeyPatch,
                                                       body: str) -> None:
    path = tmp_path / "any.csv"
    path.write_bytes(body.encode("utf-8"))
    fast, slow = _read(path, True, monkeypatch), _read(path, False, monkeypatch)
    assert fast[0] == slow[0]
    if fast[0] == "error":
        assert fast[1] == slow[1]
        return
    pd.testing.assert_frame_equal(fast[1], slow[1])
    assert fast[2] == slow[2]


@SETTINGS
@given(st.lists(st.lists(CELL, min_size=3, max_size=3), min_size=1, max_size=8))
def test_written_tables_read_back_through_the_fast_path(tmp_path: Path,
                                                        monkeypatch: pytest.MonkeyPatch,
                                                        rows: list[list[str]]) -> None:
    frame = pd.DataFrame(rows, columns=["Name", "Town", "Note"], dtype=object)
    path = tmp_path / "t.csv"
    frame.to_csv(path, index=False, lineterminator="\n", quoting=csv.QUOTE_MINIMAL)
    fast, slow = _read(path, True, monkeypatch), _read(path, False, monkeypatch)
    assert fast[0] == slow[0]
    if fast[0] == "table":
        pd.testing.assert_frame_equal(fast[1], slow[1])
        assert fast[2] == slow[2]


def test_a_plain_export_takes_the_fast_path(tmp_path: Path) -> None:
    path = tmp_path / "plain.csv"
    path.write_text('ref,amount\n001,"1.234,50"\n002,"7,00"\n\n', encoding="utf-8")
    table = read_tables(path)[0]
    assert table.coded is not None
    assert table.frame["amount"].tolist() == ["1.234,50", "7,00"]
    assert [c.values.tolist() for c in table.coded] == [["001", "002"], ["1.234,50", "7,00"]]


def test_ragged_rows_fall_back_to_the_general_parser(tmp_path: Path) -> None:
    path = tmp_path / "ragged.csv"
    path.write_text("a,b,c\n1,2\n3,4,5\n", encoding="utf-8")
    table = read_tables(path)[0]
    assert table.coded is None
    assert "ragged rows 2 padded" in " ".join(table.warnings)


@SETTINGS
@given(st.lists(st.lists(st.one_of(CELL, st.none()), min_size=1, max_size=3), min_size=0,
                max_size=6).filter(lambda rows: len({len(r) for r in rows}) <= 1),
       st.sampled_from([",", "\t", ";"]))
def test_writer_bytes_equal_pandas_to_csv(rows: list[list[str | None]], delimiter: str) -> None:
    width = len(rows[0]) if rows else 2
    frame = pd.DataFrame(rows, columns=[f"c{i}" for i in range(width)], dtype=object)
    expected = io.BytesIO()
    frame.to_csv(expected, sep=delimiter, index=False, encoding="utf-8", lineterminator="\n",
                 quoting=csv.QUOTE_MINIMAL, na_rep="")
    got = io.BytesIO()
    arrowcsv.write_csv(frame, got, delimiter)
    if any("\r" in (cell or "") for row in rows for cell in row):
        # to_csv with "\n" line ends leaves a carriage return bare, which every reader
        # takes as a line break; the writer quotes it: the csv module reads the cell back
        back = list(csv.reader(io.StringIO(got.getvalue().decode(), newline=""),
                               delimiter=delimiter))
        assert back[1:] == [[cell or "" for cell in row] for row in rows]
    else:
        assert got.getvalue() == expected.getvalue()


def test_writer_handles_more_rows_than_one_step(monkeypatch: pytest.MonkeyPatch) -> None:
    monkeypatch.setattr(arrowcsv, "_CHUNK_ROWS", 7)
    frame = pd.DataFrame({"n": np.arange(50).astype(str), "t": ["x,y"] * 50}, dtype=object)
    expected = frame.to_csv(index=False, lineterminator="\n").encode()
    got = io.BytesIO()
    arrowcsv.write_csv(frame, got)
    assert got.getvalue() == expected


@SETTINGS
@given(st.lists(st.text(alphabet=list("=+-@\t\r0123456789.eE٣ab"), max_size=5), min_size=1,
                max_size=12))
def test_formula_guard_on_distinct_texts_matches_the_cell_rule(cells: list[str]) -> None:
    # OWASP "CSV Injection": the same cells are prefixed whether the guard runs on each
    # cell or on a column's distinct texts (Arrow prefilter, Python's rule deciding)
    from harmonize.safety import neutralise_cell, neutralise_coded
    frame = pd.DataFrame({"=x": cells}, dtype=object)
    safe = neutralise_coded(arrowcsv.CodedFrame.from_frame(frame))
    assert safe.frame.frame()["'=x"].tolist() == [neutralise_cell(c) for c in cells]
    assert safe.cells.get("=x", 0) == sum(neutralise_cell(c) != c for c in cells)
    assert safe.headers == ["=x"]
