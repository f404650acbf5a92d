"""Numbers: amounts, prices, percentages, in any regional notation.

The decimal mark is decided from evidence, never from a guess: a value that only one
notation reads ("1.234,56", "0,5", "1,234,567", "12,34,567.8") decides it for its column,
or for its group of rows when a merged export mixes notations and a column (a country
first) explains the split. A value whose readings differ ("1.234", "2,500") and that
nothing decides is listed with both readings. A country column is only a hint: it names
the likely reading of listed values and stops one group's notation from deciding rows
of a country whose CLDR notation differs.

Written forms read: signs ``-`` ``+`` U+2212, accounting ``(1,234.50)``, trailing minus
``1.234,56-``, credit/debit marks ``1,234.50 CR`` (German ``S``/``H`` and thousands
``TEUR``/``T€`` where a German writer shows: ``numbers_ledger``), scientific ``1.5E3``,
magnitude words (``locales/magnitudes.txt``), whole amounts ``5,-``, percentages (``%``
after or, as CLDR tr and eu write it, before the number; ``‰`` ``‱`` read as a tenth and
a hundredth of a percent; numbers without the sign beside them: ``numbers_percent``) and
currencies (ISO 4217 codes and CLDR signs, before or after the number). Digits of every
script (Arabic-Indic, Persian, Devanagari, full-width, ...) read as their Unicode values,
the Arabic decimal and thousands separators as the decimal and group marks of any
notation. Invisible format characters (zero-width spaces, direction marks, a soft hyphen
between digits) are dropped before reading.

Output: plain decimals with ``.``, no grouping, exact (``decimal.Decimal``), trailing
fractional zeros dropped unless asked to keep them ("12.50" -> "12.5", "1200.0" -> "1200").

Convention keys (plain values; edit them in a plan file):

``decimal_mark``        ``"."``, ``","`` or ``"undecided"`` (null is read the same way):
                        each value is read on its own form, and values that read
                        differently under the two marks are listed.
                        The group marks accepted follow from it: for ``"."``: ``,`` (3-digit
                        or lakh grouping), spaces (any width) and apostrophes; for ``","``:
                        ``.``, spaces and apostrophes.
``settled_marks``       marks an ambiguous value ("1.234", "2,500") may hold and still be
                        read under ``decimal_mark``; the others are listed. The other mark
                        (read as a group mark) is settled by the decision; the decimal mark
                        itself only once a deciding value shows it as one ("3.5"), since
                        "80.600" read as 80.6 would claim exactly three decimals. Absent:
                        both.
``likely_decimal_mark`` ``"."``, ``","`` or null: the reading offered as ``best`` for a
                        listed value (from a locale hint); it never converts a value.
``ungrouped_digits``    an integer or null: the column (or group) writes whole numbers of
                        this many digits without group marks ("12500"), so an ambiguous
                        value whose group reading has no more digits ("1.234", "12,345")
                        is read with its own mark as the decimal mark, unless the decided
                        mark is the other one or its currency has no minor units. A writer
                        with CLDR minimumGroupingDigits 2 (es, pl) writes "5000" but
                        "12.345", so "5000" settles "1.234" and not "12.345".
``trailing_zeros``      ``"drop"`` (default) or ``"keep"`` the fractional zeros as written.
``percent``             true: values are percentages, kept as written (``12.5%`` -> 12.5),
                        and the column's unit is "percent".
``bare_percent``        in a percentage column, how numbers written without a percent sign
                        are read: ``"points"`` (as written), ``"fraction"`` (times 100:
                        a sheet's 0.125 -> 12.5) or ``"listed"`` (both readings offered);
                        absent: points. Decided by comparing their sizes with the signed
                        percentages' (``numbers_percent``); fractions only by a plan.
``currency_mode``       ``"none"``, ``"single"`` (amounts in ``currency``; the unit) or
                        ``"mixed"`` (each value's ISO code goes to the companion column
                        "<column> currency").
``currency``            ISO 4217 code of a single-currency column (bare amounts take it).
``symbols``             sign -> ISO code for signs several currencies share, e.g.
                        ``{"$": "CAD"}``; per group when a country column decides it.
``per_unit``            what the column's prices are per: a unit id of the units engine
                        ("kg", "lb", "m2", "L") or "piece" ("2,50 €/kg", "$3.10 per lb",
                        "4 € je Stk."), null when they are plain amounts. A price per another
                        unit of the same dimension is rewritten per this one (NIST SP 811
                        factors, 15 significant digits: $1/lb -> 2.20462262184878 per kg);
                        one per anything else is listed.
``side_marks``          how credit/debit marks after an amount ("1,234.50 CR", "980 DR",
                        "12 DB") are read: ``"column"`` (the amount as written, the side in
                        the companion column "<column> side": "credit" or "debit"),
                        ``"credit-negative"`` (CR is a minus), ``"debit-negative"`` (DR is a
                        minus), or null (the column has none: a marked value is listed).
                        Which side is negative depends on whose books they are (a bank
                        statement's CR is money in, a supplier ledger's is money owed), so
                        the engine never picks a sign itself.

``magnitude_words``     word -> power of ten for magnitude words whose power depends on the
                        writer's language (``{"bn": 12}``; ``locales/magnitude_languages.txt``);
                        present when the column holds such words; a word absent is listed.
``soll_haben``          true: "S"/"H" after an amount are German debit/credit marks, read
                        as ``side_marks`` says; false: such values are listed (present
                        when the column holds them; ``numbers_ledger``).
``currency_thousands``  true: "T" glued before the currency ("1.234 TEUR", "5 T€") is
                        thousands; false: listed with the thousand and trillion readings.

Per-group conventions (``Decision.groups``) carry the same keys for the rows of one label.

Engine options (``Options.engine["numbers"]``): ``trust_locale_hint`` (default false) lets a
locale hint (country column, ``Options.locale``/``default_region``) decide a column or
group that no value decides; ``trailing_zeros`` ("drop"/"keep") sets that key;
``side_marks`` sets that key for a column that holds credit/debit marks; ``bare_percent``
sets that key for every percentage column.

Evidence the decision weighs: values that only one notation reads, the role each mark is
seen in, whole numbers written without group marks, workbook number cells
(``ColumnEvidence.typed``, plain already) and formats, the CLDR notation of each row's
country (babel), the header (currency codes and signs), a column of currency codes, and
the run options. Typed workbook numbers are not counted as evidence about the text cells
beside them. Where no value of a column decides its mark, the other numbers of the same
rows may (``numbers_rows``); fixed-width digit strings are codes unless their row order
shows a measured series (``numbers_series``).
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, replace
from decimal import Decimal
from functools import cache
from typing import Any, ClassVar

import numpy as np
import pyarrow as pa
import pyarrow.compute as pc
from babel import Locale

from harmonize.context import Context, Split
from harmonize.engines.base import Converted, Decision, GroupRule
from harmonize.engines.numbers_convert import (
    SIDE_COLUMN,
    SIDE_MODES,
    amounts_of,
    convert_amounts,
    parse_amount,
    parse_amounts,
    per_ratio,
)
from harmonize.engines.numbers_currency import (
    candidates,
    codes_in_text,
    iso_codes,
    ranked_candidates,
    resolve_alone,
    territory_currencies,
)
from harmonize.engines.numbers_forms import (
    AMBIGUOUS,
    COMMA_ONLY,
    DOT_ONLY,
    NOT_NUMBER,
    SAME,
    Forms,
    analyse,
    format_decimal_plain,
    per_key,
)
from harmonize.engines.numbers_ledger import (
    LETTERS_KEY,
    THOUSANDS_KEY,
    LedgerDecision,
    decide_ledger,
    sides_of,
)
from harmonize.engines.numbers_magnitudes import KEY as MAGNITUDE_KEY
from harmonize.engines.numbers_magnitudes import MagnitudeDecision, decide_magnitude_words
from harmonize.engines.numbers_marks import (
    MarkDecision,
    decide_column_marks,
    decide_marks,
    single_territory,
)
from harmonize.engines.numbers_percent import KEY as BARE_PERCENT_KEY
from harmonize.engines.numbers_percent import MODES as BARE_PERCENT_MODES
from harmonize.engines.numbers_percent import PercentDecision, decide_percent
from harmonize.engines.numbers_series import measured_series
from harmonize.evidence import ColumnEvidence
from harmonize.locales import load_entries

__all__ = ["NumberEngine", "decide_marks", "format_decimal_plain", "parse_amount",
           "parse_amounts"]

MIN_SHARE = 0.5           # below this share of number cells the column is not ours
IDENTIFIER_SHARE = 0.01   # share of code-like cells (leading zeros, 16+ digits) that disowns
FIXED_WIDTH_MIN = 5       # bare digit strings all this long or longer look like codes


# ------------------------------------------------------------------------ currency


@dataclass
class CurrencyDecision:
    mode: str
    code: str | None
    symbols: dict[str, str]
    per_label: dict[str, dict[str, str]]
    confidence: float
    evidence: list[str]
    split_column: str | None = None


def _resolve_from(codes: frozenset[str], known: frozenset[str]) -> str | None:
    hit = codes & known
    return next(iter(hit)) if len(hit) == 1 else None


def _decide_currency(column: ColumnEvidence, forms: Forms, context: Context,
                     number: np.ndarray) -> CurrencyDecision:
    tokens = forms.currency
    present = number & forms.has_currency
    if not present.any():
        return _currency_from_formats(column)
    written = sorted(set(tokens[present].tolist()))
    alone = {t: resolve_alone(t) for t in written}
    shared = [t for t in written if alone[t] is None]
    explicit = frozenset(c for c in alone.values() if c)
    symbols: dict[str, str] = {}
    per_label: dict[str, dict[str, str]] = {}
    evidence: list[str] = []
    confidence = 0.99
    header = codes_in_text(column.name)
    options_codes = _options_currencies(context)
    territory = single_territory(context, column.name) if context.country_split is None else None
    country_codes = territory_currencies(territory) if territory else frozenset()
    split_column = None
    for token in shared:
        options = candidates(token)
        split, by_label = _resolve_by_rows(column, forms, context, token, options)
        if by_label and split_column in (None, split.column):
            split_column = split.column
            per_label.update({lab: {**per_label.get(lab, {}), token: code}
                              for lab, code in by_label.items()})
            evidence.append(f"{token!r} is read per {split.column!r}: " + ", ".join(
                f"{lab} {code}" for lab, code in list(by_label.items())[:6]))
            confidence = min(confidence, 0.95)
            continue
        for source, known in (("the column's other values", explicit), ("the header", header),
                              ("the country column", country_codes),
                              ("the run options", options_codes)):
            code = _resolve_from(options, known)
            if code:
                symbols[token] = code
                evidence.append(f"{token!r} is read as {code} from {source}")
                confidence = min(confidence, 0.85 if source == "the run options" else 0.93)
                break
        else:
            evidence.append(f"{token!r} may stand for {', '.join(ranked_candidates(token)[:6])}; "
                            "nothing in the data decides: the amounts are converted and the "
                            "currency is left unknown (where it differs by row, those cells "
                            "are listed)")
    used = set(explicit) | set(symbols.values())
    used |= {code for m in per_label.values() for code in m.values()}
    if not used:
        return CurrencyDecision("single", None, symbols, per_label, 0.8, evidence, split_column)
    if len(used) == 1:
        code = next(iter(used))
        evidence.append(f"amounts are in {code}")
        return CurrencyDecision("single", code, symbols, per_label, confidence, evidence,
                                split_column)
    evidence.append(f"amounts in {len(used)} currencies ({', '.join(sorted(used))}): "
                    "each row's currency goes to a companion column")
    return CurrencyDecision("mixed", None, symbols, per_label, confidence, evidence,
                            split_column)


def _currency_from_formats(column: ColumnEvidence) -> CurrencyDecision:
    """Workbook number formats such as '[$€-407]#,##0.00' name the currency of bare cells."""
    named = frozenset().union(*(codes_in_text(fmt) for fmt in column.formats))
    if len(named) != 1:
        return CurrencyDecision("none", None, {}, {}, 1.0, [])
    code = next(iter(named))
    return CurrencyDecision("single", code, {}, {}, 0.97,
                            [f"the workbook's number formats name {code}"])


def _options_currencies(context: Context) -> frozenset[str]:
    options = context.options
    region = options.default_region or context.file_territory
    if not region and options.locale:
        try:
            region = Locale.parse(options.locale).territory
        except Exception:
            region = None
    return territory_currencies(region.upper()) if region else frozenset()


def _row_splits(context: Context, column: str) -> list[tuple[Split, list[frozenset[str]]]]:
    """Columns naming each row's currency: a country column, or a column of ISO codes."""
    found = []
    country = context.country_split
    if country is not None:
        found.append((country, [territory_currencies(t) if t else frozenset()
                                for t in country.territories]))
    for split in context.splits(exclude=column):
        if all(label.strip().upper() in iso_codes() for label in split.labels):
            found.append((split, [frozenset({label.strip().upper()}) for label in split.labels]))
    return found


def _resolve_by_rows(column: ColumnEvidence, forms: Forms, context: Context, token: str,
                     options: frozenset[str]) -> tuple[Split | None, dict[str, str]]:
    """Label -> code for every group whose rows use ``token``, from the first column that
    settles all of them ({} when none does)."""
    if column.codes is None:
        return None, {}
    token_of = dict(zip(column.values.tolist(), forms.currency.tolist(), strict=True))
    for split, label_codes in _row_splits(context, column.name):
        found: dict[str, str] = {}
        parts = column.by_group(split.codes, split.n_groups)
        for label, known, part in zip(split.labels, label_codes, parts, strict=True):
            if any(token_of[v] == token for v in part.values.tolist()):
                code = _resolve_from(options, known)
                if code is None:
                    break
                found[label] = code
        else:
            if found:
                return split, found
    return None, {}


# ----------------------------------------------------------------------- the engine


@cache
def _identifier_words() -> frozenset[str]:
    return frozenset(w.casefold() for w in load_entries("number_headers").get("identifier", ()))


def _identifier_like(column: ColumnEvidence, forms: Forms) -> tuple[bool, str | None]:
    """Codes that happen to be digits (leading zeros, fixed width, 16+ digits), and the
    evidence sentence when fixed-width digits are kept as numbers: a measured series."""
    counts, total = column.counts, max(column.total, 1)
    bare = forms.bare_digits
    lengths = forms.length
    leading_zero = bare & (lengths > 1) & forms.zero_first
    long_digits = np.zeros(len(forms), dtype=bool)
    longer = np.flatnonzero(lengths >= 16)
    long_digits[longer] = [forms.text_at(i).isdigit() for i in longer.tolist()]
    if counts[leading_zero | long_digits].sum() >= IDENTIFIER_SHARE * total:
        return True, None
    number_cells = counts[forms.is_number].sum()
    if counts[bare].sum() < 0.95 * number_cells:
        return False, None
    words = set(re.findall(r"\w+", column.name.casefold()))
    if words & _identifier_words() or "#" in column.name:
        return True, None
    widths = set(lengths[bare].tolist())
    if len(widths) == 1 and widths.pop() >= FIXED_WIDTH_MIN and bare.sum() >= 20:
        round_share = np.mean(pc.ends_with(forms.text_array.filter(pa.array(bare)), "0"))
        if round_share >= 0.5:
            return False, None
        # a header naming no code: a series measured row after row is still numbers
        series = measured_series(column, forms, bare)
        return series is None, series
    return False, None


def _unit_lookalike(forms: Forms, number: np.ndarray) -> bool:
    """Every amount carries the same one-letter suffix ("300 K"): more likely a unit."""
    mags = set(forms.magnitude[number & forms.has_magnitude].tolist())
    if (number & ~forms.has_magnitude).any():
        mags.add("")
    no_currency = not forms.has_currency[number].any()
    return len(mags) == 1 and len(next(iter(mags))) == 1 and no_currency


class NumberEngine:
    """Amounts in any notation -> plain decimals (see the module docstring)."""

    name: ClassVar[str] = "numbers"

    def propose(self, column: ColumnEvidence, context: Context) -> Decision | None:
        total = column.total
        if total == 0:
            return None
        forms = analyse(column.values)
        number = forms.is_number
        fit = float(column.counts[number].sum()) / total
        if fit < MIN_SHARE:
            return None
        code_like, series = _identifier_like(column, forms)
        if code_like:
            return None
        if _unit_lookalike(forms, number):
            fit *= 0.5
        typed = np.zeros(len(forms), dtype=bool)
        if column.typed:
            typed = np.array([column.typed.get(v) == "number" for v in column.values.tolist()],
                             dtype=bool)
        skip = typed if (~typed & number).any() else np.zeros(len(forms), bool)
        marks = decide_column_marks(column, forms, context, skip)
        currency = _decide_currency(column, forms, context, number)
        percent = decide_percent(column, forms, number,
                                 lambda: _amounts(forms, marks.convention(), typed), typed,
                                 context.options.for_engine("numbers"))
        words = decide_magnitude_words(column, forms, context,
                                       lambda: single_territory(context, column.name))
        ledger = decide_ledger(column, forms, context,
                               lambda: single_territory(context, column.name))
        decision = self._decision(column, context, forms, fit, marks, currency,
                                  (percent, ledger), typed, words)
        return replace(decision, evidence=(series, *decision.evidence)) if series else decision

    def _decision(self, column: ColumnEvidence, context: Context, forms: Forms, fit: float,
                  marks: MarkDecision, currency: CurrencyDecision,
                  forms_read: tuple[PercentDecision, LedgerDecision], typed: np.ndarray,
                  words: MagnitudeDecision) -> Decision:
        options = context.options.for_engine("numbers")
        percents, ledger = forms_read
        groups = _group_rule(marks, currency, words)
        sides, side_evidence = _decide_sides(column, forms, options,
                                             ledger.convention(forms))
        per_unit, per_evidence = _decide_per(column, forms, context)
        percent = percents.percent
        convention: dict[str, Any] = {
            **marks.convention(), "trailing_zeros": options.get("trailing_zeros", "drop"),
            "percent": percent, "currency_mode": currency.mode,
            "currency": currency.code, "symbols": currency.symbols, "side_marks": sides,
            "per_unit": per_unit, **percents.convention(), **ledger.convention(forms)}
        if words.evidence:
            convention[MAGNITUDE_KEY] = words.readings
        evidence = (list(marks.evidence) + currency.evidence + ledger.evidence + side_evidence
                    + per_evidence + words.evidence)
        if typed.any():
            evidence.append(f"{int(typed.sum())} value(s) are workbook number cells")
        if column.formats:
            evidence.append("workbook formats: " + ", ".join(
                f"{fmt!r}" for fmt, _ in column.formats.most_common(3)))
        if percent:
            evidence.append("values are percentages: numbers kept as written, unit 'percent'")
            evidence.extend(percents.evidence)
            if (forms.percent & (forms.shift < 0) & forms.is_number).any():
                evidence.append("per mille (‰) and per ten thousand (‱) values are written as "
                                "percentages: a tenth and a hundredth of their number")
        unit = "percent" if percent else currency.code
        if per_unit:
            symbol = _per_symbol(per_unit)
            unit = f"{currency.code}/{symbol}" if currency.code else f"per {symbol}"
        details: dict[str, Any] = {"group_marks": _group_marks_seen(forms, marks.mark)}
        if percent:
            details["percent_note"] = "numbers keep their written value (12.5% -> 12.5)"
        if currency.code:
            details["currency_note"] = f"amounts in {currency.code}; no exchange-rate conversion"
        confidence = (_kind_confidence(forms, fit) * marks.confidence * currency.confidence
                      * words.confidence * percents.confidence * ledger.confidence)
        return Decision(kind="number", engine=self.name, fit=min(fit, 1.0),
                        confidence=round(min(max(confidence, 0.01), 0.999), 4),
                        convention=convention, groups=groups, evidence=tuple(evidence),
                        details=details, unit=unit)

    def convert(self, values: Sequence[str], convention: Mapping[str, Any]) -> Converted:
        return convert_amounts(values, convention)

    def companions(self, convention: Mapping[str, Any]) -> tuple[str, ...]:
        """A column mixing currencies keeps each row's ISO code beside the amount; one
        whose credit/debit marks are not read as signs keeps each row's side."""
        found = ("currency",) if convention.get("currency_mode") == "mixed" else ()
        return found + (("side",) if convention.get("side_marks") == SIDE_COLUMN else ())

    def problems(self, convention: Mapping[str, Any]) -> list[str]:
        found = []
        sides = convention.get("side_marks")
        if sides is not None and sides not in SIDE_MODES:
            found.append(f"side_marks must be one of {', '.join(SIDE_MODES)} or absent, "
                         f"not {sides!r}")
        bare = convention.get(BARE_PERCENT_KEY)
        if bare is not None and bare not in BARE_PERCENT_MODES:
            found.append(f"{BARE_PERCENT_KEY} must be one of {', '.join(BARE_PERCENT_MODES)} "
                         f"or absent, not {bare!r}")
        for key in (LETTERS_KEY, THOUSANDS_KEY):
            if convention.get(key) not in (None, True, False):
                found.append(f"{key} must be true or false, not {convention[key]!r}")
        return found


def _per_symbol(key: str) -> str:
    from harmonize.engines.units_registry import UNITS
    return UNITS[key].symbol if key in UNITS else key


def _per_target(key: str, context: Context) -> str:
    from harmonize.engines.units_registry import UNITS, resolve_target
    if key not in UNITS:
        return key
    dimension = UNITS[key].dimension
    wanted = context.options.unit_targets.get(dimension)
    found = resolve_target(wanted, dimension) if wanted else None
    return found if found and per_ratio(key, found) is not None else key


def _decide_per(column: ColumnEvidence, forms: Forms, context: Context
                ) -> tuple[str | None, list[str]]:
    """What the column's prices are per: the unit most of its priced cells name, or the
    run's unit target for that dimension (``Options.unit_targets``)."""
    priced = np.flatnonzero(forms.is_number & (forms.per != ""))
    if not len(priced):
        return None, []
    cells: dict[str, int] = {}
    for i, token in zip(priced.tolist(), forms.per[priced].tolist(), strict=True):
        key = per_key(token)
        cells[key] = cells.get(key, 0) + int(column.counts[i])
    chosen = max(sorted(cells), key=lambda k: cells[k])
    evidence = [f"{cells[chosen]} cell(s) are prices per {_per_symbol(chosen)}"]
    wanted = _per_target(chosen, context)
    if wanted != chosen:
        evidence.append(f"prices are written per {_per_symbol(wanted)} (run option)")
        cells.setdefault(wanted, 0)
        chosen = wanted
    others = sorted(k for k in cells if k != chosen)
    rescaled = [k for k in others if per_ratio(k, chosen) is not None]
    if rescaled:
        evidence.append(f"prices per {', '.join(map(_per_symbol, rescaled))} are rewritten per "
                        f"{_per_symbol(chosen)} (NIST SP 811 factors)")
    if len(rescaled) < len(others):
        evidence.append("prices per " + ", ".join(_per_symbol(k) for k in others
                                                  if k not in rescaled) + " are listed")
    return chosen, evidence


def _decide_sides(column: ColumnEvidence, forms: Forms, options: Mapping[str, Any],
                  letters: Mapping[str, Any]) -> tuple[str | None, list[str]]:
    """How the column's credit/debit marks are read (None when it has none); ``letters``
    says whether Soll/Haben letters are read (``numbers_ledger``)."""
    side = sides_of(forms, letters)
    marked = forms.is_number & ((side == "credit") | (side == "debit"))
    if not marked.any():
        return None, []
    cells = {name: int(column.counts[marked & (side == name)].sum())
             for name in ("credit", "debit")}
    seen = " and ".join(f"{n} {side}" for side, n in cells.items() if n)
    if "side_marks" not in options and not cells["debit"] and _crore_like(forms, marked):
        # "1.2 Cr" is also 1.2 crore (10^7) in Indian figures: only a debit mark beside it
        # shows a ledger
        return None, [f"{cells['credit']} value(s) end in 'CR' with no debit mark in the "
                      "column: a credit mark or crore (10^7), listed"]
    chosen = options.get("side_marks", SIDE_COLUMN)
    if chosen == SIDE_COLUMN:
        return chosen, [f"{seen} mark(s): which side is negative depends on whose "
                        "books these are, so amounts are written as they stand and each "
                        "row's side goes to the companion column 'side' (set side_marks to "
                        "'credit-negative' or 'debit-negative' to sign them)"]
    return chosen, [f"{seen} mark(s) read as signs: {chosen} (run option)"]


def _crore_like(forms: Forms, marked: np.ndarray) -> bool:
    """Whether a marked value ends in "CR" (not the German "H" or "Haben")."""
    ends = pc.match_substring_regex(forms.text_array, r"(?i)cr\.?[ )-]*$").fill_null(False)
    return bool((marked & np.asarray(ends, dtype=bool)).any())


def _amounts(forms: Forms, marks: Mapping[str, Any], typed: np.ndarray
             ) -> list[Decimal | None]:
    """Each value's number under the column's marks; a typed workbook number is plain
    ("0.125") whatever the text cells write, so it is read with "." (as the core does)."""
    found = amounts_of(forms, marks)
    if typed.any():
        plain = amounts_of(forms, {**marks, "decimal_mark": "."})
        found = [p if t else f for f, p, t in zip(found, plain, typed.tolist(), strict=True)]
    return found


def _kind_confidence(forms: Forms, fit: float) -> float:
    number = forms.is_number
    rich = number & ~forms.bare_digits
    base = 0.995 if rich.sum() >= max(1, 0.1 * number.sum()) else 0.95
    return base * (1.0 - 0.5 * (1.0 - fit))


def _group_marks_seen(forms: Forms, mark: str | None) -> list[str]:
    """Group marks the values use (space stands for every space look-alike)."""
    status = forms.status
    if mark is None:
        readings = ((".", (status == SAME) | (status == DOT_ONLY)), (",", status == COMMA_ONLY))
    else:
        readings = ((mark, (status != NOT_NUMBER) & (status != AMBIGUOUS)),)
    seen: set[str] = set()
    for decimal, mask in readings:
        # a body holds digits and these marks only (numbers_forms.SPLIT_PATTERN)
        seen |= forms.chars_in(mask) - {decimal}
    return sorted(seen)


def _group_rule(marks: MarkDecision, currency: CurrencyDecision,
                words: MagnitudeDecision) -> GroupRule | None:
    per_label: dict[str, dict[str, Any]] = {k: dict(v) for k, v in marks.per_label.items()}
    by = marks.split.column if marks.split is not None else None
    if words.per_label and by in (None, words.split_column):
        # a group's readings replace the column's: the column's own are merged in
        by = words.split_column
        for label, readings in words.per_label.items():
            per_label.setdefault(label, {})[MAGNITUDE_KEY] = {**words.readings, **readings}
    elif words.per_label:
        # rows split by another column: a word read alike in every country is read so
        words.readings.update(_agreed_symbols(words.per_label))
    if currency.per_label and by in (None, currency.split_column):
        by = currency.split_column
        for label, extra in currency.per_label.items():
            per_label.setdefault(label, {})["symbols"] = {**currency.symbols, **extra}
    elif currency.per_label:
        # the rows are split by another column: a sign read alike in every group it
        # appears in is read so everywhere; one read differently stays listed
        currency.symbols.update(_agreed_symbols(currency.per_label))
    if by is None or not per_label:
        return None
    return GroupRule(by=by, conventions=per_label)


def _agreed_symbols(per_label: Mapping[str, Mapping[str, Any]]) -> dict[str, Any]:
    readings: dict[str, set[Any]] = {}
    for symbols in per_label.values():
        for sign, code in symbols.items():
            readings.setdefault(sign, set()).add(code)
    return {sign: codes.pop() for sign, codes in readings.items() if len(codes) == 1}
