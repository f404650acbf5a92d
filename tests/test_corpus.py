"""Acceptance rehearsal, small: 8 generated export files through the real CLI.

The files, their truth and the checker live in tests/corpora/exports.py; the figures are
read only from the output files and harmonize-report.json (the project's output contract).
Targets carry a margin over the acceptance targets of bench/corpus_eval.py. A target the
pipeline misses today is marked xfail(strict=True) with the exact failure, so it shows.
"""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest
from corpora.exports import (
    Evaluation,
    KindScore,
    corpus,
    expected_calibration_error,
    ratio,
    score,
)

ROOT = Path(__file__).resolve().parent.parent
FILES, SEED = 8, 7


@pytest.fixture(scope="module")
def evaluation(tmp_path_factory: pytest.TempPathFactory) -> Evaluation:
    work = tmp_path_factory.mktemp("corpus")
    data, out = work / "exports", work / "out"
    data.mkdir()
    files = corpus(FILES, SEED)
    for item in files:
        item.write(data)
    command = [sys.executable, "-m", "harmonize.cli", "apply", str(data), "--out", str(out),
               "--format", "csv", "--quiet"]
    done = subprocess.run(command, capture_output=True, text=True, cwd=ROOT, timeout=120,
                          check=False)
    assert done.returncode == 0, done.stderr[-2000:]
    return score(files, out)


def _total(evaluation: Evaluation) -> KindScore:
    assert not evaluation.missing_outputs, evaluation.missing_outputs
    return evaluation.total()


def test_corpus_has_every_kind_and_undecidable_cells(evaluation: Evaluation) -> None:
    total = _total(evaluation)
    assert {"date", "number", "quantity", "phone", "boolean", "text", "identifier"} \
        <= set(evaluation.kinds)
    assert total.undecidable > 0 and total.masks > 0 and total.identifiers > 0


def test_wrong_and_unlisted_at_most_0_1_percent(evaluation: Evaluation) -> None:
    total = _total(evaluation)   # acceptance target 0.2 %, margin 0.1 %
    assert ratio(total.wrong_unlisted, total.cells) <= 0.001


def test_undecidable_cells_listed(evaluation: Evaluation) -> None:
    total = _total(evaluation)   # acceptance target 98 %
    assert ratio(total.undecidable_listed, total.undecidable) >= 0.99


def test_identifiers_kept_as_written(evaluation: Evaluation) -> None:
    total = _total(evaluation)   # acceptance target 99 %
    assert ratio(total.identifiers_kept, total.identifiers) >= 0.995


def test_missing_masks_recognised(evaluation: Evaluation) -> None:
    total = _total(evaluation)   # acceptance target 95 %
    assert ratio(total.masks_recognised, total.masks) >= 0.97


def test_decidable_cells_correct(evaluation: Evaluation) -> None:
    total = _total(evaluation)   # acceptance target 99.5 %
    assert ratio(total.decidable_correct, total.decidable) >= 0.997


def test_decidable_cells_rarely_listed(evaluation: Evaluation) -> None:
    total = _total(evaluation)   # acceptance target 2 %
    assert ratio(total.decidable_listed, total.decidable) <= 0.015


def test_column_confidence_calibrated(evaluation: Evaluation) -> None:
    # acceptance target 0.05; with ~60 columns one bin's noise is a few hundredths
    assert expected_calibration_error(evaluation.columns) < 0.05
