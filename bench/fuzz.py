"""Long fuzzing run: generated columns through every engine, damaged files through the readers.

    python bench/fuzz.py --cases 20000 [--seed 1] [--only engines|readers]

Half the cases are columns (tests/strategies.py) put through every registered engine's
propose and convert (protocol of harmonize/engines/base.py); the other half are files
(random bytes, mutated CSV/XLSX/Parquet, XLSX with damaged XML members) put through
read_tables, where only SourceError may come out. Prints how many cases ran, the
failures grouped by kind with one example each, the slowest cases, and how the readers
refused what they refused. Exit code 1 when anything failed.
"""

from __future__ import annotations

import argparse
import collections
import io
import random
import sys
import tempfile
import time
import zipfile
from pathlib import Path

HERE = Path(__file__).resolve().parent
sys.path[:0] = [str(HERE.parent), str(HERE.parent / "tests")]

from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402
from strategies import cells, column_values, engine_failures  # noqa: E402
from test_fuzz import mutate, valid_csv, valid_parquet, valid_xlsx  # noqa: E402

from harmonize.sources import SourceError, read_tables  # noqa: E402

COUNTRIES = ["DE", "United Kingdom", "France", "US", "Schweiz", "India", "Brasil", "日本"]


class Tally:
    def __init__(self) -> None:
        self.ran = 0
        self.failures: collections.Counter[str] = collections.Counter()
        self.examples: dict[str, str] = {}
        self.slowest: list[tuple[float, str]] = []
        self.refusals: collections.Counter[str] = collections.Counter()

    def failed(self, problem: str) -> None:
        key = problem.split(" on ")[0].split("(")[0][:80]
        self.failures[key] += 1
        self.examples.setdefault(key, problem[:500])

    def timed(self, seconds: float, what: str) -> None:
        self.slowest = sorted([*self.slowest, (seconds, what[:120])], reverse=True)[:5]


def fuzz_engines(cases: int, tally: Tally) -> None:
    @settings(max_examples=cases, deadline=None, database=None,
              suppress_health_check=list(HealthCheck))
    @given(st.one_of(column_values(), st.lists(cells, min_size=1, max_size=30)), st.data())
    def one(values: list[str], data: st.DataObject) -> None:
        country = None
        if data.draw(st.booleans()):
            pick = st.sampled_from(COUNTRIES)
            country = data.draw(st.lists(pick, min_size=len(values), max_size=len(values)))
        start = time.perf_counter()
        for problem in engine_failures(values, country):
            tally.failed(problem)
        tally.timed(time.perf_counter() - start, repr(values))
        tally.ran += 1

    one()


def fuzz_readers(cases: int, tally: Tally, seed: int, folder: Path) -> None:
    rng = random.Random(seed)
    seeds = {".csv": valid_csv(), ".xlsx": valid_xlsx(), ".parquet": valid_parquet(folder)}
    kinds = [".csv", ".tsv", ".xlsx", ".ods", ".parquet"]
    for case in range(cases):
        style = case % 3
        if style == 0:
            suffix = rng.choice(kinds)
            raw = rng.randbytes(rng.randint(1, 4000))
        elif style == 1:
            suffix = rng.choice(list(seeds))
            raw = mutate(seeds[suffix], rng)
        else:
            suffix, raw = ".xlsx", damaged_member(seeds[".xlsx"], rng)
        path = folder / f"case{suffix}"
        path.write_bytes(raw)
        start = time.perf_counter()
        try:
            read_tables(path)
        except SourceError as exc:
            if "\n" in str(exc):
                tally.failed(f"multi-line SourceError for {suffix}: {exc!r}")
            tally.refusals[refusal_kind(str(exc))] += 1
        except Exception as exc:
            tally.failed(f"{type(exc).__name__} from {suffix} reader: {exc}")
        tally.timed(time.perf_counter() - start, f"{suffix} style {style} case {case}")
        tally.ran += 1


def damaged_member(raw: bytes, rng: random.Random) -> bytes:
    source = zipfile.ZipFile(io.BytesIO(raw))
    target = rng.choice([n for n in source.namelist() if n.endswith(".xml")])
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w", zipfile.ZIP_DEFLATED) as archive:
        for name in source.namelist():
            body = source.read(name)
            archive.writestr(name, mutate(body, rng) if name == target else body)
    return buffer.getvalue()


def refusal_kind(message: str) -> str:
    reason = message.split(": ", 1)[-1]
    return reason.split("(")[0].split(":")[0].strip()[:60]


def report(name: str, tally: Tally, seconds: float) -> None:
    print(f"{name}: {tally.ran} cases in {seconds:.1f} s, "
          f"{sum(tally.failures.values())} failures in {len(tally.failures)} kinds")
    for key, count in tally.failures.most_common():
        print(f"  {count:6d}  {tally.examples[key]}")
    for seconds_taken, what in tally.slowest:
        print(f"  slow {seconds_taken:6.2f} s  {what}")
    for kind, count in tally.refusals.most_common(12):
        print(f"  refused {count:6d}  {kind}")


def main() -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--cases", type=int, default=2000)
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("--only", choices=["engines", "readers"])
    args = parser.parse_args()
    failed = False
    if args.only != "readers":
        tally, start = Tally(), time.perf_counter()
        fuzz_engines(args.cases // (1 if args.only else 2), tally)
        report("engines", tally, time.perf_counter() - start)
        failed |= bool(tally.failures)
    if args.only != "engines":
        tally, start = Tally(), time.perf_counter()
        with tempfile.TemporaryDirectory() as folder:
            fuzz_readers(args.cases // (1 if args.only else 2), tally, args.seed, Path(folder))
        report("readers", tally, time.perf_counter() - start)
        failed |= bool(tally.failures)
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
