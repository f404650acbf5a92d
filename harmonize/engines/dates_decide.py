"""Deciding the order of a column's (or a group's) open numeric dates from evidence.

Every candidate order starts with a prior; each kind of evidence multiplies its odds:

* values only some orders allow (``13/04/2024`` rules out month-first): an order that a
  value contradicts keeps only the chance that the value is a slip, ``SLIP`` per
  distinct contradicting value;
* workbook number formats of typed cells in the same column (``DD/MM/YYYY``);
* row order: consecutive rows a few days apart under one reading and about a month
  apart under the other;
* locale hints: a stated locale, the CLDR short date pattern of the rows' territories.

The posterior of the leading order is the probability reported. An order is applied
to the ambiguous cells only when that probability reaches ``DECIDE`` and no value
contradicts it; otherwise the ambiguous cells are listed with every reading.
"""

from __future__ import annotations

import math
import re
from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass, field

import numpy as np

from harmonize.engines.dates_parse import OPEN, Parsed, plausible_under, reading

DECIDE = 0.98          # posterior needed to convert cells the order alone decides
SLIP = 0.02            # chance that one distinct value is a slip against the column's order
LR_FORMAT = 100.0      # typed cells' number format states the author's order
LR_SEQUENCE = 8.0      # daily steps under one reading, monthly under the other
LR_TERRITORY = 4.0     # CLDR short pattern of the rows' territory: a prior only
LR_LOCALE = 50.0       # a locale stated by the user
LR_STATED = 400.0      # an order stated by the user in the run options
SMALL_STEP = 7         # days between consecutive distinct dates that count as "in sequence"
NAMES = {"DMY": "day first", "MDY": "month first", "YMD": "year first"}


@dataclass
class Hints:
    """Evidence beside the values themselves: log likelihood ratio per order, and why."""

    log_odds: Counter[str] = field(default_factory=Counter)
    notes: list[str] = field(default_factory=list)

    def add(self, order: str, ratio: float, note: str) -> None:
        self.log_odds[order] += math.log(ratio)
        self.notes.append(note)


@dataclass
class Verdict:
    order: str | None            # the order applied to ambiguous cells, None = list them
    leading: str | None          # the most probable order, for the 'best' reading
    probability: float           # posterior of ``leading``
    decisive: dict[str, int]     # cells only this order allows
    contradicted: dict[str, int]  # distinct values each order cannot read
    ambiguous: int               # cells whose readings differ
    evidence: list[str]
    mixed: bool = False          # values only different orders allow, beside each other


def admitted(p: Parsed, orders: Sequence[str], year_from: int) -> frozenset[str]:
    return frozenset(o for o in orders if reading(p, o, year_from) is not None)


def differ(p: Parsed, orders: Sequence[str], year_from: int) -> bool:
    found = {reading(p, o, year_from) for o in orders}
    found.discard(None)
    return len(found) > 1


def decide(parsed: Sequence[Parsed], counts: np.ndarray, orders: Sequence[str],
           year_from: int, hints: Hints, codes: np.ndarray | None = None) -> Verdict:
    """Weigh the evidence for the order of the OPEN values among ``parsed``."""
    decisive: Counter[str] = Counter()
    decisive_distinct: Counter[str] = Counter()
    contradicted: Counter[str] = Counter()
    ambiguous = 0
    for p, n in zip(parsed, counts.tolist(), strict=True):
        if p.form != OPEN:
            continue
        allowed = admitted(p, orders, year_from)
        if not allowed:
            continue  # impossible under every order: listed, and no evidence either way
        for order in orders:
            if order not in allowed:
                contradicted[order] += 1
        if len(allowed) == 1:
            only = next(iter(allowed))
            decisive[only] += n
            decisive_distinct[only] += 1
        elif differ(p, orders, year_from):
            ambiguous += n
    notes = [f"{count} {'cell' if count == 1 else 'cells'} only {NAMES[o]} ({o}) reads"
             for o, count in decisive.most_common() if count]
    log_odds = Counter({o: contradicted[o] * math.log(SLIP) for o in orders})
    log_odds.update(hints.log_odds)
    if codes is not None and ambiguous:
        _sequence_hint(parsed, codes, orders, year_from, log_odds, notes)
    posterior = _softmax(log_odds, orders)
    leading = max(orders, key=lambda o: (posterior[o], -orders.index(o)))
    notes.extend(hints.notes)
    mixed = sum(1 for o in orders if decisive_distinct[o]) >= 2 and not _outliers(
        decisive_distinct, leading)
    order = None
    if not mixed and posterior[leading] >= DECIDE and (
            not contradicted[leading] or _outliers(decisive_distinct, leading)):
        order = leading
    if not ambiguous and not decisive:
        order = None  # nothing depends on the order
    return Verdict(order, leading, posterior[leading], dict(decisive), dict(contradicted),
                   ambiguous, notes, mixed)


def _outliers(decisive_distinct: Counter[str], leading: str) -> bool:
    """A single stray value against hundreds that agree is a slip, not a second convention."""
    against = sum(n for o, n in decisive_distinct.items() if o != leading)
    return against <= decisive_distinct[leading] // 500


def _softmax(log_odds: Counter[str], orders: Sequence[str]) -> dict[str, float]:
    top = max(log_odds[o] for o in orders)
    weights = {o: math.exp(log_odds[o] - top) for o in orders}
    total = sum(weights.values())
    return {o: w / total for o, w in weights.items()}


def _sequence_hint(parsed: Sequence[Parsed], codes: np.ndarray, orders: Sequence[str],
                   year_from: int, log_odds: Counter[str], notes: list[str]) -> None:
    """Rows in date order: small steps under one reading, month-sized under another."""
    rows = codes[codes >= 0]
    if len(rows) < 6:
        return
    rows = rows[np.concatenate(([True], rows[1:] != rows[:-1]))]  # drop repeated values
    steps: dict[str, int] = {}
    usable = None
    day_numbers = {}
    for order in orders:
        days = np.array([_ordinal(p, order, year_from) for p in parsed], dtype=float)
        day_numbers[order] = days[rows]
        ok = ~np.isnan(day_numbers[order])
        usable = ok if usable is None else usable & ok
    pairs = usable[1:] & usable[:-1]
    gaps = {o: np.abs(np.diff(day_numbers[o])) for o in orders}
    moved = np.zeros(len(pairs), dtype=bool)
    for order in orders:
        moved |= np.nan_to_num(gaps[order]) > 0
    pairs &= moved  # same day under every reading (times differ): no evidence
    n_pairs = int(pairs.sum())
    if n_pairs < 5:
        return
    for order in orders:
        steps[order] = int(((gaps[order] >= 1) & (gaps[order] <= SMALL_STEP))[pairs].sum())
    best = max(orders, key=lambda o: steps[o])
    others = max((steps[o] for o in orders if o != best), default=0)
    if steps[best] >= 0.6 * n_pairs and others <= 0.3 * n_pairs:
        log_odds[best] += math.log(LR_SEQUENCE)
        notes.append(f"{steps[best]} of {n_pairs} steps between consecutive rows are 1-"
                     f"{SMALL_STEP} days reading {best}, against {others} under the other "
                     f"reading")


def _ordinal(p: Parsed, order: str, year_from: int) -> float:
    if not p.has_date:
        return math.nan
    found = reading(p, order, year_from)
    return math.nan if found is None else float(found.toordinal())


# ---------------------------------------------------------------- hints

_FORMAT_NOISE = re.compile(r'\[[^\]]*\]|"[^"]*"|\\.')
_FORMAT_TOKENS = re.compile(r"d+|m+|y+|h+|s+|e+", re.IGNORECASE)


def format_order(number_format: str) -> str | None:
    """Field order of a workbook number format: 'DD/MM/YYYY' -> 'DMY', 'm/d/yy h:mm' -> 'MDY'."""
    tokens = [t.lower() for t in _FORMAT_TOKENS.findall(_FORMAT_NOISE.sub("", number_format))]
    fields = []
    for i, token in enumerate(tokens):
        kind = token[0]
        if kind == "m" and ((i and tokens[i - 1][0] == "h") or
                            (i + 1 < len(tokens) and tokens[i + 1][0] == "s")):
            continue  # minutes, not months
        if kind in "dmy" or kind == "e":
            fields.append({"d": "D", "m": "M", "y": "Y", "e": "Y"}[kind])
    order = "".join(dict.fromkeys(fields))
    return order if order in NAMES else None


def format_hints(formats: Counter[str], orders: Sequence[str], hints: Hints) -> None:
    found: Counter[str] = Counter()
    for number_format, count in formats.items():
        order = format_order(number_format)
        if order:
            found[order] += count
    if len(found) == 1:
        order, count = found.most_common(1)[0]
        if order in orders:
            examples = ", ".join(sorted(f for f in formats if format_order(f) == order)[:3])
            hints.add(order, LR_FORMAT, f"{count} typed cells of this column carry the number "
                                        f"format {examples} ({order})")
    elif len(found) > 1:
        hints.notes.append("the workbook number formats disagree: "
                           + ", ".join(f"{o} ×{n}" for o, n in found.most_common()))


def plausible_orders(p: Parsed, orders: Sequence[str]) -> list[str]:
    return [o for o in orders if plausible_under(p, o)]
