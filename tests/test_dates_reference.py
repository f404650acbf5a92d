"""The decision of the dates engine on whole arrays, against the per-value code it replaced.

``dates_decide.decide`` weighs a column's evidence on arrays (``dates_table``): values
only one order reads, contradictions, ways of writing and strays, row order. Below, the
same decision is written one value at a time over ``dates_parse.Parsed`` records, as the
engine had it before the bulk path: the two must give the same ``Verdict`` (order,
probability, evidence sentences in the same order, ways of writing) on the invented
corpus and on generated columns. The array forms of the propose helpers are checked
against their per-value definitions the same way.
"""

from __future__ import annotations

import math
import sys
from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date
from pathlib import Path

import numpy as np
import pandas as pd
from hypothesis import given, settings
from hypothesis import strategies as st

from harmonize.engines import dates as engine
from harmonize.engines import dates_decide as arrays
from harmonize.engines.dates_decide import (
    BROKEN_RATIO,
    BROKEN_STEPS,
    CALENDAR_STEPS,
    DECIDE,
    LR_SEQUENCE,
    LR_TERRITORY,
    NAMES,
    OUTLIER_DOUBT,
    SLIP,
    SMALL_STEP,
    STRAY_CELLS,
    STRAY_SHARE,
    TERRITORY_DECIDES,
    Hints,
    Signature,
    Verdict,
    _outliers,
    _softmax,
    compatible,
    signature,
    templates,
)
from harmonize.engines.dates_parse import (
    DIGITS,
    FIXED,
    OPEN,
    ORDERS,
    TIME,
    ZERO,
    Parsed,
    compact_parse,
    parse,
    plausible_under,
    reading,
)
from harmonize.engines.dates_table import FORMS, DateTable
from harmonize.evidence import TableEvidence

sys.path.insert(0, str(Path(__file__).parent))
from corpora.dates import corpus  # noqa: E402

# ---------------------------------------------------------------- the per-value reference


def decide(parsed: Sequence[Parsed], counts: np.ndarray, orders: Sequence[str],
           year_from: int, hints: Hints, codes: np.ndarray | None = None) -> Verdict:
    found = families(parsed, counts)
    family = [m != -2 for m in found.member]
    strays, stray_examples = found.strays, found.examples
    pinned_families: dict[int, set[str]] = {}
    decisive: Counter[str] = Counter()
    decisive_distinct: Counter[str] = Counter()
    contradicted: Counter[str] = Counter()
    ambiguous = 0
    for p, n, member, which in zip(parsed, counts.tolist(), family, found.member,
                                   strict=True):
        if p.form != OPEN or not member:
            continue
        days = {o: reading(p, o, year_from) for o in orders}
        allowed = frozenset(o for o, day in days.items() if day is not None)
        if not allowed:
            continue  # impossible under every order: listed, and no evidence either way
        for order in orders:
            if order not in allowed:
                contradicted[order] += 1
        if len(allowed) == 1:
            only = next(iter(allowed))
            decisive[only] += n
            decisive_distinct[only] += 1
            pinned_families.setdefault(which, set()).add(only)
        elif len({day for day in days.values() if day is not None}) > 1:
            ambiguous += n
    notes = [f"{count} {'cell' if count == 1 else 'cells'} only {NAMES[o]} ({o}) reads"
             for o, count in decisive.most_common() if count]
    if strays:
        notes.append(f"{strays} {'cell is' if strays == 1 else 'cells are'} written unlike "
                     f"the rest ({', '.join(stray_examples)}) and left out of the evidence: "
                     f"another branch's convention may have written them")
    log_odds = Counter({o: contradicted[o] * math.log(SLIP) for o in orders})
    log_odds.update(hints.log_odds)
    if codes is not None and ambiguous and not decisive:
        # row order is a prior for the likely reading only; a ledger of the same day each
        # month reads as daily steps the wrong way, so it never weighs against values
        _sequence_hint(parsed, codes, orders, year_from, log_odds, notes)
    posterior = _softmax(log_odds, orders)
    leading = max(orders, key=lambda o: (posterior[o], -orders.index(o)))
    notes.extend(hints.notes)
    mixed = sum(1 for o in orders if decisive_distinct[o]) >= 2 and not _outliers(
        decisive_distinct, leading)
    order = None
    if not mixed and posterior[leading] >= DECIDE and (decisive[leading] or hints.strong) \
            and (not contradicted[leading] or _outliers(decisive_distinct, leading)):
        order = leading
    if not ambiguous and not decisive:
        order = None  # nothing depends on the order
    by_territory = (order is None and not mixed and ambiguous and not any(decisive.values())
                    and hints.territory in orders and not contradicted[hints.territory])
    if by_territory:
        # no value decides, none contradicts: the branch writes as its country does
        order = leading = hints.territory
        notes.append(f"no value decides the order and none contradicts {order}, the order "
                     f"the named country writes: {order} is applied")
    shapes, probability = _shape_orders(parsed, found, pinned_families, order, mixed,
                                        hints.strong, notes)
    if shapes and mixed:
        leading, probability = next(iter(shapes.values())), probability
    else:
        probability = TERRITORY_DECIDES if by_territory else posterior[leading]
        if order and contradicted[leading]:
            probability *= OUTLIER_DOUBT   # a slip, or a second convention barely seen
    return Verdict(order, leading, probability, dict(decisive), dict(contradicted),
                   ambiguous, notes, mixed, shapes, strays)


def _shape_orders(parsed: Sequence[Parsed], found: Families,
                  pinned: dict[int, set[str]], order: str | None, mixed: bool, strong: bool,
                  notes: list[str]) -> tuple[dict[str, str] | None, float]:
    """Which ways of writing an order covers, when the column writes its dates more than
    one way (or has strays): each family of ways whose own values show one order.
    Returns (way -> order, probability that every covered family's order is right)."""
    if strong or not (found.strays or found.count > 1) or not (order or mixed):
        return None, 1.0
    if order and found.count == 1:
        covered = {0: order}
    else:
        covered = {i: next(iter(seen)) for i, seen in pinned.items()
                   if i >= 0 and len(seen) == 1 and (mixed or seen == {order})}
    pins = Counter(i for p, i in zip(parsed, found.member, strict=True) if i in covered)
    probability = math.prod(1.0 - SLIP ** max(1, min(pins[i], 3)) for i in covered)
    shapes = {t: covered[i] for p, i in zip(parsed, found.member, strict=True)
              if i in covered for t in templates(p, covered[i])}
    if not shapes:
        return None, 1.0
    if found.count > len(covered):
        notes.append(f"the column writes its dates {found.count} ways; each order covers the "
                     f"ways whose own values show it ("
                     + ", ".join(f"{t} {o}" for t, o in list(shapes.items())[:4])
                     + "); the other ways' ambiguous cells are listed")
    elif mixed:
        notes.append("the column writes its dates " + str(found.count) + " ways, each with "
                     "its own order: " + ", ".join(f"{t} {o}" for t, o in
                                                   list(shapes.items())[:4]))
    return dict(sorted(shapes.items())), probability


@dataclass
class Families:
    """The column's ways of writing its open numeric dates, as families of compatible
    signatures: the main one, others large enough to be another branch's convention, and
    strays (a few cells, left out of the evidence)."""

    member: list[int]            # per value: index of its family, -1 = not OPEN, -2 = stray
    count: int                   # number of families (strays aside)
    strays: int                  # cells written as strays
    examples: list[str]          # strays as written


def families(parsed: Sequence[Parsed], counts: np.ndarray) -> Families:
    cells: Counter[Signature] = Counter()
    for p, n in zip(parsed, counts.tolist(), strict=True):
        if p.form == OPEN:
            cells[signature(p)] += n
    total = sum(cells.values())
    heads: list[Signature] = []
    left = dict(cells)
    while left:
        reach = {s: sum(n for t, n in left.items() if compatible(s, t)) for s in left}
        head = max(reach, key=lambda s: (reach[s], left[s], s))
        if heads and reach[head] <= max(STRAY_CELLS, STRAY_SHARE * total):
            break   # what is left is a few cells written another way: strays
        heads.append(head)
        left = {s: n for s, n in left.items() if not compatible(head, s)}
    family_of = {sig: next((i for i, h in enumerate(heads) if compatible(h, sig)), -2)
                 for sig in cells}
    member = [family_of[signature(p)] if p.form == OPEN else -1 for p in parsed]
    strays = sum(left.values())
    examples = [repr(_written(p)) for p, m in zip(parsed, member, strict=True) if m == -2][:3]
    return Families(member, len(heads), strays, examples)


def _written(p: Parsed) -> str:
    widths = p.widths
    return p.sep.join(f"{v:0{w}d}" for v, w in zip(p.parts, widths, strict=True))


def _sequence_hint(parsed: Sequence[Parsed], codes: np.ndarray, orders: Sequence[str],
                   year_from: int, log_odds: Counter[str], notes: list[str]) -> None:
    """Rows in date order: one calendar step under one reading, broken off under another."""
    rows = codes[codes >= 0]
    if len(rows) < 6:
        return
    rows = rows[np.concatenate(([True], rows[1:] != rows[:-1]))]  # drop repeated values
    found = {o: [_day(parsed[r], o, year_from) for r in rows.tolist()] for o in orders}
    steps: Counter[str] = Counter()
    n_pairs = 0
    for i in range(1, len(rows)):
        pair = {o: (found[o][i - 1], found[o][i]) for o in orders}
        if any(a is None or b is None for a, b in pair.values()):
            continue
        if all(a == b for a, b in pair.values()):
            continue  # same day under every reading (times differ): no evidence
        n_pairs += 1
        for order, (a, b) in pair.items():
            steps[order] += _in_sequence(a, b)
    if n_pairs < 5:
        return
    best = max(orders, key=lambda o: steps[o])
    others = max((steps[o] for o in orders if o != best), default=0)
    broken_apart = (steps[best] >= 0.9 * n_pairs and n_pairs - others >= BROKEN_STEPS
                    and n_pairs - others >= BROKEN_RATIO * (n_pairs - steps[best]))
    if steps[best] >= 0.6 * n_pairs and (others <= 0.3 * n_pairs or broken_apart):
        log_odds[best] += math.log(LR_SEQUENCE)
        notes.append(f"{steps[best]} of {n_pairs} steps between consecutive rows are 1-"
                     f"{SMALL_STEP} days or whole months reading {best}, against {others} "
                     f"under the other reading")


def _day(p: Parsed, order: str, year_from: int) -> date | None:
    return reading(p, order, year_from) if p.has_date else None


def _in_sequence(a: date, b: date) -> bool:
    """A few days apart, or the same day of the month a calendar step of months apart."""
    if 1 <= abs((b - a).days) <= SMALL_STEP:
        return True
    months = abs((b.year * 12 + b.month) - (a.year * 12 + a.month))
    return a.day == b.day and months in CALENDAR_STEPS




def is_read(p: Parsed, orders: Sequence[str], year_from: int) -> bool:
    if p.form in (TIME, ZERO):
        return True
    if p.form == OPEN:
        return any(plausible_under(p, o) for o in orders)
    if p.form == FIXED:
        return 1 <= p.parts[1] <= 12 and 1 <= p.parts[2] <= 31
    return p.has_date and reading(p, None, year_from) is not None


def short_year(p: Parsed) -> bool:
    if p.form == FIXED:
        return p.widths[0] <= 2
    return p.form == OPEN and (p.widths[2] == 2 or max(p.widths) <= 2)


def form_counts(parsed: Sequence[Parsed], counts: np.ndarray) -> dict[str, int]:
    found: Counter[str] = Counter()
    for p, n in zip(parsed, counts.tolist(), strict=True):
        found[p.form] += n
    return dict(found.most_common())


def admitted(p: Parsed, orders: Sequence[str], year_from: int) -> frozenset[str]:
    return frozenset(o for o in orders if reading(p, o, year_from) is not None)


# ---------------------------------------------------------------- the comparisons

YEAR_FROM = 1947
HINTS = [Hints(), Hints(territory="DMY"), Hints(territory="MDY")]
HINTS[1].add("DMY", LR_TERRITORY, "a territory writes DMY")
HINTS[2].add("MDY", 50.0, "a stated locale writes MDY")


def records(values: list[str], compact: bool) -> list[Parsed]:
    parsed = [parse(v) for v in values]
    return [compact_parse(p.text) if compact and p.form == DIGITS else p for p in parsed]


def table_of(values: list[str], compact: bool) -> DateTable:
    table = DateTable.read(values)
    return table.compact() if compact else table


def assert_same_verdicts(values: list[str], counts: np.ndarray, codes: np.ndarray | None,
                         compact: bool = False) -> None:
    parsed, table = records(values, compact), table_of(values, compact)
    for orders in (["DMY", "MDY"], list(ORDERS)):
        for hints in HINTS:
            expected = decide(parsed, counts, orders, YEAR_FROM, hints, codes)
            found = arrays.decide(table, counts, orders, YEAR_FROM, hints, codes)
            assert found == expected, values[:5]
            assert list((found.shapes or {}).items()) == list((expected.shapes or {}).items())
    assert_same_helpers(parsed, table, counts)


def assert_same_helpers(parsed: list[Parsed], table: DateTable, counts: np.ndarray) -> None:
    for orders in (["DMY", "MDY"], list(ORDERS)):
        assert engine._is_read(table, orders, YEAR_FROM).tolist() == [
            is_read(p, orders, YEAR_FROM) for p in parsed]
        admits = [admitted(p, orders, YEAR_FROM) for p in parsed]
        valid = table.admitted(orders, YEAR_FROM)
        assert [frozenset(o for o in orders if valid[o][i]) for i in range(len(parsed))] \
            == admits
    assert engine._short_year(table) == any(short_year(p) for p in parsed)
    column = engine._Column(table, counts, None)
    assert engine._form_counts(column) == form_counts(parsed, counts)
    assert [FORMS[f] for f in table.form.tolist()] == [p.form for p in parsed]
    assert table.timed.tolist() == [p.clock is not None for p in parsed]


def test_corpus_verdicts_match_the_per_value_code() -> None:
    # every date and decoy column of invented branch exports (tests/corpora/dates.py),
    # whole and per branch where the file says which row is whose
    for item in corpus(14, seed=6):
        table = TableEvidence.from_frame(item.frame.astype(str))
        for column in table.columns:
            values = column.values.tolist()
            assert_same_verdicts(values, column.counts, column.codes)
            assert_same_verdicts(values, column.counts, None, compact=True)


def test_equal_evidence_for_two_orders_keeps_the_order_values_come_in() -> None:
    # one value each that only day-first and only month-first read: the evidence
    # sentences list them as the values come (a tie in cells)
    for values in (["04/13/2024", "13/04/2024", "01/02/2024"],
                   ["13/04/2024", "04/13/2024", "01/02/2024"]):
        assert_same_verdicts(values, np.ones(3, dtype=np.int64), np.arange(3))


DAY_MONTH = st.integers(0, 40).map(str) | st.integers(0, 40).map(lambda n: f"{n:02d}")
YEAR = st.sampled_from(["24", "99", "07", "2024", "1999", "0000", "1", "123"])


@st.composite
def open_columns(draw: st.DrawFn) -> tuple[list[str], np.ndarray, np.ndarray]:
    """Numeric dates in a few ways of writing, repeated, in some row order."""
    ways = draw(st.lists(st.tuples(st.sampled_from(["/", ".", "-", " "]), st.booleans(),
                                   st.booleans()), min_size=1, max_size=3))
    texts = []
    for _ in range(draw(st.integers(1, 30))):
        sep, year_last, timed = draw(st.sampled_from(ways))
        a, b, y = draw(DAY_MONTH), draw(DAY_MONTH), draw(YEAR)
        text = sep.join((a, b, y) if year_last else (y, a, b))
        texts.append(text + (" 10:15" if timed else ""))
    texts += draw(st.lists(st.sampled_from(["2024-04-03", "13.04.2024 10:00", "n/a", "10:30",
                                            "20240403", "3 March 2024", "2024-W15-3"]),
                           max_size=3))
    values = list(dict.fromkeys(texts))
    codes = np.array([values.index(t) for t in texts], dtype=np.int64)
    counts = np.bincount(codes, minlength=len(values)).astype(np.int64)
    return values, counts, codes


@settings(max_examples=150, deadline=None)
@given(open_columns())
def test_generated_verdicts_match_the_per_value_code(column) -> None:
    values, counts, codes = column
    assert_same_verdicts(values, counts, codes)
    assert_same_verdicts(values, counts, None, compact=True)


def test_numbers_of_any_size_are_weighed_as_the_parser_reads_them() -> None:
    # three numbers among words read as an open date whatever their digit counts
    values = ["0 0#3000000000", "1 2 123456789012345678901234567890", "01/02/2024",
              "3 4 " + "0" * 6000 + "7", "05 06 " + "9" * 30, "13/02/2024"]
    assert_same_verdicts(values, np.arange(1, 7, dtype=np.int64), np.arange(6))
    assert_same_verdicts(values[:2], np.ones(2, dtype=np.int64), None)


def test_a_column_of_one_value() -> None:
    frame = pd.DataFrame({"d": ["31/12/2023"] * 3})
    column = TableEvidence.from_frame(frame).columns[0]
    assert_same_verdicts(column.values.tolist(), column.counts, column.codes)
