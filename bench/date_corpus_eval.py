"""Dates through the whole pipeline, on a generated corpus of multi-region exports.

Writes N invented branch exports (CSV, and XLSX with typed date cells) into a temporary
folder, runs ``harmonize.run`` on them, reads the output files and
``harmonize-report.json`` like an outside checker, and prints:

* wrong-and-unlisted: date cells whose output is wrong and that the report does not list;
* undecidable listed: cells the data cannot decide (see tests/corpora/dates.py) that are
  listed as unresolved;
* decidable correct / listed;
* the expected calibration error of the column confidence (10 equal-width bins);
* the same cell figures for two common recipes: pandas ``to_datetime(format="mixed")``
  per column and dateutil ``parse(dayfirst=False)`` per cell (a recipe flags a cell only
  by failing on it).

Run: python bench/date_corpus_eval.py --files 200 --seed 1 [--show 20] [--jobs 1]
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
import warnings
from collections import defaultdict
from pathlib import Path

import pandas as pd
from dateutil import parser as du_parser

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))
sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from corpora.dates import (  # noqa: E402
    CorpusFile,
    DateTruth,
    Scores,
    corpus,
    expected_calibration_error,
    run_corpus,
)


def _iso(moment: pd.Timestamp | object, kind: str) -> str:
    """A recipe's answer as the project's output text (offset kept when it has one)."""
    if kind == "date" and getattr(moment, "hour", 0) == 0 and getattr(moment, "minute", 0) == 0:
        return moment.date().isoformat()
    text = moment.strftime("%Y-%m-%dT%H:%M:%S")
    offset = moment.strftime("%z") if moment.tzinfo is not None else ""
    return text + (f"{offset[:3]}:{offset[3:]}" if offset else "")


def _recipe_scores(files: list[CorpusFile], read_column) -> Scores:
    scores = Scores()
    for item in files:
        for truth in item.dates:
            raw = _raw_cells(item, truth)
            answers = read_column(raw, truth)
            for answer, want, status in zip(answers, truth.truth, truth.status, strict=True):
                flagged = answer is None
                scores.tally("" if flagged else answer, flagged, want, status)
    return scores


def _raw_cells(item: CorpusFile, truth: DateTruth) -> list[str]:
    """What a recipe sees: typed workbook cells arrive as dates, the rest as text."""
    typed = item.typed.get(truth.name, {})
    return [typed[i].isoformat() if i in typed else text
            for i, text in enumerate(item.frame[truth.name].tolist())]


def pandas_mixed(raw: list[str], truth: DateTruth) -> list[str | None]:
    series = pd.Series(raw, dtype=object)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            parsed = pd.to_datetime(series, format="mixed", errors="coerce")
        except (ValueError, TypeError):   # mixed offsets: the recipe fails the column
            return [None] * len(raw)
    return [None if pd.isna(v) else _iso(v, truth.kind) for v in parsed]


def dateutil_cells(raw: list[str], truth: DateTruth) -> list[str | None]:
    out: list[str | None] = []
    for text in raw:
        try:
            with warnings.catch_warnings():
                warnings.simplefilter("ignore")
                out.append(_iso(du_parser.parse(text, dayfirst=False), truth.kind))
        except (ValueError, OverflowError, du_parser.ParserError):
            out.append(None)
    return out


def _line(name: str, s: dict[str, float], ece: str = "") -> str:
    return (f"{name:<24}{s['wrong_unlisted']:>10.3%}{s['undecidable_listed']:>11.2%}"
            f"{s['decidable_right']:>11.3%}{s['decidable_listed']:>10.2%}{ece:>8}")


def main() -> None:
    args = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    args.add_argument("--files", type=int, default=200)
    args.add_argument("--seed", type=int, default=1)
    args.add_argument("--jobs", type=int, default=1)
    args.add_argument("--show", type=int, default=0, help="print this many wrong cells")
    opts = args.parse_args()
    files = list(corpus(opts.files, seed=opts.seed))
    with tempfile.TemporaryDirectory() as folder:
        started = time.perf_counter()
        ours, report = run_corpus(files, Path(folder), jobs=opts.jobs)
        elapsed = time.perf_counter() - started
    s = ours.summary()
    print(f"{len(files)} files, {s['columns']} date columns, {s['cells']} date cells "
          f"({s['decidable']} decidable, {s['undecidable']} undecidable); pipeline "
          f"{elapsed:.1f} s")
    print(f"{'':<24}{'wrong+unl':>10}{'undec.list':>11}{'dec.right':>11}{'dec.list':>10}"
          f"{'ECE':>8}")
    print(_line("harmonize", s, f"{s['ece']:.4f}"))
    for name, recipe in (("pandas format=mixed", pandas_mixed),
                         ("dateutil dayfirst=False", dateutil_cells)):
        print(_line(name, _recipe_scores(files, recipe).summary()))
    print(f"decoy numeric columns taken as dates: {s['decoys_taken']} of {s['decoys']}; "
          f"files the pipeline failed on: {len(report['errors'])}")
    for error in report["errors"][:3]:
        print("  ", error)
    print(f"columns right: {s['accuracy']:.3f}, mean confidence {s['mean_confidence']:.3f}")
    _calibration_table(ours)
    _by_scenario(files, ours)
    for note in ours.notes[: opts.show]:
        print("  ", note)


def _calibration_table(scores: Scores) -> None:
    bins: dict[float, list[bool]] = defaultdict(list)
    for conf, right in zip(scores.confidences, scores.correct, strict=True):
        bins[min(int(conf * 20) / 20, 0.95)].append(right)
    print("confidence bin   columns  right")
    for lo in sorted(bins):
        share = sum(bins[lo]) / len(bins[lo])
        print(f"  {lo:.2f}-{lo + 0.05:.2f}   {len(bins[lo]):>7}  {share:.3f}")
    print(f"ECE (10 bins) {expected_calibration_error(scores.confidences, scores.correct):.4f}")


def _by_scenario(files: list[CorpusFile], scores: Scores) -> None:
    wrong: dict[str, int] = defaultdict(int)
    for note in scores.notes:
        if " row " in note:
            tag, name = note.split()[:2]
            wrong[f"{tag} {name.split('_', 2)[2]}"] += 1
    if wrong:
        print("cells amiss (WRONG = wrong and unlisted; listed = decidable but listed; "
              "unlisted = undecidable, converted) per scenario:")
        for key, count in sorted(wrong.items()):
            print(f"  {key:<30}{count:>6}")


if __name__ == "__main__":
    main()
