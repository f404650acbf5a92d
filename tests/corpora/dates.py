"""A generated corpus of multi-region exports with known dates, measured through the pipeline.

Invented scenario: "Quillmoor Provisions", an invented wholesaler with branches in many
countries. Each branch exports its ledgers the way its office software writes dates: the
CLDR short, medium, long or full pattern of its locale (via babel), a four-digit numeric
variant, date-times with 24- or 12-hour clocks, ISO 8601 with UTC offsets, two-digit
years, and now and then a branch that writes the order its territory does not use.
Files are one branch's ledger (short or long, sorted or shuffled, the same day each
month), several branches merged with or without a country column, one branch's ledger
with a stray row pasted from another branch, or workbooks whose date cells are partly
typed. Missing-value words, sentinel dates (1900-01-01, 9999-12-31) and impossible
dates (31.02.) are mixed in, beside numeric columns that are not dates (amounts,
quantities, order numbers, years alone, serial-looking batch numbers, postcodes).

Every date cell carries its truth (the ISO text expected, or "" for a cell that should
come out missing) and a status, decided from the generator's knowledge, never from the
engine:

* ``decidable``: the value fixes its own reading (ISO, month name, four-digit year first,
  a typed cell, a day above 12, readings that coincide), or it is a sentinel, or its
  group (the branch, where the file says which row is whose: one branch's file, or a
  country column) holds a value that only the group's true order reads, or the workbook's
  number format states it, or a country column names the branch's country and its CLDR
  short date pattern has the branch's order (no branch of the file contradicting its
  own country's pattern). Row order is only a hint: a ledger of the same day each month
  reads as consecutive days in the other order.
* ``undecidable``: an impossible date, or an ambiguous value whose group holds no such
  evidence (a merged file without a country column whose branches differ, a stray row).

``evaluate`` reads the pipeline's output files and ``harmonize-report.json`` like an
outside checker would. ``bench/date_corpus_eval.py`` adds two common recipes as baselines.
"""

from __future__ import annotations

import csv
import json
import random
import re
from collections.abc import Callable, Iterable
from dataclasses import dataclass, field
from datetime import date, datetime, timedelta
from pathlib import Path

import babel.dates as bd
import numpy as np
import pandas as pd

# locale -> (territory, country labels a branch may use: code, English, own language)
LOCALES: dict[str, tuple[str, tuple[str, ...]]] = {
    "en_GB": ("GB", ("GB", "United Kingdom", "UK")),
    "en_US": ("US", ("US", "United States", "USA")),
    "en_CA": ("CA", ("CA", "Canada")),
    "en_AU": ("AU", ("AU", "Australia")),
    "en_IN": ("IN", ("IN", "India")),
    "de_DE": ("DE", ("DE", "Germany", "Deutschland")),
    "de_CH": ("CH", ("CH", "Switzerland", "Schweiz")),
    "fr_FR": ("FR", ("FR", "France")),
    "fr_CA": ("CA", ("CA", "Canada")),
    "es_ES": ("ES", ("ES", "Spain", "España")),
    "it_IT": ("IT", ("IT", "Italy", "Italia")),
    "nl_NL": ("NL", ("NL", "Netherlands", "Nederland")),
    "pt_BR": ("BR", ("BR", "Brazil", "Brasil")),
    "sv_SE": ("SE", ("SE", "Sweden", "Sverige")),
    "da_DK": ("DK", ("DK", "Denmark", "Danmark")),
    "nb_NO": ("NO", ("NO", "Norway", "Norge")),
    "fi_FI": ("FI", ("FI", "Finland", "Suomi")),
    "pl_PL": ("PL", ("PL", "Poland", "Polska")),
    "cs_CZ": ("CZ", ("CZ", "Czechia", "Česko")),
    "ja_JP": ("JP", ("JP", "Japan")),
    "hu_HU": ("HU", ("HU", "Hungary", "Magyarország")),
}
CONTRARY = 0.05      # branches that write day and month the other way round
MISSING_WORDS = ("", "N/A", "-", "null", "n/a", "NA", "k.A.", "—")
SENTINEL_DAYS = (date(1900, 1, 1), date(9999, 12, 31))
OFFSETS = ("+00:00", "+01:00", "+02:00", "-05:00", "-04:00", "+05:30", "+09:00", "-08:00")
DATE_HEADERS = ("Order date", "Bestelldatum", "Date de commande", "Fecha pedido", "Datum",
                "Invoice date", "Posted", "Data ordine", "Ship date", "Leveransdatum")
TIME_HEADERS = ("Created at", "Zeitstempel", "Last update", "Scanned", "Horodatage",
                "Received at")
YEAR_FROM = date.today().year - 79    # the default window (options.year_window = 80)


# ---------------------------------------------------------------- how a branch writes

def _fields(pattern: str) -> list[tuple[str, int]]:
    return [value for kind, value in bd.tokenize_pattern(pattern) if kind == "field"]


def _pattern_order(pattern: str) -> str | None:
    """DMY/MDY for a numeric pattern with the year last (the order is then open); None when
    the shape fixes it (a month name, the year first)."""
    fields = _fields(pattern)
    letters = [letter for letter, _ in fields if letter in "dMLy"]
    if any(letter in "ML" and width >= 3 for letter, width in fields) or not letters \
            or letters[0] == "y":
        return None
    order = "".join(dict.fromkeys({"d": "D", "M": "M", "L": "M", "y": "Y"}[c] for c in letters))
    return order if order in ("DMY", "MDY") else None


def _numeric_text(y: int, m: int, d: int, pattern: str) -> str:
    """A numeric pattern filled with any day and month (so 31.02. can be written)."""
    out = []
    for kind, value in bd.tokenize_pattern(pattern):
        if kind != "field":
            out.append(value)
            continue
        letter, width = value
        if letter == "y":
            out.append(f"{y % 100:02d}" if width == 2 else str(y))
        else:
            number = {"d": d, "M": m, "L": m}[letter]
            out.append(f"{number:02d}" if width == 2 else str(number))
    return "".join(out)


def _swap_order(pattern: str) -> str:
    """The same numeric pattern with day and month swapped (a contrary branch)."""
    out = []
    for kind, value in bd.tokenize_pattern(pattern):
        if kind != "field":
            out.append(value.replace("'", "''"))
            continue
        letter, width = value
        letter = {"d": "M", "M": "d", "L": "d"}.get(letter, letter)
        out.append(letter * width)
    return "".join(out)


@dataclass
class Writer:
    """One branch's way of writing a date column."""

    locale: str
    pattern: str                  # babel pattern of the date part
    kind: str                     # "date" or "datetime"
    clock: str = ""               # "", "24", "24s", "12", "babel_short", "babel_medium",
    #                               "iso_offset", "iso_z"
    order: str | None = None      # DMY/MDY when the numeric order is open, else None

    @property
    def numeric(self) -> bool:
        return self.order is not None

    @property
    def shape(self) -> tuple[str, ...]:
        """How its numeric dates look (separator, digits of each number, a time or not):
        branches that share a shape cannot be told apart by their values."""
        sample = _numeric_text(2024, 7, 5, self.pattern) if self.numeric else self.pattern
        parts = re.findall(r"\d+|\D+", sample)
        return (*(p.strip() or " " if not p.isdigit() else str(len(p)) for p in parts),
                self.kind)

    def write(self, moment: datetime, rng: random.Random) -> tuple[str, str]:
        """(text as written, truth as ISO text)."""
        day = moment.date()
        if self.clock in ("iso_offset", "iso_z"):
            offset = rng.choice(OFFSETS) if self.clock == "iso_offset" else "Z"
            text = f"{day.isoformat()}T{moment:%H:%M:%S}{offset}"
            return text, f"{day.isoformat()}T{moment:%H:%M:%S}" + (
                "+00:00" if offset == "Z" else offset)
        if self.clock.startswith("babel"):
            width = self.clock.split("_")[1]
            text = bd.format_datetime(moment, width, locale=self.locale)
            seconds = moment.second if width == "medium" else 0
            return text, f"{day.isoformat()}T{moment:%H:%M}:{seconds:02d}"
        text = self.date_text(day)
        if self.clock == "24":
            return f"{text} {moment:%H:%M}", f"{day.isoformat()}T{moment:%H:%M}:00"
        if self.clock == "24s":
            return f"{text} {moment:%H:%M:%S}", f"{day.isoformat()}T{moment:%H:%M:%S}"
        if self.clock == "12":
            return f"{text} {moment:%I:%M %p}", f"{day.isoformat()}T{moment:%H:%M}:00"
        return text, day.isoformat()

    def date_text(self, day: date) -> str:
        if self.numeric:
            return _numeric_text(day.year, day.month, day.day, self.pattern)
        return bd.format_date(day, self.pattern, locale=self.locale)


def _numeric_pattern(locale: str, rng: random.Random) -> str:
    """The locale's short pattern, or a four-digit-year padded variant of it."""
    short = bd.get_date_format("short", locale=locale).pattern
    if rng.random() < 0.4:
        short = short.replace("yy", "y").replace("y", "yyyy") if "yyyy" not in short else short
        short = short.replace("dd", "d").replace("d", "dd")
        short = short.replace("MM", "M").replace("M", "MM")
    return short


def make_writer(locale: str, rng: random.Random, kind: str | None = None) -> Writer:
    kind = kind or ("datetime" if rng.random() < 0.25 else "date")
    style = rng.choices(["short", "medium", "long", "full"], weights=[6, 2, 1.2, 0.5])[0]
    pattern = (_numeric_pattern(locale, rng) if style == "short"
               else bd.get_date_format(style, locale=locale).pattern)
    order = _pattern_order(pattern)
    if order and rng.random() < CONTRARY:
        pattern = _swap_order(pattern)
        order = "MDY" if order == "DMY" else "DMY"
    clock = ""
    if kind == "datetime":
        choices = ["24", "24s", "12", "babel_short", "babel_medium", "iso_offset", "iso_z"]
        clock = rng.choices(choices, weights=[3, 2, 2, 2, 1, 1.5, 0.7])[0]
        if clock.startswith("iso"):     # ISO 8601 fixes its own order
            order = None
        if clock.startswith("babel"):   # the locale's own date-time pattern
            pattern = bd.get_date_format(clock.split("_")[1], locale=locale).pattern
            order = _pattern_order(pattern)
    return Writer(locale, pattern, kind, clock, order)


# ---------------------------------------------------------------- truth

@dataclass
class DateTruth:
    name: str
    kind: str
    truth: list[str]              # ISO text per row; "" where the cell should be missing
    status: list[str]             # decidable | undecidable | missing
    orders: dict[str, str]        # group label -> true order of its open numeric dates
    host_order: str | None        # the order a one-branch column follows (strays aside)
    strays: frozenset[int] = frozenset()   # rows pasted from another branch


@dataclass
class CorpusFile:
    name: str
    scenario: str
    frame: pd.DataFrame
    dates: list[DateTruth]
    decoys: list[str]
    typed: dict[str, dict[int, date]] = field(default_factory=dict)   # column -> row -> day
    number_formats: dict[str, str] = field(default_factory=dict)      # column -> format

    @property
    def workbook(self) -> bool:
        return bool(self.typed)


def _ambiguous(day: date) -> bool:
    """A numeric DMY/MDY date whose swapped reading is another valid date."""
    return day.day <= 12 and day.day != day.month


def _pins(day: date) -> bool:
    return day.day > 12


# ---------------------------------------------------------------- rows

def _moments(rng: random.Random, n: int, span_kind: str) -> list[datetime]:
    start = datetime(2016, 1, 1) + timedelta(days=rng.randrange(3700))
    if span_kind == "monthly":   # the same day of each month: a subscription ledger
        day = rng.randint(1, 12)
        months = [(start.year + (start.month - 1 + k) // 12, (start.month - 1 + k) % 12 + 1)
                  for k in range(rng.randint(6, 14))]
        picks = [rng.choice(months) for _ in range(n)]
        return [datetime(y, m, day, rng.randrange(7, 19), rng.randrange(60)) for y, m in picks]
    if span_kind == "few_days":  # the first days of one month: nothing above 12
        first = start.replace(day=1)
        width = rng.randint(2, 12)
        return [first + timedelta(days=rng.randrange(width), minutes=rng.randrange(1440),
                                  seconds=rng.randrange(60)) for _ in range(n)]
    span = rng.choice([10, 25, 60, 200, 700, 2000])
    return [start + timedelta(days=rng.randrange(span), minutes=rng.randrange(1440),
                              seconds=rng.randrange(60)) for _ in range(n)]


@dataclass
class _Cell:
    text: str
    truth: str
    state: str          # fixed | self | ambiguous | invalid | sentinel | missing | typed
    group: str          # the branch label
    stray: bool = False
    pins: bool = False  # a sentinel whose day is above 12
    order: str | None = None   # a stray's own order


def _cell(writer: Writer, moment: datetime, rng: random.Random, group: str) -> _Cell:
    text, truth = writer.write(moment, rng)
    if not writer.numeric or writer.clock.startswith("iso"):
        return _Cell(text, truth, "fixed", group)
    day = moment.date()
    state = "ambiguous" if _ambiguous(day) else ("self" if _pins(day) else "fixed")
    return _Cell(text, truth, state, group)


def _branch_cells(writer: Writer, n: int, rng: random.Random, group: str, span_kind: str,
                  sort: bool) -> list[_Cell]:
    moments = _moments(rng, n, span_kind)
    if sort:
        moments.sort()
    return [_cell(writer, m, rng, group) for m in moments]


def _spice(cells: list[_Cell], writer: Writer, rng: random.Random) -> None:
    """Missing-value words, sentinel dates and impossible dates, in place."""
    if rng.random() < 0.4:
        for cell in rng.sample(cells, k=max(1, len(cells) // rng.randint(10, 30))):
            cell.text, cell.truth, cell.state = rng.choice(MISSING_WORDS), "", "missing"
    four_digit = "yyyy" in writer.pattern or ("y" in writer.pattern and "yy" not in
                                              writer.pattern)
    if writer.numeric and writer.kind == "date" and four_digit and rng.random() < 0.15:
        cell = rng.choice(cells)
        day = rng.choice(SENTINEL_DAYS)
        # 31.12.9999 shows its order like any day above 12: it pins the branch's order
        cell.text, cell.truth, cell.state = writer.date_text(day), "", "sentinel"
        cell.pins = _pins(day)
    if writer.numeric and writer.kind == "date" and rng.random() < 0.1:
        cell = rng.choice(cells)
        y = rng.choice([2017, 2018, 2019, 2021, 2022, 2023])   # common years
        m, d = rng.choice([(2, 29), (2, 30), (2, 31), (4, 31), (6, 31), (9, 31), (11, 31)])
        cell.text = _numeric_text(y, m, d, writer.pattern)
        cell.truth, cell.state = "", "invalid"


def territory_pattern_order(territory: str) -> str | None:
    """The order of the CLDR short date pattern of a territory's likely locale (babel)."""
    from babel import Locale
    return _pattern_order(bd.get_date_format("short", Locale.parse(f"und_{territory}")).pattern)


def _status(cells: list[_Cell], orders: dict[str, str], grouped: bool,
            format_order: str | None, shapes: dict[str, tuple[str, ...]] | None = None,
            host_order: str | None = None,
            territories: dict[str, str] | None = None) -> list[str]:
    """decidable / undecidable / either / missing per cell (see the module docstring).

    Without a column naming the branch, branches that write the same shape pool their
    evidence, and a shape two orders share decides nothing. With a country column, a
    branch with no deciding value is decided by its country's CLDR short date pattern,
    unless a branch of the file shows values against its own country's pattern."""
    shapes = shapes or {}
    cldr = {g: territory_pattern_order(t) for g, t in (territories or {}).items()}

    def key(cell: _Cell) -> object:
        return cell.group if grouped else shapes.get(cell.group, cell.group)

    pinned: dict[object, bool] = {}
    key_orders: dict[object, set[str]] = {}
    for cell in cells:
        if (cell.state == "self" or cell.pins) and not cell.stray:
            pinned[key(cell)] = True
        if not cell.stray and cell.group in orders:
            key_orders.setdefault(key(cell), set()).add(orders[cell.group])
    pinned_groups = {cell.group for cell in cells
                     if (cell.state == "self" or cell.pins) and not cell.stray}
    contrary = any(cldr.get(g) in ("DMY", "MDY") and cldr[g] != orders.get(g)
                   for g in pinned_groups if g in orders)
    status = []
    for cell in cells:
        k = key(cell)
        by_country = (grouped and not contrary and cell.group in cldr
                      and cldr[cell.group] == orders.get(cell.group))
        if cell.state == "missing":
            status.append("missing")
        elif cell.state == "invalid":
            status.append("undecidable")
        elif cell.state != "ambiguous":
            status.append("decidable")
        elif cell.stray:   # a row from elsewhere: right if read as the host reads
            status.append("either" if cell.order == host_order else "undecidable")
        elif len(key_orders.get(k, ())) <= 1 and (
                pinned.get(k, False) or by_country or (format_order is not None and
                                                       orders.get(cell.group) == format_order)):
            status.append("decidable")
        else:
            status.append("undecidable")
    return status


# ---------------------------------------------------------------- decoys

def _decoys(rng: random.Random, n: int) -> dict[str, list[str]]:
    out: dict[str, list[str]] = {}
    choices: dict[str, Callable[[], list[str]]] = {
        "Amount": lambda: [f"{rng.randrange(100, 999999) / 100:.2f}" for _ in range(n)],
        "Betrag": lambda: [f"{rng.randrange(100, 999999) / 100:,.2f}".replace(",", " ")
                           .replace(".", ",").replace(" ", ".") for _ in range(n)],
        "Qty": lambda: [str(rng.randint(1, 500)) for _ in range(n)],
        "Order no": lambda: _sequence(rng.randrange(100000, 9000000), n),
        "Year": lambda: [str(rng.randint(2015, 2026)) for _ in range(n)],
        "Batch": lambda: [str(rng.randint(43000, 46500)) for _ in range(n)],
        "Postcode": lambda: [f"{rng.randrange(1000, 99999):05d}" for _ in range(n)],
        "Unit price": lambda: [f"{rng.randrange(1, 3000) / 100:.2f}" for _ in range(n)],
        "Ref": lambda: [str(rng.randrange(10_000_000, 99_999_999)) for _ in range(n)],
    }
    for name in rng.sample(sorted(choices), k=rng.randint(1, 3)):
        out[name] = choices[name]()
    return out


def _sequence(first: int, n: int) -> list[str]:
    return [str(x) for x in range(first, first + n)]


# ---------------------------------------------------------------- files

SCENARIOS = ("single_long", "single_short", "single_sorted", "monthly", "merged_country",
             "merged_country", "merged_plain", "stray", "stray", "workbook", "two_columns")


# en_US is the one common month-first convention: it is often among the branches
WEIGHTS = {"en_US": 5.0, "en_GB": 2.0, "de_DE": 2.0, "fr_FR": 1.5}


def _locales(rng: random.Random, k: int) -> list[str]:
    names = sorted(LOCALES)
    picked: list[str] = []
    while len(picked) < k:
        name = rng.choices(names, weights=[WEIGHTS.get(n, 1.0) for n in names])[0]
        if name not in picked:
            picked.append(name)
    return picked


def _label(locale: str, rng: random.Random, style: int) -> str:
    labels = LOCALES[locale][1]
    label = labels[min(style, len(labels) - 1)]
    return f"{LOCALES[locale][0]}-{rng.randint(1, 9):02d}" if style == 3 else label


def make_file(rng: random.Random, index: int, scenario: str) -> CorpusFile:
    short = scenario == "single_short" or rng.random() < 0.15
    n = rng.randint(5, 20) if short else rng.choice([40, 80, 150, 300])
    span_kind = ("monthly" if scenario == "monthly" else
                 "few_days" if (short and rng.random() < 0.5) else "any")
    sort = scenario in ("single_sorted", "monthly") or rng.random() < 0.35
    merged = scenario in ("merged_country", "merged_plain")
    locales = _locales(rng, rng.randint(2, 4) if merged else 1)
    label_style = rng.randrange(4)
    labels = {loc: _label(loc, rng, label_style) for loc in locales}
    if len(set(labels.values())) < len(labels):          # fr_CA and en_CA: keep apart
        labels = {loc: f"{loc[-2:]}-{i + 1:02d}" for i, loc in enumerate(locales)}
    kind = "date" if scenario == "workbook" else ("datetime" if rng.random() < 0.25
                                                  else "date")
    writers = {loc: make_writer(loc, rng, kind) for loc in locales}
    cells: list[_Cell] = []
    for loc in locales:
        size = max(3, n // len(locales)) if merged else n
        part = _branch_cells(writers[loc], size, rng, labels[loc], span_kind, sort)
        _spice(part, writers[loc], rng)
        cells += part
    if merged and rng.random() < 0.5:
        rng.shuffle(cells)
    host = writers[locales[0]]
    if scenario == "stray":
        _add_stray(cells, host, rng)
    typed: dict[str, dict[int, date]] = {}
    number_formats: dict[str, str] = {}
    format_order = None
    name = rng.choice(TIME_HEADERS if host.kind == "datetime" and not merged
                      else DATE_HEADERS)
    if scenario == "workbook" and host.numeric:
        format_order = host.order
        number_formats[name] = {"DMY": "DD/MM/YYYY", "MDY": "MM/DD/YYYY"}[host.order]
        typed[name] = _type_cells(cells, rng)
    orders = {labels[loc]: w.order for loc, w in writers.items() if w.order}
    with_country = merged and scenario == "merged_country" or (
        not merged and rng.random() < 0.4)
    grouped = with_country or not merged
    data: dict[str, list[str]] = {"Line": [str(i + 1) for i in range(len(cells))]}
    data[name] = [c.text for c in cells]
    shapes = {labels[loc]: w.shape for loc, w in writers.items()}
    truths = [DateTruth(name, host.kind, [c.truth for c in cells],
                        _status(cells, orders, grouped, format_order, shapes, host.order,
                                {labels[loc]: LOCALES[loc][0] for loc in locales}
                                if with_country else None),
                        orders, host.order if not merged else None,
                        frozenset(i for i, c in enumerate(cells) if c.stray))]
    if scenario == "two_columns":
        second = make_writer(locales[0], rng, "datetime")
        extra = [_cell(second, m, rng, labels[locales[0]])
                 for m in _moments(rng, len(cells), span_kind)]
        extra_name = rng.choice([h for h in TIME_HEADERS if h != name])
        data[extra_name] = [c.text for c in extra]
        extra_orders = {labels[locales[0]]: second.order} if second.order else {}
        truths.append(DateTruth(extra_name, "datetime", [c.truth for c in extra],
                                _status(extra, extra_orders, True, None), extra_orders,
                                second.order))
    if with_country:
        data["Country"] = [c.group for c in cells]
    decoys = _decoys(rng, len(cells))
    data.update(decoys)
    frame = pd.DataFrame(data)
    return CorpusFile(f"branch_{index:04d}_{scenario}", scenario, frame, truths,
                      sorted(decoys), typed, number_formats)


def _add_stray(cells: list[_Cell], host: Writer, rng: random.Random) -> None:
    """One row pasted from another branch, written that branch's way."""
    other = rng.choice([loc for loc in LOCALES if loc != host.locale])
    writer = make_writer(other, rng, host.kind)
    moment = datetime(2016, 1, 1) + timedelta(days=rng.randrange(3700),
                                              minutes=rng.randrange(1440))
    stray = _cell(writer, moment, rng, cells[0].group)
    # written exactly the host's way in the host's order: no one could tell it apart
    stray.stray = not (writer.shape == host.shape and writer.order == host.order)
    stray.order = writer.order
    cells.insert(rng.randrange(len(cells) + 1), stray)


def _type_cells(cells: list[_Cell], rng: random.Random) -> dict[int, date]:
    """Make a share of the date cells typed workbook cells (rendered as ISO dates)."""
    share = rng.choice([0.3, 0.6, 0.9])
    typed = {}
    for row, cell in enumerate(cells):
        if cell.state in ("fixed", "self", "ambiguous") and rng.random() < share:
            typed[row] = date.fromisoformat(cell.truth[:10])
            cell.state = "typed"
    return typed


def corpus(n_files: int, seed: int = 1) -> Iterable[CorpusFile]:
    rng = random.Random(seed)
    for i in range(n_files):
        yield make_file(rng, i, SCENARIOS[i % len(SCENARIOS)] if i < len(SCENARIOS)
                        else rng.choice(SCENARIOS))


# ---------------------------------------------------------------- writing files

def write_file(item: CorpusFile, folder: Path) -> Path:
    """The file as an export would arrive: CSV (comma or semicolon) or XLSX with typed cells."""
    if item.workbook:
        return _write_xlsx(item, folder / f"{item.name}.xlsx")
    path = folder / f"{item.name}.csv"
    delimiter = ";" if "Betrag" in item.frame.columns or hash(item.name) % 3 == 0 else ","
    with open(path, "w", encoding="utf-8", newline="") as handle:
        writer = csv.writer(handle, delimiter=delimiter)
        writer.writerow(item.frame.columns)
        writer.writerows(item.frame.itertuples(index=False))
    return path


def _write_xlsx(item: CorpusFile, path: Path) -> Path:
    from openpyxl import Workbook
    book = Workbook()
    sheet = book.active
    sheet.title = "Ledger"
    sheet.append(list(item.frame.columns))
    numeric = {c for c in item.decoys if c in ("Qty", "Order no", "Year", "Batch")}
    for row, values in enumerate(item.frame.itertuples(index=False)):
        cells: list[object] = []
        for column, value in zip(item.frame.columns, values, strict=True):
            day = item.typed.get(column, {}).get(row)
            if day is not None:
                cells.append(datetime(day.year, day.month, day.day))
            elif column in numeric:
                cells.append(int(value))
            else:
                cells.append(value)
        sheet.append(cells)
    for column, number_format in item.number_formats.items():
        col = list(item.frame.columns).index(column) + 1
        for row in item.typed.get(column, {}):
            sheet.cell(row=row + 2, column=col).number_format = number_format
    book.save(path)
    return path


# ---------------------------------------------------------------- scoring

@dataclass
class Scores:
    cells: int = 0
    wrong_unlisted: int = 0
    undecidable: int = 0
    undecidable_listed: int = 0
    decidable: int = 0
    decidable_right: int = 0
    decidable_listed: int = 0
    decoys: int = 0
    decoys_taken: int = 0
    confidences: list[float] = field(default_factory=list)
    correct: list[bool] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)

    def add(self, other: Scores) -> None:
        for name in ("cells", "wrong_unlisted", "undecidable", "undecidable_listed",
                     "decidable", "decidable_right", "decidable_listed", "decoys",
                     "decoys_taken"):
            setattr(self, name, getattr(self, name) + getattr(other, name))
        self.confidences += other.confidences
        self.correct += other.correct
        self.notes += other.notes

    def tally(self, output: str, listed: bool, truth: str, status: str) -> str:
        """Count one cell; returns what went amiss ("" when nothing did)."""
        if status == "missing":
            return ""
        self.cells += 1
        right = output == truth and not listed
        wrong = not listed and output != truth
        self.wrong_unlisted += wrong
        if status == "either":
            pass
        elif status == "decidable":
            self.decidable += 1
            self.decidable_right += right
            self.decidable_listed += listed
        else:
            self.undecidable += 1
            self.undecidable_listed += listed
        if wrong:
            return "WRONG"
        if status != "either" and listed == (status == "decidable"):
            return "listed" if listed else "unlisted"
        return ""

    def ece(self, bins: int = 10) -> float:
        return expected_calibration_error(self.confidences, self.correct, bins)

    def summary(self) -> dict[str, float]:
        return {"columns": len(self.confidences), "cells": self.cells,
                "wrong_unlisted": self.wrong_unlisted / max(self.cells, 1),
                "undecidable_listed": self.undecidable_listed / max(self.undecidable, 1),
                "decidable_right": self.decidable_right / max(self.decidable, 1),
                "decidable_listed": self.decidable_listed / max(self.decidable, 1),
                "undecidable": self.undecidable, "decidable": self.decidable,
                "decoys_taken": self.decoys_taken, "decoys": self.decoys,
                "accuracy": float(np.mean(self.correct)) if self.correct else 0.0,
                "mean_confidence": float(np.mean(self.confidences)) if self.confidences
                else 0.0, "ece": self.ece()}


def expected_calibration_error(confidences: list[float], correct: list[bool],
                               bins: int = 10) -> float:
    """Weighted mean gap between confidence and accuracy over equal-width bins."""
    conf = np.asarray(confidences, dtype=float)
    right = np.asarray(correct, dtype=float)
    edges = np.linspace(0, 1, bins + 1)
    total = 0.0
    for lo, hi in zip(edges[:-1], edges[1:], strict=True):
        inside = (conf > lo) & (conf <= hi) if lo > 0 else (conf >= lo) & (conf <= hi)
        if inside.any():
            total += inside.sum() * abs(conf[inside].mean() - right[inside].mean())
    return total / max(len(conf), 1)


def read_output(out_dir: Path, output: str) -> pd.DataFrame:
    return pd.read_csv(out_dir / output, dtype=str, keep_default_na=False, na_filter=False)


def _orders_right(entry: dict, truth: DateTruth) -> bool:
    """Whether every order the decision states is the group's (or host's) true order."""
    details = entry["details"]
    if details.get("order_shapes"):
        return True   # orders per way of writing: judged by the cells
    base = details.get("order")
    groups = details.get("groups") or {}
    conventions = groups.get("conventions", {}) if isinstance(groups, dict) else {}
    if conventions and "by" in groups:
        for label, order in truth.orders.items():
            stated = conventions.get(label, {}).get("order", base)
            if stated is not None and stated != order:
                return False
        return True
    if base is None:
        return True
    if truth.host_order is not None:
        return base == truth.host_order
    return set(truth.orders.values()) <= {base}


def evaluate(files: list[CorpusFile], out_dir: Path, report: dict) -> Scores:
    """Score the pipeline's outputs and report against the corpus truth."""
    by_input = {Path(e["input"]).stem: e for e in report["files"]}
    listed: set[tuple[str, int, str]] = {
        (Path(u["file"]).stem, int(u["row"]), u["column"]) for u in report["unresolved"]}
    scores = Scores()
    for item in files:
        entry = by_input.get(item.name)
        if entry is None:
            scores.notes.append(f"{item.name}: no report entry")
            continue
        frame = read_output(out_dir, entry["output"])
        columns = {c["name"]: c for c in entry["columns"]}
        first_row = entry.get("header_row", 1) + 1
        for truth in item.dates:
            column = columns[truth.name]
            wrong_rows = 0
            outputs = frame[column["output_name"]].tolist()
            for row, (out, want, status) in enumerate(zip(outputs, truth.truth, truth.status,
                                                          strict=True)):
                hit = (item.name, row + first_row, truth.name) in listed
                amiss = scores.tally(out, hit, want, status)
                wrong_rows += amiss == "WRONG" and row not in truth.strays
                if amiss and len(scores.notes) < 2000:
                    scores.notes.append(f"{amiss} {item.name} row {row + first_row} {truth.name}: "
                                        f"{item.frame[truth.name][row]!r} -> {out!r}, "
                                        f"want {want!r} ({status})")
            # the decision is right when kind and orders are, and no cell of the column's
            # own conventions comes out wrong (a stray from elsewhere aside)
            right = column["kind"] == truth.kind and _orders_right(column, truth) and \
                not wrong_rows
            scores.confidences.append(float(column["confidence"]))
            scores.correct.append(right)
            if not right:
                scores.notes.append(f"COLUMN {item.name} {truth.name}: {column['kind']} "
                                    f"(want {truth.kind}), order "
                                    f"{column['details'].get('order')} (want {truth.orders})")
        for name in item.decoys:
            scores.decoys += 1
            if columns[name]["kind"] in ("date", "datetime", "time"):
                scores.decoys_taken += 1
                scores.notes.append(f"{item.name}: decoy {name} taken as {columns[name]['kind']}")
    return scores


def run_corpus(files: list[CorpusFile], folder: Path, jobs: int = 1) -> tuple[Scores, dict]:
    """Write the files, run the whole pipeline on them, and score what comes out."""
    import harmonize
    source, out = folder / "in", folder / "out"
    source.mkdir(parents=True, exist_ok=True)
    for item in files:
        write_file(item, source)
    result = harmonize.run([source], out, fmt="csv", jobs=jobs)
    report = json.loads((out / "harmonize-report.json").read_text("utf-8"))
    assert report["files"] == result.report["files"]
    return evaluate(files, out, report), report
