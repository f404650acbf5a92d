"""Figures of the HTML report, all inline SVG written directly.

Run-wide charts (outcomes per table, confidence of every column decision) and per-column
figures (outcome bar, confidence gauge) are a few SVG shapes and labels each: drawing
them costs microseconds, where a plotting library would add its import and layout
time (about a second) to every run. Every mark carries a <title> for hover.
"""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from html import escape
from typing import Any

from harmonize.html_assets import OUTCOME_COLOURS, OUTCOME_LABELS

OUTCOMES = ("converted", "missing", "unresolved", "passed")
LOW, HIGH = 0.8, 0.95          # confidence bands: below LOW check it; from HIGH on, solid
MAX_TABLE_BARS = 25            # tables drawn in the outcome chart; the rest are summarised
LABEL_CHARS = 38


def band(confidence: float) -> str:
    """'low', 'mid' or 'high': how a confidence is shown (colour and wording)."""
    if confidence < LOW:
        return "low"
    return "mid" if confidence < HIGH else "high"


# ---------------------------------------------------------------- per-column, hand-drawn


def outcome_bar(counts: Mapping[str, int], width: int = 300, height: int = 16) -> str:
    """A stacked bar of a column's cells by outcome, each part titled for hover."""
    total = sum(int(counts.get(k, 0)) for k in OUTCOMES)
    label = ", ".join(f"{int(counts.get(k, 0))} {OUTCOME_LABELS[k]}" for k in OUTCOMES)
    parts = [f'<svg class="obar" width="{width}" height="{height}" viewBox="0 0 {width} '
             f'{height}" role="img" aria-label="cells by outcome: {escape(label)}">']
    if total == 0:
        parts.append(f'<rect width="{width}" height="{height}" fill="#eef1f6"/>')
    x = 0.0
    for key in OUTCOMES:
        count = int(counts.get(key, 0))
        if not count:
            continue
        span = width * count / total
        parts.append(f'<rect x="{x:.2f}" width="{max(span, 1.0):.2f}" height="{height}" '
                     f'fill="{OUTCOME_COLOURS[key]}"><title>{OUTCOME_LABELS[key]}: {count} '
                     f'({100 * count / total:.1f}%)</title></rect>')
        x += span
    parts.append("</svg>")
    return "".join(parts)


def confidence_gauge(confidence: float, width: int = 180, height: int = 14) -> str:
    """A 0..1 track with the check/solid bands shaded and the confidence marked."""
    def at(value: float) -> float:
        return width * value

    marker = min(max(at(confidence), 1.5), width - 1.5)
    return (f'<svg class="gauge" width="{width}" height="{height}" viewBox="0 0 {width} '
            f'{height}" role="img" aria-label="confidence {confidence:.3f}">'
            f'<rect width="{at(LOW):.1f}" height="{height}" fill="#f6d5d6"/>'
            f'<rect x="{at(LOW):.1f}" width="{at(HIGH - LOW):.1f}" height="{height}" '
            'fill="#fbe7bd"/>'
            f'<rect x="{at(HIGH):.1f}" width="{at(1 - HIGH):.1f}" height="{height}" '
            'fill="#cfeadf"/>'
            f'<rect width="{marker:.1f}" y="{height / 2 - 2:.1f}" height="4" fill="#1f2a44"/>'
            f'<rect x="{marker - 1.5:.1f}" width="3" height="{height}" fill="#1f2a44">'
            f'<title>confidence {confidence:.3f}</title></rect></svg>')


# ---------------------------------------------------------------- run-wide, hand-drawn

LABEL_WIDTH = 250   # px for the row labels at the left of the run-wide charts
PLOT_WIDTH = 400
ROW_HEIGHT = 22
INK, MUTED = "#1f2a44", "#5b6476"


def _short(text: str) -> str:
    return text if len(text) <= LABEL_CHARS else text[: LABEL_CHARS - 1] + "\u2026"


def _table_label(entry: Mapping[str, Any]) -> str:
    sheet = entry.get("sheet")
    return _short(str(entry.get("input", "")) + (f" [{sheet}]" if sheet else ""))


def _table_totals(entry: Mapping[str, Any]) -> dict[str, int]:
    totals = dict.fromkeys(OUTCOMES, 0)
    for column in entry.get("columns", []):
        for key in OUTCOMES:
            totals[key] += int(column.get("counts", {}).get(key, 0))
    return totals


def _chart(width: int, height: int, label: str, body: list[str]) -> str:
    return (f'<svg class="chart" width="{width}" height="{height}" viewBox="0 0 {width} '
            f'{height}" role="img" aria-label="{escape(label)}" font-size="12" '
            f'font-family="system-ui, sans-serif">{"".join(body)}</svg>')


def _text(x: float, y: float, text: str, anchor: str = "start", colour: str = INK,
          size: int | None = None) -> str:
    font = f' font-size="{size}"' if size else ""
    return (f'<text x="{x:.1f}" y="{y:.1f}" text-anchor="{anchor}" fill="{colour}"'
            f' dominant-baseline="middle"{font}>{escape(text)}</text>')


def _x_axis(left: float, top: float, ticks: Sequence[tuple[float, str]], title: str
            ) -> list[str]:
    """A baseline at ``top`` with labelled ticks (x positions in px) and a title below."""
    parts = [f'<line x1="{left}" x2="{left + PLOT_WIDTH}" y1="{top}" y2="{top}" '
             f'stroke="{MUTED}"/>']
    for x, label in ticks:
        parts.append(f'<line x1="{x:.1f}" x2="{x:.1f}" y1="{top}" y2="{top + 4}" '
                     f'stroke="{MUTED}"/>')
        parts.append(_text(x, top + 13, label, "middle", MUTED, 11))
    parts.append(_text(left + PLOT_WIDTH / 2, top + 31, title, "middle", MUTED, 11))
    return parts


def outcomes_by_table(files: Sequence[Mapping[str, Any]]) -> tuple[str, str] | None:
    """(svg, caption): each table's cells as shares by outcome; None when nothing to draw."""
    rows = [(_table_label(e), _table_totals(e)) for e in files]
    rows = [(label, t) for label, t in rows if sum(t.values())]
    if not rows:
        return None
    caption = "Share of each table's cells by outcome."
    if len(rows) > MAX_TABLE_BARS:
        rows = sorted(rows, key=lambda r: (-r[1]["unresolved"], -sum(r[1].values())))
        caption += (f" The {MAX_TABLE_BARS} tables with the most undecided cells are drawn, "
                    f"of {len(rows)}.")
        rows = rows[:MAX_TABLE_BARS]
    top, left = 26, LABEL_WIDTH
    body = _legend(left, 8)
    for i, (label, totals) in enumerate(rows):
        y, total = top + i * ROW_HEIGHT, sum(totals.values())
        body.append(_text(left - 8, y + ROW_HEIGHT / 2, label, "end"))
        x = float(left)
        for key in OUTCOMES:
            if not totals[key]:
                continue
            span = PLOT_WIDTH * totals[key] / total
            body.append(f'<rect x="{x:.2f}" y="{y + 3}" width="{max(span, 1.0):.2f}" '
                        f'height="{ROW_HEIGHT - 6}" fill="{OUTCOME_COLOURS[key]}"><title>'
                        f'{escape(label)}: {totals[key]:,} {OUTCOME_LABELS[key]} '
                        f'({100 * totals[key] / total:.1f}%)</title></rect>')
            x += span
        body.append(_text(left + PLOT_WIDTH + 6, y + ROW_HEIGHT / 2, f"{total:,}", "start",
                          MUTED, 11))
    axis_top = top + len(rows) * ROW_HEIGHT + 4
    ticks = [(left + PLOT_WIDTH * p / 100, f"{p}") for p in (0, 25, 50, 75, 100)]
    body += _x_axis(left, axis_top, ticks, "% of the table's cells")
    svg = _chart(left + PLOT_WIDTH + 80, axis_top + 40, "cells of each table by outcome", body)
    return svg, caption + " Numbers at the right: cells."


def _legend(left: float, y: float) -> list[str]:
    parts, x = [], left
    for key in OUTCOMES:
        parts.append(f'<rect x="{x:.1f}" y="{y - 5}" width="10" height="10" '
                     f'fill="{OUTCOME_COLOURS[key]}"/>')
        parts.append(_text(x + 14, y, OUTCOME_LABELS[key], "start", INK, 11))
        x += 22 + 7 * len(OUTCOME_LABELS[key])
    return parts


def confidence_by_kind(columns: Sequence[Mapping[str, Any]]) -> tuple[str, str] | None:
    """(svg, caption): every column's confidence as a dot on its kind's line."""
    if not columns:
        return None
    kinds = sorted({str(c.get("kind")) for c in columns})
    lowest = min(float(c.get("confidence", 0)) for c in columns)
    start = min(0.5, max(0.0, lowest - 0.02))
    left, top = 120, 8

    def at(value: float) -> float:
        return left + PLOT_WIDTH * (min(max(value, start), 1.0) - start) / (1.0 - start)

    height = len(kinds) * ROW_HEIGHT
    body = [f'<rect x="{at(a):.1f}" y="{top}" width="{at(b) - at(a):.1f}" height="{height}" '
            f'fill="{colour}"/>' for a, b, colour in
            ((start, LOW, "#f6d5d6"), (LOW, HIGH, "#fbe7bd"), (HIGH, 1.0, "#cfeadf"))
            if b > start]
    for row, kind in enumerate(kinds):
        y = top + row * ROW_HEIGHT + ROW_HEIGHT / 2
        body.append(_text(left - 8, y, kind, "end"))
        values = [float(c.get("confidence", 0)) for c in columns if str(c.get("kind")) == kind]
        names = [str(c.get("name", "")) for c in columns if str(c.get("kind")) == kind]
        for i, (value, name) in enumerate(zip(values, names)):
            # Spread equal values a little so that each column stays visible.
            offset = ((i * 7) % 11 - 5) * 1.2
            body.append(f'<circle cx="{at(value):.1f}" cy="{y + offset:.1f}" r="3" '
                        f'fill="{INK}" fill-opacity="0.75"><title>{escape(name)}: '
                        f'{value:.3f}</title></circle>')
    step = 0.1 if start < 0.5 else 0.05
    marks = [round(start + k * step, 2) for k in range(int((1.0 - start) / step + 1e-9) + 1)]
    ticks = [(at(m), f"{m:g}") for m in marks]
    body += _x_axis(left, top + height, ticks,
                    "confidence (probability that kind and convention are right)")
    caption = (f"Each dot is one of the {len(columns)} column decisions. Red: below {LOW} "
               f"(check it); amber: {LOW} to {HIGH}; green: {HIGH} and above.")
    return _chart(left + PLOT_WIDTH + 20, top + height + 40, "confidence of each column "
                  "decision", body), caption
