"""Deciding the decimal mark of a column, or of each group of its rows.

See ``harmonize.engines.numbers`` for the convention keys this produces
(``decimal_mark``, ``settled_marks``, ``likely_decimal_mark``).
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
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
from harmonize.engines.numbers_rows import decide_from_rows
from harmonize.evidence import ColumnEvidence
from harmonize.territory import territory_of

ALL_MARKS = frozenset({".", ","})
STRAY_SHARE = 0.02        # deciding cells of the other notation a column may hold as errors
MIN_UNGROUPED = 4         # whole numbers shorter than this are never grouped: no evidence


def _other(mark: str) -> str:
    return "," if mark == "." else "."


def ungrouped_digits(forms: Forms, mask: np.ndarray) -> tuple[int, int, str]:
    """(most digits, how many values, an example) of the whole numbers under ``mask``
    written without group marks ("12500": 5 digits); (0, 0, "") when there is none of
    MIN_UNGROUPED digits or more, or when a value there shows a group mark.

    A writer groups a whole number of L digits when L >= 3 + m, m its minimum grouping
    digits (CLDR ``minimumGroupingDigits``: 1 for most locales, 2 for es and pl, which
    write "1234" but "12.345"; checkvalues.md A3). An ungrouped number of G digits shows
    G < 3 + m, so the mark of an ambiguous value whose group reading has L <= G digits
    ("1.234" beside "5000") cannot group: it is a decimal mark.
    """
    status = forms.status
    spaced = forms.has_char(" ") | forms.has_char("'")
    shown = mask & (spaced | ((status == DOT_ONLY) & forms.has_char(","))
                    | ((status == COMMA_ONLY) & forms.has_char(".")))
    if shown.any():
        return 0, 0, ""
    # "١٢٫٥" reads alike under both notations but is no whole number
    whole = (mask & (status == SAME) & ~spaced & ~forms.arabic_decimal
             & (forms.body_length >= MIN_UNGROUPED))
    if whole.any():
        whole &= ~forms.body_zero_first
    if not whole.any():
        return 0, 0, ""
    lengths = np.where(whole, forms.body_length, 0)
    return int(lengths.max()), int(whole.sum()), forms.text_at(int(np.argmax(lengths)))


def group_reading_digits(forms: Forms, indices: np.ndarray) -> np.ndarray:
    """Digits of the group reading of ambiguous values ("12.345" -> 5)."""
    return forms.body_length[indices] - 1


@dataclass
class MarkTally:
    """Cells and distinct values that decide each mark, and those left undecided."""

    cells: dict[int, int]
    values: dict[int, int]
    examples: dict[int, str]
    seen: dict[int, frozenset[str]]   # marks present in the deciding values, per status
    ungrouped: tuple[int, int, str] = (0, 0, "")   # see ``ungrouped_digits``
    ambiguous_digits: np.ndarray = field(default_factory=lambda: np.zeros(0, np.int64))

    @property
    def covered(self) -> int:
        """Ambiguous values whose group reading has no more digits than the ungrouped
        whole numbers show."""
        return int((self.ambiguous_digits <= self.ungrouped[0]).sum())

    @classmethod
    def of(cls, forms: Forms, counts: np.ndarray, skip: np.ndarray | None = None) -> MarkTally:
        keep = np.ones(len(forms), bool) if skip is None else ~skip
        cells, values, examples, seen = {}, {}, {}, {}
        for status in (SAME, DOT_ONLY, COMMA_ONLY, AMBIGUOUS):
            mask = keep & (forms.status == status)
            cells[status] = int(counts[mask].sum())
            values[status] = int(mask.sum())
            if values[status]:
                examples[status] = forms.text_at(int(np.argmax(mask)))
            seen[status] = frozenset(forms.chars_in(mask, ".,"))
        tally = cls(cells, values, examples, seen)
        if values[AMBIGUOUS] and not (values[DOT_ONLY] or values[COMMA_ONLY]):
            tally.ungrouped = ungrouped_digits(forms, keep & forms.is_number)
            # a value naming a currency is left to it (yen have no minor unit)
            ambiguous = np.flatnonzero(keep & (forms.status == AMBIGUOUS) & ~forms.has_currency)
            tally.ambiguous_digits = group_reading_digits(forms, ambiguous)
        return tally

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
    ungrouped: int | None = None

    def convention(self) -> dict[str, Any]:
        return {"decimal_mark": self.mark or UNDECIDED, "likely_decimal_mark": self.likely,
                "settled_marks": self.settled, "ungrouped_digits": self.ungrouped}


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
    if tally.covered and not (trust_hint and hint):
        return _ungrouped_marks(tally, hint)
    if trust_hint and hint:
        return MarkDecision(hint, hint, HINT_DECIDES, [
            f"no value decides the decimal mark and none contradicts {mark_name(hint)}, "
            "the mark of the country the data names (CLDR): it is applied"])
    return MarkDecision(None, hint, 0.95, [
        f"{tally.values[AMBIGUOUS]} value(s) such as {tally.examples[AMBIGUOUS]!r} read "
        "differently with '.' or ',' as the decimal mark and no value decides: listed"])


def _ungrouped_marks(tally: MarkTally, hint: str | None) -> MarkDecision:
    """No value decides the mark, but whole numbers written without group marks show
    that the ambiguous values with as many digits or fewer are not grouped."""
    digits, count, example = tally.ungrouped
    listed = tally.values[AMBIGUOUS] - tally.covered
    evidence = [f"{count} whole number(s) are written without group marks (e.g. {example!r}): "
                f"{tally.covered} ambiguous value(s) whose group reading would have {digits} "
                "digits or fewer are read with their mark as the decimal mark"]
    if listed:
        evidence.append(f"{listed} ambiguous value(s) with more digits are listed (a writer "
                        "may group only numbers of five digits or more)")
    return MarkDecision(None, hint, min(0.95, _evidence_confidence(count)), evidence,
                        ungrouped=digits)


def _settle(decision: MarkDecision, tally: MarkTally) -> MarkDecision:
    """Say so when some ambiguous values stay listed because their mark's role is unshown."""
    unsettled = sorted(tally.seen[AMBIGUOUS] - set(decision.settled))
    if unsettled:
        decision.evidence.append(
            f"no deciding value shows {' or '.join(map(repr, unsettled))} as the decimal "
            "mark: ambiguous values that would read it so are listed")
    return decision


def decide_marks(values: Sequence[str], counts: Sequence[int] | np.ndarray,
                 context: Context | None = None, ungrouped_limit: int | None = None
                 ) -> tuple[dict[str, Any], float, tuple[str, ...]]:
    """Decide the decimal mark of a set of number strings (for engines built on this one).

    Returns (convention, confidence, evidence). The convention holds ``decimal_mark``
    ("." / "," / None when undecided), ``likely_decimal_mark``, ``settled_marks`` and
    ``ungrouped_digits`` as documented in ``harmonize.engines.numbers``, ready for
    ``parse_amount``. ``ungrouped_limit`` caps the digits that whole numbers written
    without group marks may settle (see ``scoped_ungrouped``).
    """
    forms = analyse(list(values))
    tally = MarkTally.of(forms, np.asarray(counts, dtype=np.int64))
    if ungrouped_limit is not None and tally.ungrouped[0] > ungrouped_limit:
        tally.ungrouped = (ungrouped_limit, *tally.ungrouped[1:]) if ungrouped_limit else (
            0, 0, "")
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
    if decision.ungrouped:
        digits = scoped_ungrouped(column, context, decision.ungrouped,
                                  lambda mask: (forms, mask & ~skip))
        if digits < decision.ungrouped:
            tally.ungrouped = (digits, *tally.ungrouped[1:]) if digits else (0, 0, "")
            decision = _flat_marks(tally, hint, trust)
            decision.evidence.append(
                "whole numbers written without group marks in some rows do not show how the "
                "rows of another country or branch group theirs")
    if decision.mark is None and tally.cells[AMBIGUOUS] and not (
            tally.deciding(".") or tally.deciding(",")):
        by_rows = _marks_from_rows(column, forms, context, skip)
        if by_rows is not None:
            return by_rows   # every row shows its own writer's mark: no country guard
    if decision.mark is not None and tally.cells[AMBIGUOUS]:
        _guard_foreign_countries(column, forms, context, decision)
    return decision


def _marks_from_rows(column: ColumnEvidence, forms: Forms, context: Context,
                     skip: np.ndarray) -> MarkDecision | None:
    """The mark the other cells of the rows show, where no value of the column decides
    it (see ``numbers_rows``)."""
    ambiguous = (forms.status == AMBIGUOUS) & ~skip
    held = np.where(forms.has_char("."), ".", ",")
    found = decide_from_rows(column, ambiguous, held, context)
    if found is None:
        return None
    return MarkDecision(found.mark, found.mark, found.confidence, [found.evidence],
                        settled=sorted(ALL_MARKS))


def _group_masks(column: ColumnEvidence, split: Split) -> list[np.ndarray]:
    """Per label of a split: which of the column's distinct values its rows hold."""
    present = column.codes >= 0
    masks = []
    for label_code in range(split.n_groups):
        rows = present & (split.codes == label_code)
        masks.append(np.bincount(column.codes[rows], minlength=len(column.values)) > 0)
    return masks


def _own_ungrouped(forms: Forms, in_group: np.ndarray, ambiguous: np.ndarray
                   ) -> dict[str, int]:
    """{"ungrouped_digits": G} when a group's own whole numbers settle some of its
    ambiguous values (see ``ungrouped_digits``), else {}."""
    digits = ungrouped_digits(forms, in_group & forms.is_number)[0]
    if not digits:
        return {}
    readings = group_reading_digits(forms, np.flatnonzero(ambiguous & ~forms.has_currency))
    return {"ungrouped_digits": digits} if (readings <= digits).any() else {}


def scoped_ungrouped(column: ColumnEvidence, context: Context, digits: int,
                     forms_of: Callable[[np.ndarray], tuple[Forms, np.ndarray]]) -> int:
    """The digits that whole numbers written without group marks settle, where every
    column that could split the rows by writer (a country, a branch) agrees: each group
    holding an ambiguous value must show such numbers itself (one writer's habits say
    nothing about another's). 0 when the rows cannot be split.

    ``forms_of(mask)`` gives the forms of the numbers of the column's values under
    ``mask`` and which of them to weigh."""
    splits = context.splits(exclude=column.name)
    if splits and column.codes is None:
        return 0
    for split in splits:
        for mask in _group_masks(column, split):
            forms, weigh = forms_of(mask)
            if (weigh & (forms.status == AMBIGUOUS)).any():
                digits = min(digits, ungrouped_digits(forms, weigh & forms.is_number)[0])
    return digits if digits >= MIN_UNGROUPED else 0


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
    held = forms.has_char(mark)
    for label, territory, in_group in zip(split.labels, split.territories,
                                          _group_masks(column, split), strict=True):
        status = forms.status[in_group]
        ambiguous = in_group & (forms.status == AMBIGUOUS)
        if not ambiguous.any() or ((status == DOT_ONLY) | (status == COMMA_ONLY)).any():
            continue
        own = _own_ungrouped(forms, in_group, ambiguous)
        unless = (f", except those of up to {own['ungrouped_digits']} digits (whole numbers in "
                  "those rows are written without group marks)") if own else ""
        cldr = cldr_decimal_mark(territory) if territory else None
        if cldr is not None and cldr != mark:
            decision.per_label[label] = {"decimal_mark": UNDECIDED, "likely_decimal_mark": cldr,
                                         "settled_marks": [], **own}
            decision.evidence.append(
                f"rows of {label!r} show no deciding value and CLDR gives that country "
                f"{mark_name(cldr)}: their ambiguous values are listed{unless}")
        elif (ambiguous & held).any():
            decision.per_label[label] = {"settled_marks": [_other(mark)], **own}
            decision.evidence.append(
                f"rows of {label!r} show no deciding value: their ambiguous values that would "
                f"take {mark_name(mark)} as the decimal mark are listed{unless}")
        else:
            continue
        decision.split = split
