"""Streaming: chunk by chunk gives the same output and report as reading whole."""

from __future__ import annotations

import json
from pathlib import Path

import pandas as pd

import harmonize
from harmonize import stream
from harmonize.report import validate


def export(path: Path, rows: int) -> None:
    # An invented branch ledger: day-first dates in row order, decimal-comma amounts,
    # a code column and a yes/no flag.
    days = pd.date_range("2024-01-01", periods=rows, freq="h")
    pd.DataFrame({
        "Datum": days.strftime("%d.%m.%Y"),
        "Betrag": [f"{i % 997},{i % 100:02d}" for i in range(rows)],
        "Kunde": [f"{i % 3000:06d}" for i in range(rows)],
        "Bezahlt": ["ja" if i % 3 else "nein" for i in range(rows)],
        "Notiz": ["" if i % 7 else "k.A." for i in range(rows)],
    }).to_csv(path, sep=";", index=False)


def test_streamed_equals_whole(tmp_path: Path) -> None:
    src = tmp_path / "ledger.csv"
    export(src, 5000)
    whole = harmonize.run([src], tmp_path / "whole", fmt="csv")
    streamed = harmonize.run([src], tmp_path / "streamed", fmt="csv", chunk_rows=1000)
    assert (tmp_path / "whole" / "ledger.csv").read_bytes() == \
        (tmp_path / "streamed" / "ledger.csv").read_bytes()
    a, b = whole.report["files"][0], streamed.report["files"][0]
    assert [c["counts"] for c in a["columns"]] == [c["counts"] for c in b["columns"]]
    assert [c["kind"] for c in a["columns"]] == [c["kind"] for c in b["columns"]]
    assert b["streamed"]["chunk_rows"] == 1000 and b["rows"] == 5000
    report = json.loads((tmp_path / "streamed" / "harmonize-report.json").read_text("utf-8"))
    validate(report)


def test_unresolved_rows_are_numbered_across_chunks(tmp_path: Path) -> None:
    src = tmp_path / "codes.csv"
    lines = ["Shipped"] + ["03/04/2024" if i % 2 else "05/06/2024" for i in range(3000)]
    src.write_text("\n".join(lines) + "\n", encoding="utf-8")
    result = harmonize.run([src], tmp_path / "o", fmt="csv", chunk_rows=1000)
    rows = sorted(cell["row"] for cell in result.report["unresolved"])
    assert rows == list(range(2, 3002))  # spreadsheet rows: header = 1


def test_evidence_is_capped(tmp_path: Path, monkeypatch) -> None:
    monkeypatch.setattr(stream, "EVIDENCE_CAP", 50)
    src = tmp_path / "ids.csv"
    src.write_text("Ref\n" + "\n".join(f"R{i:05d}" for i in range(400)) + "\n", encoding="utf-8")
    evidence, total, notes = stream.gather(src, "ids.csv", rows=100)
    assert total == 400 and len(evidence.columns[0].values) == 50
    assert notes["capped_columns"] == ["Ref"]


def test_tally_counts_every_cell_in_first_seen_order(monkeypatch) -> None:
    # reference: collections.Counter over the whole column (insertion order = first seen)
    from collections import Counter
    cells = ["b", "a", "b", "c", "a", "d", "e", "b", "f", "e"]
    tally = stream._Tally()
    for start in range(0, len(cells), 3):   # chunks of three rows
        tally.add(pd.Series(cells[start:start + 3], dtype=object))
    expected = Counter(cells)
    assert tally.values.tolist() == list(expected)
    assert tally.counts.tolist() == list(expected.values())
    monkeypatch.setattr(stream, "EVIDENCE_CAP", 3)
    capped = stream._Tally()
    for start in range(0, len(cells), 3):
        capped.add(pd.Series(cells[start:start + 3], dtype=object))
    assert capped.values.tolist() == ["b", "a", "c"]
    assert capped.counts.tolist() == [3, 2, 1]
    assert capped.overflow_rows == 4   # d, e, f, e
