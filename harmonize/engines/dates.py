"""Dates, date-times and times, normalised to ISO 8601.

Output: dates ``YYYY-MM-DD``; date-times ``YYYY-MM-DDTHH:MM:SS[.f][±HH:MM]`` (the offset
only when the value carries one; ``Z`` becomes ``+00:00``); times ``HH:MM:SS``; a month of
a year written without a day ("May 2024", "05/2024" under a month or date header) as
``YYYY-MM``, no day made up.

The order of numeric dates such as ``03/04/2024`` is decided per column (or per group of
rows, e.g. per country) from evidence: values only one order allows, workbook number
formats, row order, locale hints (see ``dates_decide``). Cells the evidence cannot decide
are listed with every reading; they are never guessed.

Convention keys (plain values; edit them in a plan file):

``order``           "DMY", "MDY", "YMD" or null: the order of numeric dates whose shape
                    does not fix it (ISO dates and month names fix their own). null: a
                    value whose readings differ is listed as unresolved.
``candidates``      orders considered when ``order`` is null, e.g. ["DMY", "MDY"]; YMD
                    too where two-digit years may come first (``dates_decide``).
``likely_order``    the most probable order when undecided; only gives the "best" reading
                    of listed cells, never converts them.
``order_shapes``    null (``order`` covers every numeric date), or way of writing -> order,
                    e.g. {"DD.MM.YYYY": "DMY", "M/D/YY": "MDY"}: each value follows the
                    order of the way it is written; a value written another way (a row
                    from another branch) whose readings differ is listed, one that reads
                    in one order only is converted.
``year_from``       two-digit years are read in ``year_from`` .. ``year_from + 99``.
``numbers``         how bare numbers are read: null (not dates), "compact" (20240403,
                    240403; never seven digits), "serial1900" / "serial1904" (spreadsheet serial
                    days, ECMA-376), "unix_seconds", "unix_milliseconds".
``kind``            "date", "datetime" or "time": serial and epoch values of a datetime
                    column keep their time of day. In a "date" column a time of exactly
                    00:00:00 without an offset is storage, not information (dates kept
                    as date-times, a workbook date under a date-and-time format): the
                    value is written as a date (``dates_kind``).
``zone_offsets``    zone abbreviation -> "+HH:MM" that a person has settled (e.g.
                    {"CET": "+01:00"}); other abbreviations leave the cell unresolved.
``sentinels``       ISO dates that stand for "no date" (reported as missing).
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from datetime import date
from typing import Any, ClassVar

import numpy as np

from harmonize.context import Context, Split
from harmonize.engines.base import Converted, Decision, GroupRule, Outcome
from harmonize.engines.dates_convert import SENTINELS, Settings, fast_convert
from harmonize.engines.dates_decide import (
    LR_LOCALE,
    LR_SPREAD,
    LR_STATED,
    LR_TERRITORY,
    NAMES,
    Hints,
    Verdict,
    decide,
    format_hints,
    templates,
    year_first_spread,
)
from harmonize.engines.dates_fast import SEPARATORS
from harmonize.engines.dates_kind import column_kind, drop_midnights, undated_cells
from harmonize.engines.dates_numbers import OTHER_DATES, NumbersMode, numbers_mode
from harmonize.engines.dates_parse import (
    BAD,
    DIGITS,
    FIXED,
    MONTH,
    OPEN,
    ORDERS,
    ORDINAL,
    TIME,
    WEEK,
    ZERO,
    Clock,
    Parsed,
    compact_parse,
    digits_reading,
    month_text,
    parse,
    reading,
    render,
)
from harmonize.engines.dates_table import FORMS, DateTable
from harmonize.engines.dates_words import (
    header_says_date,
    header_says_duration,
    header_says_month,
    locale_order,
    territory_order,
)
from harmonize.engines.grouping import GroupSplit, explaining_split
from harmonize.engines.identifiers import header_names_code
from harmonize.evidence import ColumnEvidence

MIN_SHARE = 0.5            # below this share of readable cells the column is not ours
MIN_GROUP_ROWS = 5         # a split must average this many rows per group
KIND_SURE = 0.995          # probability the kind is right when nearly every cell reads


@dataclass
class _Column:
    """A column's distinct values read once, with the reading of bare numbers applied."""

    table: DateTable
    counts: np.ndarray
    numbers: str | None
    year_first: str | None = None   # why two-digit year first is a live reading, if it is

    @property
    def total(self) -> int:
        return int(self.counts.sum())

    def share(self, mask: np.ndarray) -> float:
        return float(self.counts[mask].sum()) / max(self.total, 1)

    def any_open(self) -> bool:
        return bool(self.table.of(OPEN).any())


NUMBER_MODES = (None, "compact", "serial1900", "serial1904", "unix_seconds",
                "unix_milliseconds")


class DateEngine:
    name: ClassVar[str] = "dates"

    # ------------------------------------------------------------ propose

    def propose(self, column: ColumnEvidence, context: Context) -> Decision | None:
        if column.total == 0 or "version" in column.name.casefold() or _names_a_code(column):
            return None
        col, mode = _read_column(column, context.table.date1904)
        year_from = date.today().year - (context.options.year_window - 1)
        orders = _candidate_orders(col, context, year_from)
        months = _months_read(col, column.name)
        fit = col.share(_is_read(col.table, orders, year_from) | months
                        | _numbers_read(col.table, mode))
        if fit < MIN_SHARE:
            return None
        kind, midnights = column_kind(col.table, col.counts, col.numbers, mode.with_time,
                                      column.values)
        if kind == "time" and header_says_duration(column.name):
            return None   # '1:30' under 'Duration' is an hour and a half, not half past one
        convention: dict[str, Any] = {
            "order": None, "candidates": list(orders), "likely_order": None,
            "order_shapes": None, "year_from": year_from, "numbers": mode.mode, "kind": kind,
            "zone_offsets": dict(context.options.for_engine(self.name).get("zone_offsets", {})),
            "sentinels": list(SENTINELS)}
        evidence = list(mode.evidence)
        details: dict[str, Any] = {"forms": _form_counts(col)}
        order_p, groups = self._order(column, col, context, orders, year_from, convention,
                                      evidence, details)
        kind_p = mode.confidence if mode.mode else (KIND_SURE if fit >= 0.9 else 0.95)
        if column.typed:
            evidence.append(f"{len(column.typed)} distinct values are typed date cells")
        _two_digit_note(col, year_from, context, details)
        _zone_note(col, convention, details)
        _time_note(col, kind, midnights, evidence, details)
        if months.any():
            evidence.append(f"{int(col.counts[months].sum())} cells name a month of a year "
                            f"without a day: written YYYY-MM (ISO 8601, a calendar month)")
        return Decision(kind=kind, engine=self.name, fit=round(fit, 6),
                        confidence=round(min(0.999, kind_p * order_p), 4),
                        convention=convention, groups=groups, evidence=tuple(evidence),
                        details=details)

    def _order(self, column: ColumnEvidence, col: _Column, context: Context,
               orders: list[str], year_from: int, convention: dict[str, Any],
               evidence: list[str], details: dict[str, Any]) -> tuple[float, GroupRule | None]:
        """Decide the order; returns the probability that it is right, and any groups."""
        if not col.any_open():
            evidence.append("no value leaves its field order open (ISO 8601, month names, "
                            "four-digit year first, or numbers)")
            return 1.0, None
        forced = context.options.for_engine(self.name).get("order")
        if forced:
            convention["order"] = forced
            evidence.append(f"order {forced} stated in the options for this engine")
            return 1.0, None
        country = context.country_split
        if country is not None and country.n_groups >= 2 and country.column != column.name:
            # branches named in a column: each must show its own order (one branch's
            # evidence says nothing about another's, even when they write alike)
            grouped = self._by_groups(column, col, context, orders, year_from, convention,
                                      evidence, details, country)
            if grouped is not None:
                return grouped
        hints = _spread_hint(col, _column_hints(column, context, orders))
        verdict = decide(col.table, col.counts, orders, year_from, hints, column.codes)
        evidence.extend(verdict.evidence)
        if verdict.mixed:
            grouped = self._by_groups(column, col, context, orders, year_from, convention,
                                      evidence, details)
            if grouped is not None:
                return grouped
            if verdict.shapes:
                return _apply(verdict, convention, evidence), None
            evidence.append("values only different orders allow sit side by side and no "
                            "column splits them: cells that decide themselves are converted, "
                            "the rest listed")
            return 1.0, None
        return _apply(verdict, convention, evidence), None

    def _by_groups(self, column: ColumnEvidence, col: _Column, context: Context,
                   orders: list[str], year_from: int, convention: dict[str, Any],
                   evidence: list[str], details: dict[str, Any], given: Split | None = None
                   ) -> tuple[float, GroupRule] | None:
        rows_of = _RowsOf(column)

        def admits(part: ColumnEvidence) -> frozenset[str]:
            table = col.table.take(rows_of(part))
            valid = table.admitted(orders, year_from)
            readable = table.of(OPEN) & np.any([valid[o] for o in orders], axis=0)
            return frozenset(o for o in orders if not (readable & ~valid[o]).any())

        if given is not None:
            parts = tuple(column.by_group(given.codes, given.n_groups))
            found = GroupSplit(given, parts, tuple(admits(p) if p.total else frozenset(orders)
                                                   for p in parts))
        else:
            found = explaining_split(column, context, admits, frozenset(orders))
        if found is None or (found.split.n_groups > 3 and
                             found.split.n_groups * MIN_GROUP_ROWS > column.n_rows):
            return None  # groups of a row or two explain anything (an amount column)
        split = found.split
        matches = _territory_agreement(found.label_admits(), split)
        conventions: dict[str, dict[str, Any]] = {}
        group_details: dict[str, Any] = {}
        probability = 1.0
        for label, territory, part in zip(split.labels, split.territories, found.parts,
                                          strict=True):
            if not part.total:
                continue
            hints = _spread_hint(col, _group_hints(territory, matches, orders))
            verdict = decide(col.table.take(rows_of(part)), part.counts, orders, year_from,
                             hints, part.codes)
            conventions[label] = {"order": verdict.order, "order_shapes": verdict.shapes,
                                  "likely_order": None if verdict.order else verdict.leading}
            group_details[label] = {"order": verdict.order, "cells": part.total,
                                    "evidence": verdict.evidence,
                                    "probability": round(verdict.probability, 4)}
            if verdict.order:
                probability *= verdict.probability
        evidence.append(f"the column {split.column!r} splits the rows into groups; each "
                        f"group's order is decided from its own values")
        details["groups"] = group_details
        convention["order"] = None
        return probability, GroupRule(by=split.column, conventions=conventions)

    # ------------------------------------------------------------ convert

    def problems(self, convention: Mapping[str, Any]) -> list[str]:
        """Values a hand-edited plan may hold that ``convert`` cannot follow."""
        found = []
        orders = ", ".join(ORDERS)
        if convention.get("order") not in (None, *ORDERS):
            found.append(f"order {convention['order']!r}: expected one of {orders} or null")
        for key in ("candidates",):
            listed = convention.get(key) or []
            if not isinstance(listed, list) or not set(listed) <= set(ORDERS):
                found.append(f"{key} {listed!r}: expected a list drawn from {orders}")
        if convention.get("likely_order") not in (None, *ORDERS):
            found.append(f"likely_order {convention['likely_order']!r}: expected one of "
                         f"{orders} or null")
        shapes = convention.get("order_shapes")
        if isinstance(shapes, Mapping) and not set(shapes.values()) <= set(ORDERS):
            found.append(f"order_shapes: each way of writing maps to one of {orders}")
        if convention.get("numbers") not in NUMBER_MODES:
            found.append(f"numbers {convention['numbers']!r}: expected one of "
                         f"{', '.join(str(m) for m in NUMBER_MODES if m)} or null")
        if convention.get("kind", "date") not in ("date", "datetime", "time"):
            found.append(f"kind {convention['kind']!r}: expected date, datetime or time")
        year = convention.get("year_from")
        if year is not None and (not isinstance(year, int) or isinstance(year, bool)):
            found.append(f"year_from {year!r}: expected a whole year such as 1950")
        return found

    def convert(self, values: Sequence[str], convention: Mapping[str, Any]) -> Converted:
        result = Converted.empty(len(values))
        settings = Settings.of(convention)
        done, text = fast_convert(values, settings)   # the common shapes, on whole arrays
        if text is not None:
            result.text = text.tolist()
            result.outcome[done] = Outcome.CONVERTED
        for i in np.flatnonzero(~done).tolist():   # the others, one by one
            _convert_one(result, i, values[i], settings)
        return finish_column(result, settings)


# ---------------------------------------------------------------- propose helpers

def _names_a_code(column: ColumnEvidence) -> bool:
    """A header naming a code and no date ('Ref', 'Batch', 'Invoice no'), over cells no
    workbook types as dates: '03.04.05' there is a reference, kept as written."""
    return (header_names_code(column.name) and not header_says_date(column.name)
            and not any(tag in ("date", "datetime") for tag in column.typed.values()))


def _read_column(column: ColumnEvidence, date1904: bool = False
                 ) -> tuple[_Column, NumbersMode]:
    """Every distinct value read once (``dates_table``), with the column's reading of bare
    numbers applied (``date1904``: the workbook counts serial days in the 1904 system)."""
    table = DateTable.read(column.values)
    mode = numbers_mode(column, table, date1904)
    if mode.mode == "compact":
        table = table.compact()
    return _Column(table, column.counts, mode.mode), mode


class _RowsOf:
    """The rows of the column's table that hold a part's (a group's) values."""

    def __init__(self, column: ColumnEvidence) -> None:
        self.index: dict[str, int] | None = None
        self.values = column.values

    def __call__(self, part: ColumnEvidence) -> np.ndarray:
        if self.index is None:
            self.index = {v: i for i, v in enumerate(self.values.tolist())}
        return np.fromiter((self.index[v] for v in part.values.tolist()), dtype=np.int64,
                           count=len(part.values))


def _is_read(table: DateTable, orders: Sequence[str], year_from: int) -> np.ndarray:
    """Per value, whether the engine reads it as a date (possibly an impossible one)."""
    read = table.of(TIME, ZERO)
    month, day = table.parts[:, 1], table.parts[:, 2]
    read |= table.of(FIXED) & (month >= 1) & (month <= 12) & (day >= 1) & (day <= 31)
    rows = np.flatnonzero(table.of(OPEN))
    if len(rows):
        part = table if len(rows) == len(table) else table.take(rows)
        read[rows] = np.any([part.plausible(order) for order in orders], axis=0)
    for i in np.flatnonzero(table.of(WEEK, ORDINAL)).tolist():
        read[i] = reading(table.slow[i], None, year_from) is not None
    return read


def _months_read(col: _Column, header: str) -> np.ndarray:
    """The months of a year the column reads as such. 'May 2024' and '2024-05' (ISO 8601)
    say so themselves; '05/2024' may be an invoice number, so it needs a header naming a
    date or a period, or written dates beside it."""
    table = col.table
    rows = np.flatnonzero(table.of(MONTH))
    read = np.zeros(len(table), dtype=bool)
    if not len(rows):
        return read
    year, month = table.parts[rows, 0], table.parts[rows, 1]
    real = (month >= 1) & (month <= 12) & (year >= 1)
    named = table.sep[rows] == SEPARATORS.index("")
    iso = (table.sep[rows] == SEPARATORS.index("-")) & (table.widths[rows, 0] == 4) & (
        table.widths[rows, 1] == 2)
    dated = table.has_date & ~table.of(MONTH)
    vouched = (header_says_date(header) or header_says_month(header)
               or col.share(dated) >= OTHER_DATES)
    read[rows] = real & (named | iso | vouched)
    return read


def _numbers_read(table: DateTable, mode: NumbersMode) -> np.ndarray:
    read = np.zeros(len(table), dtype=bool)
    if mode.mode is not None:
        for i in np.flatnonzero(table.of(DIGITS)).tolist():
            read[i] = mode.reads(table.slow[i].text)
    return read


def _candidate_orders(col: _Column, context: Context, year_from: int) -> list[str]:
    """DMY and MDY; YMD too where two-digit-year values or a hint make it a live reading,
    or where the values' spread does (then ``col.year_first`` says why)."""
    options = context.options
    stated = {options.date_order, locale_order(options.locale) if options.locale else None,
              context.options.for_engine("dates").get("order")}
    compact = col.numbers == "compact" and col.any_open()
    # a first component above 31 cannot be a day: the year comes first. A value only the
    # calendar rules out as a day (31.09.19) is an impossible date, not evidence for YMD
    above = col.table.take(np.flatnonzero(col.table.of(OPEN) & (col.table.parts[:, 0] > 31)))
    valid = above.admitted(ORDERS, year_from)
    only_ymd = (valid["YMD"] & ~valid["DMY"] & ~valid["MDY"]).any()
    if "YMD" in stated or compact or only_ymd:
        return list(ORDERS)
    col.year_first = year_first_spread(col.table, year_from)
    return list(ORDERS) if col.year_first else ["DMY", "MDY"]


def _spread_hint(col: _Column, hints: Hints) -> Hints:
    """Year first as a prior where the values' spread makes it live; a country's short
    date pattern (day or month first) then does not decide between them."""
    if col.year_first:
        hints.add("YMD", LR_SPREAD, col.year_first)
        hints.territory = None
    return hints


def _form_counts(col: _Column) -> dict[str, int]:
    """Cells per form, most first (ties: the form met first)."""
    forms = col.table.form
    present = np.flatnonzero(np.bincount(forms, minlength=len(FORMS))).tolist()
    cells = {f: int(col.counts[forms == f].sum()) for f in present}
    first = {f: int(np.argmax(forms == f)) for f in present}
    ranked = sorted(present, key=lambda f: (-cells[f], first[f]))
    return {FORMS[f]: cells[f] for f in ranked}


def _column_hints(column: ColumnEvidence, context: Context, orders: list[str]) -> Hints:
    hints = Hints()
    format_hints(column.formats, orders, hints)
    options = context.options
    if options.date_order in orders:
        hints.add(options.date_order, LR_STATED, f"order {options.date_order} stated in the "
                                                 f"options")
    if options.locale and locale_order(options.locale) in orders:
        order = locale_order(options.locale)
        hints.add(order, LR_LOCALE, f"the stated locale {options.locale} writes {order} "
                                    f"(CLDR short date pattern)")
    _territory_hint(column, context, orders, hints)
    return hints


def _territory_hint(column: ColumnEvidence, context: Context, orders: list[str],
                    hints: Hints) -> None:
    found = _row_territories(column, context)
    if found is not None:
        name, territories = found
        per_order: Counter[str] = Counter()
        for territory, rows in territories.items():
            per_order[territory_order(territory)] += rows
        order, n = per_order.most_common(1)[0]
        if order in orders and n >= 0.9 * sum(per_order.values()):
            names = ", ".join(sorted(territories)[:4])
            hints.add(order, LR_TERRITORY, f"the {name!r} column names {names}, whose CLDR "
                                           f"short date pattern is {order}")
            hints.territory = order
        return
    region = context.options.default_region
    source = f"the default region {region}"
    if not region and context.file_territory:
        region = context.file_territory
        source = f"{region}, the country the file name {context.file!r} points to,"
    if region and territory_order(region) in orders:
        order = territory_order(region)
        hints.add(order, LR_TERRITORY, f"{source} writes {order} (CLDR short date pattern)")
        hints.territory = order


def _row_territories(column: ColumnEvidence, context: Context
                     ) -> tuple[str, Counter[str]] | None:
    """(column name, rows per territory) from the country column (which may name a single
    country, as one branch's export does), counting rows where this column has a value."""
    split = context.country_split
    if split is None or column.codes is None or split.column == column.name:
        return None
    present = (column.codes >= 0) & (split.codes >= 0)
    rows = np.bincount(split.codes[present], minlength=split.n_groups)
    found: Counter[str] = Counter()
    for territory, n in zip(split.territories, rows.tolist()):
        if territory and n:
            found[territory] += n
    return (split.column, found) if found else None


def _territory_agreement(label_admits: Mapping[str, frozenset[str]], split) -> tuple[int, int]:
    """(agree, disagree): pinned groups whose order matches their territory's CLDR order."""
    agree = disagree = 0
    for label, territory in zip(split.labels, split.territories, strict=True):
        allowed = label_admits.get(label, frozenset())
        expected = territory_order(territory) if territory else None
        if len(allowed) == 1 and expected in ("DMY", "MDY"):
            agree += expected in allowed
            disagree += expected not in allowed
    return agree, disagree


def _group_hints(territory: str | None, matches: tuple[int, int], orders: list[str]) -> Hints:
    """A group's territory as a prior, as strong as the other groups' agreement justifies."""
    hints = Hints()
    order = territory_order(territory) if territory else None
    if order in orders:
        agree, disagree = matches
        ratio = LR_TERRITORY if disagree else max(LR_TERRITORY, agree + 1.0)
        hints.add(order, ratio, f"territory {territory} writes {order} (CLDR short date "
                                f"pattern); {agree} of {agree + disagree} groups decided by "
                                f"their values follow their territory's pattern")
        if not disagree:  # no branch is seen writing against its country's pattern
            hints.territory = order
    return hints


def _apply(verdict: Verdict, convention: dict[str, Any], evidence: list[str]) -> float:
    convention["order"] = verdict.order
    convention["order_shapes"] = verdict.shapes
    if verdict.shapes and not verdict.order:
        evidence.append(f"orders per way of writing, probability {verdict.probability:.3f}")
        return verdict.probability
    if verdict.order:
        evidence.append(f"order {verdict.order} ({NAMES[verdict.order]}) with probability "
                        f"{verdict.probability:.3f}")
        return verdict.probability
    if verdict.ambiguous:
        convention["likely_order"] = verdict.leading
        evidence.append(f"{verdict.ambiguous} cells read differently day-first and month-first "
                        f"and the evidence does not decide (leading: {verdict.leading}, "
                        f"probability {verdict.probability:.2f}); they are listed")
    return 1.0


def _two_digit_note(col: _Column, year_from: int, context: Context,
                    details: dict[str, Any]) -> None:
    if _short_year(col.table):
        window = context.options.year_window
        details["two_digit_years"] = (
            f"read in {year_from}-{year_from + 99}: options.year_window = {window} places "
            f"them up to {window - 1} years before and {100 - window} after "
            f"{year_from + window - 1}")


def _short_year(table: DateTable) -> bool:
    """Whether any value writes a two-digit year."""
    first, second, last = table.widths.T
    if (table.of(FIXED) & (first <= 2)).any():
        return True
    is_open = table.of(OPEN)
    return bool((is_open & ((last == 2) | (np.maximum(np.maximum(first, second), last) <= 2)))
                .any()) if is_open.any() else False


def _time_note(col: _Column, kind: str, midnights: int, evidence: list[str],
               details: dict[str, Any]) -> None:
    """Say what became of times that carry nothing, and of dates without a time."""
    if midnights:
        evidence.append(f"{midnights} cells carry the time 00:00:00 and no value another "
                        f"time of day: dates stored as date-times, written as dates")
    elif kind == "datetime" and (undated := undated_cells(col.table, col.counts)):
        details["dates_without_time"] = (
            f"{undated} cells give a date without a time of day; they are written as "
            f"dates (YYYY-MM-DD), no time is made up for them")


def _zone_note(col: _Column, convention: Mapping[str, Any], details: dict[str, Any]) -> None:
    zones = Counter(p.clock.zone for p in col.table.records() if p.clock and p.clock.zone)
    if zones:
        details["zone_abbreviations"] = {
            z: convention["zone_offsets"].get(z, "unresolved: an abbreviation does not fix "
                                                 "an offset") for z in zones}


# ---------------------------------------------------------------- convert helpers

def finish_column(result: Converted, s: Settings) -> Converted:
    """What applies to the column's values once each is read, whichever path read it: a
    date column writes its stored midnights as dates (``dates_kind``)."""
    if s.kind == "date":
        drop_midnights(result)
    return result


def _convert_one(result: Converted, i: int, raw: str, s: Settings) -> None:
    p = parse(raw)
    if p.form == DIGITS:
        if s.numbers in (None, "compact"):
            p = compact_parse(p.text) if s.numbers == "compact" else p
            if p.form == DIGITS:
                result.unresolved(i, "a bare number; the plan does not read numbers as dates")
                return
        else:
            _convert_number(result, i, p.text, s)
            return
    if p.form == ZERO:
        _missing(result, i)
    elif p.form == BAD:
        result.unresolved(i, f"not a date: {p.reason}")
    elif p.form == TIME:
        _finish(result, i, None, p.clock, s)
    elif p.form == OPEN:
        _convert_open(result, i, p, s)
    elif p.form == MONTH:
        _convert_month(result, i, p, s)
    else:
        found = reading(p, None, s.year_from)
        if found is None:
            result.unresolved(i, _impossible(p))
        else:
            _finish(result, i, found, p.clock, s)


def _convert_month(result: Converted, i: int, p: Parsed, s: Settings) -> None:
    text = month_text(p)
    if s.kind == "time":
        result.unresolved(i, "a month in a column of times")
    elif text is None:
        result.unresolved(i, f"impossible month: no month {p.parts[1]} in a year")
    else:
        result.set(i, text)


def _convert_open(result: Converted, i: int, p: Parsed, s: Settings) -> None:
    if s.shapes is not None:
        matched = {o for o in set(s.shapes.values()) if o and any(
            s.shapes.get(t) == o for t in templates(p, o))}
        if len(matched) != 1:
            _convert_stray(result, i, p, s)
            return
        s = replace(s, order=matched.pop())
    if s.order:
        found = reading(p, s.order, s.year_from)
        if found is not None:
            _finish(result, i, found, p.clock, s)
            return
        others = {o: reading(p, o, s.year_from) for o in ORDERS if o != s.order}
        texts = [render(d, p.clock) for d in others.values() if d is not None]
        result.unresolved(i, f"impossible as {s.order} ({NAMES[s.order]})"
                          + (f"; it reads as {' or '.join(texts)} in another order"
                             if texts else ""), candidates=texts)
        return
    readings = {o: reading(p, o, s.year_from) for o in s.candidates}
    distinct = sorted({d for d in readings.values() if d is not None})
    if len(distinct) == 1:
        _finish(result, i, distinct[0], p.clock, s)
    elif not distinct:
        result.unresolved(i, "impossible date in every order ("
                          + ", ".join(s.candidates) + ")")
    else:
        texts = [render(d, p.clock) for d in distinct]
        best = readings.get(s.likely) if s.likely else None
        if all(t in s.sentinels for t in (d.isoformat() for d in distinct)):
            _missing(result, i)
            return
        fields = "day, month and year" if "YMD" in s.candidates else "day and month"
        result.unresolved(
            i, f"{fields} cannot be told apart: its readings differ and no value, row "
               "order or hint in the data decides the column's order; a country column or a "
               "stated order (options date_order, or 'order' in the plan) would decide it",
            candidates=texts, best=render(best, p.clock) if best else None)


def _convert_stray(result: Converted, i: int, p: Parsed, s: Settings) -> None:
    """A value written unlike those that decided the order: only its own readings count."""
    orders = [o for o in (s.order, *s.candidates) if o]
    readings = {o: reading(p, o, s.year_from) for o in dict.fromkeys(orders)}
    distinct = sorted({d for d in readings.values() if d is not None})
    if len(distinct) == 1:
        _finish(result, i, distinct[0], p.clock, s)
    elif not distinct:
        result.unresolved(i, "impossible date in every order")
    else:
        texts = [render(d, p.clock) for d in distinct]
        best = readings.get(s.order) if s.order else None
        ways = ", ".join(f"{t} ({o})" for t, o in sorted((s.shapes or {}).items())[:4])
        result.unresolved(
            i, f"day and month cannot be told apart: the value is written unlike the values "
               f"that decided the order ({ways}), so it may come from another convention",
            candidates=texts, best=render(best, p.clock) if best else None)


def _finish(result: Converted, i: int, day: date | None, clock: Clock | None,
            s: Settings) -> None:
    if day is not None and day.isoformat() in s.sentinels:
        _missing(result, i)
        return
    if clock is not None and clock.zone:
        offset = s.zones.get(clock.zone)
        if offset is None:
            naive = render(day, clock) if day else clock.text()
            result.unresolved(i, f"time zone abbreviation {clock.zone} does not fix a UTC "
                                 f"offset; add it to zone_offsets in the plan to convert",
                              candidates=[naive], best=naive)
            return
        clock = Clock(clock.hour, clock.minute, clock.second, clock.fraction, offset)
    if day is None:
        if s.kind != "time":
            result.unresolved(i, "a time without a date")
            return
        result.set(i, clock.text())
        return
    if s.kind == "time":
        result.unresolved(i, "a date in a column of times")
        return
    result.set(i, render(day, clock))


def _convert_number(result: Converted, i: int, text: str, s: Settings) -> None:
    found = digits_reading(text, s.numbers or "", s.kind == "datetime")
    if isinstance(found, tuple):
        result.unresolved(i, found[0])
    elif found is None:
        result.unresolved(i, f"unknown reading of numbers {s.numbers!r}")
    elif found[:10] in s.sentinels:
        _missing(result, i)
    else:
        result.set(i, found)


def _missing(result: Converted, i: int) -> None:
    result.set(i, "", Outcome.MISSING)
    result.reasons[i] = "sentinel date"


def _impossible(p: Parsed) -> str:
    if p.weekday is not None:
        return "impossible date: the weekday named does not match the date"
    return "impossible date: no such day in the calendar"
