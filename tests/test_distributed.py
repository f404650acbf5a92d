"""The Dask path on Dask's local scheduler gives what the single-machine path gives."""

from __future__ import annotations

from pathlib import Path

import pandas as pd
import pytest

import harmonize

dd = pytest.importorskip("dask.dataframe")

from harmonize.distributed import apply_dask, decide_dask, outcome_counts  # noqa: E402


def ledger(rows: int) -> pd.DataFrame:
    # An invented branch ledger: day-first dates, decimal-comma amounts, codes, a flag.
    days = pd.date_range("2024-01-01", periods=rows, freq="6h")
    return pd.DataFrame({
        "Datum": days.strftime("%d.%m.%Y"),
        "Betrag": [f"{i % 997},{i % 100:02d}" for i in range(rows)],
        "Kunde": [f"{i % 300:06d}" for i in range(rows)],
        "Bezahlt": ["ja" if i % 3 else "nein" for i in range(rows)],
    }, dtype=object)


def test_dask_matches_single_machine(tmp_path: Path) -> None:
    frame = ledger(2000)
    expected, entry, _ = harmonize.harmonize_frame(frame)
    ddf = dd.from_pandas(frame, npartitions=4)
    plan = decide_dask(ddf)
    assert [c.kind for c in plan.columns] == [c["kind"] for c in entry["columns"]]
    got = apply_dask(ddf, plan).compute(scheduler="sync")
    pd.testing.assert_frame_equal(got.reset_index(drop=True), expected.reset_index(drop=True),
                                  check_dtype=False)
    counts = outcome_counts(ddf, plan)
    assert {c["name"]: c["counts"] for c in entry["columns"]} == counts


def test_dask_reads_a_folder_of_csv(tmp_path: Path) -> None:
    for i in range(3):
        ledger(300).to_csv(tmp_path / f"branch_{i}.csv", sep=";", index=False)
    ddf = dd.read_csv(str(tmp_path / "*.csv"), sep=";", dtype=str, keep_default_na=False,
                      na_filter=False)
    plan = decide_dask(ddf)
    kinds = {c.name: c.kind for c in plan.columns}
    assert kinds == {"Datum": "date", "Betrag": "number", "Kunde": "identifier",
                     "Bezahlt": "boolean"}
    out = apply_dask(ddf, plan).compute()
    assert len(out) == 900 and out["Datum"].iloc[0] == "2024-01-01"


def test_cli_dask_flag_gives_the_same_files(tmp_path: Path) -> None:
    from click.testing import CliRunner

    from harmonize.cli import main
    src = tmp_path / "ledger.csv"
    ledger(500).to_csv(src, sep=";", index=False)
    for name, extra in (("plain", []), ("dask", ["--dask"])):
        result = CliRunner().invoke(main, ["apply", str(src), "--out", str(tmp_path / name),
                                           "-q", *extra])
        assert result.exit_code == 0, result.output
    assert (tmp_path / "plain" / "ledger.csv").read_bytes() == \
        (tmp_path / "dask" / "ledger.csv").read_bytes()
