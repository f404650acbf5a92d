"""Quantities: numbers with units (in the cells or the header) -> plain numbers in one unit.

Each column holds one dimension (mass, length, area, volume, temperature, speed,
duration, energy, pressure, power), decided by the units its cells and header name. Values
are converted exactly (``fractions.Fraction`` factors from one hardened pint registry, see
``units_registry``) into the dimension's SI unit, or the unit the run asks for in
``Options.unit_targets`` (e.g. ``{"volume": "L", "temperature": "degF"}``), and written as
plain decimals rounded to ``significant_digits`` (15 by default; results that are exact
in fewer digits are written exactly: 5 lb -> 2.26796185).

Cells read: "5 kg", "5kg", "1,5 Kilo", "-40 °F", fractions of customary measures ("3/4 in",
"1 1/2 lb", "1½ lb"), compounds with falling units ("5 ft 11 in", "5'11\"", "3 lb 4 oz"),
invisible format characters dropped as the numbers engine drops them. The unit of bare
numbers comes from the header ("Weight (lb)") or, for workbook cells, from number formats
that all show one unit ('0.0" kg"'). Ranges ("5-10 kg") are listed as ranges.

Output units are named by their SI symbols: kg, m, m², m³, °C, m/s, s, J, Pa, W (or the
symbol of the chosen target: L, km, °F, US gal, ...). ``Decision.unit`` holds that symbol
and the output header is the column's header with it appended ("Weight (kg)"), or with
the header's own unit replaced ("Weight (lb)" -> "Weight (kg)").

What is listed rather than guessed: a cell of another dimension, a unit token that reads
several units of the column's dimension and that nothing decides ("ton": short, long or
metric; "gal": US or imperial; "oz" in a volume column; "Mg": megagram or a miscased
mg), a number whose decimal mark nothing decides ("1,500 g"), and a bare number in a
column that uses several units while its header names none (with a candidate in each).

Convention keys (plain values; edit them in a plan file):

``dimension``           the column's dimension ("mass", "length", ...).
``target``              unit id written out (``kg``, ``L``, ``degF``, ... see
                        ``units_registry.UNITS``).
``bare_unit``           unit id of numbers written without a unit (from the header, or
                        the only unit the column uses), or null: such numbers are listed.
``column_units``        unit ids the column uses, most cells first; a bare number with no
                        ``bare_unit`` is listed with a candidate in each.
``units``               written unit token -> unit id, as decided for this column (edit to
                        settle a token, e.g. ``{"ton": "t"}``). Tokens not listed are read
                        through the word lists within the column's dimension.
``customary``           "US", "imperial" or null: which gallon, quart, pint, fluid ounce an
                        unqualified token means; null lists them.
``decimal_mark``        "." , "," or null, as the numbers engine decides it from the number
                        parts; ``likely_decimal_mark`` names the reading offered as ``best``;
                        ``ungrouped_digits`` as in the numbers engine ("1.272 kg" beside
                        "2000 kg": 1.272).
``significant_digits``  digits kept where a conversion does not end (100 km/h -> m/s).
``clock_form``          "h:mm", "m:ss" or null: under a duration header ("Duration",
                        "Fahrzeit"), values written as a clock ("3:30", "26:30") are lengths
                        of time, and this says what two parts mean (three are h:mm:ss).
                        The header decides "h:mm"; a plan may set "m:ss" (call lengths).

Epoch stamps ("Scan ms": 1714638600000) are not durations: a column whose every value is
a whole number of seconds or milliseconds inside the dates engine's epoch range, under a
header naming no duration word, is left to the numbers engine.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from typing import Any, ClassVar

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc

from harmonize.context import Context
from harmonize.engines.base import Converted, Decision, GroupRule, Outcome
from harmonize.engines.dates_numbers import EPOCH_MILLIS, EPOCH_SECONDS
from harmonize.engines.dates_words import header_says_duration
from harmonize.engines.grouping import explaining_split
from harmonize.engines.numbers import decide_marks
from harmonize.engines.numbers_forms import COMMA_ONLY, DOT_ONLY, Forms, analyse
from harmonize.engines.numbers_marks import scoped_ungrouped
from harmonize.engines.units_convert import SIGNIFICANT_DIGITS, convert_quantities
from harmonize.engines.units_parse import (
    Cells,
    clock_durations,
    clock_hour_header,
    format_unit,
    header_dimensions,
    header_unit,
    split_cells,
)
from harmonize.engines.units_registry import (
    SI_TARGETS,
    UNITS,
    normalise_token,
    read_token,
    resolve_target,
)
from harmonize.evidence import ColumnEvidence

__all__ = ["CAUTION", "UnitEngine", "convert_quantities", "header_unit", "unit_slip"]

CAUTION = ("Verify converted quantities against the source before safety-critical use; "
           "defer to local codes and licensed practice.")
ALL_MARKS = frozenset({".", ","})
HEADER_NAMES = "the header names the unit "
FORMAT_NAMES = "the workbook's number formats name the unit "
UNIT_SHARE_FOR_BARE = 0.2   # below this share of unit cells, bare numbers are not ours
SOLE_UNIT_SHARE = 0.5       # unit cells needed before bare numbers take the sole unit
# What "3:30" means under a duration header naming no unit or hours ("Duration",
# "Fahrzeit (h)"), or minutes ("Duration (min)"): see clock_form
CLOCK_FORM_BY_HEADER_UNIT = {"h": "h:mm", "min": "m:ss"}
# The dates engine's epoch ranges (POSIX seconds and milliseconds, 1990-2100) per unit id
EPOCH_RANGES = {"s": EPOCH_SECONDS, "ms": EPOCH_MILLIS}

# Territories whose unqualified gallon/pint/quart/fluid ounce is the US or the imperial
# measure. Common practice, no source (from memory); other territories decide nothing.
CUSTOMARY_BY_TERRITORY = {"US": "US", "PR": "US", "LR": "US", "GB": "imperial"}


# ------------------------------------------------------------------- unit slips


def unit_slip(values: Sequence[float], weights: Sequence[int] | None = None) -> str | None:
    """A warning when positive values fall in two clusters about 1000 times apart.

    Such a column often mixes a unit and its thousandth (g written as kg, mm as m). The
    warning carries the evidence; nothing is converted. Returns None when no slip shows.
    """
    data = np.asarray(values, dtype=float)
    w = np.ones(len(data)) if weights is None else np.asarray(weights, dtype=float)
    keep = np.isfinite(data) & (data > 0)
    data, w = data[keep], w[keep]
    if len(data) < 4:
        return None
    order = np.argsort(data)
    logs, w = np.log10(data[order]), w[order]
    gaps = np.diff(logs)
    cut = int(np.argmax(gaps))
    low, high = logs[: cut + 1], logs[cut + 1:]
    w_low, w_high = w[: cut + 1], w[cut + 1:]
    minor = min(w_low.sum(), w_high.sum())
    if gaps[cut] < 1.5 or minor < 2 or minor < 0.005 * w.sum():
        return None
    spread = max(low[-1] - low[0], high[-1] - high[0])
    med_low, med_high = _weighted_median(low, w_low), _weighted_median(high, w_high)
    distance = med_high - med_low
    if not 2.5 <= distance <= 3.5 or spread >= gaps[cut]:
        return None
    return (f"suspected unit slip: {int(w_low.sum())} value(s) around {10 ** med_low:.4g} and "
            f"{int(w_high.sum())} around {10 ** med_high:.4g}, about {10 ** round(distance)} "
            f"times apart (ratio {10 ** distance:.0f}) with nothing between (a unit and its "
            "thousandth mixed?); values were not changed")


def _weighted_median(logs: np.ndarray, weights: np.ndarray) -> float:
    cumulative = np.cumsum(weights)
    return float(logs[int(np.searchsorted(cumulative, cumulative[-1] / 2))])


# -------------------------------------------------------------------- deciding


@dataclass
class Tally:
    """What a column's cells say about units, weighted by cell counts."""

    dimension_cells: Counter[str]
    unit_cells: int
    bare_cells: int
    token_cells: Counter[str]

    @classmethod
    def of(cls, cells: Cells, counts: np.ndarray) -> Tally:
        # cells that write the same unit tokens say the same: tallied once per tokens
        by_tokens: Counter[tuple[str | None, ...]] = Counter()
        for pieces, count in zip(cells.pieces, counts.tolist()):
            if pieces:
                by_tokens[tuple(token for _, token in pieces)] += count
        dims: Counter[str] = Counter()
        tokens: Counter[str] = Counter()
        unit_cells = bare_cells = 0
        for written, count in by_tokens.items():
            if written == (None,):
                bare_cells += count
                continue
            unit_cells += count
            shared = None
            for token in written:
                tokens[normalise_token(token or "")] += count
                found = read_token(token or "").dimensions
                shared = found if shared is None else shared & found
            if shared and len(shared) == 1:
                dims[next(iter(shared))] += count
        return cls(dims, unit_cells, bare_cells, tokens)


def _choose_dimension(tally: Tally, header_dims: frozenset[str],
                      word_dims: set[str]) -> str | None:
    votes = Counter(tally.dimension_cells)
    for dim in header_dims:
        votes[dim] += tally.bare_cells + 0.5
    for dim in word_dims:
        votes[dim] += 0.25
    if not votes or (not tally.dimension_cells and len(header_dims) != 1
                     and not header_dims & word_dims):
        return None
    return max(sorted(votes), key=lambda d: votes[d])


def _resolve_tokens(tokens: Counter[str], dimension: str, word_dims: set[str]
                    ) -> tuple[dict[str, str], dict[str, frozenset[str]], list[str]]:
    """Token -> unit id where the column decides it; the undecided tokens; evidence."""
    decided: dict[str, str] = {}
    open_: dict[str, frozenset[str]] = {}
    for token in tokens:
        inside = read_token(token).in_dimension(dimension)
        if len(inside) == 1:
            decided[token] = next(iter(inside))
        elif inside:
            open_[token] = inside
    explicit = set(decided.values())
    evidence = []
    for token, inside in list(open_.items()):
        # only symbols: "Mg" beside "mg", "°" beside "°C"; a name such as "ton" stays open
        chosen = inside & explicit if read_token(token).how != "name" else set()
        if len(chosen) == 1:
            decided[token] = next(iter(chosen))
            evidence.append(f"{token!r} is read as {UNITS[decided[token]].symbol}, the one of "
                            f"its readings the column's other values use")
            del open_[token]
    return decided, open_, evidence


def _column_customary(decided: Mapping[str, str]) -> str | None:
    systems = {UNITS[u].system for u in decided.values()} - {""}
    return next(iter(systems)) if len(systems) == 1 else None


def _region_customary(context: Context) -> str | None:
    """US or imperial measures from the default region, else the file name's country."""
    region = context.options.default_region or context.file_territory
    return CUSTOMARY_BY_TERRITORY.get(region.upper()) if region else None


def _value_admits(cells: Cells, values: list[str]) -> dict[str, frozenset[str]]:
    """Per distinct value: the decimal marks none of its number parts contradicts."""
    parts = cells.number_parts()
    forms = analyse(list(dict.fromkeys(parts)))
    status = dict(zip(dict.fromkeys(parts), forms.status.tolist()))
    admits: dict[str, frozenset[str]] = {}
    for value, pieces in zip(values, cells.pieces):
        marks = set(ALL_MARKS)
        for part, _ in pieces:
            marks.discard({DOT_ONLY: ",", COMMA_ONLY: "."}.get(status[part], ""))
        admits[value] = frozenset(marks)
    return admits


def _grouped_marks(column: ColumnEvidence, context: Context, cells: Cells
                   ) -> tuple[str, dict[str, dict[str, Any]], list[str]] | None:
    """Per-group decimal marks when a column (a country first) explains a mixed notation."""
    values = column.values.tolist()
    admits_of = _value_admits(cells, values)
    # a split explains the marks only when some value admits "." alone and another ","
    if not {frozenset("."), frozenset(",")} <= set(admits_of.values()):
        return None
    index = {v: i for i, v in enumerate(values)}

    def admits(part: ColumnEvidence) -> frozenset[str]:
        found = ALL_MARKS
        for value in part.values.tolist():
            found = found & admits_of[value]
        return found

    found = explaining_split(column, context, admits, ALL_MARKS)
    if found is None:
        return None
    per_label: dict[str, dict[str, Any]] = {}
    for label, part in zip(found.split.labels, found.parts):
        if not part.total:
            continue
        sub = Cells([cells.pieces[index[v]] for v in part.values.tolist()])
        marks, _, _ = decide_marks(*_number_tally(sub, part.counts))
        per_label[label] = {"decimal_mark": marks.get("decimal_mark"),
                            "likely_decimal_mark": marks.get("likely_decimal_mark"),
                            "ungrouped_digits": marks.get("ungrouped_digits")}
    shown = ", ".join(f"{label}: {conv['decimal_mark'] or 'undecided'}"
                      for label, conv in list(per_label.items())[:8])
    evidence = [f"the decimal mark differs by {found.split.column!r} ({shown})"]
    return found.split.column, per_label, evidence


def _merge_groups(marks: tuple[str, dict[str, dict[str, Any]], list[str]] | None,
                  customary: GroupRule | None) -> GroupRule | None:
    if marks is None:
        return customary
    by, per_label, _ = marks
    if customary is not None and customary.by == by:
        for label, conv in customary.conventions.items():
            per_label.setdefault(label, {}).update(conv)
    return GroupRule(by, per_label)


def _customary_groups(column: ColumnEvidence, context: Context) -> GroupRule | None:
    split = context.country_split
    if split is None or split.column == column.name:
        return None
    conventions = {label: {"customary": CUSTOMARY_BY_TERRITORY[t]}
                   for label, t in zip(split.labels, split.territories)
                   if t in CUSTOMARY_BY_TERRITORY}
    return GroupRule(split.column, conventions) if conventions else None


def _target_for(dimension: str, context: Context) -> tuple[str, list[str]]:
    wanted = context.options.unit_targets.get(dimension)
    if not wanted:
        return SI_TARGETS[dimension], []
    found = resolve_target(wanted, dimension)
    if found is None:
        return SI_TARGETS[dimension], [f"unit target {wanted!r} is not a {dimension} unit "
                                       "this engine knows; the SI unit is used"]
    return found, []


def output_name(header: str, target: str) -> str:
    """The header naming the output unit: appended, or replacing the header's own unit."""
    symbol = UNITS[target].symbol
    found = header_unit(header)
    if found is None:
        return f"{header} ({symbol})"
    if target in found.reading.units and len(found.reading.units) == 1:
        return header
    start, end = found.span
    return header[:start] + symbol + header[end:]


@dataclass
class Plan:
    """Intermediate results of ``propose`` (kept together to keep functions short)."""

    dimension: str
    convention: dict[str, Any]
    evidence: list[str]
    fit_cells: int
    mark_confidence: float
    groups: GroupRule | None = None


class UnitEngine:
    """Quantities with units -> plain numbers in one unit per column (see module docstring)."""

    name: ClassVar[str] = "units"

    def propose(self, column: ColumnEvidence, context: Context) -> Decision | None:
        total = column.total
        if total == 0:
            return None
        cells = split_cells(column.values.tolist())
        header = header_unit(column.name)
        cells, clock_form, clock_note = _clock_cells(column, cells, header)
        tally = Tally.of(cells, column.counts)
        from_format = header is None and column.formats
        if from_format:
            header = format_unit(column.formats)   # '0.0" kg"': bare workbook numbers in kg
        header_dims = header.reading.dimensions if header else frozenset()
        word_dims = header_dimensions(column.name)
        if tally.unit_cells == 0 and (header is None or _clock_hours(column, header)):
            return None
        dimension = _choose_dimension(tally, header_dims, word_dims)
        if dimension is None:
            return None
        plan = self._plan(column, context, cells, tally, dimension, header, word_dims)
        if plan is None or _epoch_stamps(column, cells, plan.convention):
            return None
        if clock_form:
            plan.convention["clock_form"] = clock_form
            plan.evidence.insert(0, clock_note)
        if from_format and header is not None:
            plan.evidence = [FORMAT_NAMES + e.removeprefix(HEADER_NAMES)
                             if e.startswith(HEADER_NAMES)
                             else e.replace("the header's unit", "the formats' unit")
                             for e in plan.evidence]
        return self._decision(column, context, cells, tally, plan)

    def _plan(self, column: ColumnEvidence, context: Context, cells: Cells, tally: Tally,
              dimension: str, header: Any, word_dims: set[str]) -> Plan | None:
        decided, open_, evidence = _resolve_tokens(tally.token_cells, dimension, word_dims)
        header_id = _header_id(header, dimension, decided)
        if header is not None and tally.unit_cells == 0 and header_id is None:
            return None  # a header token that names no unit of the column's dimension
        target, notes = _target_for(dimension, context)
        used = _used_units(tally, decided)
        unit_share = tally.unit_cells / column.total
        bare_unit, bare_note = _bare_unit(header_id, used, unit_share, tally.bare_cells)
        customary = _column_customary(decided)
        groups = None
        if customary is None and _needs_customary(open_):
            customary = _region_customary(context)
            groups = _customary_groups(column, context) if customary is None else None
        marks, mark_p, mark_evidence = _decide_marks(column, context, cells)
        grouped = _grouped_marks(column, context, cells) if marks.get("decimal_mark") is None \
            else None
        if grouped is not None:
            groups = _merge_groups(grouped, groups)
            mark_evidence = tuple(grouped[2])
            mark_p = 0.97
        convention: dict[str, Any] = {
            "dimension": dimension, "target": target, "bare_unit": bare_unit,
            "column_units": used, "units": dict(sorted(decided.items())),
            "customary": customary, "decimal_mark": marks.get("decimal_mark"),
            "likely_decimal_mark": marks.get("likely_decimal_mark"),
            "ungrouped_digits": marks.get("ungrouped_digits"),
            "significant_digits": SIGNIFICANT_DIGITS}
        bare_fits = header_id is not None or unit_share >= UNIT_SHARE_FOR_BARE
        in_dim = sum(c for t, c in tally.token_cells.items()
                     if dimension in read_token(t).dimensions)
        fit_cells = min(in_dim, tally.unit_cells) + (tally.bare_cells if bare_fits else 0)
        evidence += _dimension_evidence(tally, dimension, header, header_id)
        evidence += [bare_note] if bare_note else []
        evidence += list(mark_evidence) + notes
        return Plan(dimension, convention, evidence, fit_cells, mark_p, groups)

    def _decision(self, column: ColumnEvidence, context: Context, cells: Cells, tally: Tally,
                  plan: Plan) -> Decision:
        convention = plan.convention
        converted = convert_quantities(column.values.tolist(), convention, cells)
        details: dict[str, Any] = {"caution": CAUTION,
                                   "target_symbol": UNITS[convention["target"]].symbol}
        slip = _slip_warning(converted, column.counts)
        evidence = list(plan.evidence)
        if slip:
            evidence.append(slip)
            details["unit_slip"] = slip
        listed = int(column.counts[converted.outcome == Outcome.UNRESOLVED].sum())
        if listed:
            evidence.append(f"{listed} cell(s) listed as undecided (see their reasons)")
        fit = min(plan.fit_cells / column.total, 1.0)
        if _ledger_letters(tally):
            fit *= 0.5
            evidence.append("the only unit tokens are 'S' and 'H' in capitals, which German "
                            "ledgers print for Soll and Haben (debit and credit): left to the "
                            "numbers engine")
        confidence = _confidence(tally, column.total, convention, plan)
        return Decision(kind="quantity", engine=self.name, fit=fit, confidence=confidence,
                        convention=convention, groups=plan.groups, evidence=tuple(evidence),
                        details=details, unit=UNITS[convention["target"]].symbol,
                        output_name=output_name(column.name, convention["target"]))

    def convert(self, values: Sequence[str], convention: Mapping[str, Any]) -> Converted:
        return convert_quantities(values, convention)


def _clock_cells(column: ColumnEvidence, cells: Cells, header: Any
                 ) -> tuple[Cells, str | None, str]:
    """Under a duration header, clock-written values ("3:30") split into hours, minutes and
    seconds: the cells, the clock form (h:mm, or m:ss under a header naming minutes) and
    the evidence sentence; else ``cells`` unchanged, None and ""."""
    units = header.reading.units if header is not None else frozenset({"h"})
    form = CLOCK_FORM_BY_HEADER_UNIT.get(next(iter(units))) if len(units) == 1 else None
    if form is None or not header_says_duration(column.name):
        return cells, None, ""
    found, clocks = clock_durations(column.values.tolist(), cells, form)
    written = int(column.counts[clocks].sum())
    if not written:
        return cells, None, ""
    return found, form, (f"{written} cell(s) are written as a clock ({form} or h:mm:ss) "
                         f"under a header naming a length of time ({column.name!r}): read "
                         "as hours, minutes and seconds")


def _epoch_stamps(column: ColumnEvidence, cells: Cells, convention: Mapping[str, Any]) -> bool:
    """Whether a duration column in seconds or milliseconds holds only whole numbers inside
    the epoch range of that unit under a header naming no length of time: moments
    ("Scan ms": 1714638600000 is 2024-05-02 in POSIX milliseconds), not 54-year spans."""
    unit = convention.get("bare_unit")
    if convention["dimension"] != "duration" or unit not in EPOCH_RANGES \
            or set(convention.get("column_units") or []) - {unit} \
            or header_says_duration(column.name):
        return False
    parts = pa.array(cells.number_parts(), type=pa.string())
    if len(parts) < len(cells.pieces) or not pc.all(pc.ascii_is_decimal(parts)).as_py():
        return False   # a value that is no number, a fraction or a compound: not stamps
    low, high = EPOCH_RANGES[unit]
    numbers = pc.cast(parts, pa.float64()).to_numpy(zero_copy_only=False)
    return bool(((numbers >= low) & (numbers <= high)).all())


def _ledger_letters(tally: Tally) -> bool:
    """Whether the column's unit tokens are exactly "S" and "H": seconds and hours only
    read case-folded, and the Soll/Haben marks of German ledgers ("1.234,50 S")."""
    return set(tally.token_cells) == {"S", "H"}


def _clock_hours(column: ColumnEvidence, header: Any) -> bool:
    """A header such as "peak_hour" over whole numbers 0-23 only: hours of the day (ISO
    8601 numbers them 00-23), labels rather than durations to convert to seconds."""
    if not clock_hour_header(header):
        return False
    text = pc.utf8_trim_whitespace(pa.array(column.values.tolist(), type=pa.string()))
    return bool(pc.all(pc.match_substring_regex(text, r"^(?:[01]?\d|2[0-3])$")).as_py())


def _header_id(header: Any, dimension: str, decided: Mapping[str, str]) -> str | None:
    if header is None:
        return None
    inside = header.reading.in_dimension(dimension)
    if len(inside) > 1:
        inside = inside & set(decided.values()) or inside
    return next(iter(inside)) if len(inside) == 1 else None


def _used_units(tally: Tally, decided: Mapping[str, str]) -> list[str]:
    cells: Counter[str] = Counter()
    for token, count in tally.token_cells.items():
        if token in decided:
            cells[decided[token]] += count
    return [u for u, _ in cells.most_common()]


def _bare_unit(header_id: str | None, used: list[str], unit_share: float,
               bare_cells: int) -> tuple[str | None, str]:
    if header_id is not None:
        note = (f"{bare_cells} number(s) without a unit take the header's unit "
                f"({UNITS[header_id].symbol})") if bare_cells else ""
        return header_id, note
    if len(used) == 1 and unit_share >= SOLE_UNIT_SHARE:
        note = (f"{bare_cells} number(s) without a unit are read in {UNITS[used[0]].symbol}, "
                "the only unit the column uses") if bare_cells else ""
        return used[0], note
    if bare_cells:
        return None, (f"{bare_cells} number(s) without a unit are listed: the header names "
                      "no unit and the column uses " + (
                          "several units" if len(used) > 1 else "units in few cells"))
    return None, ""


def _needs_customary(open_: Mapping[str, frozenset[str]]) -> bool:
    return any({UNITS[u].system for u in units} == {"US", "imperial"} for units in open_.values())


def _decide_marks(column: ColumnEvidence, context: Context, cells: Cells
                  ) -> tuple[dict[str, Any], float, tuple[str, ...]]:
    """The decimal mark of the number parts, as the numbers engine decides it; whole
    numbers without group marks settle ambiguous parts only where every split agrees."""
    found = decide_marks(*_number_tally(cells, column.counts), context)
    digits = found[0].get("ungrouped_digits")
    if digits:
        def forms_of(mask: np.ndarray) -> tuple[Forms, np.ndarray]:
            part = Cells([cells.pieces[i] for i in np.flatnonzero(mask).tolist()])
            forms = analyse(_number_tally(part, column.counts[mask])[0])
            return forms, np.ones(len(forms), bool)

        scoped = scoped_ungrouped(column, context, digits, forms_of)
        if scoped < digits:
            found = decide_marks(*_number_tally(cells, column.counts), context, scoped)
    return found


def _number_tally(cells: Cells, counts: np.ndarray) -> tuple[list[str], list[int]]:
    tally: Counter[str] = Counter()
    for pieces, count in zip(cells.pieces, counts.tolist()):
        for part, _ in pieces:
            tally[part] += count
    return list(tally), list(tally.values())


def _dimension_evidence(tally: Tally, dimension: str, header: Any,
                        header_id: str | None) -> list[str]:
    evidence = []
    own = tally.dimension_cells.get(dimension, 0)
    if own:
        evidence.append(f"{own} cell(s) carry a unit of {dimension}")
    others = {d: c for d, c in tally.dimension_cells.items() if d != dimension}
    if others:
        evidence.append("cells of another dimension are listed: " + ", ".join(
            f"{c} of {d}" for d, c in sorted(others.items())))
    if header_id:
        evidence.append(f"{HEADER_NAMES}{UNITS[header_id].symbol} (written {header.token!r})")
    return evidence


def _slip_warning(converted: Converted, counts: np.ndarray) -> str | None:
    done = converted.outcome == Outcome.CONVERTED
    if done.sum() < 4:
        return None
    values = [float(t) for t, ok in zip(converted.text, done) if ok]
    return unit_slip(values, counts[done].tolist())


def _confidence(tally: Tally, total: int, convention: Mapping[str, Any], plan: Plan) -> float:
    unit_share = tally.unit_cells / max(total, 1)
    if unit_share >= 0.5:
        p = 0.995
    elif convention.get("bare_unit") and tally.unit_cells == 0:
        p = 0.95  # the header alone says what the numbers are
    else:
        p = 0.9
    own = tally.dimension_cells.get(plan.dimension, 0)
    other = sum(tally.dimension_cells.values()) - own
    if own + other:
        p *= 1.0 - 0.5 * other / (own + other)
    guessed_bare = tally.unit_cells and tally.bare_cells and _no_header(plan)
    if convention.get("bare_unit") and guessed_bare:
        p *= 0.95  # bare numbers take the column's only unit: likely, not certain
    if convention.get("clock_form"):
        p *= 0.9   # the header, not the cells, says whether "3:30" is h:mm or m:ss
    return round(min(max(p * plan.mark_confidence, 0.01), 0.999), 4)


def _no_header(plan: Plan) -> bool:
    return not any(e.startswith((HEADER_NAMES, FORMAT_NAMES)) for e in plan.evidence)

