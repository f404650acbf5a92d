"""A generated corpus of date columns with known truth, for calibration and accuracy.

Invented scenario: "Quillmoor Provisions", an invented wholesaler whose branches in
several countries export their order ledgers, each writing dates its own way. Some
exports are one branch's ledger (sorted by date or not), some merge branches with a
country column, some merge them without one, some cover only a few days so that no
value has a component above 12, some state the order in the run options.

Each case records the true ISO date of every row and the true order of every branch, so
that tests and ``bench/date_calibration.py`` can measure wrong-and-silent cells, listed
undecidable cells and the calibration of the reported confidence.
"""

from __future__ import annotations

import random
from collections.abc import Iterable
from dataclasses import dataclass, field
from datetime import date, datetime, timedelta

import babel.dates as bd
import numpy as np
import pandas as pd

from harmonize.context import Context
from harmonize.engines.base import Decision, Outcome
from harmonize.engines.dates import DateEngine
from harmonize.engines.dates_parse import OPEN, parse, reading
from harmonize.evidence import TableEvidence
from harmonize.options import Options

# Branch territories, the order each usually writes and its locale for month names.
BRANCHES = {"DE": ("DMY", "de_DE", "."), "FR": ("DMY", "fr_FR", "/"),
            "GB": ("DMY", "en_GB", "/"), "US": ("MDY", "en_US", "/"),
            "ES": ("DMY", "es_ES", "/"), "IT": ("DMY", "it_IT", "/"),
            "NL": ("DMY", "nl_NL", "-"), "PL": ("DMY", "pl_PL", "."),
            "PH": ("MDY", "en_PH", "/"), "SE": ("YMD", "sv_SE", "-")}
CONTRARY = 0.05   # share of branches that write the order their territory does not use
ENGINE = DateEngine()


@dataclass
class Case:
    frame: pd.DataFrame
    column: str
    truth: list[str]                 # true ISO text per row
    orders: dict[str, str]           # branch label (or "") -> true order
    decidable: list[bool]            # per row: the data hold evidence that decides it
    options: Options = field(default_factory=Options)
    scenario: str = ""


@dataclass
class Branch:
    label: str
    order: str
    locale: str
    sep: str
    year_digits: int
    zero_pad: bool
    words: bool
    clock: bool


def _branch(rng: random.Random, territory: str, label: str | None = None) -> Branch:
    usual, locale, sep = BRANCHES[territory]
    order = usual
    if usual == "YMD":
        order = rng.choice(["DMY", "MDY"])   # its slashed dates follow no CLDR pattern
    elif rng.random() < CONTRARY:
        order = "MDY" if usual == "DMY" else "DMY"
    # month names only where the locale's medium pattern spells the month (de_DE: dd.MM.y)
    words = rng.random() < 0.1 and "MMM" in bd.get_date_format("medium", locale=locale).pattern
    return Branch(label or territory, order, locale, sep, rng.choice([2, 4, 4]),
                  rng.random() < 0.7, words, rng.random() < 0.15)


def _write(day: date, b: Branch, rng: random.Random) -> str:
    if b.words:
        return bd.format_date(day, "medium", locale=b.locale)
    d = f"{day.day:02d}" if b.zero_pad else str(day.day)
    m = f"{day.month:02d}" if b.zero_pad else str(day.month)
    y = f"{day.year:04d}" if b.year_digits == 4 else f"{day.year % 100:02d}"
    parts = {"DMY": (d, m, y), "MDY": (m, d, y), "YMD": (y, m, d)}[b.order]
    text = b.sep.join(parts)
    if b.clock:
        text += f" {rng.randrange(24):02d}:{rng.randrange(60):02d}"
    return text


def _true(day: date, text: str, b: Branch) -> str:
    if b.clock and not b.words:
        return f"{day.isoformat()}T{text[-5:]}:00"
    return day.isoformat()


def _days(rng: random.Random, n: int, short: bool, monthly: bool) -> list[date]:
    start = date(2016, 1, 1) + timedelta(days=rng.randrange(3000))
    if monthly:  # the same day of each month: a subscription ledger
        day = rng.randint(1, 12)
        months = [(start.year + (start.month - 1 + k) // 12, (start.month - 1 + k) % 12 + 1)
                  for k in range(rng.randint(6, 12))]
        return sorted(date(y, m, day) for y, m in (rng.choice(months) for _ in range(n)))
    if short:  # the first days of one month: no component above 12
        first = start.replace(day=1)
        return [first + timedelta(days=rng.randrange(rng.randint(3, 12))) for _ in range(n)]
    span = rng.choice([20, 45, 120, 400, 1500])
    return [start + timedelta(days=rng.randrange(span)) for _ in range(n)]


def _rows(rng: random.Random, branches: list[Branch], n: int, short: bool, sort: bool,
          monthly: bool) -> tuple[list[str], list[str], list[str]]:
    labels, texts, truth = [], [], []
    for b in branches:
        days = _days(rng, n // len(branches), short, monthly)
        if sort:
            days.sort()
        for day in days:
            text = _write(day, b, rng)
            labels.append(b.label)
            texts.append(text)
            truth.append(_true(day, text, b))
    return labels, texts, truth


def _readings(text: str) -> dict[str, date] | None:
    """Order -> the date a DMY/MDY numeric text names (None: the shape fixes the order)."""
    p = parse(text)
    if p.form != OPEN:
        return None
    year_from = date.today().year - 79
    found = {o: reading(p, o, year_from) for o in ("DMY", "MDY")}
    return {o: d for o, d in found.items() if d is not None}


def _settled(readings: dict[str, date] | None) -> bool:
    return readings is None or len(set(readings.values())) <= 1


def _decidable(texts: list[str], labels: list[str], orders: dict[str, str],
               grouped: bool, stated: bool) -> list[bool]:
    """Per row: readings coincide, its group holds a value only the true order reads, or
    the order is stated. Row order and a territory alone do not decide: a ledger of the
    same day each month reads as consecutive days in the other order."""
    readings = {t: _readings(t) for t in set(texts)}
    pinned: dict[str, bool] = {}
    for text, label in zip(texts, labels, strict=True):
        key = label if grouped else ""
        found = readings[text]
        pinned[key] = pinned.get(key, False) or (found is not None and len(found) == 1)
    mixed = not grouped and len(set(orders.values())) > 1
    return [_settled(readings[t]) or stated or
            (not mixed and pinned[lab if grouped else ""])
            for t, lab in zip(texts, labels, strict=True)]


def make_case(rng: random.Random, scenario: str) -> Case:
    n = rng.choice([60, 120, 300])
    territories = rng.sample(sorted(BRANCHES), k=rng.randint(2, 4))
    merged = scenario in ("merged", "merged_no_country")
    branches = [_branch(rng, t) for t in (territories if merged else territories[:1])]
    short = scenario in ("short", "short_sorted", "stated")
    sort = scenario in ("sorted", "short_sorted", "monthly") or rng.random() < 0.3
    labels, texts, truth = _rows(rng, branches, n, short, sort, scenario == "monthly")
    orders = {b.label: b.order for b in branches if not b.words}  # names fix their order
    options = Options()
    stated = scenario == "stated"
    if stated:
        options = Options(date_order=branches[0].order)
    data = {"Order date": texts}
    with_country = scenario != "merged_no_country" and (merged or rng.random() < 0.6)
    if with_country:
        data["Country"] = labels
    data["Amount"] = [f"{rng.randrange(100, 99999) / 100:.2f}" for _ in texts]
    frame = pd.DataFrame(data)
    return Case(frame, "Order date", truth, orders,
                _decidable(texts, labels, orders, merged and with_country, stated),
                options, scenario)


SCENARIOS = ("single", "single", "sorted", "short", "short_sorted", "merged", "merged",
             "merged_no_country", "monthly", "stated")


def corpus(n_cases: int, seed: int = 7) -> Iterable[Case]:
    rng = random.Random(seed)
    for i in range(n_cases):
        yield make_case(rng, SCENARIOS[i % len(SCENARIOS)])


# ---------------------------------------------------------------- evaluation

@dataclass
class Scores:
    cells: int = 0
    wrong_silent: int = 0
    undecidable: int = 0
    undecidable_listed: int = 0
    decidable: int = 0
    decidable_right: int = 0
    decidable_listed: int = 0
    confidences: list[float] = field(default_factory=list)
    correct: list[bool] = field(default_factory=list)

    def ece(self, bins: int = 10) -> float:
        conf = np.asarray(self.confidences)
        right = np.asarray(self.correct, dtype=float)
        edges = np.linspace(0, 1, bins + 1)
        total = 0.0
        for lo, hi in zip(edges[:-1], edges[1:], strict=True):
            inside = (conf > lo) & (conf <= hi)
            if inside.any():
                total += inside.sum() * abs(conf[inside].mean() - right[inside].mean())
        return total / max(len(conf), 1)

    def summary(self) -> dict[str, float]:
        return {"columns": len(self.confidences), "cells": self.cells,
                "wrong_silent_rate": self.wrong_silent / max(self.cells, 1),
                "undecidable_listed_rate": self.undecidable_listed / max(self.undecidable, 1),
                "decidable_right_rate": self.decidable_right / max(self.decidable, 1),
                "decidable_listed_rate": self.decidable_listed / max(self.decidable, 1),
                "accuracy": float(np.mean(self.correct)) if self.correct else 0.0,
                "mean_confidence": float(np.mean(self.confidences)) if self.confidences else 0,
                "ece": self.ece()}


def row_outputs(case: Case, decision: Decision) -> tuple[list[str], list[int]]:
    """Convert like the core: per group when the decision has groups, distinct values once."""
    frame, column = case.frame, case.column
    if decision.groups is None:
        keys = pd.Series([""] * len(frame))
    else:
        keys = frame[decision.groups.by].astype(str).str.strip()
    texts = [""] * len(frame)
    outcomes = [int(Outcome.UNRESOLVED)] * len(frame)
    for key, rows in frame.groupby(keys.to_numpy()):
        convention = (decision.convention if decision.groups is None else
                      decision.groups.convention_for(decision.convention, str(key)))
        values = rows[column].unique().tolist()
        result = ENGINE.convert(values, convention)
        lookup = {v: (result.text[i], int(result.outcome[i])) for i, v in enumerate(values)}
        for row, value in zip(rows.index, rows[column], strict=True):
            texts[row], outcomes[row] = lookup[value]
    return texts, outcomes


def decision_correct(case: Case, decision: Decision | None) -> bool:
    if decision is None or decision.kind not in ("date", "datetime"):
        return False
    base = decision.convention.get("order")
    if decision.groups is None:
        return base is None or set(case.orders.values()) <= {base}
    for label, order in case.orders.items():
        stated = decision.groups.convention_for(decision.convention, label).get("order")
        if stated is not None and stated != order:
            return False
    return True


def score(cases: Iterable[Case]) -> Scores:
    scores = Scores()
    for case in cases:
        table = TableEvidence.from_frame(case.frame)
        decision = ENGINE.propose(table.column(case.column), Context(table, case.options))
        scores.confidences.append(decision.confidence if decision else 0.0)
        scores.correct.append(decision_correct(case, decision))
        if decision is None:
            continue
        texts, outcomes = row_outputs(case, decision)
        for text, outcome, truth, decidable in zip(texts, outcomes, case.truth,
                                                   case.decidable, strict=True):
            _tally(scores, text, outcome, truth, decidable)
    return scores


def _tally(scores: Scores, text: str, outcome: int, truth: str, decidable: bool) -> None:
    scores.cells += 1
    converted = outcome == Outcome.CONVERTED
    listed = outcome == Outcome.UNRESOLVED
    scores.wrong_silent += converted and text != truth
    if decidable:
        scores.decidable += 1
        scores.decidable_right += converted and text == truth
        scores.decidable_listed += listed
    else:
        scores.undecidable += 1
        scores.undecidable_listed += listed


def clock_now() -> datetime:  # pragma: no cover - a hook for reproducible runs
    return datetime.now()
