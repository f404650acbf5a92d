"""Figures of the HTML report, all inline SVG.

Two run-wide charts are drawn with matplotlib (outcomes per table, confidence of every
column decision). The per-column figures (outcome bar, confidence gauge) are a few SVG
rectangles written directly: a report of 500 columns needs them in microseconds each,
which a matplotlib figure per column (tens of milliseconds) could not give.
"""

from __future__ import annotations

import io
import re
from collections.abc import Mapping, Sequence
from html import escape
from typing import Any

from harmonize.html_assets import OUTCOME_COLOURS, OUTCOME_LABELS

OUTCOMES = ("converted", "missing", "unresolved", "passed")
LOW, HIGH = 0.8, 0.95          # confidence bands: below LOW check it; from HIGH on, solid
MAX_TABLE_BARS = 25            # tables drawn in the outcome chart; the rest are summarised
LABEL_CHARS = 38
_METADATA = re.compile(r"\s*<metadata>.*?</metadata>", re.DOTALL)


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


# ---------------------------------------------------------------- run-wide, matplotlib


def _short(text: str) -> str:
    return text if len(text) <= LABEL_CHARS else text[: LABEL_CHARS - 1] + "\u2026"


def _svg_of(figure: Any, salt: str) -> str:
    """The figure as an inline <svg> element: text kept as text, ids unique to the figure."""
    import matplotlib
    buffer = io.StringIO()
    with matplotlib.rc_context({"svg.fonttype": "none", "svg.hashsalt": salt}):
        figure.savefig(buffer, format="svg", metadata={"Date": None}, bbox_inches="tight")
    text = buffer.getvalue()
    # Inline in HTML the XML prologue and the RDF metadata block serve no purpose.
    return _METADATA.sub("", text[text.index("<svg"):], count=1)


def _new_figure(width: float, height: float) -> Any:
    # The Figure API draws without pyplot: no global state, no display, no GUI backend.
    from matplotlib.figure import Figure
    return Figure(figsize=(width, height), dpi=96)


def _table_label(entry: Mapping[str, Any]) -> str:
    sheet = entry.get("sheet")
    return _short(str(entry.get("input", "")) + (f" [{sheet}]" if sheet else ""))


def _table_totals(entry: Mapping[str, Any]) -> dict[str, int]:
    totals = dict.fromkeys(OUTCOMES, 0)
    for column in entry.get("columns", []):
        for key in OUTCOMES:
            totals[key] += int(column.get("counts", {}).get(key, 0))
    return totals


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
    rows.reverse()  # matplotlib draws the first bar at the bottom
    import matplotlib
    with matplotlib.rc_context({"text.parse_math": False, "font.size": 9}):
        figure = _new_figure(7.2, 0.9 + 0.27 * len(rows))
        axes = figure.add_subplot()
        left = [0.0] * len(rows)
        for key in OUTCOMES:
            shares = [100 * t[key] / sum(t.values()) for _, t in rows]
            axes.barh(range(len(rows)), shares, left=left, height=0.72,
                      color=OUTCOME_COLOURS[key], label=OUTCOME_LABELS[key])
            left = [a + b for a, b in zip(left, shares)]
        axes.set_yticks(range(len(rows)), [label for label, _ in rows])
        axes.set_xlim(0, 100)
        axes.set_xlabel("% of the table's cells")
        for spine in ("top", "right"):
            axes.spines[spine].set_visible(False)
        for y, (_, totals) in enumerate(rows):
            axes.text(101, y, f"{sum(totals.values()):,}", va="center", fontsize=8,
                      color="#5b6476")
        axes.legend(ncols=4, loc="lower left", bbox_to_anchor=(0, 1.0), frameon=False,
                    fontsize=8)
        return _svg_of(figure, "outcomes"), caption + " Numbers at the right: cells."


def confidence_by_kind(columns: Sequence[Mapping[str, Any]]) -> tuple[str, str] | None:
    """(svg, caption): every column's confidence as a dot on its kind's line."""
    if not columns:
        return None
    kinds = sorted({str(c.get("kind")) for c in columns})
    import matplotlib
    with matplotlib.rc_context({"text.parse_math": False, "font.size": 9}):
        figure = _new_figure(6.0, 0.9 + 0.32 * len(kinds))
        axes = figure.add_subplot()
        axes.axvspan(0, LOW, color="#f6d5d6", zorder=0)
        axes.axvspan(LOW, HIGH, color="#fbe7bd", zorder=0)
        axes.axvspan(HIGH, 1.0, color="#cfeadf", zorder=0)
        for row, kind in enumerate(kinds):
            values = [float(c.get("confidence", 0)) for c in columns if str(c.get("kind")) == kind]
            # Spread equal values a little so that each column stays visible.
            offsets = [((i * 7) % 11 - 5) * 0.035 for i in range(len(values))]
            axes.scatter(values, [row + o for o in offsets], s=16, color="#1f2a44",
                         alpha=0.75, linewidths=0, zorder=2)
        axes.set_yticks(range(len(kinds)), kinds)
        axes.set_ylim(-0.6, len(kinds) - 0.4)
        lowest = min(float(c.get("confidence", 0)) for c in columns)
        axes.set_xlim(min(0.5, lowest - 0.02), 1.0)
        axes.set_xlabel("confidence (probability that kind and convention are right)")
        for spine in ("top", "right"):
            axes.spines[spine].set_visible(False)
        caption = (f"Each dot is one of the {len(columns)} column decisions. Red: below {LOW} "
                   f"(check it); amber: {LOW} to {HIGH}; green: {HIGH} and above.")
        return _svg_of(figure, "confidence"), caption
