"""Whole invented export files, of every column kind, with the truth of every cell.

Invented scenario: "Brambleway Garden Tools", an invented distributor of garden tools with
branches in thirteen countries. Each branch writes its exports the way its office software
does: dates in the CLDR patterns of its locale, amounts with its decimal and group marks,
weights and lengths in its own units, phone numbers in its national style, yes/no in its
own language. Files are one branch's export (the country named in the file name, e.g.
``orders_de.csv``), several branches merged with a Country column, plain exports that name
no country at all, or workbooks with two or three sheets whose cells are partly typed.

Every cell carries the output text an outside checker expects ("" when it is a missing
value) and whether the data decides it. Truth comes from outside the project: Python's
datetime for dates, babel (CLDR) for every locale rendering, Decimal arithmetic with the
NIST factors (SP 811 App. B, HB 44 App. C) for units, phonenumbers for E.164.

Decidable, cell by cell (a demanding but fair reading):

* dates: the value fixes its own reading (month name, year first with four digits, day
  above 12, day equal to month, a typed cell), or the file names the country of the row
  (file name or Country column), or the column holds a value only the true order reads;
* amounts: the value fixes which mark is decimal (two marks, a mark not followed by
  exactly three digits, a leading "0,"), or another value of its group (the branch's
  rows) fixes it, or it is in a currency without minor units (yen); ``1.234`` with no
  such value is undecidable even where the country is named (issue #4);
* phones: international form, or the row's country is named; else undecidable;
* everything else (quantities, booleans, text, identifiers, datetimes with ISO order) is
  decidable by construction.

``score`` reads the pipeline's output files and ``harmonize-report.json`` only.
"""

from __future__ import annotations

import csv
import json
import math
import random
import re
from collections import Counter, defaultdict
from collections.abc import Callable
from dataclasses import dataclass, field
from datetime import UTC, date, datetime, timedelta, timezone
from decimal import Decimal, localcontext
from fractions import Fraction
from pathlib import Path

import babel.dates as bd
import babel.numbers as bn
import phonenumbers as pn

# ---------------------------------------------------------------- truth records


@dataclass
class Cell:
    raw: str | object          # text as written, or a typed workbook value
    expected: str              # output text expected; "" = missing
    decidable: bool = True
    mask: bool = False         # a missing-value mask
    si: Decimal | None = None  # quantities: the value in the SI unit of ``dimension``
    by_context: bool = False   # decidable only because the data names the row's country
    number_format: str | None = None   # workbook display format of a typed cell


@dataclass
class Column:
    name: str
    kind: str                  # the report's kind the column should get
    cells: list[Cell]
    dimension: str | None = None   # quantities: mass, length, temperature, volume


@dataclass
class Sheet:
    name: str | None
    columns: list[Column]

    @property
    def rows(self) -> int:
        return len(self.columns[0].cells)


@dataclass
class ExportFile:
    name: str
    sheets: list[Sheet]
    delimiter: str = ","
    encoding: str = "utf-8"
    scenario: str = ""

    def write(self, folder: Path) -> Path:
        path = folder / self.name
        if path.suffix == ".xlsx":
            _write_xlsx(self, path)
        else:
            _write_csv(self, path)
        return path


# ---------------------------------------------------------------- branches


@dataclass(frozen=True)
class Branch:
    code: str
    locale: str
    label: str                 # how the Country column writes it
    currency: str
    yes_no: tuple[str, str]


BRANCHES = {b.code: b for b in [
    Branch("US", "en_US", "United States", "USD", ("yes", "no")),
    Branch("GB", "en_GB", "United Kingdom", "GBP", ("Yes", "No")),
    Branch("DE", "de_DE", "Deutschland", "EUR", ("ja", "nein")),
    Branch("FR", "fr_FR", "France", "EUR", ("oui", "non")),
    Branch("NL", "nl_NL", "Nederland", "EUR", ("ja", "nee")),
    Branch("ES", "es_ES", "España", "EUR", ("sí", "no")),
    Branch("IT", "it_IT", "Italia", "EUR", ("sì", "no")),
    Branch("SE", "sv_SE", "Sverige", "SEK", ("ja", "nej")),
    Branch("PL", "pl_PL", "Polska", "PLN", ("tak", "nie")),
    Branch("BR", "pt_BR", "Brasil", "BRL", ("sim", "não")),
    Branch("AU", "en_AU", "Australia", "AUD", ("yes", "no")),
    Branch("CH", "de_CH", "Schweiz", "CHF", ("ja", "nein")),
    Branch("JP", "ja_JP", "Japan", "JPY", ("yes", "no")),
]}
# Countries whose numeric dates are day/month ambiguous; plain exports come from these.
AMBIGUOUS_DATE_BRANCHES = ("US", "GB", "DE", "FR", "NL", "ES", "IT", "PL", "BR", "AU", "CH")

# Missing-value masks: the brief's list plus common spreadsheet ones (common practice).
MASKS = ("", "", "N/A", "n/a", "-", "null", "NULL", "k.A.", "n.d.", "#N/A", "--", "  ")


# ---------------------------------------------------------------- small helpers


def plain_decimal(value: Decimal) -> str:
    """The project's number text: '.' decimal mark, no grouping, no exponent."""
    text = format(value, "f")
    if "." in text:
        text = text.rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


def _pattern_order(pattern: str) -> str:
    names = {"d": "D", "M": "M", "L": "M", "y": "Y"}
    fields = [v[0] for t, v in bd.tokenize_pattern(pattern) if t == "field" and v[0] in names]
    return "".join(dict.fromkeys(names[f] for f in fields))


def _four_digit_year(pattern: str) -> str:
    return re.sub(r"y+", "y", pattern)


def _numeric_pattern(branch: Branch, four_digit: bool) -> str:
    pattern = bd.get_date_format("short", locale=branch.locale).pattern
    return _four_digit_year(pattern) if four_digit else pattern


def _self_deciding_date(day: date, pattern: str) -> bool:
    """A numeric date fixes its own reading: day above 12, day == month, or year first."""
    order = _pattern_order(pattern)
    if order == "YMD" and "yy" not in pattern.replace("yyyy", ""):
        return True
    return day.day > 12 or day.day == day.month


def _nationally(number: pn.PhoneNumber) -> str:
    return pn.format_number(number, pn.PhoneNumberFormat.NATIONAL)


def _valid_number(rng: random.Random, region: str) -> pn.PhoneNumber:
    kind = rng.choice([pn.PhoneNumberType.FIXED_LINE, pn.PhoneNumberType.MOBILE])
    base = pn.example_number_for_type(region, kind) or pn.example_number(region)
    nsn = pn.national_significant_number(base)
    for _ in range(50):
        tail = "".join(rng.choice("0123456789") for _ in range(3))
        candidate = pn.parse(f"+{base.country_code}{nsn[:-3]}{tail}")
        if pn.is_valid_number(candidate):
            return candidate
    return base


def _e164(number: pn.PhoneNumber) -> str:
    return pn.format_number(number, pn.PhoneNumberFormat.E164)


def _grouped(value: Decimal, branch: Branch, decimals: int) -> str:
    """Amount as the branch writes it (CLDR symbols via babel).

    de_CH is formatted by hand: babel 2.19 strips apostrophe group marks in pairs
    (checkvalues.md A3), CLDR 49 says the mark is U+0027.
    """
    fmt = "#,##0" + ("." + "0" * decimals if decimals else "")
    if branch.locale != "de_CH":
        return bn.format_decimal(value, format=fmt, locale=branch.locale)
    whole, _, frac = f"{abs(value):.{decimals}f}".partition(".")
    groups = []
    while len(whole) > 3:
        groups.insert(0, whole[-3:])
        whole = whole[:-3]
    text = "'".join([whole, *groups]) + (f".{frac}" if frac else "")
    return ("-" if value < 0 else "") + text


# ---------------------------------------------------------------- file context


@dataclass
class Context:
    rng: random.Random
    rows: list[Branch]              # the branch each row comes from
    named: bool                     # the data names each row's country
    typed: bool = False             # a workbook sheet: some cells may be typed
    english_headers: bool = True

    @property
    def n(self) -> int:
        return len(self.rows)


def _masked(ctx: Context, cells: list[Cell], share: float = 0.06,
            masks: tuple[str, ...] = MASKS) -> list[Cell]:
    for i in range(len(cells)):
        if ctx.rng.random() < share:
            cells[i] = Cell(ctx.rng.choice(masks), "", True, mask=True)
    return cells


# ---------------------------------------------------------------- column generators


def _day_span(ctx: Context, early: bool) -> list[date]:
    start = date(ctx.rng.choice([2023, 2024, 2025]), ctx.rng.randint(1, 12), 1)
    days = []
    for _ in range(ctx.n):
        if early:
            d = date(start.year, ctx.rng.randint(1, 12), ctx.rng.randint(1, 12))
        else:
            d = start + timedelta(days=ctx.rng.randint(0, 120))
        days.append(d)
    return days


def date_column(ctx: Context, *, ambiguous_only: bool = False) -> Column:
    rng = ctx.rng
    style = rng.choice(["short", "short", "four", "four", "long", "medium"])
    if ambiguous_only:
        style = rng.choice(["short", "four"]) if ctx.named else "four"
    early = ambiguous_only or rng.random() < 0.25
    days = _day_span(ctx, early)
    cells, pending = [], defaultdict(list)
    typed_share = 0.5 if ctx.typed and rng.random() < 0.5 else 0.0
    for day, branch in zip(days, ctx.rows, strict=True):
        if typed_share and rng.random() < typed_share:
            shown = _numeric_pattern(branch, True).replace("M", "m").replace("y", "yyyy")
            cells.append(Cell(day, day.isoformat(), number_format=shown))
            continue
        pattern = _numeric_pattern(branch, style == "four" or not ctx.named)
        if style in ("long", "medium"):
            worded = bd.get_date_format(style, locale=branch.locale).pattern
            if "MMM" in worded:  # month in words: the value fixes its own reading
                text = bd.format_date(day, worded, locale=branch.locale)
                cells.append(Cell(text, day.isoformat()))
                continue
            pattern = worded
        text = bd.format_date(day, pattern, locale=branch.locale)
        own = _self_deciding_date(day, pattern)
        cell = Cell(text, day.isoformat(), own or ctx.named, by_context=ctx.named and not own)
        cells.append(cell)
        pending[branch.code].append((cell, day, pattern))
    for items in pending.values():  # a column-level deciding value decides the group
        if any(d.day > 12 and d.day != d.month for _, d, _ in items):
            for cell, _, _ in items:
                cell.decidable, cell.by_context = True, False
    header = rng.choice(["Order date", "Invoice date", "Delivered", "Booking date"])
    return Column(header, "date", _masked(ctx, cells))


def datetime_column(ctx: Context) -> Column:
    rng = ctx.rng
    form = rng.choice(["rfc", "space_offset", "zulu_mix", "naive", "typed"])
    if form == "typed" and not ctx.typed:
        form = "rfc"
    start = datetime(2024, rng.randint(1, 12), rng.randint(1, 28), 6, 0)
    cells = []
    for _ in range(ctx.n):
        moment = start + timedelta(minutes=rng.randint(1, 60 * 24 * 40))
        if moment.hour == 0 and moment.minute == 0:
            moment += timedelta(minutes=7)
        seconds = rng.choice([0, rng.randint(0, 59)])
        moment = moment.replace(second=seconds)
        offset_h = rng.choice([0, 1, 2, -5, 5.5, 9])
        tz = timezone(timedelta(hours=offset_h))
        aware = moment.replace(tzinfo=tz)
        iso_aware = aware.isoformat()  # Python datetime: ±HH:MM, +00:00 for UTC
        if form == "typed":
            cells.append(Cell(moment, moment.isoformat()))
        elif form == "rfc":
            cells.append(Cell(iso_aware.replace("+00:00", "Z"), iso_aware))
        elif form == "space_offset":
            text = aware.strftime("%Y-%m-%d %H:%M:%S%z")
            cells.append(Cell(text, iso_aware))
        elif form == "zulu_mix":
            utc = aware.astimezone(UTC)
            cells.append(Cell(utc.strftime("%Y-%m-%dT%H:%M:%SZ"), utc.isoformat()))
        else:
            cells.append(Cell(moment.strftime("%Y-%m-%d %H:%M"),
                              moment.replace(second=0).isoformat()))
    header = rng.choice(["Shipped at", "Scanned", "Picked up", "Last update"])
    return Column(header, "datetime", _masked(ctx, cells, 0.04))


def _amount_value(rng: random.Random, integer: bool) -> Decimal:
    if integer:
        return Decimal(rng.randint(1001, 98999))
    return Decimal(rng.randint(100, 9_999_999)) / 100


def _ambiguous_amount(text: str) -> bool:
    """One mark, followed by exactly three digits, after 1-3 digits other than "0"."""
    m = re.fullmatch(r"-?([1-9]\d{0,2})[.,](\d{3})", text)
    return m is not None


def amount_column(ctx: Context, *, ambiguous_only: bool = False) -> Column:
    rng = ctx.rng
    style = rng.choice(["fixed2", "fixed2", "currency", "loose"])
    if ambiguous_only:
        style = "loose"
    cells: list[Cell] = []
    groups: dict[str, list[Cell]] = defaultdict(list)
    for branch in ctx.rows:
        if ambiguous_only:
            value = Decimal(rng.randint(1, 99) * 1000 + rng.randint(1, 999))
            if value % 10 == 0:
                value += 1
            text = _grouped(value, branch, 0)
        elif style == "loose":
            integer = rng.random() < 0.4
            value = _amount_value(rng, integer)
            text = _grouped(value, branch, 0 if integer else 2)
        else:
            value = _amount_value(rng, False)
            if style == "currency" and bn.get_currency_precision(branch.currency) == 0:
                value = value.to_integral_value()
            text = _grouped(value, branch, 2)
            if style == "currency":
                text = _currency_text(value, branch, text)
        if ctx.typed and not ambiguous_only and rng.random() < 0.3:
            cells.append(Cell(float(value), plain_decimal(value)))
            continue
        ambiguous = _ambiguous_amount(text) and not _whole_currency(text, branch)
        # issue #4: "1.234" is decided by the values of its column or group, not by the
        # country alone (branches often export in another notation than their country's)
        cells.append(Cell(text, plain_decimal(value), not ambiguous, si=None))
        groups[branch.code].append(cells[-1])
    for group in groups.values():
        _decide_by_column(group)
    header = rng.choice(["Amount", "Net amount", "Total", "Unit price"])
    return Column(header, "number", _masked(ctx, cells))


def _whole_currency(text: str, branch: Branch) -> bool:
    """A currency amount in a currency without minor units (ISO 4217 exponent 0, via
    babel) whose country is named: its one mark can only group digits."""
    return (not text[:1].isdigit() or not text[-1:].isdigit()) and \
        bn.get_currency_precision(branch.currency) == 0


def _currency_text(value: Decimal, branch: Branch, grouped: str) -> str:
    if branch.locale == "de_CH":
        return f"CHF {grouped}"
    return bn.format_currency(value, branch.currency, locale=branch.locale)


def _decide_by_column(cells: list[Cell]) -> None:
    """A value that fixes the decimal mark decides its whole group (one branch's values)."""
    texts = [c.raw for c in cells if isinstance(c.raw, str)]
    deciding = r"[.,]\d{1,2}(?!\d)|[.,]\d{4,}|\d[.,]\d{3}[.,]|\d{4,}[.,]\d"
    if any(re.search(deciding, t) for t in texts):
        for cell in cells:
            cell.decidable, cell.by_context = True, False


def percent_column(ctx: Context) -> Column:
    cells = []
    for branch in ctx.rows:
        value = Decimal(ctx.rng.randint(0, 1000)) / 10
        pattern = ctx.rng.choice(["#,##0.#%", "#,##0.#\u00a0%"])
        text = bn.format_percent(value / 100, format=pattern, locale=branch.locale)
        cells.append(Cell(text, plain_decimal(value)))
    return Column(ctx.rng.choice(["Discount", "Margin", "VAT rate"]), "number",
                  _masked(ctx, cells, 0.03))


# Exact factors to the SI unit: NIST SP 811 B.8 / HB 44 App. C (checkvalues.md U1, U2,
# U6, U7, U11, U14). Temperatures: SP 811 B.9 (U24, U25).
MASS = {"kg": Decimal(1), "g": Decimal("0.001"), "lb": Decimal("0.45359237"),
        "oz": Decimal("0.028349523125")}
LENGTH = {"m": Decimal(1), "cm": Decimal("0.01"), "mm": Decimal("0.001"),
          "ft": Decimal("0.3048"), "in": Decimal("0.0254")}
VOLUME = {"L": Decimal("0.001"), "mL": Decimal("0.000001"),
          "gal": Decimal("0.003785411784")}


def _fahrenheit_to_celsius(value: Decimal) -> Decimal:
    exact = (Fraction(value) - 32) * Fraction(5, 9)      # SP 811 B.9 (U25)
    with localcontext() as c:
        c.prec = 30
        return Decimal(exact.numerator) / Decimal(exact.denominator)


def _number_text(value: Decimal, branch: Branch) -> str:
    mark = bn.get_decimal_symbol(branch.locale)
    return plain_decimal(value).replace(".", mark)


def _quantity_cell(value: Decimal, unit: str, si: Decimal, branch: Branch,
                   rng: random.Random) -> Cell:
    space = rng.choice([" ", " ", ""])
    text = f"{_number_text(value, branch)}{space}{unit}"
    return Cell(text, plain_decimal(si), si=si)


def mass_column(ctx: Context) -> Column:
    rng = ctx.rng
    header_unit = rng.random() < 0.3
    cells = []
    for branch in ctx.rows:
        if header_unit:
            value = Decimal(rng.randint(1, 9999)) / 10
            cells.append(Cell(_number_text(value, branch), plain_decimal(value), si=value))
            continue
        unit = rng.choice(["kg", "kg", "g", "lb", "oz"] if branch.code in ("US", "GB")
                          else ["kg", "kg", "g"])
        value = Decimal(rng.randint(1, 999)) / rng.choice([1, 10])
        si = value * MASS[unit]
        cells.append(_quantity_cell(value, unit, si, branch, rng))
    name = "Weight (kg)" if header_unit else rng.choice(["Weight", "Parcel weight"])
    return Column(name, "quantity", _masked(ctx, cells), "mass")


def length_column(ctx: Context) -> Column:
    rng = ctx.rng
    cells = []
    for branch in ctx.rows:
        if branch.code in ("US", "GB") and rng.random() < 0.4:
            feet, inches = rng.randint(3, 7), rng.randint(0, 11)
            si = (feet * 12 + inches) * LENGTH["in"]
            text = rng.choice([f"{feet}' {inches}\"", f"{feet}'{inches}\"",
                               f"{feet} ft {inches} in"])
            cells.append(Cell(text, plain_decimal(si), si=si))
            continue
        unit = rng.choice(["m", "cm", "mm"] + (["in", "ft"] if branch.code == "US" else []))
        value = Decimal(rng.randint(1, 3000)) / (Decimal(100) if unit == "m" else 1)
        cells.append(_quantity_cell(value, unit, value * LENGTH[unit], branch, rng))
    return Column(rng.choice(["Handle length", "Blade length", "Pallet height"]), "quantity",
                  _masked(ctx, cells), "length")


def temperature_column(ctx: Context) -> Column:
    rng = ctx.rng
    cells = []
    for branch in ctx.rows:
        fahrenheit = branch.code == "US"
        value = Decimal(rng.randint(-200, 1000)) / 10
        # "° C" with a space is a common hand-typed variant (common practice, no source)
        units, weights = (["°F", "° F", "F"], [6, 1, 3]) if fahrenheit else (["°C", "° C"], [9, 1])
        unit = rng.choices(units, weights)[0]
        si = _fahrenheit_to_celsius(value) if fahrenheit else value
        text = f"{_number_text(value, branch)}{rng.choice([' ', ''])}{unit}"
        cells.append(Cell(text, plain_decimal(si), si=si))
    return Column(rng.choice(["Store temp", "Greenhouse temp"]), "quantity",
                  _masked(ctx, cells), "temperature")


def volume_column(ctx: Context) -> Column:
    rng = ctx.rng
    cells = []
    for branch in ctx.rows:
        unit = rng.choice(["L", "mL", "gal"] if branch.code == "US" else ["L", "mL", "l"])
        value = Decimal(rng.randint(1, 500)) / (Decimal(10) if unit != "mL" else 1)
        si = value * VOLUME["L" if unit == "l" else unit]
        cells.append(_quantity_cell(value, unit, si, branch, rng))
    return Column(rng.choice(["Tank volume", "Sprayer capacity"]), "quantity",
                  _masked(ctx, cells), "volume")


def phone_column(ctx: Context, *, national_only: bool = False) -> Column:
    rng = ctx.rng
    cells = []
    for branch in ctx.rows:
        number = _valid_number(rng, branch.code)
        style = "national" if national_only else rng.choice(["national", "national", "intl",
                                                             "intl00"])
        if style == "intl00" and branch.code in ("US", "AU", "JP", "BR"):
            style = "intl"  # their international call prefix is not 00
        if style == "national":
            cells.append(Cell(_nationally(number), _e164(number), ctx.named,
                              by_context=ctx.named))
        elif style == "intl":
            text = pn.format_number(number, pn.PhoneNumberFormat.INTERNATIONAL)
            cells.append(Cell(text, _e164(number)))
        else:
            text = pn.format_number(number, pn.PhoneNumberFormat.INTERNATIONAL)
            cells.append(Cell("00" + text[1:], _e164(number)))
    return Column(rng.choice(["Phone", "Contact phone", "Branch phone"]), "phone",
                  _masked(ctx, cells, 0.05))


def boolean_column(ctx: Context) -> Column:
    rng = ctx.rng
    shape = rng.choice(["words", "words", "Words", "WORDS", "english_short", "true_false"])
    cells = []
    for branch in ctx.rows:
        flag = rng.random() < 0.6
        if ctx.typed and rng.random() < 0.5:
            cells.append(Cell(flag, "true" if flag else "false"))
            continue
        yes, no = branch.yes_no
        text = {"english_short": "Y" if flag else "N",
                "true_false": "TRUE" if flag else "FALSE"}.get(shape, yes if flag else no)
        text = text.capitalize() if shape == "Words" else text.upper() if shape == "WORDS" else text
        cells.append(Cell(text, "true" if flag else "false"))
    return Column(rng.choice(["Paid", "Gift wrap", "Express", "Returned"]), "boolean",
                  _masked(ctx, cells, 0.05))


CATEGORY_POOLS = [
    ["Pruning Shears", "Hedge Trimmer", "Watering Can", "Leaf Rake", "Garden Hose"],
    ["Gartenschere", "Rasenmäher", "Gießkanne", "Laubrechen", "Schubkarre"],
    ["Sécateur", "Râteau à feuilles", "Arrosoir", "Brouette", "Tondeuse"],
    ["Spade", "Trowel", "Loppers", "Wheelbarrow", "Bulb Planter"],
]


def _category_variant(rng: random.Random, canonical: str) -> str:
    import unicodedata

    forms = [canonical.upper(), canonical.lower(), f" {canonical}", f"{canonical}  ",
             canonical.replace(" ", "  ")]
    stripped = "".join(ch for ch in unicodedata.normalize("NFD", canonical)
                       if not unicodedata.combining(ch))
    if stripped != canonical:
        forms.append(stripped)
    forms = [f for f in forms if f != canonical] or [canonical.upper()]
    return rng.choice(forms)


def category_column(ctx: Context) -> Column:
    rng = ctx.rng
    pool = rng.choice(CATEGORY_POOLS)
    cells = []
    for _ in range(ctx.n):
        canonical = rng.choice(pool)
        if rng.random() < 0.25:
            cells.append(Cell(_category_variant(rng, canonical), canonical))
        else:
            cells.append(Cell(canonical, canonical))
    _keep_canonical_prevailing(cells)
    return Column(rng.choice(["Product line", "Category", "Tool"]), "text",
                  _masked(ctx, cells, 0.04))


def _keep_canonical_prevailing(cells: list[Cell]) -> None:
    """A canonical spelling must be the most frequent one of its group, or it is not canonical."""
    spelled = Counter((c.expected, c.raw) for c in cells)
    for cell in cells:
        if spelled[(cell.expected, cell.expected)] <= spelled[(cell.expected, cell.raw)] \
                and cell.raw != cell.expected:
            cell.raw = cell.expected


NOTE_WORDS = ["left at side gate", "call before delivery", "handle wrapped twice",
              "Rückruf erbeten", "livrer après 14h", "replacement blade; old one returned",
              'customer said "urgent"', "pallet re-stacked", "entregar por la mañana",
              "ring bell twice, then wait"]


def notes_column(ctx: Context) -> Column:
    rng = ctx.rng
    cells = []
    for i in range(ctx.n):
        text = f"{rng.choice(NOTE_WORDS)} (ticket {rng.randint(100, 999)}-{i})"
        cells.append(Cell(text, text))
    return Column("Notes", "text", _masked(ctx, cells, 0.15))


def identifier_column(ctx: Context) -> Column:
    rng = ctx.rng
    form = rng.choice(["padded", "sku", "account", "postal"])
    width = rng.choice([5, 6, 7])
    cells, seen = [], set()
    for branch in ctx.rows:
        while True:
            if form == "padded":
                text = str(rng.randint(1, 10 ** (width - 2))).zfill(width)
            elif form == "sku":
                text = f"BGT-{rng.randint(1, 9999):05d}"
            elif form == "account":
                text = str(rng.randint(10 ** 15, 10 ** 18 - 1))
            else:
                text = _postal_code(rng, branch)
            if text not in seen or form == "postal":
                break
        seen.add(text)
        cells.append(Cell(text, text))
    name = {"padded": "Customer No", "sku": "SKU", "account": "Account number",
            "postal": "Postcode"}[form]
    return Column(name, "identifier", _masked(ctx, cells, 0.03, ("", "N/A", "-")))


def _postal_code(rng: random.Random, branch: Branch) -> str:
    digits = "".join(rng.choice("0123456789") for _ in range(6))
    letters = "".join(rng.choice("ABDEFGHJLNPQRSTUWXYZ") for _ in range(2))
    return {
        "GB": f"{letters[0]}{rng.choice('NSEW')}{digits[0]} {digits[1]}{letters}",
        "NL": f"{rng.randint(1000, 9999)} {letters}",
        "SE": f"{digits[:3]} {digits[3:5]}",
        "BR": f"0{digits[:4]}-{digits[4:6]}0",
        "PL": f"0{digits[0]}-{digits[1:4]}",
        "JP": f"0{digits[:2]}-{digits[2:6]}",
        "CH": f"{rng.randint(1000, 9999)}",
        "AU": f"0{digits[:3]}",
    }.get(branch.code, f"{rng.choice('0123456789')}{digits[:4]}")


def country_column(ctx: Context, codes: bool) -> Column:
    cells = [Cell(b.code if codes else b.label, b.code if codes else b.label)
             for b in ctx.rows]
    return Column("Country", "text", cells)


# ---------------------------------------------------------------- files


GENERATORS: dict[str, Callable[..., Column]] = {
    "date": date_column, "datetime": datetime_column, "amount": amount_column,
    "percent": percent_column, "mass": mass_column, "length": length_column,
    "temperature": temperature_column, "volume": volume_column, "phone": phone_column,
    "boolean": boolean_column, "category": category_column, "notes": notes_column,
    "identifier": identifier_column,
}


def _columns(ctx: Context, count: int, must: tuple[str, ...] = ()) -> list[Column]:
    names = list(must) + ctx.rng.sample(
        [k for k in GENERATORS if k not in must], max(0, count - len(must)))
    seen: set[str] = set()
    columns = []
    for name in names:
        column = GENERATORS[name](ctx)
        while column.name in seen:
            column.name += " 2"
        seen.add(column.name)
        columns.append(column)
    return columns


def _branch_rows(rng: random.Random, codes: list[str], n: int) -> list[Branch]:
    return [BRANCHES[rng.choice(codes)] for _ in range(n)]


def _sheet_for_branch(rng: random.Random, code: str, typed: bool, n: int) -> Sheet:
    ctx = Context(rng, _branch_rows(rng, [code], n), named=True, typed=typed)
    must = ("date", "amount", "phone") if rng.random() < 0.5 else ("date",)
    columns = _columns(ctx, rng.randint(6, 9), must)
    if rng.random() < 0.4:  # a branch column holding only ambiguous dates
        columns.insert(1, date_column(ctx, ambiguous_only=True))
        columns[1].name = "Due date"
    return Sheet(None, columns)


def _merged_sheet(rng: random.Random, typed: bool, n: int) -> Sheet:
    codes = rng.sample(sorted(BRANCHES), rng.randint(2, 5))
    ctx = Context(rng, _branch_rows(rng, codes, n), named=True, typed=typed)
    columns = [country_column(ctx, rng.random() < 0.3)]
    columns += _columns(ctx, rng.randint(6, 9), ("date", "amount", "phone"))
    return Sheet(None, columns)


def _plain_sheet(rng: random.Random, n: int) -> Sheet:
    code = rng.choice(AMBIGUOUS_DATE_BRANCHES)
    ctx = Context(rng, _branch_rows(rng, [code], n), named=False)
    columns = [identifier_column(ctx), date_column(ctx, ambiguous_only=True),
               amount_column(ctx, ambiguous_only=rng.random() < 0.6),
               phone_column(ctx, national_only=True)]
    for key in rng.sample(["datetime", "boolean", "category", "notes", "mass", "percent"], 3):
        columns.append(GENERATORS[key](ctx))
    return Sheet(None, columns)


STEMS = ["orders", "invoices", "stock_moves", "deliveries", "returns", "price_list"]


def make_file(rng: random.Random, index: int) -> ExportFile:
    scenario = rng.choices(["branch", "merged", "plain", "workbook"], [4, 2.5, 1.5, 2])[0]
    n = rng.randint(25, 70)
    delimiter = rng.choice([",", ";", "\t", "|"])
    encoding = rng.choice(["utf-8", "utf-8", "utf-8-sig", "cp1252", "utf-16"])
    ext = {"\t": "tsv"}.get(delimiter, "csv") if rng.random() < 0.5 else "csv"
    if scenario == "branch":
        code = rng.choice(sorted(BRANCHES))
        sheet = _sheet_for_branch(rng, code, False, n)
        name = f"{rng.choice(STEMS)}_{index:03d}_{code.lower()}.{ext}"
        return ExportFile(name, [sheet], delimiter, encoding, scenario)
    if scenario == "merged":
        name = f"{rng.choice(STEMS)}_{index:03d}_all_branches.{ext}"
        return ExportFile(name, [_merged_sheet(rng, False, n)], delimiter, encoding, scenario)
    if scenario == "plain":
        name = f"export_{index:03d}.{ext}"
        return ExportFile(name, [_plain_sheet(rng, n)], delimiter, encoding, scenario)
    code = rng.choice(sorted(BRANCHES))
    sheets = [_sheet_for_branch(rng, code, True, n), _merged_sheet(rng, True, rng.randint(20, 40))]
    if rng.random() < 0.4:
        sheets.append(_sheet_for_branch(rng, code, True, rng.randint(15, 30)))
    for sheet, title in zip(sheets, ["Orders", "All branches", "Stock"], strict=False):
        sheet.name = title
    return ExportFile(f"workbook_{index:03d}_{code.lower()}.xlsx", sheets, scenario=scenario)


def corpus(n_files: int, seed: int = 1) -> list[ExportFile]:
    rng = random.Random(seed)
    return [make_file(rng, i) for i in range(n_files)]


# ---------------------------------------------------------------- writers


def _text(raw: object) -> str:
    if isinstance(raw, bool):
        return "TRUE" if raw else "FALSE"
    if isinstance(raw, datetime):
        return raw.isoformat(sep=" ")
    if isinstance(raw, date):
        return raw.isoformat()
    if isinstance(raw, float):
        return repr(raw)
    return str(raw)


def _write_csv(item: ExportFile, path: Path) -> None:
    sheet = item.sheets[0]
    lines = [[c.name for c in sheet.columns]]
    lines += [[_text(c.cells[i].raw) for c in sheet.columns] for i in range(sheet.rows)]
    encoding = item.encoding
    for row in lines:
        for value in row:
            try:
                value.encode(encoding)
            except UnicodeEncodeError:
                encoding = "utf-8"
    item.encoding = encoding
    with path.open("w", encoding=encoding, newline="") as handle:
        csv.writer(handle, delimiter=item.delimiter, lineterminator="\r\n").writerows(lines)


def _write_xlsx(item: ExportFile, path: Path) -> None:
    from openpyxl import Workbook

    book = Workbook()
    book.remove(book.active)
    for sheet in item.sheets:
        ws = book.create_sheet(sheet.name)
        ws.append([c.name for c in sheet.columns])
        for i in range(sheet.rows):
            ws.append([c.cells[i].raw for c in sheet.columns])
        for j, column in enumerate(sheet.columns, start=1):
            for i, cell in enumerate(column.cells, start=2):
                target = ws.cell(row=i, column=j)
                if isinstance(cell.raw, datetime):
                    target.number_format = "yyyy-mm-dd hh:mm:ss"
                elif isinstance(cell.raw, date):  # the branch's own order, as Excel shows it
                    target.number_format = cell.number_format or "yyyy-mm-dd"
                elif isinstance(cell.raw, float):
                    target.number_format = "#,##0.00"
    book.save(path)


# ---------------------------------------------------------------- scoring


# Output units the checker understands, as (dimension, unit) -> units per SI unit.
OUT_UNITS = {
    ("mass", "kg"): Decimal(1), ("mass", "g"): Decimal(1000),
    ("length", "m"): Decimal(1), ("length", "cm"): Decimal(100), ("length", "mm"): Decimal(1000),
    ("volume", "m3"): Decimal(1), ("volume", "m³"): Decimal(1), ("volume", "L"): Decimal(1000),
    ("volume", "l"): Decimal(1000),
    ("temperature", "degC"): Decimal(1), ("temperature", "°C"): Decimal(1),
}
PLAIN_NUMBER = re.compile(r"-?\d+(\.\d+)?")


def matches(column: Column, cell: Cell, got: str, unit: str | None) -> bool:
    if cell.expected == "":
        return got == ""
    if column.kind == "number":
        return bool(PLAIN_NUMBER.fullmatch(got)) and Decimal(got) == Decimal(cell.expected)
    if column.kind == "quantity":
        if not PLAIN_NUMBER.fullmatch(got) or cell.si is None:
            return False
        factor = OUT_UNITS.get((column.dimension or "", unit or ""))
        if factor is None:
            return False
        want = float(cell.si * factor)
        return math.isclose(float(got), want, rel_tol=1e-9, abs_tol=1e-9)
    return got == cell.expected


@dataclass
class KindScore:
    cells: int = 0
    wrong_unlisted: int = 0
    decidable: int = 0
    decidable_correct: int = 0
    decidable_listed: int = 0
    undecidable: int = 0
    undecidable_listed: int = 0
    identifiers: int = 0
    identifiers_kept: int = 0
    masks: int = 0
    masks_recognised: int = 0
    context_only: int = 0          # decidable only through the named country
    context_correct: int = 0
    context_listed: int = 0

    def add(self, other: KindScore) -> None:
        for key in self.__dataclass_fields__:
            setattr(self, key, getattr(self, key) + getattr(other, key))


@dataclass
class ColumnResult:
    file: str
    sheet: str | None
    column: str
    truth_kind: str
    reported_kind: str
    confidence: float
    unit: str | None
    wrong: list[tuple[str, str, str]] = field(default_factory=list)  # raw, got, expected
    wrong_unlisted: int = 0
    score: KindScore = field(default_factory=KindScore)

    @property
    def right(self) -> bool:
        return self.truth_kind == self.reported_kind and self.wrong_unlisted == 0


@dataclass
class Evaluation:
    kinds: dict[str, KindScore]
    columns: list[ColumnResult]
    missing_outputs: list[str]

    def total(self) -> KindScore:
        total = KindScore()
        for score in self.kinds.values():
            total.add(score)
        return total


def _read_output(path: Path) -> list[list[str]]:
    with path.open(encoding="utf-8-sig", newline="") as handle:
        return list(csv.reader(handle))


def score(files: list[ExportFile], out: Path) -> Evaluation:
    report = json.loads((out / "harmonize-report.json").read_text(encoding="utf-8"))
    entries = {(Path(f["input"]).name, f["sheet"]): f for f in report["files"]}
    listed = {(Path(u["file"]).name, u["sheet"], u["row"], u["column"])
              for u in report["unresolved"]}
    kinds: dict[str, KindScore] = defaultdict(KindScore)
    results, missing = [], []
    for item in files:
        for sheet in item.sheets:
            entry = entries.get((item.name, sheet.name))
            if entry is None or not entry.get("output"):
                missing.append(f"{item.name} [{sheet.name}]")
                continue
            rows = _read_output(out / entry["output"])
            header = rows[0]
            by_name = {c["name"]: c for c in entry["columns"]}
            for column in sheet.columns:
                meta = by_name.get(column.name)
                index = header.index(meta["output_name"]) if meta and \
                    meta["output_name"] in header else None
                result = _score_column(item, sheet, column, meta, index, rows, listed)
                kinds[column.kind].add(result.score)
                results.append(result)
    return Evaluation(dict(kinds), results, missing)


def _score_column(item: ExportFile, sheet: Sheet, column: Column, meta: dict | None,
                  index: int | None, rows: list[list[str]], listed: set) -> ColumnResult:
    result = ColumnResult(item.name, sheet.name, column.name, column.kind,
                          meta["kind"] if meta else "absent",
                          float(meta["confidence"]) if meta else 0.0,
                          meta.get("unit") if meta else None)
    s = result.score
    for i, cell in enumerate(column.cells):
        got = rows[i + 1][index] if index is not None and i + 1 < len(rows) else "\x00absent"
        is_listed = (item.name, sheet.name, i + 2, column.name) in listed
        ok = matches(column, cell, got, result.unit)
        s.cells += 1
        if cell.mask:
            s.masks += 1
            s.masks_recognised += ok and not is_listed
        if column.kind == "identifier" and not cell.mask:
            s.identifiers += 1
            s.identifiers_kept += ok and not is_listed
        if not ok and not is_listed:
            s.wrong_unlisted += 1
            result.wrong_unlisted += 1
        if cell.by_context:
            s.context_only += 1
            s.context_correct += ok and not is_listed
            s.context_listed += is_listed
        if cell.decidable:
            s.decidable += 1
            s.decidable_correct += ok and not is_listed
            s.decidable_listed += is_listed
            if not ok or is_listed:
                result.wrong.append((_text(cell.raw), "LISTED" if is_listed else got,
                                     cell.expected))
        else:
            s.undecidable += 1
            s.undecidable_listed += is_listed
            if not is_listed:
                result.wrong.append((_text(cell.raw), got + " (undecidable, not listed)",
                                     cell.expected))
    return result


def expected_calibration_error(columns: list[ColumnResult], bins: int = 10) -> float:
    """ECE over columns: |mean confidence - share right| weighted by bin size."""
    buckets: dict[int, list[ColumnResult]] = defaultdict(list)
    for c in columns:
        buckets[min(int(c.confidence * bins), bins - 1)].append(c)
    total = len(columns) or 1
    return sum(len(b) / total * abs(sum(c.confidence for c in b) / len(b)
                                    - sum(c.right for c in b) / len(b))
               for b in buckets.values())


def ratio(num: int, den: int) -> float:
    return num / den if den else float("nan")


TARGETS = [  # (label, KindScore -> (num, den), comparison, threshold)
    ("wrong-and-unlisted", lambda s: (s.wrong_unlisted, s.cells), "<=", 0.002),
    ("decidable correct", lambda s: (s.decidable_correct, s.decidable), ">=", 0.995),
    ("undecidable listed", lambda s: (s.undecidable_listed, s.undecidable), ">=", 0.98),
    ("decidable listed", lambda s: (s.decidable_listed, s.decidable), "<=", 0.02),
    ("identifiers kept", lambda s: (s.identifiers_kept, s.identifiers), ">=", 0.99),
    ("masks recognised", lambda s: (s.masks_recognised, s.masks), ">=", 0.95),
]


def passes(value: float, op: str, threshold: float) -> bool:
    if math.isnan(value):
        return True
    return value <= threshold if op == "<=" else value >= threshold
