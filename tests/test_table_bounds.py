"""Where a table starts and ends: title lines above the header and note lines below the
data are set aside and named in the report, never read as rows.

Demo files are invented: "Vallombra Growers", a made-up cooperative shipping fruit
crates between depots. That exports carry a title, a "generated on" line and a source
note around the table is common practice, no source. Row numbers are checked against
the file's own lines as Python's ``str.splitlines`` counts them (header = the line a
spreadsheet shows it on).
"""

from __future__ import annotations

import datetime as dt
import json
from pathlib import Path

import openpyxl
import pytest

import harmonize
from harmonize.delimited import header_index, note_lines_below, table_start
from harmonize.sources import read_tables

TITLED = (
    "Monthly crate report - Vallombra depot\n"
    "Generated 2024-05-02\n"
    "\n"
    "Depot;Date;Crates;Weight\n"
    "North;02/05/2024;12;3,5 t\n"
    "South;17/05/2024;9;2,25 t\n"
    "East;21/05/2024;1.204;4 t\n"
    "\n"
    "Total;;28;9,75 t\n"
    "Source: depot ledger, exported by hand\n"
)


def line_of(text: str, starts_with: str) -> int:
    """The 1-based line a spreadsheet shows a line on (str.splitlines counts them)."""
    return next(i for i, line in enumerate(text.splitlines(), 1)
                if line.startswith(starts_with))


def write(tmp_path: Path, name: str, text: str) -> Path:
    path = tmp_path / name
    path.write_text(text, encoding="utf-8")
    return path


ROADS = [[], ["--chunk-rows", "1000"], ["--dask"]]   # whole file, streamed, Dask


def apply_on(tmp_path: Path, source: Path, mode: list[str]) -> tuple[dict, list[str]]:
    """``harmonize apply`` on one file by one road: the report and the output's lines."""
    from click.testing import CliRunner

    from harmonize.cli import main
    if mode == ["--dask"]:
        pytest.importorskip("dask.dataframe")
    out = tmp_path / "out"
    result = CliRunner().invoke(main, ["apply", str(source), "--out", str(out), "-q", *mode])
    assert result.exit_code == 0, result.output
    report = json.loads((out / "harmonize-report.json").read_text("utf-8"))
    return report, (out / source.name).read_text("utf-8").splitlines()


def test_title_lines_and_a_source_note_are_set_aside(tmp_path: Path) -> None:
    (table,) = read_tables(write(tmp_path, "crates.csv", TITLED))
    assert table.column_names == ["Depot", "Date", "Crates", "Weight"]
    assert table.header_row == line_of(TITLED, "Depot;")
    frame = table.frame
    # the blank line inside the data stays an empty row, so row numbers follow the file
    assert frame["Depot"].tolist() == ["North", "South", "East", "", "Total"]
    assert any("'Monthly crate report - Vallombra depot' | 'Generated 2024-05-02'" in n
               for n in table.warnings)
    assert any("'Source: depot ledger, exported by hand'" in n for n in table.warnings)


@pytest.mark.parametrize("mode", ROADS)
def test_whole_streamed_and_dask_runs_agree_on_rows(tmp_path: Path, mode: list[str]) -> None:
    report, lines = apply_on(tmp_path, write(tmp_path, "crates.csv", TITLED), mode)
    (entry,) = report["files"]
    assert entry["header_row"] == line_of(TITLED, "Depot;")
    assert entry["rows"] == 5
    assert len(entry["warnings"]) == 2
    (cell,) = report["unresolved"]
    assert cell["value"] == "1.204" and cell["row"] == line_of(TITLED, "East;")
    assert lines[0] == "Depot,Date,Crates,Weight (kg)"
    assert lines[1] == "North,2024-05-02,12,3500"   # 3,5 t = 3500 kg (SI Brochure: t = 1000 kg)
    assert lines[-1].startswith("Total,")


@pytest.mark.parametrize("text", [
    # a spreadsheet's title row saved as text keeps the delimiters
    "Crate report;;;\nDepot;Date;Crates;Weight\nNorth;02/05/2024;12;3 t\nSouth;17/05/2024;9;2 t\n",
    # one bare title line above a header of three or more names
    "Crate report\nDepot,Date,Crates\nNorth,02/05/2024,12\nSouth,17/05/2024,9\n",
    # a title line and a blank line
    "Crates\n\nDepot\tCrates\nNorth\t12\nSouth\t9\n",
])
def test_a_title_above_the_header_is_not_the_header(tmp_path: Path, text: str) -> None:
    (table,) = read_tables(write(tmp_path, "crates.csv", text))
    assert table.column_names[0] == "Depot"
    assert table.frame.iloc[0, 0] == "North"
    assert table.header_row == line_of(text, "Depot")


@pytest.mark.parametrize("text", [
    # a one-column list whose values hold a comma: the first line is its header
    "Name\nSmith, John\nDoe, Jane\nRoe, Max\n",
    # a quoted header name spanning two lines
    '"Order\nDate",Depot,Crates\n02/05/2024,North,12\n17/05/2024,South,9\n',
    # a plain table
    "Depot;Crates\nNorth;12\nSouth;9\n",
])
def test_a_header_on_the_first_line_stays_there(tmp_path: Path, text: str) -> None:
    (table,) = read_tables(write(tmp_path, "list.csv", text))
    assert table.header_row == 1
    assert not any("set aside" in n for n in table.warnings)


@pytest.mark.parametrize(("text", "rows"), [
    # a last row with only its first cell filled still carries its delimiters: data
    ("Depot;Crates;Weight\nNorth;12;3 t\nSouth;;\n", 2),
    # a last line without a letter is no note
    ("Depot;Crates\nNorth;12\n12345\n", 2),
])
def test_a_last_row_of_data_is_no_note(tmp_path: Path, text: str, rows: int) -> None:
    (table,) = read_tables(write(tmp_path, "crates.csv", text))
    assert table.n_rows == rows
    assert not any("below the data" in n for n in table.warnings)


def test_the_delimiter_is_the_one_that_finds_the_header_first() -> None:
    # under "," the data line "North;02/05/2024;12;3,5 t" splits in two, but ";" splits
    # the header line above it into four: the table starts there
    text = "Crate report\n\nDepot;Date;Crates;Weight\nNorth;02/05/2024;12;3,5 t\n"
    start = table_start(text)
    assert start.delimiter == ";"
    assert text[start.offset:].startswith("Depot;")
    assert start.above == ["Crate report"]


def test_note_lines_below() -> None:
    text = "a;b\n1;2\n\nSource: ledger\nPrinted by: depot\n"
    end, notes = note_lines_below(text, ";")
    assert text[:end].rstrip() == "a;b\n1;2"
    assert notes == ["Source: ledger", "Printed by: depot"]
    # more note lines than MAX_NOTE_LINES: too much text to be notes, left as rows
    many = "a;b\n1;2\n" + "".join(f"note {i}\n" for i in range(8))
    assert note_lines_below(many, ";") == (len(many), [])


@pytest.mark.parametrize(("filled", "lone", "expected"), [
    ([1, 1, 4, 4, 4], False, 2),     # two title rows
    ([1, 0, 4, 4, 4], False, 2),     # a title row and a blank row
    ([1, 4, 4, 4], False, None),     # one title row right above: not shown plainly
    ([1, 4, 4, 4], True, 1),         # ... unless the layout shows it
    ([4, 4, 4], True, None),         # the first row is the header
    ([1, 1, 1, 1], True, None),      # a one-column table
    ([1, 1, 4, 1, 1, 1], True, None),  # no rows of the header's width below it
])
def test_header_index(filled: list[int], lone: bool, expected: int | None) -> None:
    assert header_index(filled, lone) == expected


def test_a_sheets_title_rows_are_set_aside(tmp_path: Path) -> None:
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.title = "May"
    sheet["A1"] = "Crate shipments, May 2024"
    sheet.append([])
    sheet.append(["Depot", "Shipped", "Crates"])
    sheet.append(["North", dt.date(2024, 5, 2), 12])
    sheet.append(["South", dt.date(2024, 5, 17), 9])
    names = book.create_sheet("Names")
    for value in ("Name", "Ann", "Bo"):
        names.append([value])
    path = tmp_path / "crates.xlsx"
    book.save(path)
    may, plain = read_tables(path)
    assert may.header_row == 3
    assert may.column_names == ["Depot", "Shipped", "Crates"]
    assert may.frame["Depot"].tolist() == ["North", "South"]
    assert any("'Crate shipments, May 2024'" in n for n in may.warnings)
    assert plain.header_row == 1 and plain.frame["Name"].tolist() == ["Ann", "Bo"]


def test_a_harmonised_output_reads_back_whole(tmp_path: Path) -> None:
    # the output carries no titles or notes, so a second run reads every line as rows
    result = harmonize.run([write(tmp_path, "crates.csv", TITLED)], tmp_path / "out")
    assert not result.errors
    (table,) = read_tables(tmp_path / "out" / "crates.csv")
    assert table.header_row == 1 and table.n_rows == 5


SPACED = ("depot   crates   weight_kg\n"
          "north       12        3.5\n"
          "south        9       2.25\n"
          "east         7          4\n")


def test_a_table_separated_by_runs_of_spaces_is_split_into_its_columns(tmp_path: Path) -> None:
    (table,) = read_tables(write(tmp_path, "crates.txt", SPACED))
    assert table.column_names == ["depot", "crates", "weight_kg"]
    assert table.frame["weight_kg"].tolist() == ["3.5", "2.25", "4"]
    assert table.dialect is not None and table.dialect.delimiter == " "


@pytest.mark.parametrize("mode", ROADS)
def test_every_road_splits_a_spaced_table_alike(tmp_path: Path, mode: list[str]) -> None:
    _, lines = apply_on(tmp_path, write(tmp_path, "crates.txt", SPACED), mode)
    assert lines[0].split(",")[:2] == ["depot", "crates"]
    assert lines[1].split(",")[:2] == ["north", "12"] and len(lines) == 4


@pytest.mark.parametrize("text", [
    # names of two words under a header of two words: no column of numbers, one column
    "Full name\nAnn Lee\nBo Grant\nCy Dunn\n",
    # prose
    "Crates left the north depot\non the second of May\nand reached the coast\n",
    # quoted fields may hold spaces: not split on them
    '"North depot" 12\n"South depot" 9\n"East" 7\n',
])
def test_text_that_is_no_spaced_table_stays_one_column(tmp_path: Path, text: str) -> None:
    (table,) = read_tables(write(tmp_path, "notes.txt", text))
    assert len(table.column_names) == 1


UNITS_ROW = ("Depot;Weight;Price;Temp\n"
             ";lb;EUR;(°F)\n"
             "North;10;12,50;41\n"
             "South;2,5;7,25;32\n"
             "East;4;3,10;50\n")


@pytest.mark.parametrize("mode", ROADS)
def test_a_row_of_units_joins_the_header(tmp_path: Path, mode: list[str]) -> None:
    report, lines = apply_on(tmp_path, write(tmp_path, "crates.csv", UNITS_ROW), mode)
    (entry,) = report["files"]
    assert entry["header_row"] == 2 and entry["rows"] == 3
    names = [c["name"] for c in entry["columns"]]
    assert names == ["Depot", "Weight (lb)", "Price (EUR)", "Temp (°F)"]
    assert lines[0] == "Depot,Weight (kg),Price (EUR),Temp (°C)"
    # NIST SP 811 (B.8): 1 lb = 0.45359237 kg, so 10 lb = 4.5359237 kg; t/°C = (t/°F - 32)/1.8
    assert lines[1] == "North,4.5359237,12.5,5"
    assert lines[2] == "South,1.133980925,7.25,0"


def test_a_sheets_row_of_units_joins_the_header(tmp_path: Path) -> None:
    book = openpyxl.Workbook()
    sheet = book.active
    for row in (["Depot", "Weight", "Volume"], [None, "kg", "(l)"], ["North", 3.5, 20],
                ["South", 2, 12.5]):
        sheet.append(row)
    path = tmp_path / "crates.xlsx"
    book.save(path)
    (table,) = read_tables(path)
    assert table.column_names == ["Depot", "Weight (kg)", "Volume (l)"]
    assert table.header_row == 2 and table.frame["Weight (kg)"].tolist() == ["3.5", "2"]


@pytest.mark.parametrize("text", [
    # a column of unit names is data: the first row holds a product too
    "Product;Unit;Quantity\nApples;kg;12\nPears;kg;9\nCider;l;7\n",
    # units over columns that hold no numbers
    "Depot;Weight\n;kg\nNorth;heavy\nSouth;light\n",
    # a first row of numbers
    "Depot;Weight\nNorth;12\nSouth;9\n",
    # a word that is no unit
    "Depot;Weight\n;approx.\nNorth;12\nSouth;9\n",
])
def test_a_first_row_that_is_no_row_of_units_stays_data(tmp_path: Path, text: str) -> None:
    (table,) = read_tables(write(tmp_path, "crates.csv", text))
    assert table.header_row == 1
    assert table.n_rows == len(text.splitlines()) - 1


def test_a_header_that_names_its_unit_keeps_it_once(tmp_path: Path) -> None:
    text = "Depot;Weight (kg)\n;kg\nNorth;12\nSouth;9\n"
    (table,) = read_tables(write(tmp_path, "crates.csv", text))
    assert table.column_names == ["Depot", "Weight (kg)"] and table.n_rows == 2


@pytest.mark.parametrize("text", [
    # a quantity and its unit, a date of three words: single spaces inside one column
    "Tank volume\n4.4 gal\n34 gal\n12 gal\n",
    "Date of shipment\n2 May 2024\n17 May 2024\n3 June 2024\n",
])
def test_values_of_several_words_are_no_spaced_table(tmp_path: Path, text: str) -> None:
    (table,) = read_tables(write(tmp_path, "column.csv", text))
    assert len(table.column_names) == 1


def test_a_table_of_quoted_names_and_single_spaces_is_split(tmp_path: Path) -> None:
    # statistics packages write "'OBS' 'GPA'" above rows of single-spaced numbers
    text = "'OBS' 'GPA' 'GRADE'\n1 2.66 0\n2 2.89 0\n3 3.28 1\n"
    (table,) = read_tables(write(tmp_path, "grades.txt", text))
    assert table.column_names == ["'OBS'", "'GPA'", "'GRADE'"]
    assert table.frame["'GPA'"].tolist() == ["2.66", "2.89", "3.28"]
