"""Deciding the order of a column's (or a group's) open numeric dates from evidence.

Every candidate order starts with a prior; each kind of evidence multiplies its odds:

* values only some orders allow (``13/04/2024`` rules out month-first): an order that a
  value contradicts keeps only the chance that the value is a slip, ``SLIP`` per
  distinct contradicting value;
* workbook number formats of typed cells in the same column (``DD/MM/YYYY``);
* row order: consecutive rows that keep one calendar step (a few days, or whole months)
  under one reading and break off under the other;
* locale hints: a stated locale, the CLDR short date pattern of the rows' territories.

The posterior of the leading order is the probability reported. An order is applied
to the ambiguous cells only when that probability reaches ``DECIDE``, no value
contradicts it, and values (or a stated order, locale or number format) decide it. Row
order is a prior only. A named country (a country column, the file's name, the default
region) decides through its CLDR short date pattern only when no value decides the order
and none contradicts it; the probability reported is then ``TERRITORY_DECIDES``.
Otherwise the ambiguous cells are listed.

A row pasted from another branch is written that branch's way: another separator, year
width, zero padding or a time where the others have none. Values written unlike the
column's main way, if only a few, are left out of the evidence ("strays"), and the order
then covers only the ways of writing that took part (``shapes``): a stray that reads
differently in both orders is listed rather than read in an order decided by others.
"""

from __future__ import annotations

import math
import re
from collections import Counter
from collections.abc import Sequence
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from harmonize.engines.dates_fast import SEPARATORS
from harmonize.engines.dates_parse import OPEN, Parsed
from harmonize.engines.dates_table import DateTable, ordinal_of_keys

DECIDE = 0.98          # posterior needed to convert cells the order alone decides
SLIP = 0.02            # chance that one distinct value is a slip against the column's order
LR_FORMAT = 100.0      # typed cells' number format states the author's order
LR_SEQUENCE = 8.0      # rows in calendar steps under one reading, not under the other
LR_TERRITORY = 4.0     # CLDR short pattern of the rows' territory: a prior ...
TERRITORY_DECIDES = 0.95  # ... that decides when no value does and none contradicts it
LR_LOCALE = 50.0       # a locale stated by the user
LR_STATED = 400.0      # an order stated by the user in the run options
SMALL_STEP = 7         # days between consecutive distinct dates that count as "in sequence"
CALENDAR_STEPS = (1, 2, 3, 6, 12)  # months between the same day of the month: also in sequence
BROKEN_STEPS = 2       # out-of-sequence steps under one reading, none to speak of under the
BROKEN_RATIO = 4       # other (this many times fewer): the other reading keeps the sequence
NAMES = {"DMY": "day first", "MDY": "month first", "YMD": "year first"}
# Two-digit year first (YY-MM-DD, a truncated form of ISO 8601:2000 and the CLDR short
# pattern yy/MM/dd of a few locales) beside day first: read day first, values written
# that way would name at most SPREAD_DAYS days of the month across SPREAD_YEARS or more
# years, while year first reads them as days of one or two years. Common practice, no
# source: a column of dates spans a period, it does not revisit one day across decades.
SPREAD_YEARS = 10
SPREAD_DAYS = 2
LR_SPREAD = 8.0        # a prior for year first, as row order is: never decides alone


OUTLIER_RATIO = 8       # one value against this many distinct ones that agree is a slip
OUTLIER_DOUBT = 0.9     # chance the column's order is right despite such a slip
STRAY_CELLS = 2          # up to this many cells written another way are strays ...
STRAY_SHARE = 0.05       # ... or up to this share of the column's numeric dates
FEW_CODES = 32           # distinct ways of writing found by counting; more: by sorting


@dataclass
class Hints:
    """Evidence beside the values themselves: log likelihood ratio per order, and why.

    ``strong``: a hint that may decide the order without any value doing so (an order,
    locale or number format the user or the workbook states)."""

    log_odds: Counter[str] = field(default_factory=Counter)
    notes: list[str] = field(default_factory=list)
    strong: bool = False
    territory: str | None = None  # the order a named country (column, file, region) writes

    def add(self, order: str, ratio: float, note: str) -> None:
        self.log_odds[order] += math.log(ratio)
        self.notes.append(note)
        self.strong = self.strong or ratio >= LR_LOCALE


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
    shapes: dict[str, str] | None = None  # way of writing -> its order; None: all ``order``
    strays: int = 0              # cells written another way, left out of the evidence


def decide(table: DateTable, counts: np.ndarray, orders: Sequence[str], year_from: int,
           hints: Hints, codes: np.ndarray | None = None) -> Verdict:
    """Weigh the evidence for the order of the open values of ``table``."""
    found = families(table, counts)
    valid = table.admitted(orders, year_from)
    n_allowed = np.sum([valid[o] for o in orders], axis=0)
    considered = (found.member >= 0) & (n_allowed > 0)   # impossible in every order: listed
    contradicted: Counter[str] = Counter({o: int((considered & ~valid[o]).sum())
                                          for o in orders if (considered & ~valid[o]).any()})
    single = considered & (n_allowed == 1)
    decisive, decisive_distinct = _decisive(single, valid, counts, orders)
    pinned_families = _pinned(single, valid, found.member, orders)
    differ = np.zeros(len(table), dtype=bool)
    days = {o: table.keys(o, year_from) for o in orders}
    for k, first in enumerate(orders):
        for second in orders[k + 1:]:
            differ |= valid[first] & valid[second] & (days[first] != days[second])
    ambiguous = int(counts[considered & (n_allowed > 1) & differ].sum())
    strays, stray_examples = found.strays, found.examples
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
        _sequence_hint(table, codes, orders, year_from, log_odds, notes)
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
    shapes, probability = _shape_orders(table, found, pinned_families, order, mixed,
                                        hints.strong, notes)
    if shapes and mixed:
        leading, probability = next(iter(shapes.values())), probability
    else:
        probability = TERRITORY_DECIDES if by_territory else posterior[leading]
        if order and contradicted[leading]:
            probability *= OUTLIER_DOUBT   # a slip, or a second convention barely seen
    return Verdict(order, leading, probability, dict(decisive), dict(contradicted),
                   ambiguous, notes, mixed, shapes, strays)


def year_first_spread(table: DateTable, year_from: int) -> str | None:
    """Why two-digit year first is a live reading of the open values written with three
    two-digit numbers (see SPREAD_YEARS), or None when it is not."""
    widths = table.widths
    rows = np.flatnonzero(table.of(OPEN) & (widths[:, 0] == 2) & (widths[:, 1] <= 2)
                          & (widths[:, 2] == 2))
    if len(rows) < SPREAD_YEARS:
        return None
    part = table.take(rows)
    if not part.admitted(("YMD",), year_from)["YMD"].all():
        return None
    firsts, thirds = np.unique(part.parts[:, 0]), np.unique(part.parts[:, 2])
    if len(firsts) > SPREAD_DAYS or len(thirds) < SPREAD_YEARS:
        return None
    return (f"read day or month first, {len(rows)} values written with two-digit numbers "
            f"would fall on {len(firsts)} day(s) of the month across {len(thirds)} years; "
            f"read year first (YY-MM-DD) they span {len(firsts)} year(s): year first is "
            f"as live a reading, and no country decides between them")


def _decisive(single: np.ndarray, valid: dict[str, np.ndarray], counts: np.ndarray,
              orders: Sequence[str]) -> tuple[Counter[str], Counter[str]]:
    """(cells, distinct values) per order of the values only that order reads, listed
    in the order their first value comes."""
    first: dict[str, int] = {}
    cells: dict[str, int] = {}
    distinct: dict[str, int] = {}
    for o in orders:
        rows = np.flatnonzero(single & valid[o])
        if len(rows):
            first[o], cells[o], distinct[o] = int(rows[0]), int(counts[rows].sum()), len(rows)
    ranked = sorted(first, key=first.__getitem__)
    return Counter({o: cells[o] for o in ranked}), Counter({o: distinct[o] for o in ranked})


def _pinned(single: np.ndarray, valid: dict[str, np.ndarray], member: np.ndarray,
            orders: Sequence[str]) -> dict[int, set[str]]:
    """Family -> the orders its values alone decide, families in order of first such value."""
    rows = np.flatnonzero(single)
    found: dict[int, set[str]] = {}
    if not len(rows):
        return found
    which, first, _ = distinct_codes(member[rows])
    for family in which[np.argsort(first)].tolist():
        mine = single & (member == family)
        found[family] = {o for o in orders if (mine & valid[o]).any()}
    return found


def _shape_orders(table: DateTable, found: Families,
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
    pins = Counter(found.member[np.isin(found.member, list(covered))].tolist())
    probability = math.prod(1.0 - SLIP ** max(1, min(pins[i], 3)) for i in covered)
    shapes: dict[str, str] = {}
    for signature, family in found.ways():   # ways in the order their first value comes
        if family in covered:
            shapes.update(dict.fromkeys(templates_of(signature, covered[family]),
                                        covered[family]))
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


# ---------------------------------------------------------------- ways of writing

Signature = tuple[str, int, bool, str, str]


@lru_cache(maxsize=1 << 17)
def signature(p: Parsed) -> Signature:
    """How an OPEN value is written: separator, digits of its last number, whether a time
    follows, and for each of the first two numbers whether it is zero-padded ("2"),
    unpadded ("1") or shows neither (10 and above: "?")."""
    return (p.sep, p.widths[2], p.clock is not None,
            _padding(p.parts[0], p.widths[0]), _padding(p.parts[1], p.widths[1]))


def _padding(value: int, width: int) -> str:
    return "?" if value >= 10 else str(width)


@dataclass(frozen=True)
class Ways:
    """How each of some open values is written (``signature``), as arrays: a code two
    values share exactly when their signatures are equal, and the signature itself."""

    sep: np.ndarray
    last: np.ndarray     # digits of the last number
    timed: np.ndarray
    pad_a: np.ndarray    # 0 = "?" (10 and above), else the digit count
    pad_b: np.ndarray

    @classmethod
    def of(cls, sep: np.ndarray, parts: np.ndarray, widths: np.ndarray,
           timed: np.ndarray) -> Ways:
        return cls(sep, widths[:, 2], timed, np.where(parts[:, 0] >= 10, 0, widths[:, 0]),
                   np.where(parts[:, 1] >= 10, 0, widths[:, 1]))

    def codes(self) -> np.ndarray:
        """One decimal digit per field: each is below 10 (``dates_parse`` reads numbers
        of 1-4 digits, five separators)."""
        code = np.zeros(len(self.sep), dtype=np.int32)
        for column in (self.sep, self.last, self.timed, self.pad_a, self.pad_b):
            code = code * 10 + column
        return code

    def signature(self, i: int) -> Signature:
        pad_a, pad_b = int(self.pad_a[i]), int(self.pad_b[i])
        return (SEPARATORS[self.sep[i]], int(self.last[i]), bool(self.timed[i]),
                str(pad_a) if pad_a else "?", str(pad_b) if pad_b else "?")

    def distinct(self) -> tuple[list[Signature], np.ndarray, np.ndarray]:
        """(the signatures met, in code order; first value of each; each value's one)."""
        _, first, inverse = distinct_codes(self.codes())
        return [self.signature(i) for i in first.tolist()], first, inverse


def distinct_codes(codes: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """``np.unique(codes, return_index=True, return_inverse=True)`` for small
    non-negative codes of which a column holds few: counted rather than sorted."""
    present = np.flatnonzero(np.bincount(codes))
    if len(present) > FEW_CODES:
        found, first, inverse = np.unique(codes, return_index=True, return_inverse=True)
        return found, first, inverse.ravel()
    first = np.array([np.argmax(codes == c) for c in present.tolist()], dtype=np.int64)
    lookup = np.zeros(int(present[-1]) + 1, dtype=np.int64)
    lookup[present] = np.arange(len(present))
    return present, first, lookup[codes]


def compatible(a: Signature, b: Signature) -> bool:
    return a[:3] == b[:3] and all(x == y or "?" in (x, y) for x, y in zip(a[3:], b[3:]))


def templates(p: Parsed, order: str) -> list[str]:
    """The ways of writing ``p`` could follow under ``order``: 'DD/MM/YYYY', 'D.M.YY hh:mm'
    (a position that shows no padding gives both forms)."""
    return templates_of(signature(p), order)


@lru_cache(maxsize=4096)
def templates_of(way: Signature, order: str) -> list[str]:
    sep, last, timed, first, second = way
    letters = {"DMY": "DMY", "MDY": "MDY", "YMD": "YMD"}[order]
    heads = [[letters[0] * 2, letters[0]] if first == "?" else [letters[0] * int(first)],
             [letters[1] * 2, letters[1]] if second == "?" else [letters[1] * int(second)]]
    tail = letters[2] * last + (" hh:mm" if timed else "")
    return [f"{a}{sep}{b}{sep}{tail}" for a in heads[0] for b in heads[1]]


@dataclass
class Families:
    """The column's ways of writing its open numeric dates, as families of compatible
    signatures: the main one, others large enough to be another branch's convention, and
    strays (a few cells, left out of the evidence)."""

    member: np.ndarray           # per value: index of its family, -1 = not OPEN, -2 = stray
    count: int                   # number of families (strays aside)
    strays: int                  # cells written as strays
    examples: list[str]          # strays as written
    signatures: list[Signature] = field(default_factory=list)  # ways, by first value
    families: list[int] = field(default_factory=list)          # family of each way

    def ways(self) -> list[tuple[Signature, int]]:
        return list(zip(self.signatures, self.families, strict=True))


def families(table: DateTable, counts: np.ndarray) -> Families:
    rows = np.flatnonzero(table.of(OPEN))
    member = np.full(len(table), -1, dtype=np.int64)
    if not len(rows):
        return Families(member, 0, 0, [])
    ways, first, inverse = Ways.of(table.sep[rows], table.parts[rows], table.widths[rows],
                                   table.timed[rows]).distinct()
    cells: Counter[Signature] = Counter(dict(zip(ways, np.bincount(
        inverse, weights=counts[rows], minlength=len(ways)).astype(np.int64).tolist(),
        strict=True)))
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
    family_of = [next((i for i, h in enumerate(heads) if compatible(h, way)), -2)
                 for way in ways]
    member[rows] = np.asarray(family_of, dtype=np.int64)[inverse]
    strays = sum(left.values())
    examples = [repr(_written(table, i)) for i in np.flatnonzero(member == -2)[:3].tolist()]
    by_first = np.argsort(first).tolist()
    return Families(member, len(heads), strays, examples, [ways[k] for k in by_first],
                    [family_of[k] for k in by_first])


def _written(table: DateTable, i: int) -> str:
    sep = SEPARATORS[table.sep[i]]
    return sep.join(f"{v:0{w}d}" for v, w in zip(table.parts[i].tolist(),
                                                    table.widths[i].tolist(), strict=True))


def _outliers(decisive_distinct: Counter[str], leading: str) -> bool:
    """A single stray value against hundreds that agree is a slip, not a second convention."""
    against = sum(n for o, n in decisive_distinct.items() if o != leading)
    return against <= decisive_distinct[leading] // OUTLIER_RATIO


def _softmax(log_odds: Counter[str], orders: Sequence[str]) -> dict[str, float]:
    top = max(log_odds[o] for o in orders)
    weights = {o: math.exp(log_odds[o] - top) for o in orders}
    total = sum(weights.values())
    return {o: w / total for o, w in weights.items()}


def _sequence_hint(table: DateTable, codes: np.ndarray, orders: Sequence[str],
                   year_from: int, log_odds: Counter[str], notes: list[str]) -> None:
    """Rows in date order: under the right reading consecutive rows keep one calendar
    step (days, or whole months: a monthly series on the 1st), under the other the steps
    break off (a monthly series read the other way runs 1-12 January, then jumps a year)."""
    rows = codes[codes >= 0]
    if len(rows) < 6:
        return
    rows = rows[np.concatenate(([True], rows[1:] != rows[:-1]))]  # drop repeated values
    keys = {o: table.keys(o, year_from)[rows] for o in orders}
    usable = np.logical_and.reduce([keys[o] > 0 for o in orders])
    pairs = usable[1:] & usable[:-1]
    moved = np.zeros(len(pairs), dtype=bool)
    for order in orders:
        moved |= np.diff(keys[order]) != 0
    pairs &= moved  # same day under every reading (times differ): no evidence
    n_pairs = int(pairs.sum())
    if n_pairs < 5:
        return
    steps = {o: int(regular_steps(keys[o])[pairs].sum()) for o in orders}
    best = max(orders, key=lambda o: steps[o])
    others = max((steps[o] for o in orders if o != best), default=0)
    broken_apart = (steps[best] >= 0.9 * n_pairs and n_pairs - others >= BROKEN_STEPS
                    and n_pairs - others >= BROKEN_RATIO * (n_pairs - steps[best]))
    if steps[best] >= 0.6 * n_pairs and (others <= 0.3 * n_pairs or broken_apart):
        log_odds[best] += math.log(LR_SEQUENCE)
        notes.append(f"{steps[best]} of {n_pairs} steps between consecutive rows are 1-"
                     f"{SMALL_STEP} days or whole months reading {best}, against {others} "
                     f"under the other reading")


def regular_steps(keys: np.ndarray) -> np.ndarray:
    """Per pair of consecutive days (keys year*10000 + month*100 + day): 1-``SMALL_STEP``
    days apart, or the same day of the month ``CALENDAR_STEPS`` months apart."""
    day = keys % 100
    gap = np.abs(np.diff(ordinal_of_keys(keys)))
    months = np.abs(np.diff(keys // 10000 * 12 + keys // 100 % 100))
    same_day = day[1:] == day[:-1]
    return ((gap >= 1) & (gap <= SMALL_STEP)) | (same_day & np.isin(months, CALENDAR_STEPS))


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
