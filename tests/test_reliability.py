"""Reliability and security: hostile inputs, formula payloads, nothing lost, idempotence.

A folder of hostile files beside good ones goes through the command line (click's
CliRunner and a real ``python -m harmonize.cli`` process): every refused file is named
on one line, every good file is converted, no traceback appears and the inputs keep
their bytes. The demo data is an invented scenario ("Larkspur Mill Supplies", a made-up
trader); references for expected values are named beside each check.
"""

from __future__ import annotations

import hashlib
import io
import json
import os
import re
import signal
import subprocess
import sys
import time
import unicodedata
import zipfile
from pathlib import Path

import numpy as np
import openpyxl
import pandas as pd
import pytest
from click.testing import CliRunner
from corpora.contacts import generate
from corpora.exports import corpus
from corpora.numbers import make_table
from corpora.quantities import make_sheet
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from strategies import frames, lookalike_columns, sentinel_columns, tables

from harmonize import pipeline
from harmonize.cli import main
from harmonize.engines.base import Outcome
from harmonize.engines.identifiers import _CODE, LONG_DIGITS, _shape
from harmonize.engines.missing import SENTINEL_GAP, _sentinels, missing_with_mask
from harmonize.evidence import ColumnEvidence
from harmonize.pipeline import harmonize_frame
from harmonize.safety import (
    LimitError,
    Limits,
    check_archive,
    failure_line,
    map_isolated,
    neutralise_cell,
    neutralise_frame,
    run_cli,
)
from harmonize.sources import SourceError, read_tables, write_table

ROOT = Path(__file__).resolve().parent.parent
SAMPLES = ROOT / "samples"
PROPERTY = settings(max_examples=40, deadline=None, database=None, derandomize=True,
                    suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])


def checksums(folder: Path) -> dict[str, str]:
    return {str(p.relative_to(folder)): hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


# --------------------------------------------------------------------------
# The held-out folder: hostile files beside good ones

BILLION_LAUGHS = (  # the classic entity-expansion payload, nine levels of ten
    '<!DOCTYPE lolz [<!ENTITY lol "lol">'
    + "".join(f'<!ENTITY lol{i} "{("&lol" + (str(i - 1) if i > 1 else "") + ";") * 10}">'
              for i in range(1, 10))
    + "]>"
)
ODS_NS = ('xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
          'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
          'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0"')
MANIFEST = ('<?xml version="1.0" encoding="UTF-8"?><manifest:manifest xmlns:manifest='
            '"urn:oasis:names:tc:opendocument:xmlns:manifest:1.0" manifest:version="1.2">'
            '<manifest:file-entry manifest:full-path="/" manifest:media-type='
            '"application/vnd.oasis.opendocument.spreadsheet"/>'
            '<manifest:file-entry manifest:full-path="content.xml" manifest:media-type='
            '"text/xml"/>{extra}</manifest:manifest>')


def ods_bytes(rows: str, doctype: str = "", manifest_extra: str = "") -> bytes:
    content = (f'<?xml version="1.0" encoding="UTF-8"?>{doctype}<office:document-content '
               f'{ODS_NS} office:version="1.2"><office:body><office:spreadsheet>'
               f'<table:table table:name="Stock">{rows}</table:table></office:spreadsheet>'
               "</office:body></office:document-content>")
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
        archive.writestr("mimetype", "application/vnd.oasis.opendocument.spreadsheet",
                         compress_type=zipfile.ZIP_STORED)
        archive.writestr("content.xml", content)
        archive.writestr("META-INF/manifest.xml", MANIFEST.format(extra=manifest_extra))
    return buffer.getvalue()


def ods_cell(text: str, repeat: int = 1) -> str:
    attr = f' table:number-columns-repeated="{repeat}"' if repeat > 1 else ""
    return (f'<table:table-cell office:value-type="string"{attr}><text:p>{text}</text:p>'
            "</table:table-cell>")


def ods_row(cells: str, repeat: int = 1) -> str:
    attr = f' table:number-rows-repeated="{repeat}"' if repeat > 1 else ""
    return f"<table:table-row{attr}>{cells}</table:table-row>"


def xlsx_bytes(rows: list[list[object]]) -> bytes:
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.title = "Stock"
    for row in rows:
        sheet.append(row)
    for cell in (c for line in sheet.iter_rows() for c in line):
        if isinstance(cell.value, str) and cell.value.startswith("="):
            cell.data_type = "s"  # a text cell, as an export holds it, not a formula
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()


def rezip(raw: bytes, change: dict[str, bytes | None], extra: dict[str, bytes] | None = None,
          ) -> bytes:
    """The same archive with some members replaced (None: dropped) or added."""
    source = zipfile.ZipFile(io.BytesIO(raw))
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
        for name in source.namelist():
            body = change.get(name, source.read(name))
            if body is not None:
                archive.writestr(name, body)
        for name, body in (extra or {}).items():
            archive.writestr(name, body)
    return buffer.getvalue()


def with_doctype(xml: bytes, doctype: str, reference: bytes) -> bytes:
    """Put a DTD after the XML declaration and reference its entity in the first cell."""
    head, _, rest = xml.partition(b"?>")
    body = (head + b"?>" + doctype.encode() + rest) if rest else doctype.encode() + xml
    return body.replace(b"Larkspur", reference, 1)


def encrypted_flag(raw: bytes) -> bytes:
    """Set the 'encrypted' bit (APPNOTE 4.4.4, bit 0) in every central directory entry."""
    data = bytearray(raw)
    at = data.find(b"PK\x01\x02")
    while at >= 0:
        data[at + 8] |= 0x01
        at = data.find(b"PK\x01\x02", at + 4)
    return bytes(data)


GOOD_CSV = (
    "Order;Booked;Amount;Note\n"
    "LM-001;03/04/2024;1.234,50;=HYPERLINK(\"http://example.invalid\",\"open\")\n"
    "LM-002;13/04/2024;-12,50;+cmd|' /C calc'!A0\n"
    "LM-003;21/04/2024;-1.000,00;@SUM(A1:A9)\n"
    "LM-004;30/04/2024;7,25;-2+3\n"
    "LM-005;02/05/2024;0,99;plain remark\n"
)
# The cells the good files carry as formula payloads (OWASP "CSV Injection" list)
PAYLOADS = {"=HYPERLINK(\"http://example.invalid\",\"open\")", "+cmd|' /C calc'!A0",
            "@SUM(A1:A9)", "-2+3"}
REFUSED = {
    "binary.csv": "binary content",
    "nul_bytes.csv": "NUL bytes",
    "too_many_fields.csv": "row 3: expected 3 fields, found 4",
    "whitespace.csv": "empty file",
    "too_wide.csv": "columns, over the limit",
    "truncated.xlsx": "corrupt or truncated workbook",
    "not_a_workbook.xlsx": "not a workbook",
    "locked.xlsx": "password-protected",
    "locked_members.xlsx": "password-protected",
    "entities.xlsx": "entity",
    "zip_bomb.xlsx": "decompression bomb",
    "repeat_bomb.ods": "over the limit",
    "entities.ods": "DTD or entities",
    "locked.ods": "password-protected",
}
GOOD = {"ledger_de.csv", "stock.xlsx", "mixed_encoding.csv", "wide_utf16.csv",
        "short_rows.csv", "big_cell.csv", "stock.ods"}
ENV = {"HARMONIZE_MAX_COLUMNS": "250"}  # lowered so a modest file counts as too wide


def build_folder(folder: Path) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    put = {name: None for name in (*GOOD, *REFUSED)}
    put["ledger_de.csv"] = GOOD_CSV.encode("utf-8")
    book = xlsx_bytes([["Item", "Change", "Remark"], ["Larkspur twine", -12.5, "=1+1"],
                       ["Mill oil", -1000, "-1e3"], ["Sacks", 7, "+44 20 7946 0958"]])
    put["stock.xlsx"] = book
    put["mixed_encoding.csv"] = ("Name,Town\nZoë Farrow,Liège\n".encode()
                                 + "René Aubel,Sète\n".encode("cp1252"))
    put["wide_utf16.csv"] = ("Name;Qty\nLarkspur;3\nÅsa;4\n").encode("utf-16")
    put["short_rows.csv"] = b"Item,Qty,Unit\nrope,3,m\ntwine,4\nsacks,5,pcs\n"
    put["big_cell.csv"] = ("Item,Spec\nrope," + "x" * 2_000_000 + "\ntwine,short\n").encode()
    put["stock.ods"] = ods_bytes(ods_row(ods_cell("Item") + ods_cell("Qty"))
                                 + ods_row(ods_cell("Larkspur") + ods_cell("5")))
    put["binary.csv"] = bytes(range(256)) * 20
    put["nul_bytes.csv"] = b"Item,Qty\nrope,3\ntwi\x00ne,4\n"
    put["too_many_fields.csv"] = b"a,b,c\n1,2,3\n4,5,6,7\n8,9,10\n"
    put["whitespace.csv"] = b"  \n\t\n   \r\n"
    put["too_wide.csv"] = (",".join(f"c{i}" for i in range(300)) + "\n"
                           + ",".join("1" for _ in range(300)) + "\n").encode()
    put["truncated.xlsx"] = book[: len(book) // 2]
    put["not_a_workbook.xlsx"] = _plain_zip()
    put["locked.xlsx"] = bytes.fromhex("D0CF11E0A1B11AE1") + bytes(1024)  # [MS-CFB] §2.2
    put["locked_members.xlsx"] = encrypted_flag(book)
    sheet = zipfile.ZipFile(io.BytesIO(book)).read("xl/worksheets/sheet1.xml")
    put["entities.xlsx"] = rezip(book, {"xl/worksheets/sheet1.xml":
                                        with_doctype(sheet, BILLION_LAUGHS, b"&lol9;")})
    put["zip_bomb.xlsx"] = rezip(book, {}, {"xl/media/padding.bin": bytes(8 << 20)})
    put["repeat_bomb.ods"] = ods_bytes(ods_row(ods_cell("Item"))
                                       + ods_row(ods_cell("x", 200), 1_000_000))
    put["entities.ods"] = ods_bytes(ods_row(ods_cell("&lol9;")), doctype=BILLION_LAUGHS)
    put["locked.ods"] = ods_bytes(ods_row(ods_cell("Item")), manifest_extra=(
        '<manifest:file-entry manifest:full-path="x"><manifest:encryption-data/>'
        "</manifest:file-entry>"))
    for name, raw in put.items():
        (folder / name).write_bytes(raw)  # type: ignore[arg-type]
    return folder


def _plain_zip() -> bytes:
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w") as archive:
        archive.writestr("notes.txt", "a zip, not a workbook")
    return buffer.getvalue()


def error_lines(stderr: str) -> dict[str, str]:
    """Refusal lines 'harmonize: <path>: <reason>' keyed by file name."""
    found = {}
    for line in stderr.splitlines():
        if line.startswith("harmonize: ") and not line.startswith("harmonize: note:"):
            path = line[len("harmonize: "):].split(": ", 1)[0]
            found[Path(path).name] = line
    return found


def check_run(folder: Path, out: Path, before: dict[str, str], code: int, stderr: str) -> None:
    assert "Traceback" not in stderr
    assert code == 1, stderr  # exit 1: some inputs could not be read, the rest converted
    refused = error_lines(stderr)
    assert set(refused) == set(REFUSED), stderr
    for name, reason in REFUSED.items():
        assert reason in refused[name], refused[name]
    report = json.loads((out / "harmonize-report.json").read_text("utf-8"))
    assert {Path(e["input"]).name for e in report["files"]} == GOOD
    for entry in report["files"]:
        assert (out / entry["output"]).is_file()
    assert checksums(folder) == before  # inputs keep their bytes


@pytest.fixture(scope="module")
def hostile(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return build_folder(tmp_path_factory.mktemp("hostile") / "in")


def test_hostile_folder_through_click(hostile: Path, tmp_path: Path) -> None:
    before = checksums(hostile)
    result = CliRunner().invoke(main, ["apply", str(hostile), "--out", str(tmp_path), "-q",
                                       "--format", "csv"], env=ENV)
    assert result.exception is None or isinstance(result.exception, SystemExit)
    check_run(hostile, tmp_path, before, result.exit_code, result.stderr)
    mixed = pd.read_csv(tmp_path / "mixed_encoding.csv", dtype=str)
    assert mixed["Town"].tolist() == ["Liège", "Sète"]  # each line in its own encoding


def test_hostile_folder_in_a_real_process_with_two_jobs(hostile: Path, tmp_path: Path) -> None:
    before = checksums(hostile)
    done = subprocess.run(
        [sys.executable, "-m", "harmonize.cli", "apply", str(hostile), "--out", str(tmp_path),
         "-q", "--jobs", "2", "--format", "csv"],
        capture_output=True, text=True, cwd=ROOT, env={**os.environ, **ENV}, timeout=300)
    check_run(hostile, tmp_path, before, done.returncode, done.stderr)


def test_payloads_neutralised_and_numbers_intact(hostile: Path, tmp_path: Path) -> None:
    result = CliRunner().invoke(main, ["apply", str(hostile / "ledger_de.csv"),
                                       str(hostile / "stock.xlsx"), "--out", str(tmp_path)])
    assert result.exit_code == 0, result.stderr
    ledger = pd.read_csv(tmp_path / "ledger_de.csv", dtype=str, keep_default_na=False)
    assert set(ledger["Note"]) >= {"'" + p for p in PAYLOADS}
    assert "-12.5" in set(ledger["Amount"]) and "-1000" in set(ledger["Amount"])
    stock = read_tables(tmp_path / "stock.xlsx")[0].frame
    assert "'=1+1" in set(stock["Remark"])


# --------------------------------------------------------------------------
# Formula payloads


@pytest.mark.parametrize(("text", "expected"), [
    # OWASP "CSV Injection": cells starting = + - @ tab CR are prefixed with '
    ("=1+1", "'=1+1"), ("+cmd|' /C calc'!A0", "'+cmd|' /C calc'!A0"), ("-2+3", "'-2+3"),
    ("@SUM(A1)", "'@SUM(A1)"), ("\t=1", "'\t=1"), ("\r=1", "'\r=1"),
    ("+44 20 7946 0958", "'+44 20 7946 0958"),  # a spreadsheet computes "+44-20..." as a formula
    # plain numbers are numbers to a spreadsheet, never formulas: kept exactly
    ("-12.5", "-12.5"), ("-1e3", "-1e3"), ("+442079460958", "+442079460958"), ("-.5", "-.5"),
    ("plain", "plain"), ("", ""), ("'=already", "'=already"), (" =1", " =1"),
])
def test_neutralise_cell(text: str, expected: str) -> None:
    assert neutralise_cell(text) == expected


def test_neutralised_csv_reads_back_as_text(tmp_path: Path) -> None:
    frame = pd.DataFrame({"Note": [*PAYLOADS, "-12.5", None, "=1+1"],
                          "=Header": ["a", "b", "c", "d", "e", "f", "g"]}, dtype=object)
    safe = neutralise_frame(frame)
    assert safe.cells == {"Note": 5} and safe.headers == ["=Header"]
    assert frame["Note"].iloc[0] in PAYLOADS  # the input frame is not changed
    write_table(safe.frame, tmp_path / "out.csv", fmt="csv")
    back = pd.read_csv(tmp_path / "out.csv", dtype=str, keep_default_na=False)
    assert list(back.columns) == ["Note", "'=Header"]
    assert not back["Note"].str.startswith(("=", "+", "@")).any()
    assert back["Note"].tolist()[-3:] == ["-12.5", "", "'=1+1"]


# --------------------------------------------------------------------------
# Limits


def test_limits_from_environment() -> None:
    limits = Limits.from_env({"HARMONIZE_MAX_CELLS": "1_000", "HARMONIZE_MAX_RATIO": "50"})
    assert (limits.max_cells, limits.max_ratio, limits.max_columns) == (1000, 50.0, 16_384)
    with pytest.raises(LimitError, match="HARMONIZE_MAX_CELLS='many' is not a number"):
        Limits.from_env({"HARMONIZE_MAX_CELLS": "many"})


def test_archive_declared_size_refused_before_parsing() -> None:
    raw = rezip(xlsx_bytes([["a"], ["b"]]), {}, {"xl/media/big.bin": bytes(300_000)})
    with zipfile.ZipFile(io.BytesIO(raw)) as archive:
        check_archive(archive, Limits())
        with pytest.raises(LimitError, match="unpacks to .* over the limit 100000"):
            check_archive(archive, Limits(max_unpacked_bytes=100_000))


def test_cell_size_limit_names_the_cell(tmp_path: Path) -> None:
    path = tmp_path / "long.csv"
    path.write_text("Item,Spec\nrope,short\ntwine," + "y" * 5000 + "\n")
    with pytest.raises(SourceError, match=r"long\.csv: row 3: column 'Spec' holds 5000 char"):
        read_tables(path, limits=Limits(max_cell_chars=1000))


def test_sheet_cell_limit_checked_while_streaming(tmp_path: Path) -> None:
    path = tmp_path / "many.xlsx"
    path.write_bytes(xlsx_bytes([["a", "b"]] + [[i, i] for i in range(100)]))
    limit = r"sheet 'Stock' has (at least )?\d+ cells, over the limit 50"
    with pytest.raises(SourceError, match=limit):
        read_tables(path, limits=Limits(max_cells=50))


# --------------------------------------------------------------------------
# Atomic writes under SIGKILL

WRITER = """
import sys
from pathlib import Path
import pandas as pd
from harmonize.sources import write_table
rows = 1_000_000
frame = pd.DataFrame({"Item": ["Larkspur twine, natural"] * rows, "Qty": ["12.5"] * rows})
write_table(frame, Path(sys.argv[1]), fmt="csv")
"""


@pytest.mark.parametrize("previous", [None, "Item,Qty\nold,1\n"])
def test_killed_mid_write_leaves_no_partial_output(tmp_path: Path, previous: str | None) -> None:
    dest = tmp_path / "big.csv"
    if previous is not None:
        dest.write_text(previous)
    child = subprocess.Popen([sys.executable, "-c", WRITER, str(dest)], cwd=ROOT)
    try:
        temp = _wait_for_partial(tmp_path, child)
        child.send_signal(signal.SIGKILL)
        child.wait(timeout=30)
    finally:
        if child.poll() is None:
            child.kill()
    assert temp is not None, "the writer finished before it could be killed"
    assert child.returncode == -signal.SIGKILL
    if previous is None:
        assert not dest.exists()
    else:
        assert dest.read_text() == previous
    # what is left is a hidden temp file, which input discovery skips
    assert all(p.name.startswith(".big.csv.") for p in tmp_path.iterdir() if p != dest)


def _wait_for_partial(folder: Path, child: subprocess.Popen[bytes]) -> Path | None:
    deadline = time.monotonic() + 60
    while time.monotonic() < deadline and child.poll() is None:
        for path in folder.glob(".big.csv.*.tmp"):
            if path.stat().st_size > 1 << 20:
                return path
        time.sleep(0.005)
    return None


# --------------------------------------------------------------------------
# One failing file or worker does not take the others down


def _work(item: int) -> str:
    if item == 2:
        os.kill(os.getpid(), signal.SIGKILL)  # as the out-of-memory killer would
    if item == 4:
        raise KeyError("no such column")
    return f"done {item}"


def test_map_isolated_keeps_every_other_result() -> None:
    results = map_isolated(_work, list(range(7)), 2, on_failure=lambda i, why: f"failed: {why}")
    assert [r for i, r in enumerate(results) if i not in (2, 4)] == [
        f"done {i}" for i in (0, 1, 3, 5, 6)]
    assert results[2].startswith("failed: 2: the worker process handling this file died")
    assert "SIGKILL" in results[2]
    assert results[4] == ("failed: 4: internal error (KeyError: 'no such column'); "
                          "the file was skipped, please report this")


def test_console_entry_prints_one_line_for_an_unexpected_error(capsys: pytest.CaptureFixture[str]
                                                               ) -> None:
    import click

    @click.command()
    def broken() -> None:
        raise KeyError("plan")

    with pytest.raises(SystemExit) as stop:
        run_cli(broken, [])
    assert stop.value.code == 3
    assert capsys.readouterr().err == (
        "harmonize: internal error (KeyError: 'plan'); please report this\n")


def test_an_engine_error_skips_only_its_file(tmp_path: Path) -> None:
    folder = tmp_path / "in"
    folder.mkdir()
    # "1.2.3e1" made the numbers engine raise decimal.InvalidOperation (bench/fuzz.py)
    (folder / "amounts.csv").write_text("Amount\n" + "".join(f"{i}.5\n" for i in range(9))
                                        + "1.2.3e1\n")
    (folder / "fine.csv").write_text("Item,Qty\nrope,3\n")
    result = CliRunner().invoke(main, ["apply", str(folder), "--out", str(tmp_path / "out")])
    assert "Traceback" not in result.output + result.stderr
    assert result.exception is None or isinstance(result.exception, SystemExit)
    assert (tmp_path / "out" / "fine.csv").is_file()


def test_failure_line_is_one_line() -> None:
    line = failure_line("a.csv", ValueError("two\nlines"))
    assert "\n" not in line and line.startswith("a.csv: internal error (ValueError: two lines)")


def test_folder_run_survives_a_dying_worker(tmp_path: Path, monkeypatch: pytest.MonkeyPatch
                                            ) -> None:
    folder = tmp_path / "in"
    folder.mkdir()
    for i in range(4):
        (folder / f"part{i}.csv").write_text(f"Item,Qty\nrope,{i}\n")
    real = pipeline.harmonize_table

    def flaky(table, name, options, plan, *more):  # type: ignore[no-untyped-def]
        if name == "part1.csv":
            os.kill(os.getpid(), signal.SIGKILL)
        if name == "part2.csv":
            raise RuntimeError("engine bug")
        return real(table, name, options, plan, *more)

    monkeypatch.setattr(pipeline, "harmonize_table", flaky)  # inherited by forked workers
    result = pipeline.run([folder], tmp_path / "out", jobs=2)
    assert sorted(e["file"] for e in result.errors) == ["part1.csv", "part2.csv"]
    assert sorted(e["input"] for e in result.report["files"]) == ["part0.csv", "part3.csv"]
    assert (tmp_path / "out" / "part3.csv").read_text() == "Item,Qty\nrope,3\n"


# --------------------------------------------------------------------------
# Nothing lost, and idempotent


@PROPERTY
@given(frames())
def test_every_cell_ends_in_exactly_one_outcome(frame: pd.DataFrame) -> None:
    out, entry, _ = harmonize_frame(frame)
    assert len(out) == len(frame)
    assert [c["name"] for c in entry["columns"]] == list(frame.columns)
    for column in entry["columns"]:
        counts = column["counts"]
        assert sum(counts.values()) == len(frame)  # one outcome per cell
        listed = [u for u in entry["unresolved"] if u["column"] == column["name"]]
        assert len(listed) == counts[Outcome.UNRESOLVED.label]
        assert len({u["row"] for u in listed}) == len(listed)  # each cell listed once
        text = out[column["output_name"]]
        missing_rows = frame[column["name"]].isin(list(column["missing"]))
        assert (text[missing_rows.to_numpy()] == "").all()


def harmonised_again(frame: pd.DataFrame, name: str = "<frame>") -> pd.DataFrame:
    """The output of harmonising ``frame``, after checking a second run leaves it alone."""
    once, _, _ = harmonize_frame(frame, name=name)
    twice, _, _ = harmonize_frame(once, name=name)
    pd.testing.assert_frame_equal(once.astype(str), twice.astype(str), obj=name)
    return once


@PROPERTY
@given(frames())
def test_harmonising_its_own_output_changes_nothing(frame: pd.DataFrame) -> None:
    harmonised_again(frame)


@PROPERTY
@given(tables(lookalike_columns()))
def test_lookalike_spellings_read_the_same_the_second_time(frame: pd.DataFrame) -> None:
    # the text engine's cleaning (invisible characters, spaces, variant spellings) must not
    # turn a column into one another engine claims on the next run
    harmonised_again(frame)


@PROPERTY
@given(tables(sentinel_columns(), max_columns=1))
def test_sentinels_are_set_aside_on_the_first_run(frame: pd.DataFrame) -> None:
    # a -999 beside "1.234,50" is as much a sentinel as beside "1234.5" (its plain rewriting)
    harmonised_again(frame)


@pytest.mark.parametrize(("values", "country", "first"), [
    # invisible characters: the booleans engine reads through them (Unicode 15 ch. 23.2)
    (["\ufeffyes", "no", "yes"], None, ["true", "false", "true"]),
    # cleaning a soft hyphen away would make the column numbers on the next run
    (["-14\u00ad3.87944", "-5 825 540 603,20"], None, None),
    ([" +533.53\ufeff7.495"], None, None),
    # '-0·0 €' is not the commoner '-0.0 €': between digits a mark carries the value
    (["0e3", "0e3 €", "(0) €", "-0.0 €", "-0·0 €"], None, None),
    # a sentinel among amounts written with a decimal comma and group marks
    (["1.234,50", "2.345,10", "3.456,00", "4.567,80", "5.678,90", "6.789,00", "-999"], None,
     ["1234.5", "2345.1", "3456", "4567.8", "5678.9", "6789", ""]),
    (["39,09", "2.331,41", "312,14", "-9999,00", "1,32", "37"], None, None),
    (["-999", "618,39", "51 209", "0,28", "14,27", "-0"], None, None),   # "-0" is no negative
    (["USD -9999.00", "USD 1", "USD 60.07", "USD 12,473.84", "USD 0.40", "+281e3"], None, None),
    # kilograms written plainly are not German phone numbers on the next run
    (["87 lb", "71,01 lb", "88,71 lb", "63,33 lb", "873 lb", "58 lb", "94,97 lb", "-999,00 lb"],
     "DE", None),
])
def test_known_second_run_changes_stay_fixed(values: list[str], country: str | None,
                                             first: list[str] | None) -> None:
    data = {"col0": values} | ({"Country": [country] * len(values)} if country else {})
    once = harmonised_again(pd.DataFrame(data, dtype=object))
    if first is not None:
        assert once.iloc[:, 0].tolist() == first


@pytest.mark.parametrize(("values", "sentinel"), [
    # the only other negative amount is undecided ("-7,088": a group or a decimal mark?)
    (["USD 297", "USD 79", "USD 375", "USD 40", "USD -7,088", "USD 28", "USD -999"],
     "USD -999"),
    # the only amount near 9999 is undecided ("2,500": 2500 or 2.5?)
    (["USD 297", "USD 79", "USD 375", "USD 40", "USD 2,500", "USD 28", "USD 9999"],
     "USD 9999"),
])
def test_an_undecided_cell_does_not_change_what_is_a_sentinel(values: list[str],
                                                               sentinel: str) -> None:
    # an undecided cell is written empty, so a second run never sees it: the first run
    # weighs sentinels without it too, and both runs set the same value aside
    frame = pd.DataFrame({"Amount": values})
    once = harmonised_again(frame)
    _, report, _ = harmonize_frame(frame)
    column = report["columns"][0]
    assert column["missing"] == {sentinel: 1}
    assert column["counts"]["unresolved"] == 1
    assert once["Amount"].tolist()[values.index(sentinel)] == ""


@pytest.mark.parametrize("seed", [11, 23])
def test_generated_exports_are_idempotent(tmp_path: Path, seed: int) -> None:
    # invented branch exports of every kind (tests/corpora/exports.py), read back from files
    for item in corpus(6, seed):
        path = item.write(tmp_path)
        for table in read_tables(path):
            harmonised_again(table.frame, name=path.name)


def test_generated_price_lists_stock_and_contacts_are_idempotent() -> None:
    harmonised_again(make_table(3).frame, name="prices.csv")
    harmonised_again(make_sheet(1, 400).frame, name="depots.csv")
    harmonised_again(generate(2, 600).frame, name="contacts.csv")


def test_samples_are_idempotent(tmp_path: Path) -> None:
    before = checksums(SAMPLES)
    first, second = tmp_path / "out1", tmp_path / "out2"
    runner = CliRunner()
    result = runner.invoke(main, ["apply", str(SAMPLES), "--out", str(first), "-q"])
    assert result.exit_code == 0, result.stderr
    report = json.loads((first / "harmonize-report.json").read_text("utf-8"))
    outputs = sorted({e["output"] for e in report["files"]})
    result = runner.invoke(main, ["apply", *(str(first / o) for o in outputs),
                                  "--out", str(second), "-q"])
    assert result.exit_code == 0, result.stderr
    for name in outputs:
        a, b = read_tables(first / name), read_tables(second / name)
        assert [t.sheet for t in a] == [t.sheet for t in b]
        for left, right in zip(a, b, strict=True):
            pd.testing.assert_frame_equal(left.frame, right.frame, obj=f"{name} {left.sheet}")
        if not name.endswith(".xlsx"):  # a workbook stores its save time; text must match
            assert (first / name).read_bytes() == (second / name).read_bytes(), name
    assert checksums(SAMPLES) == before


# --------------------------------------------------------------------------
# Speed without changing answers: whole-column passes agree with a value-by-value reading

CODE_ALPHABET = "Ab09 -_/.#\t\u00a0é٣:,"


def shape_one_by_one(values: list[str], counts: list[int]) -> dict[str, float]:
    """The identifiers engine's shares, value by value with Python's re (ASCII digits,
    as RE2's \\d)."""
    rows = [(v.strip(), float(c)) for v, c in zip(values, counts, strict=True)]
    total = max(sum(c for _, c in rows), 1.0)
    digits = [(t, c) for t, c in rows if re.fullmatch(r"[0-9]+", t)]
    codes = [(t, c) for t, c in rows if re.match(_CODE, t)]
    width = -1
    if digits:
        by_width: dict[int, float] = {}
        for t, c in digits:
            by_width[len(t)] = by_width.get(len(t), 0.0) + c
        width = min(by_width, key=lambda w: (-by_width[w], w))
    digit_cells = sum(c for _, c in digits)
    return {
        "digits": digit_cells / total,
        "code": sum(c for _, c in codes) / total,
        "lead0": sum(c for t, c in digits if len(t) >= 2 and t[0] == "0") / total,
        "long": sum(c for t, c in digits if len(t) >= LONG_DIGITS) / total,
        "fixed": sum(c for t, c in digits if len(t) == width) / max(digit_cells, 1.0),
        "width": float(width),
        "decimal": float(any(re.fullmatch(r"[0-9]+[.,][0-9]+", t) for t, _ in rows)),
        "lettered": sum(c for t, c in codes if re.search("[A-Za-z]", t)) / total,
    }


@settings(max_examples=200, deadline=None)
@given(st.lists(st.tuples(st.text(alphabet=CODE_ALPHABET, max_size=10), st.integers(1, 5)),
                min_size=1, max_size=30, unique_by=lambda pair: pair[0]))
def test_identifier_shapes_in_arrow_match_a_value_by_value_reading(pairs) -> None:
    values, counts = [v for v, _ in pairs], [c for _, c in pairs]
    column = ColumnEvidence("Ref", 0, np.asarray(values, dtype=object),
                            np.asarray(counts, dtype=np.int64))
    assert _shape(column) == pytest.approx(shape_one_by_one(values, counts), rel=1e-12)


# A number as exports write it, for the reference reading below: one kind of group mark,
# the other mark before a fraction (RE2's \d and \s, which the engine uses, are ASCII)
SPACE = r"[\t\n\f\r \u00a0\u202f]"
AFFIX = r"[^0-9\t\n\f\r \u00a0\u202f\-+−()]"   # checked by affix_ok below
REF_BODIES = [("[1-9][0-9]{0,2}(?:,[0-9]{3})+", r"\.[0-9]+"),
              (r"[1-9][0-9]{0,2}(?:\.[0-9]{3})+", ",[0-9]+"),
              (f"[1-9][0-9]{{0,2}}(?:{SPACE}[0-9]{{3}})+", "[.,][0-9]+"),
              ("[1-9][0-9]{0,2}(?:['’][0-9]{3})+", "[.,][0-9]+"),
              ("[0-9]+", "[.,][0-9]+")]
REF_NUMBER = re.compile(
    f"^(?P<sign>[-+−(]?)(?:(?P<before>{AFFIX}{{1,3}}){SPACE}?)?(?P<sign2>[-+−(]?)(?:"
    + "|".join(f"(?P<whole{i}>{w})(?P<fraction{i}>{f})?" for i, (w, f) in enumerate(REF_BODIES))
    + rf")(?:e(?P<exponent>[-+]?[0-9]{{1,3}}))?\)?(?:{SPACE}?(?P<after>{AFFIX}{{1,4}}))?$")


def affix_ok(affix: str | None) -> bool:
    """A currency or unit: letters, currency signs (Unicode categories L*, Sc), % ‰ ° ² ³ ' " . /"""
    return all(unicodedata.category(ch)[0] == "L" or unicodedata.category(ch) == "Sc"
               or ch in "%‰°²³'\"./" for ch in affix or "")


def sentinels_one_by_one(folded: list[str], counts: list[int], min_share: float) -> set[str]:
    """The sentinel rule of harmonize/engines/missing.py, read value by value: the first
    reading Python's re finds (a grouped whole part before a plain one) gives the size."""
    read = {}
    for text in folded:
        found = REF_NUMBER.match(text)
        if found and affix_ok(found["before"]) and affix_ok(found["after"]):
            i = next(i for i in range(len(REF_BODIES)) if found[f"whole{i}"] is not None)
            whole = re.sub("[^0-9]", "", found[f"whole{i}"])
            fraction = (found[f"fraction{i}"] or "")[1:]
            size = float(whole)
            if found["exponent"]:
                size = float(f"{whole}.{fraction}") * 10.0 ** int(found["exponent"])
            negative = bool(set(found["sign"] + found["sign2"]) & set("-−("))
            read[text] = (whole, fraction, found["exponent"], size,
                          negative and re.search("[1-9]", text) is not None)
    numeric = sum(c for t, c in zip(folded, counts, strict=True) if t in read)
    if numeric < min_share * max(sum(counts), 1):
        return set()
    nines = {t for t, (whole, fraction, exponent, _, _) in read.items()
             if not exponent and re.fullmatch("9{2,}", whole) and set(fraction) <= {"0"}}
    others = [r for t, r in read.items() if t not in nines]
    others_n = sum(1 for t in folded if t in read and t not in nines)
    if not nines or others_n < 5:
        return set()
    span = max(max(r[3] for r in others), 1.0)
    alone_negative = not any(r[4] for r in others)
    return {t for t in nines
            if (read[t][4] and alone_negative) or read[t][3] >= SENTINEL_GAP * span}


@st.composite
def numeric_columns(draw: st.DrawFn) -> list[str]:
    """Distinct numbers in one notation, sometimes with runs of nines, and some junk."""
    mark = draw(st.sampled_from([",", ".", " ", "'", ""]))
    before, after = draw(st.sampled_from([("", ""), ("€ ", ""), ("", " kg"), ("usd ", ""),
                                          ("", "%"), ("=", ""), ("#", ""), ("₱", ""), ("", "½")]))

    def written(whole: int, sign: str, cents: str | None) -> str:
        decimal = "." if mark == "," else ","
        text = f"{whole:,}".replace(",", mark) + (decimal + cents if cents is not None else "")
        return f"{before}{sign}{text}{')' if sign == '(' else ''}{after}"

    fraction = st.none() | st.sampled_from(["00", "5", "000", "0000"])
    signs = ["", "", "", "-"] if draw(st.booleans()) else [""]
    top = draw(st.sampled_from([50, 400, 3000, 30_000]))
    values = draw(st.lists(st.builds(written, st.integers(0, top), st.sampled_from(signs),
                                     fraction), min_size=2, max_size=20))
    values += draw(st.lists(st.builds(written, st.sampled_from([99, 999, 9999, 99999]),
                                      st.sampled_from(["", "-", "(", "−"]), fraction),
                            min_size=1, max_size=3))
    values += draw(st.lists(st.sampled_from(["abc", "1e3", "2.5e-1", "1,234e3", "9,999,000",
                                             "99.000", "9.999.00", "room 12", "-0", "0,000",
                                             "9 999,00", "=-1"]), max_size=2))
    return list(dict.fromkeys(values))


@settings(max_examples=200, deadline=None)
@given(numeric_columns(), st.sampled_from([0.5, 0.8]))
def test_sentinel_rule_in_arrow_matches_a_value_by_value_reading(values: list[str],
                                                                  share: float) -> None:
    # sizes are whole parts, so a run of nines and its plain rewriting read alike
    folded = [v.strip().lower() for v in values]
    counts = np.ones(len(values), dtype=np.int64)
    assert _sentinels(pd.Series(folded, dtype="str"), counts, share) == sentinels_one_by_one(
        folded, counts.tolist(), share)


def test_missing_words_hidden_by_invisible_characters() -> None:
    # Unicode 15 ch. 23.2: U+200B ZERO WIDTH SPACE and U+FEFF (byte order mark) are invisible
    values = np.asarray(["N/A\u200b", "\ufeffnull", "7", "8"], dtype=object)
    rule, mask = missing_with_mask(ColumnEvidence("Qty", 0, values, np.ones(4, np.int64)))
    assert mask.tolist() == [True, True, False, False] and rule.tokens == {"n/a", "null"}
