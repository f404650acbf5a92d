"""Deciding the decimal mark of a column, or of each group of its rows.

See ``harmonize.engines.numbers`` for the convention keys this produces
(``decimal_mark``, ``settled_marks``, ``likely_decimal_mark``).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from functools import cache
from typing import Any

import numpy as np
from babel import Locale
from babel import numbers as babel_numbers

from harmonize.context import Context, Split
from harmonize.engines.grouping import explaining_split
from harmonize.engines.numbers_convert import UNDECIDED, mark_name
from harmonize.engines.numbers_forms import (
    AMBIGUOUS,
    COMMA_ONLY,
    DOT_ONLY,
    SAME,
    Forms,
    analyse,
)
from harmonize.evidence import ColumnEvidence
from harmonize.territory import territory_of

ALL_MARKS = frozenset({".", ","})
STRAY_SHARE = 0.02        # deciding cells of the other notation a column may hold as errors


def _other(mark: str) -> str:
    return "," if mark == "." else "."


@dataclass
class MarkTally:
    """Cells and distinct values that decide each mark, and those left undecided."""

    cells: dict[int, int]
    values: dict[int, int]
    examples: dict[int, str]
    seen: dict[int, frozenset[str]]   # marks present in the deciding values, per status

    @classmethod
    def of(cls, forms: Forms, counts: np.ndarray, skip: np.ndarray | None = None) -> MarkTally:
        keep = np.ones(len(forms), bool) if skip is None else ~skip
        cells, values, examples, seen = {}, {}, {}, {}
        for status in (SAME, DOT_ONLY, COMMA_ONLY, AMBIGUOUS):
            mask = keep & (forms.status == status)
            cells[status] = int(counts[mask].sum())
            values[status] = int(mask.sum())
            if mask.any():
                examples[status] = str(forms.text[np.flatnonzero(mask)[0]])
            seen[status] = frozenset(ALL_MARKS & set("".join(forms.body[mask].tolist())))
        return cls(cells, values, examples, seen)

    def settled(self, mark: str) -> list[str]:
        """Marks an ambiguous value may hold and still be read under ``mark``.

        Read as a group mark, the other mark always fits: it is followed by exactly
        three digits, as groups are. Read as the decimal mark, ``mark`` itself needs a
        deciding value that shows it in that role ("3.5", "1,234.5"): a column whose only
        evidence is "12,34,567" says nothing about "80.600", which may be a branch's
        80600 as well as 80.6 with exactly three decimals.
        """
        shown = mark in self.seen[DOT_ONLY if mark == "." else COMMA_ONLY]
        return sorted({_other(mark)} | ({mark} if shown else set()))

    def deciding(self, mark: str) -> int:
        return self.cells[DOT_ONLY if mark == "." else COMMA_ONLY]

    def deciding_values(self, mark: str) -> int:
        return self.values[DOT_ONLY if mark == "." else COMMA_ONLY]

    def example(self, mark: str) -> str:
        return self.examples.get(DOT_ONLY if mark == "." else COMMA_ONLY, "")


def _evidence_confidence(deciding_values: int, contradicting_values: int = 0) -> float:
    """How sure a notation shown by ``deciding_values`` values holds for the rest."""
    p = 1.0 - 1.0 / (2.0 + 3.0 * deciding_values)
    if contradicting_values:
        p *= deciding_values / (deciding_values + contradicting_values)
    return p


@cache
def cldr_decimal_mark(territory: str) -> str | None:
    """The decimal mark of a territory's likely locale (CLDR via babel)."""
    try:
        symbol = babel_numbers.get_decimal_symbol(Locale.parse(f"und_{territory}"))
    except Exception:  # unknown territories raise several babel/ValueError types
        return None
    return symbol if symbol in ALL_MARKS else None


def _hint_mark(context: Context | None) -> str | None:
    """A decimal mark suggested by the run's locale or region options."""
    if context is None:
        return None
    options = context.options
    if options.locale:
        try:
            symbol = babel_numbers.get_decimal_symbol(Locale.parse(options.locale))
            return symbol if symbol in ALL_MARKS else None
        except Exception:
            return None
    if options.default_region:
        return cldr_decimal_mark(options.default_region.upper())
    return None


@dataclass
class MarkDecision:
    mark: str | None
    likely: str | None
    confidence: float
    evidence: list[str] = field(default_factory=list)
    settled: list[str] = field(default_factory=lambda: sorted(ALL_MARKS))
    per_label: dict[str, dict[str, Any]] = field(default_factory=dict)
    split: Split | None = None

    def convention(self) -> dict[str, Any]:
        return {"decimal_mark": self.mark or UNDECIDED, "likely_decimal_mark": self.likely,
                "settled_marks": self.settled}


HINT_DECIDES = 0.93  # a named country's CLDR mark, applied when no value decides


def _trusts_hint(context: Context | None) -> bool:
    """Whether a named country (column, file name, region or locale) may decide the
    decimal mark of values that do not decide it themselves. Off by default: "1.234" with
    no value showing the mark is listed, since branches often export in another
    notation than their country's; the option ``trust_locale_hint`` switches it on."""
    return bool(context is not None and
                context.options.for_engine("numbers").get("trust_locale_hint", False))


def _flat_marks(tally: MarkTally, hint: str | None, trust_hint: bool) -> MarkDecision:
    """Decide one mark for a set of values (no groups)."""
    dot, comma = tally.deciding("."), tally.deciding(",")
    ambiguous = tally.cells[AMBIGUOUS]
    evidence = [f"{tally.deciding_values(m)} value(s) read only with {mark_name(m)} as the "
                f"decimal mark (e.g. {tally.example(m)!r})"
                for m in (".", ",") if tally.deciding(m)]
    if dot and comma:
        major = "." if dot >= comma else ","
        minor_cells = min(dot, comma)
        if minor_cells <= STRAY_SHARE * (dot + comma):
            p = _evidence_confidence(tally.deciding_values(major),
                                     tally.deciding_values(_other(major)))
            evidence.append(f"{mark_name(major)} prevails; the values written the other way "
                            "are listed")
            return _settle(MarkDecision(major, major, p, evidence, tally.settled(major)), tally)
        evidence.append("the values use both notations and no column explains which rows use "
                        "which: each value is read on its own form")
        return MarkDecision(None, hint, 0.9 if ambiguous else 0.95, evidence)
    if dot or comma:
        mark = "." if dot else ","
        p = _evidence_confidence(tally.deciding_values(mark))
        if not ambiguous:
            p = max(p, 0.99)
        return _settle(MarkDecision(mark, mark, p, evidence, tally.settled(mark)), tally)
    if not ambiguous:
        return MarkDecision(None, hint, 0.99,
                            ["no value depends on the decimal mark (all read alike)"])
    if trust_hint and hint:
        return MarkDecision(hint, hint, HINT_DECIDES, [
            f"no value decides the decimal mark and none contradicts {mark_name(hint)}, "
            "the mark of the country the data names (CLDR): it is applied"])
    return MarkDecision(None, hint, 0.95, [
        f"{tally.values[AMBIGUOUS]} value(s) such as {tally.examples[AMBIGUOUS]!r} read "
        "differently with '.' or ',' as the decimal mark and no value decides: listed"])


def _settle(decision: MarkDecision, tally: MarkTally) -> MarkDecision:
    """Say so when some ambiguous values stay listed because their mark's role is unshown."""
    unsettled = sorted(tally.seen[AMBIGUOUS] - set(decision.settled))
    if unsettled:
        decision.evidence.append(
            f"no deciding value shows {' or '.join(map(repr, unsettled))} as the decimal "
            "mark: ambiguous values that would read it so are listed")
    return decision


def decide_marks(values: Sequence[str], counts: Sequence[int] | np.ndarray,
                 context: Context | None = None) -> tuple[dict[str, Any], float, tuple[str, ...]]:
    """Decide the decimal mark of a set of number strings (for engines built on this one).

    Returns (convention, confidence, evidence). The convention holds ``decimal_mark``
    ("." / "," / None when undecided), ``likely_decimal_mark`` and ``settled_marks`` as
    documented in ``harmonize.engines.numbers``, ready for ``parse_amount``.
    """
    forms = analyse(list(values))
    tally = MarkTally.of(forms, np.asarray(counts, dtype=np.int64))
    decision = _flat_marks(tally, _hint_mark(context), _trusts_hint(context))
    convention = {**decision.convention(), "decimal_mark": decision.mark}
    return convention, decision.confidence, tuple(decision.evidence)


def _column_hint(column: ColumnEvidence, context: Context) -> str | None:
    """The decimal mark most rows' countries use (CLDR), else the options' hint."""
    split = context.country_split
    if split is not None and column.codes is not None:
        rows = column.codes >= 0
        tally: dict[str, int] = {}
        for label_code, territory in enumerate(split.territories):
            mark = cldr_decimal_mark(territory) if territory else None
            if mark:
                n = int((rows & (split.codes == label_code)).sum())
                tally[mark] = tally.get(mark, 0) + n
        if tally:
            return max(tally, key=lambda m: tally[m])
    territory = single_territory(context, column.name)
    if territory and (mark := cldr_decimal_mark(territory)):
        return mark
    return _hint_mark(context)


def single_territory(context: Context, exclude: str) -> str | None:
    """The one country that a column names on every row (a single branch's export),
    which gives no split but is still a locale hint; else the country the file name
    points to."""
    for column in context.table.columns:
        if column.name == exclude or not 0 < len(column.values) <= 3:
            continue
        found = {territory_of(str(v).strip()) for v in column.values.tolist()
                 if str(v).strip()}
        if len(found) == 1 and None not in found:
            return found.pop()
    return context.file_territory  # "sales_us.csv": the file's own name, a weaker hint


def decide_column_marks(column: ColumnEvidence, forms: Forms, context: Context,
                         skip: np.ndarray) -> MarkDecision:
    tally = MarkTally.of(forms, column.counts, skip)
    hint = _column_hint(column, context)
    trust = _trusts_hint(context)
    if tally.deciding(".") and tally.deciding(","):
        grouped = _grouped_marks(column, forms, context, trust)
        if grouped is not None:
            return grouped
    decision = _flat_marks(tally, hint, trust)
    if decision.mark is not None and tally.cells[AMBIGUOUS]:
        _guard_foreign_countries(column, forms, context, decision)
    return decision


def _status_admits(statuses: set[int]) -> frozenset[str]:
    admitted = set(ALL_MARKS)
    if DOT_ONLY in statuses:
        admitted.discard(",")
    if COMMA_ONLY in statuses:
        admitted.discard(".")
    return frozenset(admitted)


def _grouped_marks(column: ColumnEvidence, forms: Forms, context: Context,
                   trust: bool) -> MarkDecision | None:
    """Per-group marks when a column explains which rows use which notation."""
    status_of = dict(zip(column.values.tolist(), forms.status.tolist(), strict=True))
    # typed workbook numbers are plain "1234.5" whatever the branch writes: no evidence
    typed = {v for v, tag in column.typed.items() if tag == "number"}

    def admits(part: ColumnEvidence) -> frozenset[str]:
        return _status_admits({status_of[v] for v in part.values.tolist() if v not in typed})

    found = explaining_split(column, context, admits, ALL_MARKS)
    if found is None:
        return None
    per_label: dict[str, dict[str, Any]] = {}
    confidences, evidence = [], []
    by_mark: dict[str, list[str]] = {}
    # a branch seen writing against its country's mark means countries decide nothing
    trust = trust and not _contrary_branch(found, status_of)
    for label, territory, part in zip(found.split.labels, found.split.territories,
                                      found.parts, strict=True):
        hint = cldr_decimal_mark(territory) if territory else None
        if not part.total:
            continue
        sub = analyse(part.values)
        typed_here = np.array([v in typed for v in part.values.tolist()], dtype=bool)
        decision = _flat_marks(MarkTally.of(sub, part.counts, typed_here), hint, trust)
        per_label[label] = {**decision.convention(), "likely_decimal_mark": hint}
        by_mark.setdefault(mark_name(decision.mark), []).append(label)
        confidences.append(decision.confidence)
    for name, labels in by_mark.items():
        shown = ", ".join(labels[:8]) + (" ..." if len(labels) > 8 else "")
        evidence.append(f"rows split by {found.split.column!r}: {shown} use {name}")
    plausibility = 0.98 if found.split is context.country_split else 0.93
    confidence = min(confidences, default=0.9) * plausibility
    return MarkDecision(None, None, confidence, evidence, per_label=per_label,
                        split=found.split)


def _contrary_branch(found: Any, status_of: dict[str, int]) -> bool:
    """Whether a group's own values decide a mark other than its country's CLDR mark."""
    for territory, admitted in zip(found.split.territories, found.admitted, strict=True):
        expected = cldr_decimal_mark(territory) if territory else None
        if expected and len(admitted) == 1 and expected not in admitted:
            return True
    return False


def _guard_foreign_countries(column: ColumnEvidence, forms: Forms, context: Context,
                             decision: MarkDecision) -> None:
    """Other countries' values decide a country's rows only so far as is safe.

    A country's rows that show no deciding value of their own are listed where they are
    ambiguous and its CLDR mark differs from the column's. Where it agrees, they are read
    only where their mark would be a group mark: read as a decimal mark, "28.600" would
    claim exactly three decimals that nothing in those rows supports.
    """
    split = context.country_split
    mark = decision.mark
    if split is None or column.codes is None or mark is None:
        return
    parts = column.by_group(split.codes, split.n_groups)
    index_of = {v: i for i, v in enumerate(column.values.tolist())}
    for label, territory, part in zip(split.labels, split.territories, parts, strict=True):
        rows = [index_of[v] for v in part.values.tolist()]
        statuses = set(forms.status[rows].tolist())
        if AMBIGUOUS not in statuses or statuses & {DOT_ONLY, COMMA_ONLY}:
            continue
        cldr = cldr_decimal_mark(territory) if territory else None
        if cldr is not None and cldr != mark:
            decision.per_label[label] = {"decimal_mark": UNDECIDED, "likely_decimal_mark": cldr,
                                         "settled_marks": []}
            decision.evidence.append(
                f"rows of {label!r} show no deciding value and CLDR gives that country "
                f"{mark_name(cldr)}: their ambiguous values are listed")
        elif any(mark in forms.body[i] for i in rows if forms.status[i] == AMBIGUOUS):
            decision.per_label[label] = {"settled_marks": [_other(mark)]}
            decision.evidence.append(
                f"rows of {label!r} show no deciding value: their ambiguous values that would "
                f"take {mark_name(mark)} as the decimal mark are listed")
        else:
            continue
        decision.split = split
