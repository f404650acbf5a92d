"""Tests for harmonize.sources: reading and writing files.

Demo data is an invented scenario: "Kestrel Hollow Growers", a made-up
seed cooperative with depots in several countries. Expected values come
from references outside the project, named beside each check.
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import os
import pickle
import random
import re
import zipfile
from pathlib import Path

import openpyxl
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
import pytest
from openpyxl.utils.datetime import CALENDAR_MAC_1904

from harmonize import sources
from harmonize.options import Options
from harmonize.sources import (
    CsvDialect,
    SourceError,
    atomic_write_text,
    find_inputs,
    read_tables,
    sniff_csv,
    write_table,
    write_workbook,
)

DEPOT_TEXT = (
    "Grower;Depot;Price\n"
    "Zoë Quillfeather;Liège;5 €\n"
    "Jürgen Ambervale;Düsseldorf;12,50 €\n"
    "Noël Brackenridge;Saint-Étienne;3 €\n"
)


def only_table(path: Path) -> sources.Table:
    tables = read_tables(path)
    assert len(tables) == 1
    return tables[0]


def expected_rows(text: str, delimiter: str) -> list[list[str]]:
    # Reference: Python's csv module reading the original str.
    return list(csv.reader(io.StringIO(text, newline=""), delimiter=delimiter))


def frame_rows(table: sources.Table) -> list[list[str]]:
    return [list(table.frame.columns), *table.frame.to_numpy().tolist()]


# --------------------------------------------------------------------------
# Encodings


class TestEncodings:
    @pytest.mark.parametrize(
        ("codec", "reported", "bom"),
        [
            ("utf-8", "utf-8", False),
            ("utf-8-sig", "utf-8-sig", True),
            ("utf-16", "utf-16", True),  # Python's utf-16 codec writes a BOM
            ("utf-16-le", "utf-16-le", False),
            ("cp1252", "cp1252", False),
        ],
    )
    def test_same_text_reads_back_identically(
        self, tmp_path: Path, codec: str, reported: str, bom: bool
    ) -> None:
        # Reference: Python's codecs produced the bytes; decoding must give back DEPOT_TEXT.
        path = tmp_path / "depots.csv"
        path.write_bytes(DEPOT_TEXT.encode(codec))
        table = only_table(path)
        assert frame_rows(table) == expected_rows(DEPOT_TEXT, ";")
        assert table.dialect == CsvDialect(encoding=reported, delimiter=";", bom=bom)

    def test_cp1252_bytes_are_the_codec_bytes(self, tmp_path: Path) -> None:
        # Reference: Python's cp1252 codec maps é->0xE9, ë->0xEB, €->0x80, ü->0xFC.
        raw = "Zoë;René;5 €;Jürgen\n".encode("cp1252")
        assert {0xE9, 0xEB, 0x80, 0xFC} <= set(raw)
        path = tmp_path / "one.csv"
        path.write_bytes(b"a;b;c;d\n" + raw)
        assert only_table(path).frame.iloc[0].tolist() == ["Zoë", "René", "5 €", "Jürgen"]

    def test_central_european_text_is_not_forced_to_cp1252(self, tmp_path: Path) -> None:
        # Reference: Python's cp1250 codec; cp1252 would show 'Wrocław' as 'Wroc³aw'.
        text = (
            "Imię;Miasto;Ulica\n"
            "Łukasz Kowalczyk;Wrocław;Świętokrzyska\n"
            "Zofia Wiśniewska;Łódź;Żeromskiego\n"
        )
        path = tmp_path / "pl.csv"
        path.write_bytes(text.encode("cp1250"))
        table = only_table(path)
        assert table.dialect is not None and table.dialect.encoding == "cp1250"
        assert frame_rows(table) == expected_rows(text, ";")

    def test_sniff_csv_reports_dialect(self) -> None:
        # Reference: the UTF-8 BOM is EF BB BF (Unicode Standard, ch. 23.8).
        dialect = sniff_csv(b"\xef\xbb\xbfa|b\n1|2\n3|4\n")
        assert dialect == CsvDialect(encoding="utf-8-sig", delimiter="|", bom=True)

    @pytest.mark.parametrize("strip_nul", [False, True])
    def test_binary_junk_is_rejected(self, tmp_path: Path, strip_nul: bool) -> None:
        raw = random.Random(20240305).randbytes(4000)
        if strip_nul:
            raw = raw.replace(b"\x00", b"")
        path = tmp_path / "junk.csv"
        path.write_bytes(raw)
        with pytest.raises(SourceError, match=r"junk\.csv: not a text file \(binary content\)$"):
            read_tables(path)


# --------------------------------------------------------------------------
# Delimiters and quoting


ROWS = [
    ["Lot", "Note", "Weight"],
    ["007", "sown, then covered; watered | twice\tdaily", "1.5"],
    ["008", 'said "enough"\nnext line', "2"],
    ["009", "", "3.25"],
]


class TestDelimiters:
    @pytest.mark.parametrize("delimiter", [",", ";", "\t", "|"])
    def test_quoted_fields_with_delimiters_and_newlines(
        self, tmp_path: Path, delimiter: str
    ) -> None:
        # Reference: Python's csv.writer produced the quoting (embedded delimiter,
        # quote and line break in one field).
        buffer = io.StringIO(newline="")
        csv.writer(buffer, delimiter=delimiter, lineterminator="\r\n").writerows(ROWS)
        path = tmp_path / "lots.csv"
        path.write_text(buffer.getvalue(), encoding="utf-8", newline="")
        table = only_table(path)
        assert table.dialect is not None and table.dialect.delimiter == delimiter
        assert frame_rows(table) == ROWS

    def test_semicolon_file_with_decimal_commas(self, tmp_path: Path) -> None:
        text = "Seed;Weight kg;Price\nBarley;1,5;2,25\nOats;0,75;1,05\nRye;12;3,5\n"
        path = tmp_path / "decimal.csv"
        path.write_text(text, encoding="utf-8")
        table = only_table(path)
        assert table.dialect is not None and table.dialect.delimiter == ";"
        assert table.frame["Weight kg"].tolist() == ["1,5", "0,75", "12"]

    def test_one_column_file(self, tmp_path: Path) -> None:
        text = 'Remarks\nhello, world\nsecond; line\n"quoted, ""kept"""\n'
        path = tmp_path / "remarks.txt"
        path.write_text(text, encoding="utf-8")
        table = only_table(path)
        assert table.dialect is not None and table.dialect.delimiter == ""
        # Reference: csv module with no delimiter present in the text.
        assert frame_rows(table) == expected_rows(text, "\x1f")

    def test_tsv_suffix_forces_tab(self, tmp_path: Path) -> None:
        path = tmp_path / "x.tsv"
        path.write_text("a,b\tc\n1,2\t3\n4,5\t6\n", encoding="utf-8")
        table = only_table(path)
        assert list(table.frame.columns) == ["a,b", "c"]
        assert table.frame["a,b"].tolist() == ["1,2", "4,5"]


# --------------------------------------------------------------------------
# Raw text, headers and rows


class TestRawText:
    def test_cells_kept_exactly(self, tmp_path: Path) -> None:
        values = ["007", "NA", "n/a", "", "  x ", "null", "None", "#N/A", "1e5", "TRUE"]
        text = " Code \n" + "\n".join(f'"{v}"' if not v.strip() else v for v in values) + "\n"
        path = tmp_path / "raw.csv"
        path.write_text(text, encoding="utf-8")
        table = only_table(path)
        assert list(table.frame.columns) == [" Code "]
        assert table.frame[" Code "].tolist() == values
        assert table.frame[" Code "].dtype == object
        assert all(type(v) is str for v in table.frame[" Code "])


class TestHeadersAndRows:
    def test_leading_blank_lines_skipped(self, tmp_path: Path) -> None:
        path = tmp_path / "lead.csv"
        path.write_text("\n,,\n  \nDepot,Crates\nNorth,4\n", encoding="utf-8")
        table = only_table(path)
        assert table.header_row == 4
        assert frame_rows(table) == [["Depot", "Crates"], ["North", "4"]]

    def test_blank_header_named_and_warned(self, tmp_path: Path) -> None:
        path = tmp_path / "blank.csv"
        path.write_text("Depot,,Crates\nNorth,x,4\n", encoding="utf-8")
        table = only_table(path)
        assert list(table.frame.columns) == ["Depot", "column_2", "Crates"]
        assert any("column_2" in w for w in table.warnings)

    def test_duplicate_header_is_an_error(self, tmp_path: Path) -> None:
        path = tmp_path / "dup.csv"
        path.write_text("Date,Depot,Date\n1,2,3\n", encoding="utf-8")
        with pytest.raises(SourceError) as err:
            read_tables(path)
        assert "duplicate header 'Date' in column 3" in str(err.value)
        assert err.value.column == "Date" and err.value.path.endswith("dup.csv")

    def test_too_many_fields_names_spreadsheet_row(self, tmp_path: Path) -> None:
        # Row 2 spans two physical lines; the bad record is spreadsheet row 4.
        path = tmp_path / "sales.csv"
        path.write_text('a,b,c\n"x\ny",2,3\n4,5,6\n7,8,9,10\n', encoding="utf-8")
        with pytest.raises(SourceError) as err:
            read_tables(path)
        assert str(err.value).endswith("sales.csv: row 4: expected 3 fields, found 4")
        assert err.value.row == 4

    def test_unclosed_quote_names_row(self, tmp_path: Path) -> None:
        path = tmp_path / "open.csv"
        path.write_text('\na,b\n1,2\n3,"x\n4,5\n', encoding="utf-8")
        with pytest.raises(SourceError, match=r"open\.csv: row 4: unclosed quote"):
            read_tables(path)

    def test_short_rows_padded_and_warned(self, tmp_path: Path) -> None:
        path = tmp_path / "ragged.csv"
        path.write_text('a,b,c\n1,2,3\n"p\nq",5\n6,7,\n8\n', encoding="utf-8")
        table = only_table(path)
        assert table.frame.to_numpy().tolist() == [
            ["1", "2", "3"],
            ["p\nq", "5", ""],
            ["6", "7", ""],
            ["8", "", ""],
        ]
        # rows 3 and 5 had fewer fields; row 4 has an empty third field as written
        assert table.warnings == ["ragged rows 3, 5 padded with empty cells"]

    def test_blank_line_inside_data_is_an_empty_row(self, tmp_path: Path) -> None:
        path = tmp_path / "gap.csv"
        path.write_text("a,b\n1,2\n\n3,4\n\n\n", encoding="utf-8")
        table = only_table(path)
        assert table.frame.to_numpy().tolist() == [["1", "2"], ["", ""], ["3", "4"]]
        assert table.warnings == []

    def test_header_only_gives_zero_rows(self, tmp_path: Path) -> None:
        path = tmp_path / "head.csv"
        path.write_text("Depot,Crates\n", encoding="utf-8")
        table = only_table(path)
        assert list(table.frame.columns) == ["Depot", "Crates"]
        assert len(table.frame) == 0

    @pytest.mark.parametrize("content", [b"", b"  \n\t\r\n  ", "\ufeff \n".encode()])
    def test_empty_or_whitespace_file(self, tmp_path: Path, content: bytes) -> None:
        path = tmp_path / "empty.csv"
        path.write_bytes(content)
        with pytest.raises(SourceError, match=r"empty\.csv: empty file$"):
            read_tables(path)

    def test_error_survives_pickling(self, tmp_path: Path) -> None:
        # Reference: Python's pickle, as used by process pools to return errors.
        path = tmp_path / "dup.csv"
        path.write_text("Date,Date\n", encoding="utf-8")
        with pytest.raises(SourceError) as err:
            read_tables(path)
        copy = pickle.loads(pickle.dumps(err.value))
        assert str(copy) == str(err.value)
        assert (copy.path, copy.column, copy.row) == (str(path), "Date", None)

    def test_missing_file(self, tmp_path: Path) -> None:
        with pytest.raises(SourceError, match="no such file"):
            read_tables(tmp_path / "absent.csv")


# --------------------------------------------------------------------------
# Workbooks


def xml_of(path: Path, member: str) -> str:
    with zipfile.ZipFile(path) as archive:
        return archive.read(member).decode("utf-8")


@pytest.fixture
def two_sheet_book(tmp_path: Path) -> Path:
    book = openpyxl.Workbook()
    jan = book.active
    jan.title = "Jan"
    jan.append(["Date", "Logged", "Weight", "Organic", "Lot", "Count"])
    jan.append([dt.date(2024, 3, 5), dt.datetime(2024, 3, 5, 10, 30, 15), 1234.5, True, "007", 42])
    jan.append([dt.date(2024, 3, 13), dt.datetime(2024, 3, 6), 0.1, False, "N/A", 7])
    for cell in ("A2", "A3"):
        jan[cell].number_format = "DD/MM/YYYY"
    jan["B3"].number_format = "yyyy-mm-dd hh:mm"
    jan["C2"].number_format = "#,##0.00"
    feb = book.create_sheet("Feb")
    feb.append([])
    feb.append([None, None])
    feb.append(["Depot", "Remark"])
    feb.append(["North", "  spaced  "])
    path = tmp_path / "book.xlsx"
    book.save(path)
    return path


class TestXlsx:
    def test_sheets_typed_cells_and_formats(self, two_sheet_book: Path) -> None:
        jan, feb = read_tables(two_sheet_book)
        assert (jan.sheet, feb.sheet) == ("Jan", "Feb")
        assert jan.frame.to_numpy().tolist() == [
            ["2024-03-05", "2024-03-05T10:30:15", "1234.5", "TRUE", "007", "42"],
            ["2024-03-13", "2024-03-06T00:00:00", "0.1", "FALSE", "N/A", "7"],
        ]
        assert jan.typed["Date"] == {"2024-03-05": "date", "2024-03-13": "date"}
        assert jan.typed["Logged"]["2024-03-06T00:00:00"] == "datetime"
        assert jan.typed["Weight"] == {"1234.5": "number", "0.1": "number"}
        assert jan.typed["Organic"] == {"TRUE": "boolean", "FALSE": "boolean"}
        assert "Lot" not in jan.typed  # text cells are not typed
        assert jan.formats["Date"]["DD/MM/YYYY"] == 2
        assert jan.formats["Weight"]["#,##0.00"] == 1
        assert jan.dialect is None and jan.date1904 is False
        assert feb.header_row == 3
        assert feb.frame.to_numpy().tolist() == [["North", "  spaced  "]]

    def test_float_text_is_python_repr(self, tmp_path: Path) -> None:
        # Reference: Python's float repr (shortest string that round-trips).
        values = [1234.5, 0.1, 2.675, 3e-05, 123456789.125]
        book = openpyxl.Workbook()
        book.active.append(["v"])
        for value in values:
            book.active.append([value])
        path = tmp_path / "floats.xlsx"
        book.save(path)
        texts = only_table(path).frame["v"].tolist()
        assert [float(t) for t in texts] == values
        assert texts[:3] == [repr(v) for v in values[:3]]
        assert texts[3] == "0.00003"  # positional, never "3e-05"

    @pytest.mark.parametrize(
        ("epoch", "serial", "iso"),
        [
            # ECMA-376 1st ed. Part 4 §3.17.4.1 (checkvalues D15): serial 1 = 1900-01-01
            (None, 1, "1900-01-01"),
            # ECMA-376 1st ed. Part 4 §3.17.4.1 (D16/D20): serial 61 = 1900-03-01
            (None, 61, "1900-03-01"),
            # ECMA-376 1st ed. Part 4 §3.17.4.1 DATEVALUE examples (D17): 03-Feb-1910 -> 3687
            (None, 3687, "1910-02-03"),
            # ECMA-376 1st ed. DATEVALUE examples (D17): 01-Feb-2006 -> 38749
            (None, 38749, "2006-02-01"),
            # D20 (ISO/IEC 29500-1 §18.17.4.1 "1900" base): 25569 -> 1970-01-01
            (None, 25569, "1970-01-01"),
            # ECMA-376 1st ed. Part 4 §3.17.4.1, 1904 system (D18): 01-Feb-2006 -> 37287
            (CALENDAR_MAC_1904, 37287, "2006-02-01"),
            # ECMA-376 1st ed. Part 4 §3.17.4.1, 1904 system (D18): 03-Feb-1910 -> 2225
            (CALENDAR_MAC_1904, 2225, "1910-02-03"),
        ],
    )
    def test_raw_serials_follow_ecma_376(
        self, tmp_path: Path, epoch: dt.datetime | None, serial: int, iso: str
    ) -> None:
        book = openpyxl.Workbook()
        if epoch is not None:
            book.epoch = epoch
        sheet = book.active
        sheet.append(["Shipped"])
        sheet.append([serial])
        sheet["A2"].number_format = "yyyy-mm-dd"
        path = tmp_path / "serial.xlsx"
        book.save(path)
        assert f"<v>{serial}</v>" in xml_of(path, "xl/worksheets/sheet1.xml")  # stored raw
        table = only_table(path)
        assert table.frame["Shipped"].tolist() == [iso]
        assert table.typed["Shipped"] == {iso: "date"}
        assert table.date1904 is (epoch is not None)

    def test_1904_workbook_dates(self, tmp_path: Path) -> None:
        book = openpyxl.Workbook()
        book.epoch = CALENDAR_MAC_1904
        book.active.append(["Harvest"])
        book.active.append([dt.date(2006, 2, 1)])
        book.active.append([dt.date(1910, 2, 3)])
        path = tmp_path / "mac.xlsx"
        book.save(path)
        # ECMA-376 1st ed. Part 4 §3.17.6.7: the flag <workbookPr date1904="1"/> (D18)
        assert re.search(r'date1904="(1|true)"', xml_of(path, "xl/workbook.xml"))
        # ECMA-376 1st ed. Part 4 §3.17.4.1 (D18): 2006-02-01 -> 37287, 1910-02-03 -> 2225
        sheet_xml = xml_of(path, "xl/worksheets/sheet1.xml")
        assert "<v>37287</v>" in sheet_xml and "<v>2225</v>" in sheet_xml
        table = only_table(path)
        assert table.date1904 is True
        assert table.frame["Harvest"].tolist() == ["2006-02-01", "1910-02-03"]

    @pytest.mark.parametrize(("value", "number_format", "text"), [
        # ECMA-376 Part 1 §18.8.31 (numFmts): "%" multiplies the value by 100 and shows
        # the sign; in quotes or after a backslash it is a literal, and nothing is scaled
        (0.125, "0.0%", "12.5%"),
        (0.07, "0%", "7%"),
        (-0.003, "0.00%", "-0.3%"),
        (1, "0%", "100%"),
        (0.125, '0.000" %"', "0.125"),
        (0.125, "0.000\\%", "0.125"),
        (0.125, "0.000", "0.125"),
    ])
    def test_percent_formats_show_the_value_as_the_sheet_does(
        self, tmp_path: Path, value: float, number_format: str, text: str
    ) -> None:
        book = openpyxl.Workbook()
        book.active.append(["Margin"])
        book.active.append([value])
        book.active["A2"].number_format = number_format
        path = tmp_path / "margin.xlsx"
        book.save(path)
        table = only_table(path)
        assert table.frame["Margin"].tolist() == [text]
        assert table.typed["Margin"] == {text: "number"}

    def test_percent_cells_and_percent_text_agree_once_harmonised(self, tmp_path: Path) -> None:
        from harmonize.pipeline import harmonize_table
        book = openpyxl.Workbook()
        book.active.append(["Margin"])
        for value in (0.125, "12,5 %", 0.2, "7,5 %", 0.05, "3 %"):
            book.active.append([value])
            if not isinstance(value, str):
                book.active.cell(book.active.max_row, 1).number_format = "0.0%"
        path = tmp_path / "margin.xlsx"
        book.save(path)
        _, result = harmonize_table(only_table(path), "margin.xlsx", Options(), None)
        # ECMA-376 §18.8.31: 0.125 under "0.0%" is shown, and meant, as 12.5 %
        assert result.frame.iloc[:, 0].tolist() == ["12.5", "12.5", "20", "7.5", "5", "3"]

    def test_time_and_duration_cells(self, tmp_path: Path) -> None:
        book = openpyxl.Workbook()
        book.active.append(["Start", "Spent"])
        book.active.append([dt.time(7, 5), dt.timedelta(hours=26, minutes=30)])
        book.active["B2"].number_format = "[h]:mm:ss"
        path = tmp_path / "times.xlsx"
        book.save(path)
        table = only_table(path)
        assert table.frame.iloc[0].tolist() == ["07:05:00", "26:30:00"]
        assert table.typed == {"Start": {"07:05:00": "time"}, "Spent": {"26:30:00": "duration"}}

    def test_duplicate_header_names_sheet_and_column(self, tmp_path: Path) -> None:
        book = openpyxl.Workbook()
        book.active.title = "Feb"
        book.active.append(["Date", "Depot", "Date"])
        path = tmp_path / "book.xlsx"
        book.save(path)
        with pytest.raises(SourceError) as err:
            read_tables(path)
        assert str(err.value).startswith(
            f"{path}: sheet 'Feb': duplicate header 'Date' in column C"
        )
        assert err.value.sheet == "Feb"

    def test_empty_sheet_kept_with_warning(self, two_sheet_book: Path) -> None:
        book = openpyxl.load_workbook(two_sheet_book)
        book.create_sheet("Blank")
        book.save(two_sheet_book)
        blank = read_tables(two_sheet_book)[-1]
        assert blank.sheet == "Blank" and blank.frame.shape == (0, 0)
        assert blank.warnings == ["sheet 'Blank' is empty"]

    def test_workbook_with_only_empty_sheets(self, tmp_path: Path) -> None:
        path = tmp_path / "nothing.xlsx"
        openpyxl.Workbook().save(path)
        with pytest.raises(SourceError, match="empty file"):
            read_tables(path)

    def test_cell_limit(self, two_sheet_book: Path) -> None:
        with pytest.raises(SourceError, match=r"sheet 'Jan' has .*cells, over the limit 10"):
            read_tables(two_sheet_book, max_cells=10)

    def test_zip_that_is_not_a_workbook(self, tmp_path: Path) -> None:
        path = tmp_path / "fake.xlsx"
        with zipfile.ZipFile(path, "w") as archive:
            archive.writestr("readme.txt", "not a spreadsheet")
        with pytest.raises(SourceError, match="not a workbook"):
            read_tables(path)

    def test_truncated_workbook(self, two_sheet_book: Path) -> None:
        raw = two_sheet_book.read_bytes()
        two_sheet_book.write_bytes(raw[: len(raw) // 2])
        with pytest.raises(SourceError, match="corrupt or truncated workbook"):
            read_tables(two_sheet_book)

    def test_encrypted_workbook(self, tmp_path: Path) -> None:
        # [MS-CFB] §2.2: compound files (used for encrypted OOXML) start D0 CF 11 E0 A1 B1 1A E1.
        path = tmp_path / "locked.xlsx"
        path.write_bytes(bytes.fromhex("D0CF11E0A1B11AE1") + bytes(504))
        with pytest.raises(SourceError, match="password-protected"):
            read_tables(path)

    def test_refuses_without_xml_protection(
        self, two_sheet_book: Path, monkeypatch: pytest.MonkeyPatch
    ) -> None:
        assert openpyxl.xml.DEFUSEDXML is True  # defusedxml is installed and in use
        monkeypatch.setattr(openpyxl.xml, "DEFUSEDXML", False)
        with pytest.raises(SourceError, match="defusedxml"):
            read_tables(two_sheet_book)


# --------------------------------------------------------------------------
# ODS


ODS_NS = (
    'xmlns:office="urn:oasis:names:tc:opendocument:xmlns:office:1.0" '
    'xmlns:table="urn:oasis:names:tc:opendocument:xmlns:table:1.0" '
    'xmlns:text="urn:oasis:names:tc:opendocument:xmlns:text:1.0"'
)
ODS_MANIFEST = (
    '<?xml version="1.0" encoding="UTF-8"?>'
    '<manifest:manifest xmlns:manifest="urn:oasis:names:tc:opendocument:xmlns:manifest:1.0" '
    'manifest:version="1.2">'
    '<manifest:file-entry manifest:full-path="/" '
    'manifest:media-type="application/vnd.oasis.opendocument.spreadsheet"/>'
    '<manifest:file-entry manifest:full-path="content.xml" manifest:media-type="text/xml"/>'
    "</manifest:manifest>"
)


def ods_cell(kind: str, value: str, shown: str) -> str:
    # OpenDocument 1.2: office:value-type with office:value / date-value / boolean-value
    attr = {"string": "", "float": "value", "date": "date-value", "boolean": "boolean-value"}[kind]
    typed_value = f' office:{attr}="{value}"' if attr else ""
    return (
        f'<table:table-cell office:value-type="{kind}"{typed_value}>'
        f"<text:p>{shown}</text:p></table:table-cell>"
    )


def write_ods(path: Path, rows: list[list[str]]) -> None:
    body = "".join(f"<table:table-row>{''.join(r)}</table:table-row>" for r in rows)
    content = (
        f'<?xml version="1.0" encoding="UTF-8"?><office:document-content {ODS_NS} '
        'office:version="1.2"><office:body><office:spreadsheet>'
        f'<table:table table:name="Stock">{body}</table:table>'
        "</office:spreadsheet></office:body></office:document-content>"
    )
    with zipfile.ZipFile(path, "w") as archive:
        archive.writestr(
            "mimetype",
            "application/vnd.oasis.opendocument.spreadsheet",
            compress_type=zipfile.ZIP_STORED,
        )
        archive.writestr("content.xml", content)
        archive.writestr("META-INF/manifest.xml", ODS_MANIFEST)


class TestOds:
    def test_typed_cells(self, tmp_path: Path) -> None:
        path = tmp_path / "stock.ods"
        write_ods(
            path,
            [
                ["<table:table-cell/>"],
                [ods_cell("string", "", t) for t in ("Packed", "Kg", "Certified", "Lot")],
                [
                    ods_cell("date", "2024-03-05", "05/03/2024"),
                    ods_cell("float", "1234.5", "1 234,5"),
                    ods_cell("boolean", "true", "TRUE"),
                    ods_cell("string", "", "007"),
                ],
                [
                    ods_cell("date", "2024-03-05T10:30:00", "05/03/2024 10:30"),
                    ods_cell("float", "42", "42"),
                    ods_cell("boolean", "false", "FALSE"),
                    ods_cell("string", "", "n/a"),
                ],
            ],
        )
        table = only_table(path)
        assert table.sheet == "Stock" and table.header_row == 2
        assert table.frame.to_numpy().tolist() == [
            ["2024-03-05", "1234.5", "TRUE", "007"],
            ["2024-03-05T10:30:00", "42", "FALSE", "n/a"],
        ]
        assert table.typed["Packed"] == {"2024-03-05": "date", "2024-03-05T10:30:00": "datetime"}
        assert table.typed["Kg"] == {"1234.5": "number", "42": "number"}
        assert "Lot" not in table.typed and table.formats == {}


# --------------------------------------------------------------------------
# Parquet


class TestParquet:
    def test_typed_columns_become_text(self, tmp_path: Path) -> None:
        arrow = pa.table(
            {
                "lot": pa.array(["007", None, "n/a"]),
                "crates": pa.array([3, None, 12], pa.int64()),
                "kg": pa.array([1234.5, 0.1, None]),
                "organic": pa.array([True, None, False]),
                "packed": pa.array([dt.date(2024, 3, 5), None, dt.date(2024, 3, 13)]),
                "day": pa.array(
                    [dt.datetime(2024, 3, 5), None, dt.datetime(2024, 3, 6)], pa.timestamp("ns")
                ),
                "logged": pa.array(
                    [dt.datetime(2024, 3, 5, 10, 30, 15, 250000), None, dt.datetime(2024, 3, 6)],
                    pa.timestamp("us"),
                ),
            }
        )
        path = tmp_path / "stock.parquet"
        pq.write_table(arrow, path)
        table = only_table(path)
        assert table.frame.to_numpy().tolist() == [
            ["007", "3", "1234.5", "TRUE", "2024-03-05", "2024-03-05", "2024-03-05T10:30:15.25"],
            ["", "", "0.1", "", "", "", ""],
            ["n/a", "12", "", "FALSE", "2024-03-13", "2024-03-06", "2024-03-06T00:00:00"],
        ]
        assert "lot" not in table.typed
        assert table.typed["crates"] == {"3": "number", "12": "number"}
        assert table.typed["day"] == {"2024-03-05": "date", "2024-03-06": "date"}
        assert table.typed["logged"]["2024-03-06T00:00:00"] == "datetime"
        assert all(dtype == "object" for dtype in table.frame.dtypes)

    def test_not_parquet(self, tmp_path: Path) -> None:
        path = tmp_path / "fake.parquet"
        path.write_text("a,b\n1,2\n")
        with pytest.raises(SourceError, match="not a readable Parquet file"):
            read_tables(path)


# --------------------------------------------------------------------------
# Finding inputs


class TestFindInputs:
    def test_walks_folders_and_skips_hidden_and_lock_files(self, tmp_path: Path) -> None:
        wanted = ["a.csv", "b.XLSX", "sub/c.tsv", "sub/deeper/d.parquet", "z.ods"]
        skipped = [".f.csv", "~$b.XLSX", ".hidden/e.csv", "sub/~$g.csv", "sub/notes.md"]
        for name in wanted + skipped:
            (tmp_path / name).parent.mkdir(parents=True, exist_ok=True)
            (tmp_path / name).write_text("x\n")
        assert find_inputs([tmp_path]) == [tmp_path / n for n in wanted]

    def test_files_as_given_in_order_without_repeats(self, tmp_path: Path) -> None:
        for name in ("b.csv", "a.csv"):
            (tmp_path / name).write_text("x\n")
        given = [tmp_path / "b.csv", tmp_path, str(tmp_path / "a.csv")]
        assert find_inputs(given) == [tmp_path / "b.csv", tmp_path / "a.csv"]

    def test_missing_path(self, tmp_path: Path) -> None:
        with pytest.raises(SourceError, match=r"nowhere: no such file or folder$"):
            find_inputs([tmp_path / "nowhere"])

    def test_unsupported_file_named_explicitly(self, tmp_path: Path) -> None:
        path = tmp_path / "notes.json"
        path.write_text("{}")
        with pytest.raises(SourceError, match="unsupported file type '.json'"):
            find_inputs([path])


# --------------------------------------------------------------------------
# Writing


FRAME = pd.DataFrame(
    {
        "Lot": ["007", "=1+1", None, "#N/A"],
        "Note": ['said "hi", left', "two\nlines", "", "  x "],
    },
    dtype=object,
)


class TestWrite:
    def test_csv_bytes(self, tmp_path: Path) -> None:
        dest = tmp_path / "out.csv"
        write_table(FRAME, dest, fmt="csv")
        # RFC 4180 §2: fields with commas, quotes or line breaks are quoted, quotes doubled.
        assert dest.read_bytes() == (
            b'Lot,Note\n007,"said ""hi"", left"\n=1+1,"two\nlines"\n,\n#N/A,  x \n'
        )

    def test_csv_round_trip(self, tmp_path: Path) -> None:
        dest = tmp_path / "again.csv"
        write_table(FRAME.fillna(""), dest, fmt="csv")
        table = only_table(dest)
        assert table.frame.to_numpy().tolist() == FRAME.fillna("").to_numpy().tolist()

    def test_xlsx_cells_are_strings(self, tmp_path: Path) -> None:
        dest = tmp_path / "out.xlsx"
        write_table(FRAME, dest, fmt="xlsx")
        sheet = openpyxl.load_workbook(dest).active
        assert sheet["A2"].value == "007" and sheet["A2"].data_type == "s"
        assert sheet["A3"].value == "=1+1" and sheet["A3"].data_type == "s"  # not a formula
        assert sheet["A5"].value == "#N/A" and sheet["A5"].data_type == "s"  # not an error cell
        assert sheet["B3"].value == "two\nlines"

    def test_parquet_schema_is_text(self, tmp_path: Path) -> None:
        dest = tmp_path / "out.parquet"
        write_table(FRAME, dest, fmt="parquet")
        arrow = pq.read_table(dest)
        assert all(pa.types.is_string(f.type) for f in arrow.schema)
        assert arrow.column("Lot").to_pylist() == ["007", "=1+1", None, "#N/A"]

    def test_workbook_sheets(self, tmp_path: Path) -> None:
        dest = tmp_path / "multi.xlsx"
        write_workbook({"North": FRAME, "South": FRAME.iloc[:1]}, dest)
        tables = read_tables(dest)
        assert [(t.sheet, len(t.frame)) for t in tables] == [("North", 4), ("South", 1)]

    def test_invalid_sheet_name(self, tmp_path: Path) -> None:
        with pytest.raises(SourceError, match="invalid sheet name"):
            write_workbook({"a/b": FRAME}, tmp_path / "bad.xlsx")

    def test_unknown_format(self, tmp_path: Path) -> None:
        with pytest.raises(SourceError, match="unknown output format"):
            write_table(FRAME, tmp_path / "x.json", fmt="json")

    def test_text_written_exactly(self, tmp_path: Path) -> None:
        dest = tmp_path / "report.txt"
        atomic_write_text(dest, "Zoë\nline two\n")
        assert dest.read_bytes() == "Zoë\nline two\n".encode()
        umask = os.umask(0)
        os.umask(umask)
        assert dest.stat().st_mode & 0o777 == 0o666 & ~umask


class TestAtomicWrites:
    def test_failure_mid_write_leaves_old_file(
        self, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
    ) -> None:
        dest = tmp_path / "out.csv"
        dest.write_text("previous run\n")

        def broken(frame: pd.DataFrame, handle: io.BufferedWriter, *_: object) -> None:
            handle.write(b"Lot,Note\n007,")
            raise RuntimeError("disk went away")

        monkeypatch.setattr(sources, "write_csv", broken)
        with pytest.raises(RuntimeError, match="disk went away"):
            write_table(FRAME, dest, fmt="csv")
        assert dest.read_text() == "previous run\n"
        assert sorted(p.name for p in tmp_path.iterdir()) == ["out.csv"]

    def test_rejected_workbook_leaves_nothing(self, tmp_path: Path) -> None:
        dest = tmp_path / "out.xlsx"
        bad = pd.DataFrame({"Lot": ["fine", "bell\x07char"]}, dtype=object)
        with pytest.raises(SourceError, match=r"sheet 'South': row 3: control character"):
            write_workbook({"North": FRAME, "South": bad}, dest)
        assert list(tmp_path.iterdir()) == []

    def test_missing_folder(self, tmp_path: Path) -> None:
        with pytest.raises(SourceError, match="cannot write"):
            atomic_write_text(tmp_path / "no" / "such.txt", "x")


# --------------------------------------------------------------------------
# Damaged and hostile inputs (more in tests/test_reliability.py)


class TestDamagedText:
    def test_utf8_file_with_legacy_lines(self, tmp_path: Path) -> None:
        # Reference: Python's utf-8 and cp1252 codecs produced the two halves.
        path = tmp_path / "pasted.csv"
        path.write_bytes(
            "Grower,Depot\nZoë Quillfeather,Liège\n".encode() + "Noël Brackenridge,Sète\n".encode(
                "cp1252"
            )
        )
        table = only_table(path)
        assert table.frame.to_numpy().tolist() == [
            ["Zoë Quillfeather", "Liège"],
            ["Noël Brackenridge", "Sète"],
        ]
        assert table.dialect is not None and table.dialect.encoding == "utf-8"
        assert table.warnings == ["line 3 not valid UTF-8: read as cp1252"]

    def test_legacy_file_without_utf8_stays_legacy(self, tmp_path: Path) -> None:
        path = tmp_path / "legacy.csv"
        path.write_bytes("Grower;Depot\nZoë;Liège\n".encode("cp1252"))
        table = only_table(path)
        assert table.dialect is not None and table.dialect.encoding == "cp1252"
        assert table.warnings == []

    def test_nul_byte_in_text_names_the_line(self, tmp_path: Path) -> None:
        path = tmp_path / "nul.csv"
        path.write_bytes(b"Lot,Kg\n007,5\n008,\x006\n")
        with pytest.raises(SourceError, match=r"nul\.csv: NUL bytes in the text \(first on line 3"):
            read_tables(path)

    def test_every_row_ragged_still_splits(self, tmp_path: Path) -> None:
        # Each data row is short: the comma still splits the header and the rows.
        path = tmp_path / "short.csv"
        path.write_text("Lot,Kg,Depot\n007,5\n008,6\n")
        table = only_table(path)
        assert frame_rows(table) == [["Lot", "Kg", "Depot"], ["007", "5", ""], ["008", "6", ""]]
        assert table.warnings == ["ragged rows 2, 3 padded with empty cells"]

    def test_long_rows_are_refused_not_read_as_one_column(self, tmp_path: Path) -> None:
        path = tmp_path / "long.csv"
        path.write_text("Lot,Kg,Depot\n007,5,N,extra\n")
        with pytest.raises(SourceError, match="row 2: expected 3 fields, found 4"):
            read_tables(path)

    def test_column_limit_before_parsing(self, tmp_path: Path) -> None:
        path = tmp_path / "wide.csv"
        path.write_text(",".join(f"c{i}" for i in range(40)) + "\n" + "1," * 39 + "1\n")
        with pytest.raises(SourceError, match="has 40 columns, over the limit 30"):
            read_tables(path, limits=sources.Limits(max_columns=30))

    def test_classic_mac_line_breaks_count_rows(self, tmp_path: Path) -> None:
        path = tmp_path / "mac.csv"
        path.write_text("a,b\r1,2\r3,4\r", newline="")
        with pytest.raises(SourceError, match="has 6 cells, over the limit 5"):
            read_tables(path, max_cells=5)


def ods_repeat(cells: str, rows: int = 1) -> str:
    return f'<table:table-row table:number-rows-repeated="{rows}">{cells}</table:table-row>'


class TestHostileOds:
    def test_padding_to_the_sheet_edge_is_not_data(self, tmp_path: Path) -> None:
        # Office suites pad rows with empty repeated cells and the sheet with empty rows.
        path = tmp_path / "padded.ods"
        empty = '<table:table-cell table:number-columns-repeated="1020"/>'
        write_ods(
            path,
            [
                [ods_cell("string", "", "Lot"), ods_cell("string", "", "Kg"), empty],
                [ods_cell("string", "", "007"), ods_cell("float", "5", "5"), empty],
            ],
        )
        raw = xml_of(path, "content.xml").replace(
            "</table:table>", ods_repeat(empty, 1_048_000) + "</table:table>"
        )
        _replace_member(path, "content.xml", raw)
        assert frame_rows(only_table(path)) == [["Lot", "Kg"], ["007", "5"]]

    def test_repeated_cells_bomb_refused_before_expansion(self, tmp_path: Path) -> None:
        path = tmp_path / "bomb.ods"
        write_ods(path, [[ods_cell("string", "", "Lot")]])
        bomb = ods_repeat(
            '<table:table-cell office:value-type="string" table:number-columns-repeated="9000">'
            "<text:p>x</text:p></table:table-cell>",
            1_000_000,
        )
        raw = xml_of(path, "content.xml").replace("</table:table>", bomb + "</table:table>")
        _replace_member(path, "content.xml", raw)
        with pytest.raises(SourceError, match=r"sheet 'Stock' has at least \d+ cells, over"):
            read_tables(path)

    def test_entities_refused(self, tmp_path: Path) -> None:
        path = tmp_path / "entities.ods"
        write_ods(path, [[ods_cell("string", "", "&e2;")]])
        doctype = '<!DOCTYPE d [<!ENTITY e1 "aaaa"><!ENTITY e2 "&e1;&e1;&e1;&e1;">]>'
        raw = xml_of(path, "content.xml").replace("?>", "?>" + doctype, 1)
        _replace_member(path, "content.xml", raw)
        with pytest.raises(SourceError, match="refusing XML with a DTD or entities"):
            read_tables(path)


def _replace_member(path: Path, member: str, text: str) -> None:
    with zipfile.ZipFile(path) as archive:
        members = {n: archive.read(n) for n in archive.namelist()}
    members[member] = text.encode("utf-8")
    with zipfile.ZipFile(path, "w", zipfile.ZIP_DEFLATED) as archive:
        for name, body in members.items():
            archive.writestr(name, body)


class TestWriteLimits:
    def test_tsv_output_reads_back_as_tabs(self, tmp_path: Path) -> None:
        dest = tmp_path / "orders.tsv"
        frame = pd.DataFrame({"Lot": ["007", "a,b"], "Kg": ["5", "6"]}, dtype=object)
        write_table(frame, dest, fmt="csv")
        assert dest.read_bytes() == b"Lot\tKg\n007\t5\na,b\t6\n"
        assert frame_rows(only_table(dest)) == [["Lot", "Kg"], ["007", "5"], ["a,b", "6"]]

    def test_xlsx_cell_over_32767_characters_refused(self, tmp_path: Path) -> None:
        frame = pd.DataFrame({"Spec": ["short", "x" * 40_000]}, dtype=object)
        with pytest.raises(SourceError, match="row 3: a cell of 40000 characters does not fit"):
            write_table(frame, tmp_path / "long.xlsx", fmt="xlsx")
        assert list(tmp_path.iterdir()) == []


class TestParquetLimits:
    def test_dictionary_bomb_refused_before_decoding(self, tmp_path: Path) -> None:
        # One 10 000-byte value on 50 000 rows: a few KB on disk, 500 MB decoded.
        path = tmp_path / "bomb.parquet"
        column = pa.DictionaryArray.from_arrays(pa.array([0] * 50_000, pa.int32()),
                                                pa.array(["x" * 10_000]))
        pq.write_table(pa.table({"note": column}), path)
        assert path.stat().st_size < 100_000
        with pytest.raises(SourceError, match="text decodes to 500000000 bytes, over the limit"):
            read_tables(path, limits=sources.Limits(max_unpacked_bytes=100_000_000))

    def test_repeated_text_read_exactly(self, tmp_path: Path) -> None:
        path = tmp_path / "repeat.parquet"
        pq.write_table(pa.table({"lot": ["007", None, "007", "n/a"]}), path)
        assert only_table(path).frame["lot"].tolist() == ["007", "", "007", "n/a"]
