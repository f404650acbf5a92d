"""The HTML report: one self-contained page that opens offline.

It reads the run report (``harmonize.report``) and shows, in this order: the caution for
safety-critical conversions, files that failed, a summary with run-wide figures and the
columns that need a look, drift against a re-applied plan, an overview of every column,
one card per column (why it was decided, outcomes, examples, spellings merged, per-group
conventions, every setting), the undecided cells (sortable, filterable, capped), and the
provenance. Every value from the data is escaped; the page allows no network access.
Detail keys this module does not know are still shown, generically.
"""

from __future__ import annotations

from collections import Counter
from collections.abc import Iterable, Mapping, Sequence
from dataclasses import dataclass
from html import escape
from typing import Any

from harmonize import html_figures as figs
from harmonize.html_assets import (
    CONTENT_SECURITY_POLICY,
    GUARD_SCRIPT,
    OUTCOME_COLOURS,
    OUTCOME_LABELS,
    STYLE,
    TABLE_SCRIPT,
)

MAX_UNDECIDED_ROWS = 5000      # undecided cells drawn as rows; all are in unresolved.csv
MAX_COLUMN_FIGURES = 1000      # above this many columns the per-column figures are left out
MAX_RUN_FIGURE_COLUMNS = 5000  # above this, the run-wide figures are left out
MAX_LISTED = 30                # entries of a list or mapping shown before "... more"
MAX_NEEDS_LOOK = 40
OUTCOMES = figs.OUTCOMES
# Detail keys drawn by their own sections rather than in the generic settings table.
DRAWN_APART = frozenset({"groups", "variant_groups", "variant_groups_total",
                         "variant_groups_note", "suggested_merges", "missing_reasons"})
HEADLINE_KEYS = ("order", "decimal_mark", "currency", "currency_mode", "percent", "unit",
                 "region", "languages", "mode", "numbers", "country_codes", "bare_percent",
                 "soll_haben", "currency_thousands", "magnitude_words")
# headline words for settings whose key alone says little
SETTING_WORDS = {
    ("bare_percent", "fraction"): "numbers without % read as fractions (0.2 = 20 %)",
    ("bare_percent", "listed"): None,   # the usual choice: the listed cells say it
    ("bare_percent", "points"): None,
    ("soll_haben", True): "S/H letters read as debit/credit",
    ("currency_thousands", True): "T before a currency read as thousands (TEUR)",
}
ORDER_WORDS = {"DMY": "day first", "MDY": "month first", "YMD": "year first",
               "YDM": "year, day, month"}
MIDDOT = " \u00b7 "
_VISIBLE_CONTROLS = {c: 0x2400 + c for c in range(32) if c not in (9, 10)} | {127: 0x2421}


# ---------------------------------------------------------------- small pieces


def esc(value: Any) -> str:
    return escape("" if value is None else str(value), quote=True)


def raw(value: Any) -> str:
    """A value as written in the file: spaces kept visible, control characters shown."""
    text = "" if value is None else str(value)
    if text == "":
        return '<span class="none">(empty)</span>'
    return f'<code class="raw">{esc(text.translate(_VISIBLE_CONTROLS))}</code>'


def _num(value: int) -> str:
    return f"{value:,}"


def _plural(count: int, word: str, words: str | None = None) -> str:
    return f"{_num(count)} {word if count == 1 else (words or word + 's')}"


def _confidence(value: float) -> str:
    return f'<span class="conf {figs.band(value)}">{value:.3f}</span>'


def _table_title(entry: Mapping[str, Any], file_key: str = "input") -> str:
    sheet = entry.get("sheet")
    return str(entry.get(file_key) or "") + (f" [sheet {sheet}]" if sheet else "")


def _value(value: Any, depth: int = 0) -> str:
    """Any JSON value as readable HTML, capped so a huge mapping cannot swamp the page."""
    if value is None:
        return '<span class="none">not set</span>'
    if isinstance(value, bool):
        return f"<code>{'true' if value else 'false'}</code>"
    if isinstance(value, int | float):
        return f"<code>{esc(value)}</code>"
    if isinstance(value, str):
        return raw(value)
    if isinstance(value, Mapping):
        return _mapping(value, depth)
    if isinstance(value, list | tuple):
        return _sequence(value, depth)
    return raw(repr(value))


def _more(total: int, shown: int) -> str:
    if total <= shown:
        return ""
    return f'<span class="muted">\u2026 and {_num(total - shown)} more (in the JSON report)</span>'


def _sequence(items: Sequence[Any], depth: int) -> str:
    if not items:
        return '<span class="none">none</span>'
    shown = items[:MAX_LISTED]
    if all(not isinstance(i, Mapping | list | tuple) for i in shown):
        return ", ".join(_value(i, depth + 1) for i in shown) + " " + _more(len(items), len(shown))
    lis = "".join(f"<li>{_value(i, depth + 1)}</li>" for i in shown)
    return f"<ol>{lis}</ol>{_more(len(items), len(shown))}"


def _mapping(mapping: Mapping[str, Any], depth: int) -> str:
    if not mapping:
        return '<span class="none">none</span>'
    if depth > 3:
        return raw(str(dict(mapping))[:300])
    keys = list(mapping)[:MAX_LISTED]
    rows = "".join(f"<tr><td>{esc(k)}</td><td>{_value(mapping[k], depth + 1)}</td></tr>"
                   for k in keys)
    table = f'<table class="kv">{rows}</table>{_more(len(mapping), len(keys))}'
    if depth and len(mapping) > 6:
        return f"<details><summary>{_plural(len(mapping), 'entry', 'entries')}</summary>" \
               f"{table}</details>"
    return table


def _brief(value: Any) -> str:
    if isinstance(value, list | tuple):
        head = ", ".join(_brief(v) for v in value[:4])
        return head + (", \u2026" if len(value) > 4 else "")
    if value is True:
        return "on"
    if isinstance(value, str) and value and not any(ch.isalnum() for ch in value):
        return f"'{value}'"  # a bare mark such as '.' or ',' reads better quoted
    return str(value)


def _setting(key: str, value: Any) -> str | None:
    """One headline setting in words, or None when it says nothing worth a headline."""
    if key == "order":
        if value in ORDER_WORDS:
            return f"order {value} ({ORDER_WORDS[value]})"
        return "order not set: each value fixes its own or is listed" if value is None \
            else f"order {value}"
    if value is None or value is False or value in ("", [], {}):
        return None
    if isinstance(value, (str, bool)) and (key, value) in SETTING_WORDS:
        return SETTING_WORDS[(key, value)]
    if key == "magnitude_words" and isinstance(value, Mapping):
        return "magnitude words " + ", ".join(f"{w} = 10^{p}" for w, p in value.items())
    if key == "currency_mode" and value in ("none", "single"):
        return None  # a single currency is named by the currency key itself
    return f"{key.replace('_', ' ')} {_brief(value)}"


def _per_group(key: str, conventions: Mapping[str, Any]) -> str | None:
    """'order MDY (month first) for United States; DMY (day first) for France, ...'."""
    labels_by_value: dict[str, list[str]] = {}
    for label, convention in conventions.items():
        if isinstance(convention, Mapping) and key in convention:
            text = _setting(key, convention[key])
            if text is not None:
                labels_by_value.setdefault(text, []).append(str(label))
    if not labels_by_value:
        return None
    parts = []
    for text, labels in labels_by_value.items():
        named = ", ".join(labels[:4]) + (f" and {len(labels) - 4} more" if len(labels) > 4
                                         else "")
        parts.append(f"{text} for {named}")
    return "; ".join(parts)


def headline(column: Mapping[str, Any]) -> str:
    """The decision in a few words (plain text): the settings that matter most."""
    details = column.get("details") or {}
    groups = details.get("groups") if isinstance(details.get("groups"), Mapping) else {}
    conventions = groups.get("conventions") or {}
    parts = []
    for key in HEADLINE_KEYS:
        grouped = _per_group(key, conventions) if conventions else None
        if grouped is not None:
            parts.append(grouped)
        elif key in details:
            text = _setting(key, details[key])
            if text is not None:
                parts.append(text)
    unit = column.get("unit")
    if unit and "unit" not in details and unit != details.get("currency"):
        parts.append(f"unit {unit}")
    if groups.get("by"):
        parts.append(f"rows split by column '{groups['by']}'")
    return MIDDOT.join(parts) if parts else str(column.get("kind", ""))


# ---------------------------------------------------------------- the index of columns


@dataclass(frozen=True)
class ColumnRef:
    anchor: str
    entry: Mapping[str, Any]
    column: Mapping[str, Any]


def index_columns(files: Sequence[Mapping[str, Any]]) -> list[list[ColumnRef]]:
    return [[ColumnRef(f"c{t}-{c}", entry, column)
             for c, column in enumerate(entry.get("columns", []))]
            for t, entry in enumerate(files)]


def anchors_by_cell(tables: list[list[ColumnRef]]) -> dict[tuple[Any, Any, Any], str]:
    """(file, sheet, column name) -> the column card's anchor (first one wins)."""
    found: dict[tuple[Any, Any, Any], str] = {}
    for refs in tables:
        for ref in refs:
            key = (ref.entry.get("input"), ref.entry.get("sheet"), ref.column.get("name"))
            found.setdefault(key, ref.anchor)
    return found


# ---------------------------------------------------------------- sections


def _caution(report: Mapping[str, Any]) -> str:
    text = report.get("caution")
    if not text:
        return ""
    return (f'<aside class="caution" id="caution" role="note"><strong>Caution.</strong> '
            f"{esc(text)}</aside>")


def _problems(report: Mapping[str, Any]) -> str:
    """Files that could not be converted, then what reading the others noted (title
    lines set aside, a row of units joined, ragged rows padded): notes, not failures."""
    errors = report.get("errors") or []
    notes = [(_table_title(e), w) for e in report.get("files", [])
             for w in e.get("warnings", [])]
    if not errors and not notes:
        return ""
    parts = [f'<section id="problems"><h2>{"Problems" if errors else "Reading notes"}</h2>']
    if errors:
        rows = "".join(f"<tr><td>{esc(e.get('file'))}</td><td>{esc(e.get('message'))}</td></tr>"
                       for e in errors)
        parts.append(f'<div class="problem"><strong>{_plural(len(errors), "file")} could not '
                     "be converted</strong> and produced no output; the other files were."
                     f"<table><thead><tr><th>file</th><th>error</th></tr></thead>"
                     f"<tbody>{rows}</tbody></table></div>")
    if notes:
        items = "".join(f"<li><b>{esc(t)}</b>: {esc(w)}</li>" for t, w in notes)
        parts.append(f"<h3>Noted while reading</h3><ul>{items}</ul>")
    parts.append("</section>")
    return "".join(parts)


def _cards(summary: Mapping[str, Any], n_columns: int) -> str:
    cells = int(summary.get("cells", 0))
    cards = [f'<div class="card"><b>{_num(int(summary.get("tables", 0)))}</b>'
             f"<span>tables</span></div>",
             f'<div class="card"><b>{_num(n_columns)}</b><span>columns</span></div>',
             f'<div class="card"><b>{_num(cells)}</b><span>cells</span></div>']
    for key in OUTCOMES:
        count = int(summary.get(key, 0))
        share = f" ({100 * count / cells:.1f}%)" if cells else ""
        cards.append(f'<div class="card"><b>{_num(count)}</b><span><i class="sw-{key}"></i>'
                     f"{OUTCOME_LABELS[key]}{share}</span></div>")
    return f'<div class="cards">{"".join(cards)}</div>'


def _needs_look(refs: list[ColumnRef]) -> str:
    flagged = [r for r in refs if r.column.get("counts", {}).get("unresolved", 0)
               or figs.band(float(r.column.get("confidence", 0))) == "low"
               or r.column.get("drift")]
    if not flagged:
        return ('<p class="ok">Every column was decided with confidence of at least '
                f"{figs.LOW} and no cell was left undecided.</p>")
    flagged.sort(key=lambda r: (-r.column.get("counts", {}).get("unresolved", 0),
                                float(r.column.get("confidence", 0))))
    items = []
    for ref in flagged[:MAX_NEEDS_LOOK]:
        col = ref.column
        why = []
        stuck = col.get("counts", {}).get("unresolved", 0)
        if stuck:
            why.append(f"{_plural(stuck, 'undecided cell')}")
        if figs.band(float(col.get("confidence", 0))) == "low":
            why.append(f"confidence {float(col['confidence']):.3f}")
        if col.get("drift"):
            why.append("drift from the plan")
        items.append(f'<li><a href="#{ref.anchor}">{esc(col.get("name"))}</a> '
                     f'<span class="muted">in {esc(_table_title(ref.entry))}</span>: '
                     f"{esc('; '.join(why))}</li>")
    more = (f"<li class='muted'>\u2026 and {_num(len(flagged) - MAX_NEEDS_LOOK)} more: "
            "see the overview</li>" if len(flagged) > MAX_NEEDS_LOOK else "")
    return f"<h3>Columns that need a look</h3><ul>{''.join(items)}{more}</ul>"


def _run_figures(report: Mapping[str, Any], refs: list[ColumnRef]) -> str:
    if not refs or len(refs) > MAX_RUN_FIGURE_COLUMNS:
        return ""
    drawn = [figs.outcomes_by_table(report.get("files", [])),
             figs.confidence_by_kind([r.column for r in refs])]
    items = "".join(f"<figure>{svg}<figcaption>{esc(caption)}</figcaption></figure>"
                    for svg, caption in filter(None, drawn))
    return f'<div class="figures">{items}</div>'


def _summary(report: Mapping[str, Any], refs: list[ColumnRef]) -> str:
    return ('<section id="summary"><h2>Summary</h2>'
            + _cards(report.get("summary", {}), len(refs))
            + _needs_look(refs) + _run_figures(report, refs) + "</section>")


def _drift(report: Mapping[str, Any], tables: list[list[ColumnRef]]) -> str:
    notes = []
    for refs, entry in zip(tables, report.get("files", [])):
        notes += [(_table_title(entry), None, n) for n in entry.get("drift", [])]
        notes += [(_table_title(entry), r, n) for r in refs for n in r.column.get("drift", [])]
    drift_cells = sum(1 for u in report.get("unresolved", [])
                      if str(u.get("reason", "")).startswith("drift"))
    plan = report.get("plan")
    if plan is None and not notes:
        return ""
    parts = ['<section id="drift"><h2>Drift from the saved plan</h2>']
    if plan is not None:
        parts.append(f"<p>Saved plan re-applied: {raw(plan.get('file'))} "
                     f"<span class='muted'>sha256 <code>{esc(plan.get('sha256'))}</code></span>"
                     "</p>")
    else:
        parts.append("<p>No saved plan was given; these notes come from the run itself.</p>")
    if not notes and not drift_cells:
        parts.append('<p class="ok">No drift: the plan matched every file and read every '
                     "value.</p></section>")
        return "".join(parts)
    rows = "".join(
        f"<tr><td>{esc(title)}</td><td>"
        + (f'<a href="#{ref.anchor}">{esc(ref.column.get("name"))}</a>' if ref else
           '<span class="none">whole table</span>')
        + f"</td><td>{esc(note)}</td></tr>" for title, ref, note in notes)
    parts.append(f'<div class="drift-box"><strong>{_plural(len(notes), "drift note")}.</strong> '
                 "The new data contradicts or escapes the saved decisions here; check them "
                 "before trusting the output.</div>")
    if rows:
        parts.append('<table class="wide"><thead><tr><th>table</th><th>column</th>'
                     f"<th>what changed</th></tr></thead><tbody>{rows}</tbody></table>")
    if drift_cells:
        parts.append(f'<p>{_plural(drift_cells, "undecided cell")} give drift as the reason: '
                     'see <a href="#undecided">undecided cells</a>.</p>')
    parts.append("</section>")
    return "".join(parts)


def _overview(refs: list[ColumnRef]) -> str:
    rows = []
    for ref in refs:
        col, counts = ref.column, ref.column.get("counts", {})
        confidence = float(col.get("confidence", 0))
        rows.append(
            f"<tr><td>{esc(_table_title(ref.entry))}</td>"
            f'<td><a href="#{ref.anchor}">{esc(col.get("name"))}</a></td>'
            f'<td><span class="kind">{esc(col.get("kind"))}</span></td>'
            f"<td>{esc(headline(col))}</td>"
            f'<td class="num" data-sort="{confidence}">{_confidence(confidence)}</td>'
            + "".join(f'<td class="num">{_num(int(counts.get(k, 0)))}</td>' for k in OUTCOMES)
            + "</tr>")
    heads = (_th("table") + _th("column") + _th("kind") + _th("decision")
             + _th("confidence", numeric=True)
             + "".join(_th(OUTCOME_LABELS[k], numeric=True) for k in OUTCOMES))
    return ('<section id="overview"><h2>Overview of columns</h2>'
            "<p>Every column of every table, with the decision taken and how sure it is. "
            "Click a heading to sort; type to filter.</p>"
            + _controls("overview-table", "filter columns, kinds, decisions\u2026")
            + f'<table id="overview-table" data-table class="wide"><thead><tr>{heads}</tr>'
            f"</thead><tbody>{''.join(rows)}</tbody></table></section>")


def _th(label: str, *, numeric: bool = False, key: str | None = None) -> str:
    attrs = ' data-sortable=""' + (' data-type="num" class="num"' if numeric else "")
    attrs += f' data-key="{esc(key)}"' if key else ""
    return f"<th{attrs}>{esc(label)}</th>"


def _controls(table_id: str, placeholder: str, select: str = "") -> str:
    return (f'<div class="controls" data-for="{table_id}"><input type="search" '
            f'placeholder="{esc(placeholder)}" aria-label="{esc(placeholder)}">{select}'
            '<span class="shown"></span></div>')


# ---------------------------------------------------------------- one column card


def _legend(counts: Mapping[str, Any]) -> str:
    return '<div class="legend">' + "".join(
        f'<span><i class="sw-{k}"></i>{OUTCOME_LABELS[k]} {_num(int(counts.get(k, 0)))}</span>'
        for k in OUTCOMES) + "</div>"


def _examples(column: Mapping[str, Any]) -> str:
    examples = column.get("examples") or []
    if not examples:
        return ""
    rows = "".join(f"<tr><td>{raw(e.get('raw'))}</td><td>\u2192</td><td>{raw(e.get('output'))}"
                   "</td></tr>" for e in examples)
    return ("<h4>Examples</h4><table><thead><tr><th>as written</th><th></th><th>normalised"
            f"</th></tr></thead><tbody>{rows}</tbody></table>")


def _missing(column: Mapping[str, Any]) -> str:
    tokens = column.get("missing") or {}
    if not tokens:
        return ""
    reasons = (column.get("details") or {}).get("missing_reasons") or {}
    folded = {str(k).strip().lower(): v for k, v in reasons.items()}
    rows = "".join(
        f"<tr><td>{raw(token)}</td><td class='num'>{_num(int(count))}</td>"
        f"<td>{esc(folded.get(str(token).strip().lower(), ''))}</td></tr>"
        for token, count in list(tokens.items())[:MAX_LISTED])
    return ("<h4>Set aside as missing</h4><table><thead><tr><th>written</th><th>cells</th>"
            f"<th>why</th></tr></thead><tbody>{rows}</tbody></table>"
            + _more(len(tokens), min(len(tokens), MAX_LISTED)))


def _variant_groups(details: Mapping[str, Any]) -> str:
    groups = details.get("variant_groups") or []
    if not isinstance(groups, list) or not groups:
        return ""
    rows = []
    for group in groups[:MAX_LISTED]:
        if not isinstance(group, Mapping):
            rows.append(f"<tr><td colspan='3'>{_value(group, 1)}</td></tr>")
            continue
        variants = group.get("variants") or {}
        written = ", ".join(f"{raw(v)}&nbsp;\u00d7{_num(int(c))}" for v, c in
                            list(variants.items())[:12]) if isinstance(variants, Mapping) \
            else _value(variants, 1)
        rows.append(f"<tr><td>{raw(group.get('canonical'))}</td><td>{written}</td>"
                    f"<td class='num'>{_num(int(group.get('cells_changed', 0)))}</td></tr>")
    total = int(details.get("variant_groups_total", len(groups)) or len(groups))
    note = details.get("variant_groups_note")
    return ("<h4>Spellings made consistent</h4>"
            f"<p class='muted'>{_plural(total, 'variant group')}: values equal once case, "
            "spacing, accents and punctuation are folded, written as one spelling."
            + (f" {esc(note)}." if note else "") + "</p>"
            "<table><thead><tr><th>written as</th><th>spellings found (cells)</th>"
            f"<th>cells rewritten</th></tr></thead><tbody>{''.join(rows)}</tbody></table>"
            + _more(total, min(total, MAX_LISTED)))


def _suggested_merges(details: Mapping[str, Any]) -> str:
    merges = details.get("suggested_merges") or []
    if not isinstance(merges, list) or not merges:
        return ""
    rows = "".join(
        f"<tr><td>{raw(m.get('canonical'))}</td><td>{_value(m.get('variants'), 1)}</td>"
        f"<td>{_value(m.get('similarity'), 1)}</td><td>{_value(m.get('counts'), 1)}</td></tr>"
        if isinstance(m, Mapping) else f"<tr><td colspan='4'>{_value(m, 1)}</td></tr>"
        for m in merges[:MAX_LISTED])
    return ("<h4>Near matches worth a look</h4><p class='muted'>Not merged: add them to the "
            "plan's <code>merge</code> setting if they are one place.</p>"
            "<table><thead><tr><th>keep</th><th>perhaps the same</th><th>similarity</th>"
            f"<th>cells</th></tr></thead><tbody>{rows}</tbody></table>"
            + _more(len(merges), min(len(merges), MAX_LISTED)))


def _groups(details: Mapping[str, Any]) -> str:
    groups = details.get("groups")
    if not isinstance(groups, Mapping):
        return ""
    conventions = groups.get("conventions") or {}
    labels = list(conventions)[:MAX_LISTED]
    keys: list[str] = []
    for label in labels:
        keys += [k for k in conventions[label] if k not in keys]
    keys = keys[:8]
    head = "".join(f"<th>{esc(k)}</th>" for k in keys)
    rows = "".join(f"<tr><td>{raw(label)}</td>" + "".join(
        f"<td>{_value(conventions[label].get(k), 1)}</td>" for k in keys) + "</tr>"
        for label in labels)
    return ("<h4>Per-group conventions</h4>"
            f"<p>Rows are split by the column {raw(groups.get('by'))}; each group follows its "
            "own convention (groups not listed use the column's).</p>"
            f"<table><thead><tr><th>group</th>{head}</tr></thead><tbody>{rows}</tbody></table>"
            + _more(len(conventions), len(labels)))


def _settings(column: Mapping[str, Any]) -> str:
    details = {k: v for k, v in (column.get("details") or {}).items() if k not in DRAWN_APART}
    extra = {"engine": column.get("engine"), "unit": column.get("unit"),
             "output column": column.get("output_name")}
    if column.get("companions"):
        extra["companion columns"] = column["companions"]
    rows = {**{k: v for k, v in extra.items() if v is not None}, **details}
    return (f"<details><summary>All settings ({_plural(len(rows), 'key')}): the convention the "
            f"plan keeps, and details</summary>{_mapping(rows, 0)}</details>")


def _why(column: Mapping[str, Any], from_plan: bool) -> str:
    evidence = "".join(f"<li>{esc(line)}</li>" for line in column.get("evidence") or [])
    if evidence:
        return f'<ol class="why">{evidence}</ol>'
    if from_plan:
        return ('<p class="none">Taken from the saved plan: its reasons were given when the '
                "plan was made (the plan's <code># why:</code> comments).</p>")
    return '<p class="none">The engine gave no reasons.</p>'


def _column_card(ref: ColumnRef, with_figures: bool, from_plan: bool) -> str:
    col = ref.column
    details = col.get("details") or {}
    counts = col.get("counts", {})
    confidence = float(col.get("confidence", 0))
    flags = ""
    if col.get("kind") == "quantity":
        flags += '<a class="flag" href="#caution">verify before safety-critical use</a>'
    if figs.band(confidence) == "low":
        flags += '<span class="flag bad">low confidence: check the decision</span>'
    renamed = ""
    if col.get("output_name") and col.get("output_name") != col.get("name"):
        renamed = f" \u2192 written as {raw(col['output_name'])}"
    drift = "".join(f"<li>{esc(n)}</li>" for n in col.get("drift") or [])
    stuck = int(counts.get("unresolved", 0))
    link = (f'<p><a href="#undecided" data-show-column="{ref.anchor}">Show its '
            f"{_plural(stuck, 'undecided cell')}</a></p>" if stuck else "")
    bar = figs.outcome_bar(counts) if with_figures else ""
    gauge = figs.confidence_gauge(confidence) if with_figures else ""
    return (
        f'<article class="col" id="{ref.anchor}"><header><h3>{esc(col.get("name"))}</h3>'
        f'<span class="kind">{esc(col.get("kind"))}</span> confidence '
        f"{_confidence(confidence)} {gauge}{flags}</header>"
        f'<p class="decision"><b>Decision:</b> {esc(headline(col))}{renamed}</p>'
        f'<div class="grid"><div><h4>Why</h4>{_why(col, from_plan)}'
        + (f'<h4>Drift</h4><ul class="drift">{drift}</ul>' if drift else "")
        + _examples(col) + _groups(details) + _variant_groups(details)
        + _suggested_merges(details)
        + f"</div><div><h4>Cells</h4>{bar}{_legend(counts)}{link}"
        + _missing(col) + "<h4>Settings</h4>" + _settings(col) + "</div></div></article>")


def _columns(tables: list[list[ColumnRef]], files: Sequence[Mapping[str, Any]],
             with_figures: bool, from_plan: bool) -> str:
    parts = ['<section id="columns"><h2>Columns, table by table</h2>']
    for t, (refs, entry) in enumerate(zip(tables, files)):
        meta = [f"{_plural(int(entry.get('rows', 0)), 'row')}",
                _plural(len(refs), "column")]
        if entry.get("output"):
            meta.append(f"written to {esc(entry['output'])}")
        if entry.get("header_row", 1) != 1:
            meta.append(f"header on row {esc(entry['header_row'])}")
        parts.append(f'<section class="table" id="t{t}"><h2>{esc(_table_title(entry))}</h2>'
                     f'<p class="muted">{MIDDOT.join(meta)}</p>')
        for note in entry.get("warnings", []):
            parts.append(f'<p class="reading-note">{esc(note)}</p>')
        for note in entry.get("drift", []):
            parts.append(f'<p class="drift-box">{esc(note)}</p>')
        parts += [_column_card(ref, with_figures, from_plan) for ref in refs]
        parts.append("</section>")
    parts.append("</section>")
    return "".join(parts)


# ---------------------------------------------------------------- undecided cells


def _undecided_summary(cells: Sequence[Mapping[str, Any]],
                       anchors: Mapping[tuple[Any, Any, Any], str]) -> str:
    groups: Counter[tuple[Any, Any, Any, Any]] = Counter()
    samples: dict[tuple[Any, Any, Any, Any], list[str]] = {}
    for cell in cells:
        key = (cell.get("file"), cell.get("sheet"), cell.get("column"), cell.get("reason"))
        groups[key] += 1
        seen = samples.setdefault(key, [])
        if len(seen) < 3 and cell.get("value") not in seen:
            seen.append(cell.get("value"))
    rows = []
    for key, count in groups.most_common():
        file, sheet, column, reason = key
        anchor = anchors.get((file, sheet, column))
        name = (f'<a href="#{anchor}">{esc(column)}</a>' if anchor else esc(column))
        rows.append(f"<tr><td>{esc(_table_title({'file': file, 'sheet': sheet}, 'file'))}</td>"
                    f"<td>{name}</td>"
                    f"<td>{esc(reason)}</td><td class='num'>{_num(count)}</td>"
                    f"<td>{', '.join(raw(v) for v in samples[key])}</td></tr>")
    heads = (_th("file") + _th("column") + _th("reason")
             + _th("cells", numeric=True) + "<th>for example</th>")
    return ("<h3>By column and reason</h3>"
            f'<table id="undecided-summary" data-table class="wide"><thead><tr>{heads}</tr>'
            f"</thead><tbody>{''.join(rows)}</tbody></table>")


def _undecided_rows(cells: Iterable[Mapping[str, Any]],
                    anchors: Mapping[tuple[Any, Any, Any], str]) -> str:
    rows = []
    for cell in cells:
        anchor = anchors.get((cell.get("file"), cell.get("sheet"), cell.get("column")), "")
        candidates = cell.get("candidates") or []
        readings = ("".join(f'<span class="cand">{esc(c)}</span>' for c in candidates)
                    or '<span class="none">none</span>')
        rows.append(f'<tr data-col="{anchor}"><td>{esc(_table_title(cell, "file"))}</td>'
                    f"<td class='num'>{esc(cell.get('row'))}</td><td>{esc(cell.get('column'))}"
                    f"</td><td>{raw(cell.get('value'))}</td><td>{esc(cell.get('reason'))}</td>"
                    f"<td>{readings}</td></tr>")
    return "".join(rows)


def _undecided(report: Mapping[str, Any], refs: list[ColumnRef],
               anchors: Mapping[tuple[Any, Any, Any], str]) -> str:
    cells = report.get("unresolved") or []
    parts = [f'<section id="undecided"><h2>Undecided cells ({_num(len(cells))})</h2>']
    if not cells:
        parts.append('<p class="ok">None: every cell was converted, recognised as missing or '
                     "passed through.</p></section>")
        return "".join(parts)
    shown = cells[:MAX_UNDECIDED_ROWS]
    parts.append("<p>These cells were not guessed: each is listed with the readings it allows. "
                 "Settle them in the data or in the plan, then run again.</p>")
    if len(cells) > len(shown):
        parts.append(f'<p class="drift-box">The table below shows the first '
                     f"{_num(len(shown))} of {_num(len(cells))}; all of them are in "
                     "<code>unresolved.csv</code> beside this report.</p>")
    parts.append(_undecided_summary(cells, anchors))
    wanted = {anchors.get((c.get("file"), c.get("sheet"), c.get("column"))) for c in shown}
    options = "".join(
        f'<option value="{r.anchor}">{esc(_table_title(r.entry))} \u00b7 '
        f"{esc(r.column.get('name'))}</option>" for r in refs if r.anchor in wanted)
    select = (f'<select aria-label="column"><option value="">all columns</option>{options}'
              "</select>")
    heads = (_th("file", key="file") + _th("row", numeric=True, key="row")
             + _th("column", key="column") + _th("value", key="value") + _th("reason", key="reason")
             + '<th data-key="candidates">candidate readings</th>')
    parts.append("<h3>Every cell</h3>"
                 + _controls("undecided-table", "filter values, reasons, readings\u2026", select)
                 + f'<div class="scroll"><table id="undecided-table" data-table class="wide">'
                 f"<thead><tr>{heads}</tr></thead><tbody>{_undecided_rows(shown, anchors)}"
                 "</tbody></table></div></section>")
    return "".join(parts)


# ---------------------------------------------------------------- provenance


def _provenance(report: Mapping[str, Any]) -> str:
    parts = ['<section id="provenance"><h2>Provenance</h2>',
             "<p>What produced this report: the versions whose data changes answers (CLDR "
             "locale data, unit definitions, phone metadata), the options, and checksums of "
             "the inputs.</p>"]
    if report.get("provenance"):
        parts.append("<h3>Versions</h3>" + _mapping(report["provenance"], 0))
    if report.get("options") is not None:
        parts.append("<h3>Options</h3>" + _mapping(report["options"], 0))
    if report.get("plan"):
        parts.append("<h3>Plan</h3>" + _mapping(report["plan"], 0))
    inputs = report.get("inputs") or []
    if inputs:
        rows = "".join(f"<tr><td>{esc(i.get('file'))}</td><td><code>{esc(i.get('sha256'))}"
                       "</code></td></tr>" for i in inputs)
        parts.append("<h3>Inputs</h3><table><thead><tr><th>file</th><th>sha256</th></tr>"
                     f"</thead><tbody>{rows}</tbody></table>")
    outputs = [(e, e.get("output")) for e in report.get("files", []) if e.get("output")]
    if outputs:
        rows = "".join(f"<tr><td>{esc(_table_title(e))}</td><td>{esc(out)}</td></tr>"
                       for e, out in outputs)
        parts.append("<h3>Outputs</h3><table><thead><tr><th>table</th><th>written to</th></tr>"
                     f"</thead><tbody>{rows}</tbody></table>")
    parts.append("</section>")
    return "".join(parts)


# ---------------------------------------------------------------- the page


def _subtitle(report: Mapping[str, Any], refs: list[ColumnRef]) -> str:
    files = report.get("files", [])
    inputs = len({e.get("input") for e in files} | {e.get("file") for e in
                                                   report.get("errors", [])})
    cells = int(report.get("summary", {}).get("cells", 0))
    text = (f"{_plural(len(files), 'table')} from {_plural(inputs, 'input file')} \u00b7 "
            f"{_plural(len(refs), 'column')} \u00b7 {_plural(cells, 'cell')}")
    version = (report.get("provenance") or {}).get("harmonize")
    if version:
        text += f" \u00b7 harmonize {version}"
    if report.get("plan"):
        text += " \u00b7 a saved plan was re-applied"
    return esc(text)


def _nav(report: Mapping[str, Any], has_drift: bool, has_problems: bool) -> str:
    links = [("summary", "Summary")]
    if has_problems:
        links.append(("problems", "Problems" if report.get("errors") else "Reading notes"))
    if has_drift:
        links.append(("drift", "Drift"))
    links += [("overview", "Overview"), ("columns", "Columns"),
              ("undecided", f"Undecided ({_num(len(report.get('unresolved') or []))})"),
              ("provenance", "Provenance"), ("caution", "Caution")]
    return '<nav class="toc">' + "".join(f'<a href="#{a}">{esc(t)}</a>' for a, t in links) \
        + "</nav>"


def render_html(report: dict[str, Any]) -> str:
    """The report as one self-contained HTML page (no network, styles and figures inline)."""
    files = report.get("files", [])
    tables = index_columns(files)
    refs = [ref for refs in tables for ref in refs]
    anchors = anchors_by_cell(tables)
    problems = _problems(report)
    drift = _drift(report, tables)
    swatches = "".join(f".sw-{k}{{background:{c}}}" for k, c in OUTCOME_COLOURS.items())
    body = [
        f"<header class='page'><h1>harmonize report</h1><p>{_subtitle(report, refs)}</p>"
        "</header>",
        _nav(report, bool(drift), bool(problems)),
        "<main>",
        '<ul id="script-errors" hidden aria-live="polite"></ul>',
        f"<script>{GUARD_SCRIPT}</script>",
        _caution(report), problems, _summary(report, refs), drift, _overview(refs),
        _columns(tables, files, len(refs) <= MAX_COLUMN_FIGURES, "plan" in report),
        _undecided(report, refs, anchors), _provenance(report),
        "</main>",
        f"<script>{TABLE_SCRIPT}</script>",
    ]
    page = ("<!doctype html>\n<html lang='en'><head><meta charset='utf-8'>"
            f'<meta http-equiv="Content-Security-Policy" content="{CONTENT_SECURITY_POLICY}">'
            '<meta name="viewport" content="width=device-width, initial-scale=1">'
            f"<title>harmonize report</title><style>{STYLE}{swatches}</style></head><body>"
            + "\n".join(b for b in body if b) + "</body></html>\n")
    # Lone surrogates (undecodable bytes carried through) cannot be written as UTF-8.
    return page.encode("utf-8", "replace").decode("utf-8")
