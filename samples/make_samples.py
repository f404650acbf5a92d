"""Writes the demo exports in this folder (run: python samples/make_samples.py).

The scenario is invented: Quillmoor Provisions, a food wholesaler with branches in the
United Kingdom, Germany, France, the United States, Switzerland and India, sends its
monthly exports to head office. Every name, town and number here is made up; phone
numbers use ranges set aside for examples or drama where the numbering plan has one.
Seeded, so the files come out the same each time.
"""

from __future__ import annotations

import csv
import datetime as dt
import random
from pathlib import Path

from openpyxl import Workbook

HERE = Path(__file__).parent
rng = random.Random(20240403)

TOWNS = {
    "GB": ["Harrowdene", "Tamsbridge", "Brackenfold"],
    "DE": ["Ostwiesen", "Kalmbach am See", "Lindrich"],
    "FR": ["Vallerance", "Saint-Orbel", "Montclarin"],
    "US": ["Port Ellery", "Cedar Hollow", "New Brixham"],
    "CH": ["Zürrenberg", "Altmatt"],
    "IN": ["Chandrapur Nagar", "Vellakottai"],
}
PHONES = {
    "GB": ["020 7946 0{:03d}", "+44 20 7946 0{:03d}", "0044-20-7946-0{:03d}",
           "07400 123{:03d}", "+44 (0)121 234 5{:03d}"],
    "DE": ["030 123{:03d}", "+49 30 123{:03d}", "0151 23456{:03d}"],
    "FR": ["01 23 45 6{:01d} 89", "+33 6 12 34 5{:01d} 78"],
    "US": ["(201) 555-0{:03d}", "201.555.0{:03d}", "+1 201-555-0{:03d}"],
}


def variants(town: str) -> str:
    """A town the way a hurried clerk types it."""
    return rng.choice([town, town, town, town.upper(), f"  {town.lower()} ", town + " "])


def days(start: dt.date, n: int) -> list[dt.date]:
    return [start + dt.timedelta(days=i // 2) for i in range(n)]


def write_csv(name: str, header: list[str], rows: list[list[str]], *, delimiter: str = ",",
              encoding: str = "utf-8") -> None:
    with open(HERE / name, "w", newline="", encoding=encoding) as handle:
        writer = csv.writer(handle, delimiter=delimiter, lineterminator="\r\n")
        writer.writerow(header)
        writer.writerows(rows)


def uk_sales() -> None:
    """Comma, UTF-8; day-first dates, pound amounts, mixed weights, UK phones."""
    rows = []
    for i, day in enumerate(days(dt.date(2024, 3, 1), 40)):
        weight = rng.choice([f"{rng.randint(1, 40)} kg", f"{rng.randint(2, 80)} lb",
                             f"{rng.randint(100, 900)} g", f"{rng.randint(4, 30)} oz"])
        amount = rng.randint(500, 250000) / 100
        rows.append([f"{rng.randint(1, 9999):05d}", day.strftime("%d/%m/%Y"),
                     f"£{amount:,.2f}", weight, variants(rng.choice(TOWNS["GB"])),
                     rng.choice(PHONES["GB"]).format(rng.randint(100, 999) % 1000),
                     rng.choice(["yes", "no", "Y", "N", "yes"]) if i % 9 else "N/A"])
    write_csv("branch_sales_uk.csv", ["Customer No", "Order date", "Amount", "Weight", "Town",
                                      "Phone", "Paid"], rows)


def de_orders() -> None:
    """Semicolon, cp1252; dd.mm.yyyy dates, 1.234,56 amounts, decimal-comma weights."""
    rows = []
    for day in days(dt.date(2024, 4, 2), 36):
        amount = rng.randint(500, 900000) / 100
        text = f"{amount:,.2f}".replace(",", "_").replace(".", ",").replace("_", ".")
        rows.append([day.strftime("%d.%m.%Y"), f"{text} €",
                     f"{rng.randint(1, 40)},{rng.randint(0, 9)} kg",
                     variants(rng.choice(TOWNS["DE"])),
                     rng.choice(PHONES["DE"]).format(rng.randint(100, 999)),
                     rng.choice(["ja", "nein", "Ja", "k.A."])])
    write_csv("filiale_bestellungen_de.csv", ["Bestelldatum", "Betrag", "Gewicht", "Ort",
                                              "Telefon", "Bezahlt"],
              rows, delimiter=";", encoding="cp1252")


def us_orders() -> None:
    """Tab, UTF-16 with BOM; month-first dates, dollar amounts, pounds and ounces."""
    rows = []
    for day in days(dt.date(2024, 3, 28), 30):
        rows.append([day.strftime("%m/%d/%Y"), f"${rng.randint(100, 500000) / 100:,.2f}",
                     f"{rng.randint(1, 90)} lbs", f"{rng.randint(30, 105)} °F",
                     variants(rng.choice(TOWNS["US"])),
                     rng.choice(PHONES["US"]).format(rng.randint(100, 199)),
                     rng.choice(["TRUE", "FALSE", "true", "null"])])
    write_csv("us_orders.tsv", ["Order Date", "Total", "Ship weight", "Dock temp",
                                "City", "Contact phone", "Express"],
              rows, delimiter="\t", encoding="utf-16")


def merged_ledger() -> None:
    """Pipe, UTF-8 with BOM; one file merged from several branches: each country writes
    dates and amounts its own way, and only the Country column tells them apart."""
    styles = {"United Kingdom": ("%d/%m/%Y", "{:,.2f}"), "Deutschland": ("%d/%m/%Y", "de"),
              "United States": ("%m/%d/%Y", "{:,.2f}"), "France": ("%d/%m/%Y", "fr")}
    rows = []
    for country, (date_fmt, money) in styles.items():
        for day in days(dt.date(2024, 5, 8), 16):
            amount = rng.randint(100000, 9000000) / 100
            if money == "de":
                text = f"{amount:,.2f}".replace(",", "_").replace(".", ",").replace("_", ".")
            elif money == "fr":
                text = f"{amount:,.2f}".replace(",", "\u202f").replace(".", ",")
            else:
                text = money.format(amount)
            rows.append([country, day.strftime(date_fmt), text,
                         f"INV-{rng.randint(1, 99999):05d}"])
    rng.shuffle(rows)
    write_csv("merged_ledger.csv", ["Country", "Booking date", "Net amount", "Invoice"],
              rows, delimiter="|", encoding="utf-8-sig")


def logistics_workbook() -> None:
    """Two sheets; typed date cells beside text dates, units in headers and cells."""
    book = Workbook()
    ship = book.active
    ship.title = "Shipments"
    ship.append(["Shipped", "Depot", "Load (kg)", "Pallet height", "Cold store temp",
                 "Declared value"])
    for i, day in enumerate(days(dt.date(2024, 2, 26), 30)):
        shipped: object = dt.datetime.combine(day, dt.time(8 + i % 9, 15))
        if i % 4 == 0:
            shipped = day.strftime("%d %B %Y")
        ship.append([shipped, rng.choice(TOWNS["GB"] + TOWNS["CH"]),
                     rng.randint(50, 2000), rng.choice(["1.2 m", "120 cm", "4' 0\"", "47 in"]),
                     rng.choice(["-18 °C", "-20 °C", "0 °F", "-4 °F", "4 °C"]),
                     rng.choice([f"CHF {rng.randint(100, 99999):,}".replace(",", "'"),
                                 f"£{rng.randint(100, 99999):,}.00"])])
        ship.cell(row=ship.max_row, column=1).number_format = "DD/MM/YYYY HH:MM"
    depots = book.create_sheet("Depots")
    depots.append(["Depot code", "Postcode", "Open on Sundays", "Manager phone",
                   "Opened", "Floor area"])
    for n in range(len(TOWNS["GB"] + TOWNS["CH"] + TOWNS["IN"])):
        depots.append([f"D{n + 1:03d}", rng.choice(["01067", "SW1A 0AA", "8001", "560001"]),
                       rng.choice([True, False]),
                       rng.choice(PHONES["GB"]).format(rng.randint(100, 999)),
                       dt.date(2015 + n, 1 + n, 10 + n), f"{rng.randint(200, 9000)} m²"])
    stamp = dt.datetime(2024, 6, 1, 9, 0)  # fixed, so the file is the same on every run
    book.properties.created = book.properties.modified = stamp
    book.save(HERE / "logistics.xlsx")


def masks_and_ids() -> None:
    """Missing-value masks, sentinels and identifiers that must stay text."""
    masks = ["", "N/A", "n/a", "-", "null", "NULL", "None", "?", "k.A.", "n.d.", "  "]
    rows = []
    for i in range(40):
        rows.append([f"{rng.randint(0, 99999):05d}", f"{rng.randint(10**17, 10**18 - 1)}",
                     rng.choice(masks) if i % 3 == 0 else str(rng.randint(18, 90)),
                     "-999" if i % 11 == 0 else f"{rng.randint(150, 199)}",
                     rng.choice(["sam.brook@example.com", "N/A", f"buyer{i}@qmp-trade.biz",
                                 f"buyer{i}@qmp-trade.biz", f"desk{i % 7}@qmp-trade.biz"])])
    write_csv("customers_masks.csv", ["Postcode", "Account number", "Age", "Height cm",
                                      "Email"], rows)


if __name__ == "__main__":
    uk_sales()
    de_orders()
    us_orders()
    merged_ledger()
    logistics_workbook()
    masks_and_ids()
