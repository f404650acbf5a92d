"""The vectorised ISO path of the dates engine gives exactly the per-value parser's answers.

Large date-time columns are read on whole arrays (``dates_fast``); everything the fast
path takes must come out as ``_convert_one`` writes it (text, outcome, reasons), and a
column's decision must not change when its ISO values are read in bulk.
"""

from __future__ import annotations

import json
from datetime import datetime

import numpy as np
import pandas as pd
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from harmonize.context import Context
from harmonize.engines import dates as dates_module
from harmonize.engines.base import Converted, Outcome
from harmonize.engines.dates import DateEngine, _convert_one, _Settings
from harmonize.engines.dates_fast import IsoValues, read_iso
from harmonize.evidence import TableEvidence

ENGINE = DateEngine()
CONVENTIONS = [
    {"order": "DMY", "kind": "datetime", "year_from": 1950, "numbers": None},
    {"order": None, "kind": "date", "candidates": ["DMY", "MDY"], "year_from": 1950},
    {"order": "MDY", "kind": "time", "year_from": 1950},
    {"order": "DMY", "kind": "datetime", "year_from": 1950, "sentinels": ["2020-02-29"]},
]


def slow_convert(values: list[str], convention: dict) -> Converted:
    """The per-value parser alone (the path every value took before the fast one)."""
    result = Converted.empty(len(values))
    s = _Settings.of(convention)
    for i, raw in enumerate(values):
        _convert_one(result, i, raw, s)
    return result


def assert_same(values: list[str], convention: dict) -> None:
    fast, slow = ENGINE.convert(values, convention), slow_convert(values, convention)
    assert fast.text == slow.text
    assert fast.outcome.tolist() == slow.outcome.tolist()
    assert fast.reasons == slow.reasons
    assert fast.candidates == slow.candidates
    assert fast.best == slow.best


OPEN_FORM = 9   # the one form of ``generated`` whose field order is open (DD/MM/YYYY)


def generated(n: int, seed: int, with_open: bool = True) -> list[str]:
    """ISO-looking values, valid and not: every edge the fast path must hand back."""
    rng = np.random.default_rng(seed)
    years = rng.choice([0, 1, 99, 1600, 1900, 1999, 2000, 2020, 2023, 2024, 2100, 9999], n)
    months, days = rng.integers(0, 14, n), rng.integers(0, 33, n)
    hours, minutes, seconds = rng.integers(0, 26, n), rng.integers(0, 62, n), rng.integers(0, 62, n)
    out = []
    for k in range(n):
        day = f"{years[k]:04d}-{months[k]:02d}-{days[k]:02d}"
        form = rng.integers(0, 12)
        if form == OPEN_FORM and not with_open:
            form = 0
        sep = "T" if rng.integers(0, 2) else " "
        clock = f"{hours[k]:02d}:{minutes[k]:02d}"
        tail = ["", "Z", "+02:00", "-05:30", "+19:00", "+05:61", "-00:00", "+14:45"][
            rng.integers(0, 8)]
        out.append([
            day, f"{day}{sep}{clock}", f"{day}{sep}{clock}:{seconds[k]:02d}",
            f"{day}{sep}{clock}:{seconds[k]:02d}{tail}", f"{day}{sep}{clock}{tail}",
            f"{day}{sep}{clock}:{seconds[k]:02d}.{rng.integers(0, 10**6)}{tail}",
            f" {day}", f"{day}t{clock}", f"{day}{sep}{clock}:{seconds[k]:02d} z",
            f"{days[k]:02d}/{months[k]:02d}/{years[k]:04d}", "0000-00-00",
            f"{day}{sep}{clock}:60",
        ][form])
    return out


@pytest.mark.parametrize("convention", CONVENTIONS)
def test_fast_and_slow_paths_agree_on_generated_values(convention: dict) -> None:
    # the reference is the engine's own per-value parser (dates_parse), which the
    # existing tests check against ISO 8601 and Python's calendar
    assert_same(generated(4000, seed=11), convention)


@settings(max_examples=200, deadline=None)
@given(st.datetimes(min_value=datetime(1, 1, 1), max_value=datetime(9999, 12, 31)),
       st.sampled_from(["%Y-%m-%d", "%Y-%m-%d %H:%M:%S", "%Y-%m-%dT%H:%M", "%Y-%m-%dT%H:%M:%SZ",
                        "%Y-%m-%d %H:%M:%S.%f", "%Y-%m-%dT%H:%M:%S+01:00"]))
def test_fast_and_slow_paths_agree_on_any_datetime(moment: datetime, pattern: str) -> None:
    # strftime's %Y does not pad years below 1000 on every platform: pad it ourselves
    value = moment.strftime(pattern.replace("%Y", f"{moment.year:04d}"))
    for convention in CONVENTIONS:
        assert_same([value], convention)


def test_fast_path_output_matches_python_datetime() -> None:
    # Python's datetime.fromisoformat/isoformat (ISO 8601 extended; RFC 3339 §5.6 allows the
    # space separator): 'Z' reads as UTC and is written +00:00; seconds always written
    # "-00:00" is left out: RFC 3339 §4.3 gives it its own meaning (offset unknown), so the
    # engine keeps it as written where Python folds it into +00:00
    values = [v for v in generated(3000, seed=5) if "." not in v and "-00:00" not in v]
    found = read_iso(values)
    assert found.read.sum() > 300
    for value, text in zip(np.array(values)[found.read], found.text[found.read], strict=True):
        moment = datetime.fromisoformat(value)
        expected = moment.date().isoformat() if len(value) == 10 else moment.isoformat()
        assert text == expected


def test_leap_days_follow_the_gregorian_rule() -> None:
    # ISO 8601 uses the Gregorian calendar: 2000 and 2024 are leap years, 1900 and 2023 not
    found = read_iso(["2000-02-29", "2024-02-29", "1900-02-29", "2023-02-29"])
    assert found.read.tolist() == [True, True, False, False]


def test_values_the_fast_path_leaves_keep_their_reasons() -> None:
    values = ["2024-02-30", "2024-04-03T24:00:00", "1900-01-01", "2024-04-03T23:59:60"]
    result = ENGINE.convert(values, CONVENTIONS[0])
    assert result.outcome.tolist() == [Outcome.UNRESOLVED, Outcome.UNRESOLVED, Outcome.MISSING,
                                       Outcome.CONVERTED]
    assert result.text[3] == "2024-04-03T23:59:60"   # a leap second, as written (ISO 8601)
    assert "no such day" in result.reasons[0]


def decision_json(frame: pd.DataFrame, monkeypatch: pytest.MonkeyPatch | None) -> str:
    if monkeypatch is not None:   # every value through the parser, as before the fast path
        monkeypatch.setattr(dates_module, "read_iso",
                            lambda values, with_text=True: IsoValues.none(len(values)))
    evidence = TableEvidence.from_frame(frame)
    decision = ENGINE.propose(evidence.columns[0], Context(evidence))
    assert decision is not None
    return json.dumps([decision.kind, decision.fit, decision.confidence, decision.convention,
                       decision.evidence, decision.details], default=str)


@pytest.mark.parametrize("extra", [
    [],                                                  # ISO only
    ["03/04/2024 10:00", "13/04/2024 09:00"],            # open-order values beside them
    ["not a date", "2024-02-30", "N/A"],                 # unreadable and impossible ones
    ["20240403", "20240404"],                            # bare numbers (compact dates)
    ["10:15", "2024-04-03 14:05 EST"],                   # a time alone, a zone abbreviation
])
def test_decision_unchanged_by_the_fast_path(extra: list[str],
                                             monkeypatch: pytest.MonkeyPatch) -> None:
    values = generated(600, seed=3, with_open=False) + extra * 3
    frame = pd.DataFrame({"Created": values})
    fast = decision_json(frame, None)
    assert fast == decision_json(frame, monkeypatch)


def test_iso_values_stand_as_one_per_kind_when_nothing_is_open() -> None:
    frame = pd.DataFrame({"Created": generated(600, seed=3, with_open=False)})
    column = TableEvidence.from_frame(frame).columns[0]
    col, _ = dates_module._read_column(column)
    fast = read_iso(column.values.tolist())
    assert fast.timed.any() and (fast.read & ~fast.timed).any()
    # the bulk path was taken: the others, and one value per kind (dated, timed)
    assert len(col.parsed) == int((~fast.read).sum()) + 2
    assert col.total == column.total
