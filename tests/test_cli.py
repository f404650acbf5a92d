"""End to end through the command line, on the bundled samples and on bad inputs."""

from __future__ import annotations

import hashlib
import json
import shutil
from pathlib import Path

import pandas as pd
import pytest
from click.testing import CliRunner

from harmonize.cli import main
from harmonize.report import validate
from harmonize.sources import find_inputs, read_tables

SAMPLES = Path(__file__).resolve().parent.parent / "samples"


def checksums(folder: Path) -> dict[str, str]:
    return {p.name: hashlib.sha256(p.read_bytes()).hexdigest()
            for p in sorted(folder.rglob("*")) if p.is_file()}


def invoke(*args: str) -> tuple[int, str, str]:
    result = CliRunner().invoke(main, list(args), catch_exceptions=False)
    return result.exit_code, result.stdout, result.stderr


@pytest.fixture(scope="module")
def sample_run(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, dict, dict]:
    before = checksums(SAMPLES)
    out = tmp_path_factory.mktemp("out")
    code, stdout, _ = invoke("apply", str(SAMPLES), "--out", str(out), "--format", "csv")
    assert code == 0, stdout
    report = json.loads((out / "harmonize-report.json").read_text("utf-8"))
    return out, report, before


def test_inputs_untouched(sample_run: tuple[Path, dict, dict]) -> None:
    assert checksums(SAMPLES) == sample_run[2]


def test_report_follows_the_published_schema(sample_run: tuple[Path, dict, dict]) -> None:
    validate(sample_run[1])


def test_outputs_named_as_the_contract_says(sample_run: tuple[Path, dict, dict]) -> None:
    out, report, _ = sample_run
    names = {e["output"] for e in report["files"]}
    assert "logistics.Shipments.csv" in names and "logistics.Depots.csv" in names
    assert "us_orders.csv" in names and "merged_ledger.csv" in names
    for name in names:
        assert (out / name).is_file()
    assert (out / "unresolved.csv").is_file() and (out / "harmonize-report.html").is_file()


def test_every_input_cell_accounted_for_once(sample_run: tuple[Path, dict, dict]) -> None:
    out, report, _ = sample_run
    for entry in report["files"]:
        path = SAMPLES / entry["input"]
        table = next(t for t in read_tables(path) if t.sheet == entry["sheet"])
        cells = table.frame.shape[0] * table.frame.shape[1]
        assert sum(sum(c["counts"].values()) for c in entry["columns"]) == cells
        written = read_tables(out / entry["output"])[0].frame
        assert len(written) == len(table.frame)
        assert list(written.columns)[: 1] == [entry["columns"][0]["output_name"]]
        unresolved = sum(c["counts"]["unresolved"] for c in entry["columns"])
        listed = [u for u in report["unresolved"]
                  if u["file"] == entry["input"] and u["sheet"] == entry["sheet"]]
        assert unresolved == len(listed)


def test_same_columns_same_order(sample_run: tuple[Path, dict, dict]) -> None:
    out, report, _ = sample_run
    for entry in report["files"]:
        written = read_tables(out / entry["output"])[0].frame
        expected = []
        for col in entry["columns"]:
            expected.append(col["output_name"])
            expected += col.get("companions", [])
        assert list(written.columns) == expected


def test_missing_path_is_one_line_and_exit_3(tmp_path: Path) -> None:
    code, _, err = invoke("apply", str(tmp_path / "nope.csv"), "--out", str(tmp_path / "o"))
    assert code == 3
    assert err.count("\n") == 1 and "nope.csv" in err


def test_folder_with_one_bad_file_goes_on(tmp_path: Path) -> None:
    folder = tmp_path / "in"
    folder.mkdir()
    shutil.copy(SAMPLES / "branch_sales_uk.csv", folder)
    (folder / "broken.xlsx").write_bytes(b"PK\x03\x04 not really a workbook")
    out = tmp_path / "out"
    code, _, err = invoke("apply", str(folder), "--out", str(out), "-q")
    assert code == 1
    assert "broken.xlsx" in err and "Traceback" not in err
    report = json.loads((out / "harmonize-report.json").read_text("utf-8"))
    assert [e["file"] for e in report["errors"]] == ["broken.xlsx"]
    assert (out / "branch_sales_uk.csv").is_file()


def test_plan_edit_is_followed(tmp_path: Path) -> None:
    data = tmp_path / "ids.csv"
    data.write_text("Ref,Note\n007,a\n012,b\n", encoding="utf-8")
    plan_file = tmp_path / "plan.toml"
    code, _, _ = invoke("plan", str(data), "--save", str(plan_file))
    assert code == 0
    text = plan_file.read_text("utf-8")
    assert 'kind = "identifier"' in text
    # A person decides that "b" in the Note column means "no value".
    head, note = text.split('name = "Note"')
    plan_file.write_text(head + 'name = "Note"' + note.replace("missing = []", 'missing = ["b"]'),
                         encoding="utf-8")
    out = tmp_path / "out"
    code, _, _ = invoke("apply", str(data), "--plan", str(plan_file), "--out", str(out), "-q")
    assert code == 0
    assert (out / "ids.csv").read_text("utf-8").splitlines() == ["Ref,Note", "007,a", "012,"]


def test_drift_on_changed_export(tmp_path: Path) -> None:
    march = tmp_path / "march.csv"
    march.write_text("Ref,Town\n007,Harrowdene\n012,Tamsbridge\n", encoding="utf-8")
    plan_file = tmp_path / "plan.toml"
    assert invoke("plan", str(march), "--save", str(plan_file))[0] == 0
    april = tmp_path / "april.csv"
    april.write_text("Ref,Depot\n007,North\n013,South\n", encoding="utf-8")
    code, stdout, _ = invoke("apply", str(april), "--plan", str(plan_file), "--out",
                             str(tmp_path / "o"), "--fail-on-drift")
    assert code == 4
    report = json.loads((tmp_path / "o" / "harmonize-report.json").read_text("utf-8"))
    drift = report["files"][0]["drift"]
    assert any("'Depot' is not in the plan" in d for d in drift)
    assert any("'Town' of the plan is absent" in d for d in drift)


def test_bad_plan_names_line(tmp_path: Path) -> None:
    data = tmp_path / "d.csv"
    data.write_text("a\n1\n", encoding="utf-8")
    plan_file = tmp_path / "plan.toml"
    plan_file.write_text('format = "harmonize-plan"\nversion = 1\n[[tables]]\nfile = "d.csv"\n'
                         '[[tables.columns]]\nname = "a"\nkind = "number"\nengine = "nope"\n',
                         encoding="utf-8")
    code, _, err = invoke("apply", str(data), "--plan", str(plan_file), "--out",
                          str(tmp_path / "o"))
    assert code == 3 and "line 8" in err and "'engine'" in err


def test_ambiguous_and_inspect_run(sample_run: tuple[Path, dict, dict]) -> None:
    code, stdout, _ = invoke("inspect", str(SAMPLES / "merged_ledger.csv"))
    assert code == 0 and "Booking date" in stdout
    code, stdout, _ = invoke("ambiguous", str(SAMPLES), "--csv")
    assert code == 0 and stdout.splitlines()[0].startswith("file,sheet,row,column")


def test_every_command_has_help() -> None:
    for name, command in main.commands.items():
        assert command.help, f"command {name} has no help text"
        for param in command.params:
            if param.param_type_name == "option":
                assert param.help, f"{name} {param.opts} has no help text"


def test_samples_cover_every_reader() -> None:
    suffixes = {p.suffix for p in find_inputs([SAMPLES])}
    assert {".csv", ".tsv", ".xlsx"} <= suffixes


def test_readme_python_example(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    readme = (SAMPLES.parent / "README.md").read_text("utf-8")
    code = readme.split("```python\n", 1)[1].split("```", 1)[0]
    monkeypatch.chdir(tmp_path)
    shutil.copytree(SAMPLES, tmp_path / "samples")
    shutil.copytree(SAMPLES, tmp_path / "next_month")
    exec(compile(code, "README.md", "exec"), {})  # noqa: S102 - our own README
    assert (tmp_path / "out" / "harmonize-report.json").is_file()
    assert (tmp_path / "out2" / "harmonize-report.json").is_file()


def test_processes_give_the_same_report(tmp_path: Path) -> None:
    one, two = tmp_path / "one", tmp_path / "two"
    assert invoke("apply", str(SAMPLES), "--out", str(one), "-q")[0] == 0
    assert invoke("apply", str(SAMPLES), "--out", str(two), "-q", "--jobs", "2")[0] == 0
    first = json.loads((one / "harmonize-report.json").read_text("utf-8"))
    second = json.loads((two / "harmonize-report.json").read_text("utf-8"))
    assert first["files"] == second["files"] and first["unresolved"] == second["unresolved"]


def test_undecided_cells_can_keep_their_text(tmp_path: Path) -> None:
    data = tmp_path / "d.csv"
    data.write_text("Shipped\n03/04/2024\n05/06/2024\n07/08/2024\n", encoding="utf-8")
    for mode, expected in (("empty", ""), ("raw", "03/04/2024")):
        out = tmp_path / mode
        assert invoke("apply", str(data), "--out", str(out), "-q", "--undecided-as", mode)[0] == 0
        rows = pd.read_csv(out / "d.csv", dtype=str, keep_default_na=False)["Shipped"].tolist()
        assert rows[0] == expected
        report = json.loads((out / "harmonize-report.json").read_text("utf-8"))
        assert {u["row"] for u in report["unresolved"]} == {2, 3, 4}


def test_edited_date_order_is_followed(tmp_path: Path) -> None:
    data = tmp_path / "ledger.csv"
    data.write_text("Booked\n13/04/2024\n03/04/2024\n25/12/2024\n", encoding="utf-8")
    plan_file = tmp_path / "plan.toml"
    assert invoke("plan", str(data), "--save", str(plan_file))[0] == 0
    text = plan_file.read_text("utf-8")
    assert 'order = "DMY"' in text
    out = tmp_path / "out"
    assert invoke("apply", str(data), "--plan", str(plan_file), "--out", str(out), "-q")[0] == 0
    assert pd.read_csv(out / "ledger.csv", dtype=str)["Booked"].tolist() == [
        "2024-04-13", "2024-04-03", "2024-12-25"]
    # A person states month-first: 13/04 and 25/12 become impossible, 03/04 is 4 March.
    plan_file.write_text(text.replace('order = "DMY"', 'order = "MDY"'), encoding="utf-8")
    out2 = tmp_path / "out2"
    assert invoke("apply", str(data), "--plan", str(plan_file), "--out", str(out2), "-q")[0] == 0
    report = json.loads((out2 / "harmonize-report.json").read_text("utf-8"))
    frame = pd.read_csv(out2 / "ledger.csv", dtype=str, keep_default_na=False)
    assert frame["Booked"].tolist()[1] == "2024-03-04"
    assert {u["row"] for u in report["unresolved"]} == {2, 4}
    assert any("contradict" in d or "suggests" in d for d in report["files"][0]["drift"])


def test_unit_year_and_country_options(tmp_path: Path) -> None:
    data = tmp_path / "depot.csv"
    data.write_text("Tank,Shipped,Country\n2 gal,01.02.69,Deutschland\n3 gal,13.02.69,France\n"
                    "1 gal,14.02.69,Deutschland\n", encoding="utf-8")
    out = tmp_path / "out"
    code, _, _ = invoke("apply", str(data), "--out", str(out), "-q", "--unit", "volume=L",
                        "--year-window", "100", "--country-codes", "--region", "US")
    assert code == 0
    frame = pd.read_csv(out / "depot.csv", dtype=str, keep_default_na=False)
    # NIST HB 44 App. C: 1 US gallon = 231 in³ = 3.785411784 L exactly (checkvalues.md U11)
    assert frame.iloc[:, 0].tolist() == ["7.570823568", "11.356235352", "3.785411784"]
    # a window of 100 years back from today reads '69 as 1969 (our stated rule)
    assert frame["Shipped"].tolist()[0] == "1969-02-01"
    # ISO 3166-1 alpha-2 codes (via pycountry / CLDR names)
    assert frame["Country"].tolist() == ["DE", "FR", "DE"]
    code, _, err = invoke("apply", str(data), "--out", str(out), "--unit", "litres")
    assert code == 2 and "DIMENSION=UNIT" in err


def test_inputs_of_the_same_name_get_outputs_of_their_own(tmp_path: Path) -> None:
    # two branches' folders each hold "ledger.csv": neither output may overwrite the other
    # (invented data; nothing lost is the project's own rule)
    for branch, amount in (("north", "12.50"), ("south", "7.25")):
        (tmp_path / branch).mkdir()
        (tmp_path / branch / "ledger.csv").write_text(f"Amount\n{amount}\n", "utf-8")
    north, south = tmp_path / "north", tmp_path / "south"
    out = tmp_path / "out"
    args = ["apply", str(north), str(south), str(north / "ledger.csv"), "--out", str(out), "-q"]
    result = CliRunner().invoke(main, args)
    assert result.exit_code == 0, result.output
    report = json.loads((out / "harmonize-report.json").read_text("utf-8"))
    assert sorted(e["output"] for e in report["files"]) == ["north/ledger.csv",
                                                            "south/ledger.csv"]
    assert (out / "north" / "ledger.csv").read_text("utf-8").split() == ["Amount", "12.5"]
    assert (out / "south" / "ledger.csv").read_text("utf-8").split() == ["Amount", "7.25"]
