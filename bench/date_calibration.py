"""Accuracy, listed rate and calibration of the dates engine on a generated corpus.

Run: python bench/date_calibration.py [n_columns] [seed]
The corpus (tests/corpora/dates.py) is an invented wholesaler's branch ledgers with known
truth; see that module for the scenarios.
"""

from __future__ import annotations

import sys
import time
from collections import defaultdict
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parent.parent / "tests"))
sys.path.insert(0, str(Path(__file__).resolve().parent.parent))

from corpora.dates import corpus, score  # noqa: E402


def main(n_columns: int = 400, seed: int = 2024) -> None:
    cases = list(corpus(n_columns, seed=seed))
    started = time.perf_counter()
    overall = score(cases)
    elapsed = time.perf_counter() - started
    by_scenario = defaultdict(list)
    for case in cases:
        by_scenario[case.scenario].append(case)
    print(f"{len(cases)} columns, {overall.cells} cells, {elapsed:.1f} s")
    header = f"{'scenario':<18}{'cols':>5}{'wrong+silent':>14}{'undec.listed':>14}" \
             f"{'dec.right':>11}{'dec.listed':>12}{'accuracy':>10}{'mean conf':>11}{'ECE':>8}"
    print(header)
    rows = [("all", overall)] + [(name, score(group)) for name, group in by_scenario.items()]
    for name, scores in rows:
        s = scores.summary()
        print(f"{name:<18}{s['columns']:>5}{s['wrong_silent_rate']:>14.4%}"
              f"{s['undecidable_listed_rate']:>14.2%}{s['decidable_right_rate']:>11.3%}"
              f"{s['decidable_listed_rate']:>12.2%}{s['accuracy']:>10.3f}"
              f"{s['mean_confidence']:>11.3f}{s['ece']:>8.4f}")


if __name__ == "__main__":
    main(*(int(a) for a in sys.argv[1:3]))
