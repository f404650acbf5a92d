"""Acceptance rehearsal: generated multi-region export files through the real CLI.

Writes N invented export files (tests/corpora/exports.py: CSV in four delimiters and four
encodings, multi-sheet workbooks with typed cells) into a temporary folder, runs
``python -m harmonize.cli apply <folder> --out <out> --format csv`` in a subprocess, and
reads the output files and ``harmonize-report.json`` exactly as an outside checker would.
Prints per kind the cell figures against the acceptance targets (PASS/FAIL), column-level
kind accuracy, the expected calibration error of column confidence (10 bins) and the
worst columns with examples (raw -> got -> expected).

Run: python bench/corpus_eval.py --files 60 --seed 1 [--worst 15] [--keep DIR]
"""

from __future__ import annotations

import argparse
import math
import subprocess
import sys
import tempfile
import time
from collections import Counter
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
sys.path.insert(0, str(ROOT / "tests"))

from corpora.exports import (  # noqa: E402
    TARGETS,
    Evaluation,
    ExportFile,
    KindScore,
    corpus,
    expected_calibration_error,
    passes,
    ratio,
    score,
)

ECE_TARGET = 0.05


def run_cli(folder: Path, out: Path) -> subprocess.CompletedProcess[str]:
    command = [sys.executable, "-m", "harmonize.cli", "apply", str(folder), "--out", str(out),
               "--format", "csv", "--quiet"]
    return subprocess.run(command, capture_output=True, text=True, cwd=ROOT, check=False)


def evaluate(files: list[ExportFile], workdir: Path) -> tuple[Evaluation, str]:
    data, out = workdir / "exports", workdir / "out"
    data.mkdir(parents=True, exist_ok=True)
    for item in files:
        item.write(data)
    done = run_cli(data, out)
    if done.returncode not in (0, 1):
        raise SystemExit(f"harmonize failed ({done.returncode}): {done.stderr[-2000:]}")
    return score(files, out), done.stderr.strip()


def _pct(num: int, den: int) -> str:
    value = ratio(num, den)
    return "   n/a" if math.isnan(value) else f"{100 * value:6.2f}"


def print_kinds(result: Evaluation) -> None:
    labels = [label for label, *_ in TARGETS]
    print(f"{'kind':<11}{'cells':>7}" + "".join(f"{lab[:18]:>20}" for lab in labels))
    for kind, s in sorted(result.kinds.items()) + [("ALL", result.total())]:
        row = "".join(f"{_pct(*get(s)):>20}" for _, get, *_ in TARGETS)
        print(f"{kind:<11}{s.cells:>7}{row}")
    print("\ncells decidable only because the data names the country (file name or Country "
          "column):")
    for kind, s in sorted(result.kinds.items()) + [("ALL", result.total())]:
        if s.context_only:
            print(f"  {kind:<11}{s.context_only:>6} cells: correct "
                  f"{_pct(s.context_correct, s.context_only)} %, "
                  f"listed {_pct(s.context_listed, s.context_only)} %")


def print_targets(total: KindScore, ece: float) -> bool:
    ok_all = True
    print("\ntargets (all kinds):")
    for label, get, op, threshold in TARGETS:
        num, den = get(total)
        value = ratio(num, den)
        ok = passes(value, op, threshold)
        ok_all &= ok
        print(f"  {'PASS' if ok else 'FAIL'}  {label:<20} {100 * value:7.3f} % "
              f"({num}/{den})  target {op} {100 * threshold:g} %")
    ok = ece < ECE_TARGET
    ok_all &= ok
    print(f"  {'PASS' if ok else 'FAIL'}  {'ECE (10 bins)':<20} {ece:7.4f}    "
          f"target < {ECE_TARGET}")
    return ok_all


def print_columns(result: Evaluation, worst: int) -> None:
    cols = result.columns
    right = sum(c.truth_kind == c.reported_kind for c in cols)
    print(f"\ncolumn kind accuracy: {right}/{len(cols)} = {100 * ratio(right, len(cols)):.1f} %")
    confusion = Counter((c.truth_kind, c.reported_kind) for c in cols
                        if c.truth_kind != c.reported_kind)
    for (truth, got), n in confusion.most_common():
        print(f"  truth {truth:<10} reported {got:<10} {n}")
    print(f"columns right (kind + no unlisted wrong cell): {sum(c.right for c in cols)}/"
          f"{len(cols)}, mean confidence {sum(c.confidence for c in cols) / len(cols):.3f}")
    ranked = sorted((c for c in cols if c.wrong or c.truth_kind != c.reported_kind),
                    key=lambda c: (-len(c.wrong), c.file))
    print(f"\nworst columns ({len(ranked)} with a problem; showing {min(worst, len(ranked))}):")
    for c in ranked[:worst]:
        where = f"{c.file}" + (f" [{c.sheet}]" if c.sheet else "")
        print(f"- {where} :: {c.column!r}  truth {c.truth_kind}, reported {c.reported_kind}"
              f" (conf {c.confidence:.2f}, unit {c.unit}); {len(c.wrong)} bad cells"
              f" of {c.score.cells}")
        for raw, got, want in c.wrong[:3]:
            print(f"      {raw!r} -> {got!r}  expected {want!r}")


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--files", type=int, default=60)
    parser.add_argument("--seed", type=int, default=1)
    parser.add_argument("--worst", type=int, default=15)
    parser.add_argument("--keep", type=Path, help="keep the exports and output here")
    args = parser.parse_args(argv)
    files = corpus(args.files, args.seed)
    started = time.perf_counter()
    with tempfile.TemporaryDirectory() as tmp:
        workdir = args.keep or Path(tmp)
        result, stderr = evaluate(files, workdir)
    seconds = time.perf_counter() - started
    scenarios = Counter(f.scenario for f in files)
    print(f"{args.files} files (seed {args.seed}; {dict(scenarios)}), "
          f"{sum(len(f.sheets) for f in files)} sheets, {result.total().cells} cells, "
          f"{seconds:.1f} s")
    if stderr:
        print("harmonize stderr:", stderr[:1000])
    if result.missing_outputs:
        print("no output for:", ", ".join(result.missing_outputs))
    print_kinds(result)
    ece = expected_calibration_error(result.columns)
    ok = print_targets(result.total(), ece)
    print_columns(result, args.worst)
    return 0 if ok else 1


if __name__ == "__main__":
    raise SystemExit(main())
