"""The HTML report: one self-contained page (no network, styles inline)."""

from __future__ import annotations

from html import escape
from typing import Any

STYLE = """
body{font:14px/1.45 system-ui,sans-serif;margin:2rem auto;max-width:70rem;color:#1d2330}
h1{font-size:1.5rem}h2{font-size:1.2rem;margin-top:2rem;border-bottom:1px solid #ccd}
table{border-collapse:collapse;margin:.5rem 0 1rem}td,th{padding:.25rem .6rem;
border-bottom:1px solid #e3e6ee;text-align:left;vertical-align:top}th{background:#f3f5f9}
.num{text-align:right;font-variant-numeric:tabular-nums}.caution{background:#fff6e0;
border-left:4px solid #e0a800;padding:.6rem 1rem}.low{color:#b03030;font-weight:600}
.bar{display:inline-block;height:.7rem;background:#4a74c9;vertical-align:middle}
code{background:#f3f5f9;padding:0 .2rem}
"""


def _cell(value: Any, cls: str = "") -> str:
    attr = f' class="{cls}"' if cls else ""
    return f"<td{attr}>{escape(str(value))}</td>"


def _confidence(value: float) -> str:
    cls = "num low" if value < 0.9 else "num"
    width = int(round(value * 60))
    return (f'<td class="{cls}">{value:.3f} <span class="bar" style="width:{width}px">'
            "</span></td>")


def _overview(report: dict[str, Any]) -> list[str]:
    rows = ["<table><tr><th>file</th><th>sheet</th><th>column</th><th>kind</th>"
            "<th>decision</th><th>confidence</th><th>converted</th><th>missing</th>"
            "<th>undecided</th><th>passed</th></tr>"]
    for entry in report["files"]:
        for col in entry["columns"]:
            counts = col.get("counts", {})
            decision = ", ".join(f"{k}={v}" for k, v in col["details"].items()
                                 if isinstance(v, str | int | float) and k != "missing_reasons")
            rows.append("<tr>" + _cell(entry["input"]) + _cell(entry["sheet"] or "")
                        + _cell(col["name"]) + _cell(col["kind"]) + _cell(decision)
                        + _confidence(col["confidence"])
                        + "".join(_cell(counts.get(k, 0), "num") for k in
                                  ("converted", "missing", "unresolved", "passed")) + "</tr>")
    rows.append("</table>")
    return rows


def _evidence(report: dict[str, Any]) -> list[str]:
    parts = []
    for entry in report["files"]:
        title = entry["input"] + (f" — sheet {entry['sheet']}" if entry["sheet"] else "")
        parts.append(f"<h2>{escape(title)}</h2>")
        for note in entry.get("warnings", []) + entry.get("drift", []):
            parts.append(f"<p class='caution'>{escape(note)}</p>")
        for col in entry["columns"]:
            parts.append(f"<h3>{escape(col['name'])} <small>({escape(col['kind'])})</small></h3>")
            items = "".join(f"<li>{escape(line)}</li>" for line in col.get("evidence", []))
            items += "".join(f"<li class='low'>{escape(line)}</li>"
                             for line in col.get("drift", []))
            if items:
                parts.append(f"<ul>{items}</ul>")
            examples = col.get("examples", [])
            if examples:
                parts.append("<table><tr><th>raw</th><th>output</th></tr>" + "".join(
                    "<tr>" + _cell(e["raw"]) + _cell(e["output"]) + "</tr>" for e in examples)
                    + "</table>")
    return parts


def _unresolved(report: dict[str, Any], limit: int = 2000) -> list[str]:
    cells = report["unresolved"]
    parts = [f"<h2>Undecided cells ({len(cells)})</h2>"]
    if not cells:
        return parts + ["<p>None: every cell was converted, recognised as missing or "
                        "passed through.</p>"]
    parts.append("<table><tr><th>file</th><th>sheet</th><th>row</th><th>column</th>"
                 "<th>value</th><th>reason</th><th>candidates</th></tr>")
    for cell in cells[:limit]:
        parts.append("<tr>" + "".join(_cell(cell[k] or "") for k in
                                      ("file", "sheet", "row", "column", "value", "reason"))
                     + _cell(" | ".join(cell["candidates"])) + "</tr>")
    parts.append("</table>")
    if len(cells) > limit:
        parts.append(f"<p>{len(cells) - limit} more in unresolved.csv.</p>")
    return parts


def render_html(report: dict[str, Any]) -> str:
    errors = "".join(f"<li>{escape(e['message'])}</li>" for e in report.get("errors", []))
    body = ["<h1>harmonize report</h1>", f"<p class='caution'>{escape(report['caution'])}</p>"]
    if errors:
        body.append(f"<h2>Files not converted</h2><ul>{errors}</ul>")
    body += ["<h2>Overview</h2>", *_overview(report), *_evidence(report), *_unresolved(report)]
    return ("<!doctype html><html lang='en'><head><meta charset='utf-8'>"
            f"<title>harmonize report</title><style>{STYLE}</style></head><body>"
            + "\n".join(body) + "</body></html>\n")
