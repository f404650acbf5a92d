"""Speed of the dates engine on a large column, against reading the same file with pandas.

Writes a CSV of 1,000,000 rows (an invented branch ledger: a date column with a few
thousand distinct values, an amount and a quantity), then times

* reading it with ``pd.read_csv`` (default settings), the yardstick;
* deciding and converting its date column: ``DateEngine.propose`` with its context,
  ``convert`` on the distinct values, and the outputs mapped back onto the million rows;
  and, separately, the core's evidence step that finds the distinct values and row
  codes (``ColumnEvidence.from_series``, shared by every engine).

The engine's part should cost less than the read; both ratios are printed.

``--stamps N`` also times a column of N rows of time stamps ``YYYY-MM-DD HH:MM:SS``,
nearly all distinct (as a log export or bench/bench.py's "Created" column writes them):
``propose`` and ``convert`` on the distinct values, against reading that file.

Run: python bench/date_speed.py [--rows 1000000] [--distinct 4000] [--seed 1]
     [--stamps 1000000]
"""

from __future__ import annotations

import argparse
import random
import tempfile
import time
from datetime import date, timedelta
from pathlib import Path

import numpy as np
import pandas as pd

from harmonize.context import Context
from harmonize.engines.base import Outcome
from harmonize.engines.dates import DateEngine
from harmonize.engines.dates_fast import forget
from harmonize.engines.dates_parse import parse, reading
from harmonize.evidence import ColumnEvidence, TableEvidence


def write_ledger(path: Path, rows: int, distinct: int, seed: int) -> None:
    rng = np.random.default_rng(seed)
    start = date(2015, 1, 1)
    days = [start + timedelta(days=int(k)) for k in
            sorted(random.Random(seed).sample(range(4000), distinct))]
    texts = np.array([f"{d.day:02d}/{d.month:02d}/{d.year}" for d in days], dtype=object)
    frame = pd.DataFrame({
        "Order date": texts[rng.integers(0, distinct, rows)],
        "Amount": np.round(rng.uniform(1, 5000, rows), 2),
        "Qty": rng.integers(1, 500, rows)})
    frame.to_csv(path, index=False)


def time_read(path: Path) -> float:
    started = time.perf_counter()
    pd.read_csv(path)
    return time.perf_counter() - started


def time_dates(path: Path) -> tuple[float, dict[str, float]]:
    """Decide and convert the date column; the text is read once beforehand (not timed:
    the pipeline reads the file for every column at once)."""
    series = pd.read_csv(path, usecols=["Order date"], dtype=str, keep_default_na=False,
                         na_filter=False)["Order date"]
    parse.cache_clear()   # no help from earlier runs
    reading.cache_clear()
    forget()
    engine = DateEngine()
    parts: dict[str, float] = {}
    started = time.perf_counter()
    column = ColumnEvidence.from_series("Order date", 0, series)
    parts["evidence"] = time.perf_counter() - started
    table = TableEvidence("ledger.csv", None, len(series), [column])
    mark = time.perf_counter()
    decision = engine.propose(column, Context(table))
    parts["propose"] = time.perf_counter() - mark
    mark = time.perf_counter()
    result = engine.convert(column.values.tolist(), decision.convention)
    parts["convert"] = time.perf_counter() - mark
    mark = time.perf_counter()
    out = np.asarray(result.text, dtype=object)[column.codes]
    parts["map to rows"] = time.perf_counter() - mark
    elapsed = time.perf_counter() - started
    assert decision.convention["order"] == "DMY", decision.convention
    assert (result.outcome == Outcome.CONVERTED).all() and len(out) == len(series)
    return elapsed, parts


def write_stamps(path: Path, rows: int, seed: int) -> None:
    rng = np.random.default_rng(seed)
    days = pd.date_range("2020-01-01", periods=1500, freq="D")
    stamps = days[rng.integers(0, len(days), rows)] + pd.to_timedelta(
        rng.integers(0, 86400, rows), unit="s")
    pd.DataFrame({"Created": stamps.strftime("%Y-%m-%d %H:%M:%S"),
                  "Qty": rng.integers(1, 500, rows)}).to_csv(path, index=False)


def time_stamps(path: Path) -> tuple[float, float, int]:
    """(propose, convert) seconds for the time-stamp column, and its distinct values."""
    series = pd.read_csv(path, usecols=["Created"], dtype=str, keep_default_na=False,
                         na_filter=False)["Created"]
    column = ColumnEvidence.from_series("Created", 0, series)
    table = TableEvidence("log.csv", None, len(series), [column])
    engine = DateEngine()
    forget()   # the first reading of the column is timed
    started = time.perf_counter()
    decision = engine.propose(column, Context(table))
    proposed = time.perf_counter() - started
    started = time.perf_counter()
    result = engine.convert(column.values.tolist(), decision.convention)
    converted = time.perf_counter() - started
    assert decision.kind == "datetime" and (result.outcome == Outcome.CONVERTED).all()
    return proposed, converted, len(column.values)


def main() -> None:
    args = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    args.add_argument("--rows", type=int, default=1_000_000)
    args.add_argument("--distinct", type=int, default=4000)
    args.add_argument("--seed", type=int, default=1)
    args.add_argument("--stamps", type=int, default=0, metavar="ROWS")
    opts = args.parse_args()
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / "ledger.csv"
        write_ledger(path, opts.rows, opts.distinct, opts.seed)
        read = min(time_read(path) for _ in range(3))   # best of three: shared machines
        dates, parts = min((time_dates(path) for _ in range(3)), key=lambda r: r[0])
        print(f"{opts.rows} rows, {opts.distinct} distinct dates")
        print(f"pd.read_csv of the file:         {read:.3f} s")
        print(f"decide + convert the date column: {dates:.3f} s  ("
              + ", ".join(f"{k} {v:.3f}" for k, v in parts.items()) + ")")
        engine = dates - parts["evidence"]
        print(f"ratio (decide + convert + map to rows) / read_csv: {engine / read:.2f}  "
              f"({'below' if engine < read else 'NOT below'} 1)")
        print(f"ratio with the core's evidence step (evidence.py factorize) / read_csv: "
              f"{dates / read:.2f}")
        if opts.stamps:
            path = Path(folder) / "log.csv"
            write_stamps(path, opts.stamps, opts.seed)
            read = min(time_read(path) for _ in range(3))
            proposed, converted, distinct = min((time_stamps(path) for _ in range(3)),
                                                key=lambda r: r[0] + r[1])
            print(f"{opts.stamps} rows of time stamps, {distinct} distinct")
            print(f"pd.read_csv of the file:         {read:.3f} s")
            print(f"propose {proposed:.3f} s + convert {converted:.3f} s = "
                  f"{proposed + converted:.3f} s; ratio to read_csv "
                  f"{(proposed + converted) / read:.2f}")


if __name__ == "__main__":
    main()
