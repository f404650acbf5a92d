"""The HTML report, built by the real pipeline from small invented exports, checked as text
and opened in a real headless browser (Debian's chromium; skipped with a reason without it).

Scenario (invented): the Saltmarsh Seed Exchange, a cooperative. Its Kestrel Quay branch
exports orders with day-first dates, comma-grouped amounts, town names in several spellings
and phones with and without the international prefix; its Hollin Mark depot logs deliveries
whose dates nothing in the file puts in order. A plan is saved from March's exports and
re-applied to April's, which hold a hostile cell, an impossible date and a broken workbook.
"""

from __future__ import annotations

import base64
import copy
import hashlib
import re
import shutil
import subprocess
import time
from collections.abc import Iterator
from datetime import date, datetime, timedelta
from html import escape
from html.parser import HTMLParser
from pathlib import Path
from typing import Any

import pytest

import harmonize
from harmonize.engines import ENGINES
from harmonize.engines.booleans import BooleanEngine
from harmonize.engines.dates import DateEngine
from harmonize.engines.numbers import NumberEngine
from harmonize.engines.phones import PhoneEngine
from harmonize.html import MAX_UNDECIDED_ROWS, render_html
from harmonize.report import HTML_NAME

HOSTILE = "<script>alert(1)</script>"
HOSTILE_HEADER = "<img src=x onerror=alert(2)>"
TOWNS = ("Kestrel Quay", "kestrel quay ", "KESTREL QUAY", "Saltmarsh End")
AMBIGUOUS = ("03/04/2024", "11/02/2024", "07/09/2024", "05/06/2024", "02/10/2024",
             "12/01/2024", "08/03/2024", "04/11/2024")
CHROMIUM = shutil.which("chromium")
needs_browser = pytest.mark.skipif(
    CHROMIUM is None, reason="chromium not found on PATH (CI installs Debian's chromium)")


# ---------------------------------------------------------------- the invented exports


def quay_orders(start: date, days: int, extra: tuple[str, ...] = ()) -> str:
    rows = [f'Order date,Amount,Branch town,Phone,"{HOSTILE_HEADER}"']
    for i in range(days):
        day = start + timedelta(days=i)
        phone = f"+44 20 7946 0{100 + 7 * i:03d}" if i % 3 else f"020 7946 0{200 + i:03d}"
        rows.append(f'{day:%d/%m/%Y},"{1000 + 37.5 * i:,.2f}",{TOWNS[i % 4]},{phone},'
                    f"note {i % 5}")
    return "\n".join([*rows, *extra]) + "\n"


def hollin_deliveries() -> str:
    return "Delivered,Crates\n" + "".join(f"{v},{i}\n" for i, v in enumerate(AMBIGUOUS))


@pytest.fixture(scope="module")
def engines() -> Iterator[None]:
    """Every engine of the project in the documented order, whatever is registered yet."""
    saved = list(ENGINES)
    names = {e.name for e in saved}
    wanted = [e for e in (BooleanEngine(), DateEngine(), PhoneEngine()) if e.name not in names]
    tail = [] if "numbers" in names else [NumberEngine()]
    ENGINES[:] = [*wanted, *saved, *tail]
    yield
    ENGINES[:] = saved


@pytest.fixture(scope="module")
def april(tmp_path_factory: pytest.TempPathFactory, engines: None) -> tuple[Path, dict]:
    """April's exports run under the plan saved from March's: (output folder, report)."""
    base = tmp_path_factory.mktemp("saltmarsh")
    march, april_in = base / "march", base / "april"
    march.mkdir()
    april_in.mkdir()
    (march / "quay_orders.csv").write_text(quay_orders(date(2024, 3, 10), 20), "utf-8")
    (march / "hollin_deliveries.csv").write_text(hollin_deliveries(), "utf-8")
    plan_path = base / "plan.toml"
    harmonize.save_plan(harmonize.run([march], base / "out_march").plan, plan_path)
    extra = (f'"{HOSTILE}",12.00,Kestrel Quay,+44 20 7946 0999,late entry',
             "31/02/2024,13.00,Kestrel Quay,+44 20 7946 0998,typo")
    (april_in / "quay_orders.csv").write_text(quay_orders(date(2024, 4, 10), 20, extra), "utf-8")
    (april_in / "hollin_deliveries.csv").write_text(hollin_deliveries(), "utf-8")
    (april_in / "broken.xlsx").write_bytes(b"not a workbook at all")
    out = base / "out_april"
    result = harmonize.run([april_in], out, plan=harmonize.load_plan(plan_path),
                           plan_source=plan_path)
    return out, result.report


@pytest.fixture(scope="module")
def page(april: tuple[Path, dict]) -> str:
    return (april[0] / HTML_NAME).read_text("utf-8")


def column_names(report: dict) -> list[str]:
    return [c["name"] for entry in report["files"] for c in entry["columns"]]


# ---------------------------------------------------------------- a small DOM


class Node:
    def __init__(self, tag: str, attrs: dict[str, str | None]) -> None:
        self.tag, self.attrs, self.children = tag, attrs, []  # type: list[Node | str]

    def text(self) -> str:
        return "".join(c if isinstance(c, str) else c.text() for c in self.children)

    def walk(self) -> Iterator[Node]:
        yield self
        for child in self.children:
            if isinstance(child, Node):
                yield from child.walk()

    def find(self, tag: str | None = None, **attrs: str) -> list[Node]:
        return [n for n in self.walk() if (tag is None or n.tag == tag)
                and all(n.attrs.get(k.replace("_", "-")) == v for k, v in attrs.items())]


class DomBuilder(HTMLParser):
    # HTML Standard §13.1.2 "void elements" (list from memory): they take no end tag.
    VOID = frozenset({"area", "base", "br", "col", "embed", "hr", "img", "input", "link",
                      "meta", "source", "track", "wbr"})

    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.root = Node("#root", {})
        self.stack = [self.root]

    def handle_starttag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        node = Node(tag, dict(attrs))
        self.stack[-1].children.append(node)
        if tag not in self.VOID:
            self.stack.append(node)

    def handle_startendtag(self, tag: str, attrs: list[tuple[str, str | None]]) -> None:
        self.stack[-1].children.append(Node(tag, dict(attrs)))

    def handle_endtag(self, tag: str) -> None:
        for depth in range(len(self.stack) - 1, 0, -1):
            if self.stack[depth].tag == tag:
                del self.stack[depth:]
                return

    def handle_data(self, data: str) -> None:
        self.stack[-1].children.append(data)


def parse(html_text: str) -> Node:
    builder = DomBuilder()
    builder.feed(html_text)
    builder.close()
    return builder.root


def table_rows(root: Node, table_id: str) -> list[Node]:
    (table,) = root.find("table", id=table_id)
    (body,) = table.find("tbody")
    return [row for row in body.children if isinstance(row, Node) and row.tag == "tr"]


def cells_by_key(root: Node, table_id: str) -> list[dict[str, Node]]:
    """The undecided table's rows as {heading data-key: cell}."""
    (table,) = root.find("table", id=table_id)
    keys = [th.attrs.get("data-key") for th in table.find("th")]
    return [dict(zip(keys, (c for c in row.children if isinstance(c, Node))))
            for row in table_rows(root, table_id)]


def readings_of(value: str) -> set[str]:
    """Both calendar readings of a numeric date, by Python's calendar, written as
    ISO 8601:2000 §5.2.1.1 extended calendar dates (checkvalues.md D1)."""
    found = set()
    for pattern in ("%d/%m/%Y", "%m/%d/%Y"):
        try:
            found.add(datetime.strptime(value, pattern).date().isoformat())
        except ValueError:
            continue
    return found


# ---------------------------------------------------------------- the page as text


class TestPageText:
    def test_every_column_and_table_is_shown(self, april: tuple[Path, dict], page: str) -> None:
        report = april[1]
        text = parse(page).text()
        for name in column_names(report):
            assert name in text, name
        for entry in report["files"]:
            assert entry["input"] in text

    def test_hostile_values_are_escaped(self, page: str) -> None:
        # HTML Standard §13.1.2.6: "<" in text must be written as a character reference,
        # or it opens a tag (section number from memory).
        assert HOSTILE not in page and HOSTILE_HEADER not in page
        assert escape(HOSTILE) in page and escape(HOSTILE_HEADER) in page
        assert page.lower().count("<script") == 2   # the page's own two scripts only
        assert "onerror=" not in page.replace(escape(HOSTILE_HEADER), "")

    def test_sections_are_present(self, page: str) -> None:
        for anchor in ("caution", "problems", "summary", "drift", "overview", "columns",
                       "undecided", "provenance", "script-errors"):
            assert f'id="{anchor}"' in page, anchor

    def test_no_network_address_is_referenced(self, page: str) -> None:
        # RFC 3986 §4.2: "//host" is a network-path reference, as dangerous as "http://".
        assert not re.search(r"""\b(?:src|href|action|xlink:href)\s*=\s*["']?\s*"""
                             r"(?:https?:)?//", page, re.IGNORECASE)
        assert not re.search(r"url\(\s*['\"]?\s*(?:https?:)?//", page, re.IGNORECASE)
        assert "@import" not in page
        assert "default-src 'none'" in page

    def test_the_policy_allows_exactly_the_inline_scripts(self, page: str) -> None:
        # CSP Level 3 §2.3.1 hash-source: base64 of the SHA-256 of the script's text
        # (W3C; section number from memory).
        policy = re.search(r'http-equiv="Content-Security-Policy" content="([^"]+)"', page)
        assert policy is not None
        allowed = set(re.findall(r"'sha256-([A-Za-z0-9+/=]+)'", policy.group(1)))
        scripts = re.findall(r"<script>(.*?)</script>", page, re.DOTALL)
        digests = {base64.b64encode(hashlib.sha256(s.encode()).digest()).decode()
                   for s in scripts}
        assert digests == allowed and len(scripts) == 2

    def test_caution_comes_before_any_column(self, april: tuple[Path, dict], page: str) -> None:
        assert escape(april[1]["caution"]) in page
        assert page.index('id="caution"') < page.index('id="overview"')

    def test_every_undecided_cell_is_a_row_with_its_readings(
            self, april: tuple[Path, dict], page: str) -> None:
        report = april[1]
        rows = cells_by_key(parse(page), "undecided-table")
        assert len(rows) == len(report["unresolved"]) > 0
        by_value = {row["value"].text(): {s.text() for s in row["candidates"].find(
            "span", **{"class": "cand"})} for row in rows}
        for value in AMBIGUOUS:
            assert by_value[value] == readings_of(value), value

    def test_drift_and_the_broken_file_are_reported(self, april: tuple[Path, dict],
                                                    page: str) -> None:
        report = april[1]
        root = parse(page)
        (drift,) = root.find("section", id="drift")
        assert "Saved plan re-applied" in drift.text()
        notes = [n for e in report["files"] for c in e["columns"] for n in c.get("drift", [])]
        assert notes and all(note in drift.text() for note in notes)
        (problems,) = root.find("section", id="problems")
        assert "broken.xlsx" in problems.text()
        assert report["plan"]["sha256"] in root.text()
        for item in report["inputs"]:
            assert item["sha256"] in root.text()

    def test_per_group_decision_is_spelled_out(self, engines: None) -> None:
        # An invented merged ledger: the country column splits day-first and month-first.
        import pandas as pd
        rows = [("United Kingdom", f"{d:02d}/03/2024") for d in range(13, 25)] + \
               [("United States", f"03/{d:02d}/2024") for d in range(13, 25)]
        frame = pd.DataFrame(rows, columns=["Country", "Booked"])
        _, entry, _ = harmonize.harmonize_frame(frame)
        page = render_html({"files": [entry], "unresolved": entry.pop("unresolved")})
        text = parse(page).text()
        # CLDR (babel 2.19.0): en_GB short date dd/MM/y is day first, en_US M/d/yy month
        # first (libnotes.md §1); the page must name each group's order.
        assert "DMY (day first) for United Kingdom" in text
        assert "MDY (month first) for United States" in text

    def test_unknown_detail_keys_are_shown(self, april: tuple[Path, dict]) -> None:
        report = copy.deepcopy(april[1])
        column = report["files"][0]["columns"][0]
        column["details"]["settled_by_hand"] = {"who": "<b>clerk</b>", "when": [2024, 4]}
        text = parse(render_html(report)).text()
        assert "settled_by_hand" in text and "<b>clerk</b>" in text

    def test_empty_run_still_renders(self, tmp_path: Path) -> None:
        result = harmonize.run([tmp_path], None)
        root = parse(render_html(result.report))
        assert "Undecided cells (0)" in root.text()

    def test_reading_notes_are_notes_not_problems(self, tmp_path: Path) -> None:
        # a title line set aside is routine: the page names it, under no "Problems" heading
        source = tmp_path / "crates.csv"
        source.write_text("Crate report\n\nDepot;Crates\nNorth;12\nSouth;9\n", "utf-8")
        page = render_html(harmonize.run([source], None).report)
        root = parse(page)
        assert "Reading notes" in root.text() and "Problems" not in root.text()
        assert "'Crate report'" in root.text()
        assert 'class="problem"' not in page


class TestScale:
    def test_fifty_files_with_twenty_thousand_undecided_cells(
            self, april: tuple[Path, dict]) -> None:
        real = april[1]
        columns = [c for e in real["files"] for c in e["columns"]]
        files = []
        for f in range(50):
            cols = [dict(copy.deepcopy(columns[i % len(columns)]), name=f"col {f}.{i}")
                    for i in range(10)]
            files.append({"input": f"branch_{f:02d}.csv", "sheet": None, "output": None,
                          "rows": 400, "columns": cols, "warnings": [], "drift": []})
        cells = [dict(real["unresolved"][i % len(real["unresolved"])], row=2 + i,
                      file=f"branch_{i % 50:02d}.csv", column=f"col {i % 50}.{i % 10}",
                      value=f"{i:05d}/{HOSTILE}") for i in range(20_000)]
        report = dict(real, files=files, unresolved=cells)
        started = time.perf_counter()
        page = render_html(report)
        took = time.perf_counter() - started
        assert took < 8.0, f"rendering took {took:.1f}s"
        assert page.count('<tr data-col="') == MAX_UNDECIDED_ROWS
        assert "unresolved.csv" in page and "20,000" in page
        assert HOSTILE not in page
        assert page.count('class="obar"') == 500   # one outcome figure per column


# ---------------------------------------------------------------- in a real browser


def chromium(args: list[str], profile: Path, url: str) -> subprocess.Popen:
    assert CHROMIUM is not None
    command = [CHROMIUM, "--headless", "--no-sandbox", "--disable-gpu",
               "--disable-dev-shm-usage", "--no-first-run", "--disable-background-networking",
               "--disable-component-update", "--disable-sync", f"--user-data-dir={profile}",
               *args, url]
    return subprocess.Popen(command, stdout=subprocess.PIPE, stderr=subprocess.DEVNULL,
                            text=True)


@pytest.fixture(scope="module")
def browser(april: tuple[Path, dict], tmp_path_factory: pytest.TempPathFactory
            ) -> dict[str, Any]:
    """The page's screenshot and its DOM after scripts ran, filtered by the address to the
    Hollin Mark column and sorted by row, descending."""
    out, report = april
    work = tmp_path_factory.mktemp("browser")
    url = (out / HTML_NAME).as_uri()
    root = parse((out / HTML_NAME).read_text("utf-8"))
    (card,) = [n for n in root.find("article") if n.find("h3")
               and n.find("h3")[0].text() == "Delivered"]
    filtered = f"{url}?column={card.attrs['id']}&sort=row&desc=1"
    started = time.perf_counter()
    shot = work / "page.png"
    snap = chromium([f"--screenshot={shot}", "--window-size=1280,2000"], work / "p1", url)
    dump = chromium(["--dump-dom"], work / "p2", filtered)
    try:
        dom, _ = dump.communicate(timeout=120)
        snap.communicate(timeout=120)
    finally:
        for process in (snap, dump):
            if process.poll() is None:
                process.kill()
    return {"png": shot, "dom": dom, "seconds": time.perf_counter() - started,
            "column": card.attrs["id"], "report": report}


@needs_browser
class TestInBrowser:
    def test_page_loads_and_its_script_runs_cleanly(self, browser: dict[str, Any]) -> None:
        root = parse(browser["dom"])
        (body,) = root.find("body")
        assert body.attrs.get("data-script") == "ready", "the page's script did not finish"
        (errors,) = root.find(id="script-errors")
        assert errors.find("li") == [], errors.text()
        assert browser["seconds"] < 60

    def test_every_column_name_is_rendered(self, browser: dict[str, Any]) -> None:
        text = parse(browser["dom"]).text()
        for name in column_names(browser["report"]):
            assert name in text, name

    def test_undecided_table_is_filtered_and_sorted_from_the_address(
            self, browser: dict[str, Any]) -> None:
        report = browser["report"]
        root = parse(browser["dom"])
        rows = table_rows(root, "undecided-table")
        assert len(rows) == len(report["unresolved"])
        shown = [r for r in rows if "hidden" not in r.attrs]
        wanted = [c for c in report["unresolved"] if c["column"] == "Delivered"]
        assert len(shown) == len(wanted) == len(AMBIGUOUS)
        assert all(r.attrs["data-col"] == browser["column"] for r in shown)
        by_key = cells_by_key(root, "undecided-table")
        numbers = [int(cells["row"].text()) for row, cells in zip(rows, by_key)
                   if "hidden" not in row.attrs]
        assert numbers == sorted((c["row"] for c in wanted), reverse=True)
        (counter,) = root.find("span", **{"class": "shown"})[-1:]
        assert counter.text() == f"{len(wanted)} of {len(rows)} rows shown"

    def test_hostile_cell_is_text_not_markup(self, browser: dict[str, Any]) -> None:
        root = parse(browser["dom"])
        assert len(root.find("script")) == 2
        assert root.find("img") == []
        values = [n.text() for n in root.find("code", **{"class": "raw"})]
        assert HOSTILE in values
        assert HOSTILE_HEADER in root.text()

    def test_screenshot_is_a_drawn_page(self, browser: dict[str, Any]) -> None:
        from matplotlib.image import imread
        data = browser["png"].read_bytes()
        # PNG signature, ISO/IEC 15948:2004 §5.2 (checked against the W3C PNG spec, memory).
        assert data[:8] == b"\x89PNG\r\n\x1a\n"
        pixels = (imread(browser["png"])[..., :3] * 255).round().astype("uint8")
        assert pixels.shape[:2] == (2000, 1280)
        flat = pixels.reshape(-1, 3)
        colours, counts = _unique_colours(flat)
        assert len(colours) > 50, "hardly any colours: the page looks blank"
        background = counts.max() / len(flat)
        assert background < 0.92, f"{background:.0%} of the pixels are one colour"
        bands = pixels.reshape(10, 200, 1280, 3)
        busy = sum(len(_unique_colours(b.reshape(-1, 3))[0]) > 5 for b in bands)
        assert busy >= 8, f"only {busy} of 10 horizontal bands show anything"


def _unique_colours(flat: Any) -> tuple[Any, Any]:
    import numpy as np
    packed = (flat[:, 0].astype(np.uint32) << 16) | (flat[:, 1].astype(np.uint32) << 8) \
        | flat[:, 2]
    return np.unique(packed, return_counts=True)


def test_ledger_and_percent_settings_read_as_words() -> None:
    # settings a reader would otherwise decode from the plan's keys
    from harmonize.html import _setting
    assert _setting("soll_haben", True) == "S/H letters read as debit/credit"
    assert _setting("bare_percent", "listed") is None
    assert _setting("magnitude_words", {"bn": 12}) == "magnitude words bn = 10^12"
