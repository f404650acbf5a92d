"""Speed and memory of harmonize as ratios to plain pandas reading and writing the same file.

    python bench/bench.py                      # 1,000,000 rows x 8 columns (mixed kinds)
    python bench/bench.py --rows 100000 --plain  # text and identifiers only: no conversions
    python bench/bench.py --targets            # issue #8: one date, one amount column

Each measurement runs in a fresh Python process so that peak memory (max RSS) belongs to
it alone. The floor is `pandas.read_csv(path)` followed by `DataFrame.to_csv`. The data is
an invented export (Quillmoor Provisions' order lines), generated with a fixed seed.
Nothing here is asserted: the numbers are printed and quoted in the README.
"""

from __future__ import annotations

import argparse
import json
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

# Each script prints wall seconds, CPU seconds (user + system, this process: steadier than
# wall time on a shared machine) and peak memory in KB: the process's own high-water mark
# (VmHWM). Not ru_maxrss: Linux carries the forked parent's resident size into a child's
# ru_maxrss across exec, so a parent that has just generated a big file would inflate it.
PEAK = """
def peak_kb():
    try:
        with open("/proc/self/status") as status:
            return next(int(line.split()[1]) for line in status if line.startswith("VmHWM"))
    except (OSError, StopIteration):
        return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
"""
FLOOR = """
import resource, sys, time, pandas as pd
t = time.perf_counter()
frame = pd.read_csv(sys.argv[1])
frame.to_csv(sys.argv[2], index=False)
r = resource.getrusage(resource.RUSAGE_SELF)
print(time.perf_counter() - t, r.ru_utime + r.ru_stime, peak_kb())
"""

HARMONIZE = """
import resource, sys, time
import harmonize
t = time.perf_counter()
chunk = int(sys.argv[3]) if len(sys.argv) > 3 else None
harmonize.run([sys.argv[1]], sys.argv[2], fmt="csv", chunk_rows=chunk)
r = resource.getrusage(resource.RUSAGE_SELF)
print(time.perf_counter() - t, r.ru_utime + r.ru_stime, peak_kb())
"""

# Issue #8's column targets: a column decided and converted, with its results mapped
# onto the rows (what a run does for it), against pandas reading the file; then the
# engine's own share (propose on the column, convert its distinct values).
TARGETS = """
import json, sys, time
import pandas as pd
from harmonize.apply import apply_column
from harmonize.context import Context
from harmonize.decide import decide_column
from harmonize.engines import engine_named
from harmonize.evidence import TableEvidence

def timed(run):
    wall, cpu = time.perf_counter(), time.process_time()
    run()
    return [time.perf_counter() - wall, time.process_time() - cpu]

found = {"read": timed(lambda: pd.read_csv(sys.argv[1]))}
frame = pd.read_csv(sys.argv[1], dtype=object, keep_default_na=False, na_filter=False)
evidence = TableEvidence.from_frame(frame)
context = Context(evidence)
context.country_split  # the table's grouping columns: found once per table, not per column
for column in evidence.columns:
    runs, plans = [], []
    for _ in range(2):   # first: with the process's one-time loading (locale tables); again
        decided = timed(lambda: plans.append(decide_column(column, context)))
        applied = timed(lambda: apply_column(column, plans[-1], context))
        runs.append([decided[0] + applied[0], decided[1] + applied[1]])
    plan, engine = plans[-1], engine_named(plans[-1].engine)
    values = column.values.tolist()
    share = [timed(lambda: engine.propose(column, context))[0],
             timed(lambda: engine.convert(values, plan.convention))[0]]
    found[column.name] = [plan.kind, runs, share, len(column.values)]
print(json.dumps(found))
"""

STAGES = """
import json, sys, time
from pathlib import Path
from harmonize.apply import TableResult, apply_column
from harmonize.context import Context
from harmonize.decide import decide_column
from harmonize.pipeline import evidence_of
from harmonize.plan import TablePlan
from harmonize.safety import neutralise_coded
from harmonize.sources import read_tables, write_table
times = {}
t = time.perf_counter(); table = read_tables(Path(sys.argv[1]))[0]
times["read (parse, distinct values per column)"] = time.perf_counter() - t
t = time.perf_counter(); evidence = evidence_of(table, "bench.csv")
times["evidence"] = time.perf_counter() - t
context = Context(evidence)
t = time.perf_counter(); context.country_split
times["context (grouping columns, once a table)"] = time.perf_counter() - t
plans, results = [], []
for column in evidence.columns:
    t = time.perf_counter(); plan = decide_column(column, context)
    d = time.perf_counter() - t
    t = time.perf_counter(); results.append(apply_column(column, plan, context))
    a = time.perf_counter() - t
    plans.append(plan)
    times[f"{column.name} [{plan.kind}] decide / apply"] = [d, a, len(column.values)]
result = TableResult(TablePlan("bench.csv", None, plans), results, evidence.n_rows)
t = time.perf_counter(); coded = neutralise_coded(result.coded_frame()).frame
times["formula neutralising"] = time.perf_counter() - t
t = time.perf_counter(); write_table(coded, Path(sys.argv[2]), fmt="csv")
times["write"] = time.perf_counter() - t
print(json.dumps(times))
"""


def make_export(rows: int, plain: bool, path: Path, seed: int = 7) -> None:
    rng = np.random.default_rng(seed)
    days = pd.date_range("2020-01-01", periods=1500, freq="D")
    pick = rng.integers(0, len(days), rows)
    ids = rng.integers(0, 10**6, rows)
    towns = np.array(["Harrowdene", "HARROWDENE", " harrowdene", "Tamsbridge", "Ostwiesen",
                      "Vallerance", "Port Ellery", "Zürrenberg"], dtype=object)
    columns: dict[str, object] = {
        "Order ref": [f"{i:07d}" for i in ids],
        "Town": towns[rng.integers(0, len(towns), rows)],
    }
    if plain:
        columns["Note"] = np.array(["left at depot", "call first", "fragile", ""],
                                   dtype=object)[rng.integers(0, 4, rows)]
        columns["Sku"] = [f"QP-{i % 50000:05d}" for i in ids]
    else:
        columns["Order date"] = days[pick].strftime("%d/%m/%Y")
        stamps = days[pick] + pd.to_timedelta(rng.integers(0, 86400, rows), unit="s")
        columns["Created"] = stamps.strftime("%Y-%m-%d %H:%M:%S")
        cents = rng.integers(100, 5_000_000, rows)
        columns["Betrag"] = [f"{c // 100:,}".replace(",", ".") + f",{c % 100:02d}"
                             for c in cents]
        units = np.array(["kg", "lb", "g"], dtype=object)[rng.integers(0, 3, rows)]
        columns["Weight"] = [f"{w} {u}" for w, u in zip(rng.integers(1, 500, rows), units)]
        columns["Phone"] = [f"+44 20 7946 0{n:03d}" for n in rng.integers(0, 1000, rows)]
        columns["Paid"] = np.array(["yes", "no"], dtype=object)[rng.integers(0, 2, rows)]
    pd.DataFrame(columns).to_csv(path, index=False)


def make_targets(rows: int, path: Path, seed: int = 11) -> None:
    """A date column with a few thousand distinct days (day-first, as a UK branch writes)
    and an amount column with tens of thousands of distinct de-DE amounts."""
    rng = np.random.default_rng(seed)
    days = pd.date_range("2015-01-01", periods=3000, freq="D")
    cents = rng.integers(100, 5_000_000, 50_000)[rng.integers(0, 50_000, rows)]
    pd.DataFrame({
        "Invoice date": days[rng.integers(0, len(days), rows)].strftime("%d/%m/%Y"),
        "Betrag": [f"{c // 100:,}".replace(",", ".") + f",{c % 100:02d}" for c in cents],
    }).to_csv(path, index=False)


def measure(script: str, src: Path, dest: Path, *extra: str) -> tuple[float, float, float]:
    """(wall seconds, CPU seconds, peak MB) of a script run in a fresh process."""
    done = subprocess.run([sys.executable, "-c", PEAK + script, str(src), str(dest), *extra],
                          check=True, capture_output=True, text=True)
    seconds, cpu, rss_kb = done.stdout.split()[-3:]
    return float(seconds), float(cpu), float(rss_kb) / 1024


def targets(rows: int) -> None:
    """Issue #8: a date column and an amount column each decided, converted and mapped
    onto the rows in less time than pandas takes to read the file (wall time, the
    second run in the process; CPU time alongside, steadier on a shared machine)."""
    with tempfile.TemporaryDirectory() as tmp:
        src = Path(tmp) / "columns.csv"
        make_targets(rows, src)
        done = subprocess.run([sys.executable, "-c", TARGETS, str(src)], check=True,
                              capture_output=True, text=True)
    found = json.loads(done.stdout)
    read, read_cpu = found.pop("read")
    print(f"pandas.read_csv of {rows:,} rows: {read:.3f} s (CPU {read_cpu:.3f} s)")
    for name, (kind, runs, share, distinct) in found.items():
        (first, _), (again, again_cpu) = runs
        verdict = "within" if again < read else "ABOVE"
        print(f"  {name:14s} [{kind}] decide + convert + map to rows: {first:.3f} s first "
              f"in the process, {again:.3f} s again = {again / read:.2f} x the read "
              f"(CPU {again_cpu:.3f} s = {again_cpu / read_cpu:.2f} x): {verdict} the read "
              f"time ({distinct:,} distinct)")
        print(f"  {'':14s} the engine alone: propose {share[0]:.3f} s, convert the distinct "
              f"values {share[1]:.3f} s")


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=1_000_000)
    parser.add_argument("--plain", action="store_true", help="no columns to convert")
    parser.add_argument("--stages", action="store_true", help="also time each column")
    parser.add_argument("--stream", type=int, metavar="CHUNK",
                        help="also run the streaming mode with CHUNK rows per chunk")
    parser.add_argument("--scaling", action="store_true",
                        help="streaming peak memory at --rows and at 5 x --rows")
    parser.add_argument("--repeat", type=int, default=1,
                        help="run each side this many times and keep the best")
    parser.add_argument("--targets", action="store_true",
                        help="issue #8 column targets: one date and one amount column")
    args = parser.parse_args()
    if args.targets:
        targets(args.rows)
        return
    if args.scaling:
        scaling(args.rows, args.stream or 250_000)
        return
    with tempfile.TemporaryDirectory() as tmp:
        src = Path(tmp) / "export.csv"
        t = time.perf_counter()
        make_export(args.rows, args.plain, src)
        print(f"generated {args.rows:,} rows ({src.stat().st_size / 1e6:.1f} MB) "
              f"in {time.perf_counter() - t:.1f}s")
        # alternate the two, keep each one's best run: other load on a shared machine
        # only ever adds time
        floors = [measure(FLOOR, src, Path(tmp) / "floor.csv") for _ in range(args.repeat)]
        ours = [measure(HARMONIZE, src, Path(tmp) / "out") for _ in range(args.repeat)]
        floor_s, floor_cpu, floor_mb = (min(v) for v in zip(*floors))
        ours_s, ours_cpu, ours_mb = (min(v) for v in zip(*ours))
        print(f"pandas read_csv + to_csv : {floor_s:7.2f} s  (CPU {floor_cpu:6.2f} s)  "
              f"peak {floor_mb:7.0f} MB")
        print(f"harmonize apply          : {ours_s:7.2f} s  (CPU {ours_cpu:6.2f} s)  "
              f"peak {ours_mb:7.0f} MB")
        print(f"ratio (time)             : {ours_s / floor_s:7.2f}x  "
              f"(CPU {ours_cpu / floor_cpu:.2f}x)")
        print(f"ratio (peak memory)      : {ours_mb / floor_mb:7.2f}x")
        if args.stream:
            s_s, _, s_mb = measure(HARMONIZE, src, Path(tmp) / "stream", str(args.stream))
            print(f"harmonize apply, streamed: {s_s:7.2f} s  peak {s_mb:7.0f} MB "
                  f"({args.stream:,} rows a chunk)")
        if args.stages:
            done = subprocess.run([sys.executable, "-c", STAGES, str(src),
                                   str(Path(tmp) / "s.csv")], check=True, capture_output=True,
                                  text=True)
            for name, value in json.loads(done.stdout).items():
                if isinstance(value, list):
                    print(f"  {name:45s} {value[0]:6.2f} s / {value[1]:6.2f} s"
                          f"  ({value[2]:,} distinct)")
                else:
                    print(f"  {name:45s} {value:6.2f} s")


def scaling(rows: int, chunk: int) -> None:
    """Peak memory of the streaming mode at ``rows`` and five times as many rows."""
    peaks = []
    with tempfile.TemporaryDirectory() as tmp:
        for n in (rows, 5 * rows):
            src = Path(tmp) / f"export_{n}.csv"
            make_export(n, False, src)
            seconds, _, peak = measure(HARMONIZE, src, Path(tmp) / f"out_{n}", str(chunk))
            peaks.append(peak)
            print(f"{n:>10,} rows ({src.stat().st_size / 1e6:6.0f} MB): {seconds:7.1f} s, "
                  f"peak {peak:6.0f} MB")
            src.unlink()
    print(f"peak memory ratio {5 * rows:,} / {rows:,} rows: {peaks[1] / peaks[0]:.2f}x")


if __name__ == "__main__":
    main()
