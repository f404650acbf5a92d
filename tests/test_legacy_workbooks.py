"""Legacy workbooks (.xls): read through calamine, written back as .xlsx.

Files are written with xlwt (a general-purpose writer of the BIFF8 format) in an invented
scenario: "Vallombra Growers", a made-up cooperative shipping fruit crates. Dates are
checked against Python's datetime (the values written); that systems export
tab-separated text or HTML under the name .xls is common practice, no source.
"""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import openpyxl
import pytest

import harmonize
from harmonize.sources import SourceError, read_tables

xlwt = pytest.importorskip("xlwt")

SHIPPED = [dt.date(2024, 5, 2), dt.date(2024, 5, 17), dt.date(2024, 6, 3)]


def legacy_book(path: Path) -> Path:
    book = xlwt.Workbook()
    sheet = book.add_sheet("Crates")
    day = xlwt.easyxf(num_format_str="DD/MM/YYYY")
    sheet.write(0, 0, "Crate shipments, spring 2024")   # a title row
    for col, name in enumerate(["Depot", "Shipped", "Crates", "Weight"]):
        sheet.write(2, col, name)
    for row, (depot, shipped, crates, weight) in enumerate(
            zip(["North", "South", "East"], SHIPPED, [12, 9, 7], ["3,5 t", "2,25 t", "4 t"]),
            start=3):
        sheet.write(row, 0, depot)
        sheet.write(row, 1, shipped, day)
        sheet.write(row, 2, crates)
        sheet.write(row, 3, weight)
    book.add_sheet("Empty")
    book.save(str(path))
    return path


def test_a_legacy_workbook_is_read_with_typed_dates(tmp_path: Path) -> None:
    table, empty = read_tables(legacy_book(tmp_path / "crates.xls"))
    assert table.sheet == "Crates" and empty.sheet == "Empty" and empty.n_rows == 0
    assert table.header_row == 3 and table.column_names == ["Depot", "Shipped", "Crates",
                                                            "Weight"]
    assert table.frame["Shipped"].str[:10].tolist() == [d.isoformat() for d in SHIPPED]
    assert table.frame["Crates"].tolist() == ["12", "9", "7"]


def test_a_legacy_workbook_is_harmonised_into_xlsx(tmp_path: Path) -> None:
    result = harmonize.run([legacy_book(tmp_path / "crates.xls")], tmp_path / "out")
    assert not result.errors
    sheet = openpyxl.load_workbook(tmp_path / "out" / "crates.xlsx")["Crates"]
    rows = list(sheet.iter_rows(values_only=True))
    assert rows[0] == ("Depot", "Shipped", "Crates", "Weight (kg)")
    # ISO 8601 calendar dates of the values written; 3,5 t = 3500 kg (SI Brochure: 1 t =
    # 1000 kg)
    assert [r[1] for r in rows[1:]] == [d.isoformat() for d in SHIPPED]
    assert rows[1][3] in ("3500", 3500)


def test_tab_separated_text_named_xls_is_read_as_text(tmp_path: Path) -> None:
    path = tmp_path / "export.xls"
    path.write_text("Depot\tCrates\nNorth\t12\nSouth\t9\n", encoding="utf-8")
    (table,) = read_tables(path)
    assert table.column_names == ["Depot", "Crates"] and table.n_rows == 2


@pytest.mark.parametrize(("content", "says"), [
    (b"<html><body><table><tr><td>1</td></tr></table></body></html>", "web page"),
    (b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + bytes(600), "not a readable legacy workbook"),
])
def test_what_is_no_workbook_is_refused_in_one_line(tmp_path: Path, content: bytes,
                                                    says: str) -> None:
    path = tmp_path / "export.xls"
    path.write_bytes(content)
    with pytest.raises(SourceError) as caught:
        read_tables(path)
    message = str(caught.value)
    assert says in message and "\n" not in message and "export.xls" in message
