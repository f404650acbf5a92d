"""The run report: what was decided per column, what became of every cell, and the list
of cells left undecided. Written as JSON (validated against ``report.schema.json``),
as ``unresolved.csv``, and drawn as HTML by ``harmonize.html``.
"""

from __future__ import annotations

import csv
import hashlib
import io
import json
import platform
from functools import cache
from importlib import resources
from pathlib import Path
from typing import Any

import jsonschema

from harmonize import __version__
from harmonize.apply import ColumnResult, TableResult
from harmonize.safety import neutralise_cell

REPORT_NAME = "harmonize-report.json"
UNRESOLVED_NAME = "unresolved.csv"
HTML_NAME = "harmonize-report.html"
CAUTION = ("Converted quantities, temperatures and dates used for dosing, structural loads "
           "or other safety-critical work must be verified against the source; defer to "
           "local codes and licensed practice.")
UNRESOLVED_FIELDS = ("file", "sheet", "row", "column", "value", "reason", "candidates")


@cache
def schema() -> dict[str, Any]:
    text = resources.files("harmonize").joinpath("report.schema.json").read_text("utf-8")
    return json.loads(text)


def validate(report: dict[str, Any]) -> None:
    """Raise jsonschema.ValidationError when the report breaks the published contract."""
    jsonschema.validate(report, schema())


def sha256_file(path: Path) -> str:
    digest = hashlib.sha256()
    with open(path, "rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()


def provenance() -> dict[str, str]:
    """Versions whose data changes answers: CLDR, pint's units, phone metadata."""
    import babel
    import pandas
    import phonenumbers
    import pint
    from babel.core import get_cldr_version
    return {"harmonize": __version__, "python": platform.python_version(),
            "pandas": pandas.__version__, "babel": babel.__version__,
            "cldr": str(get_cldr_version()), "pint": pint.__version__,
            "phonenumbers": phonenumbers.__version__}


def column_entry(result: ColumnResult) -> dict[str, Any]:
    plan = result.plan
    details = {**plan.convention, **plan.details}
    if plan.groups is not None:
        details["groups"] = {"by": plan.groups.by,
                             "conventions": {k: dict(v) for k, v in
                                             plan.groups.conventions.items()}}
    entry: dict[str, Any] = {
        "name": plan.name, "output_name": result.output_name, "kind": plan.kind,
        "confidence": plan.confidence, "unit": plan.unit, "details": details,
        "engine": plan.engine, "evidence": list(plan.evidence), "counts": result.counts(),
        "missing": result.missing,
        "examples": [{"raw": raw, "output": out} for raw, out in result.examples],
    }
    if result.extra_lookup:
        entry["companions"] = list(result.extra_lookup)
    if result.drift:
        entry["drift"] = list(result.drift)
    return entry


def table_entry(result: TableResult, *, input_name: str, sheet: str | None,
                output: str | None, header_row: int = 1,
                warnings: list[str] | None = None) -> tuple[dict, list[dict]]:
    """The report entry for one table, and its unresolved cells."""
    entry = {"input": input_name, "sheet": sheet, "output": output,
             "rows": result.n_rows, "header_row": header_row,
             "columns": [column_entry(c) for c in result.columns],
             "warnings": list(warnings or []), "drift": list(result.drift)}
    unresolved = [unresolved_entry(cell, file=input_name, sheet=sheet, column=column.plan.name,
                                   header_row=header_row)
                  for column in result.columns for cell in column.unresolved]
    return entry, unresolved


def unresolved_entry(cell: dict[str, Any], *, file: str, sheet: str | None, column: str,
                     header_row: int = 1) -> dict[str, Any]:
    """One undecided cell as the report lists it; ``cell["offset"]`` counts data rows
    from 0, ``row`` is the spreadsheet row (header = ``header_row``)."""
    return {"file": file, "sheet": sheet, "row": header_row + 1 + cell["offset"],
            "column": column, "value": cell["value"], "reason": cell["reason"],
            "candidates": list(cell["candidates"]), "best": cell.get("best")}


def summarise(files: list[dict[str, Any]]) -> dict[str, int]:
    totals = {"tables": len(files), "cells": 0, "converted": 0, "missing": 0,
              "unresolved": 0, "passed": 0}
    for entry in files:
        for column in entry["columns"]:
            for label, count in column.get("counts", {}).items():
                totals[label] = totals.get(label, 0) + count
                totals["cells"] += count
    return totals


def unresolved_csv(rows: list[dict[str, Any]]) -> str:
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\n")
    writer.writerow(UNRESOLVED_FIELDS)
    for row in rows:  # raw payloads from the inputs land here: neutralise them too
        writer.writerow([neutralise_cell(str(field)) for field in (
            row["file"], row["sheet"] or "", row["row"], row["column"], row["value"],
            row["reason"], " | ".join(row["candidates"]))])
    return buffer.getvalue()
