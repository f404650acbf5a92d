"""Accuracy, listed rate and calibration of the dates engine per scenario of the corpus.

Run: python bench/date_calibration.py [n_files] [seed]
The corpus (tests/corpora/dates.py) is an invented wholesaler's branch exports with known
truth, run through the whole pipeline; bench/date_corpus_eval.py gives the overall
figures beside two common recipes, bench/date_speed.py the speed.
"""

from __future__ import annotations

import json
import sys
import tempfile
import time
from collections import defaultdict
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))
sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from corpora.dates import corpus, evaluate, run_corpus  # noqa: E402


def main(n_files: int = 300, seed: int = 2024) -> None:
    files = list(corpus(n_files, seed=seed))
    with tempfile.TemporaryDirectory() as folder:
        started = time.perf_counter()
        overall, report = run_corpus(files, Path(folder))
        elapsed = time.perf_counter() - started
        by_scenario = defaultdict(list)
        for item in files:
            by_scenario[item.scenario].append(item)
        rows = [("all", overall)] + [
            (name, evaluate(group, Path(folder) / "out", report))
            for name, group in sorted(by_scenario.items())]
    print(f"{len(files)} files, {overall.cells} date cells, {elapsed:.1f} s; "
          f"{len(report['errors'])} files failed")
    print(f"{'scenario':<16}{'cols':>5}{'wrong+unl':>11}{'undec.list':>11}{'dec.right':>11}"
          f"{'dec.list':>10}{'right':>7}{'mean conf':>10}{'ECE':>8}")
    for name, scores in rows:
        s = scores.summary()
        print(f"{name:<16}{s['columns']:>5}{s['wrong_unlisted']:>11.3%}"
              f"{s['undecidable_listed']:>11.2%}{s['decidable_right']:>11.3%}"
              f"{s['decidable_listed']:>10.2%}{s['accuracy']:>7.3f}"
              f"{s['mean_confidence']:>10.3f}{s['ece']:>8.4f}")
    if report["errors"]:
        print(json.dumps(report["errors"][:3], indent=1))


if __name__ == "__main__":
    main(*(int(a) for a in sys.argv[1:3]))
