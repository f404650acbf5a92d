"""Plans: the decisions for each file, sheet and column, saved as an editable TOML file.

A plan file looks like this (every field is described in DEVELOPERS.md):

    format = "harmonize-plan"
    version = 1

    [[tables]]
    file = "ledger_march.csv"

    [[tables.columns]]
    name = "Order date"
    kind = "date"
    engine = "dates"
    confidence = 0.998
    missing = ["n/a", "-"]
    convention = { order = "DMY" }

``# why:`` comments after a column header carry the evidence into later reports.
A person may change ``kind``/``engine``, any ``convention`` key, the ``missing`` tokens
or a group's convention; ``apply --plan`` then follows the file exactly.
"""

from __future__ import annotations

import re
import tomllib
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from harmonize import tomlwrite
from harmonize.engines.base import KINDS, Decision, GroupRule

FORMAT = "harmonize-plan"
VERSION = 1
NULL_TEXT = "null"  # TOML has no null: a group's explicit null is written as this text


class PlanError(ValueError):
    """A plan file that cannot be used; the message names the line and the field."""


@dataclass
class ColumnPlan:
    name: str
    kind: str
    engine: str
    confidence: float
    convention: dict[str, Any] = field(default_factory=dict)
    missing: list[str] = field(default_factory=list)
    groups: GroupRule | None = None
    unit: str | None = None
    output_name: str | None = None
    fit: float = 1.0
    evidence: list[str] = field(default_factory=list)
    details: dict[str, Any] = field(default_factory=dict)

    @classmethod
    def from_decision(cls, name: str, decision: Decision, missing: list[str]) -> ColumnPlan:
        return cls(name=name, kind=decision.kind, engine=decision.engine,
                   confidence=round(decision.confidence, 4),
                   convention=dict(decision.convention), missing=missing,
                   groups=decision.groups, unit=decision.unit,
                   output_name=decision.output_name, fit=round(decision.fit, 4),
                   evidence=list(decision.evidence), details=dict(decision.details))

    def to_toml_data(self) -> dict[str, Any]:
        data: dict[str, Any] = {"name": self.name, "kind": self.kind, "engine": self.engine,
                                "confidence": self.confidence, "missing": self.missing,
                                "unit": self.unit, "output_name": self.output_name,
                                "convention": self.convention}
        if self.groups is not None:
            data["groups"] = {"by": self.groups.by, "conventions": {
                label: {k: NULL_TEXT if v is None else v for k, v in conv.items()}
                for label, conv in self.groups.conventions.items()}}
        return data


@dataclass
class TablePlan:
    file: str
    sheet: str | None
    columns: list[ColumnPlan]

    def column(self, name: str) -> ColumnPlan | None:
        return next((c for c in self.columns if c.name == name), None)


@dataclass
class Plan:
    tables: list[TablePlan]
    options: dict[str, Any] = field(default_factory=dict)

    def table_for(self, file: str, sheet: str | None,
                  headers: list[str]) -> TablePlan | None:
        """The entry for a file and sheet; failing that, one with the same headers
        (next month's export under a new name); failing that, the only entry."""
        name = Path(file).name
        for table in self.tables:
            if Path(table.file).name == name and table.sheet == sheet:
                return table
        for table in self.tables:
            if [c.name for c in table.columns] == headers:
                return table
        same_set = [t for t in self.tables if {c.name for c in t.columns} & set(headers)]
        return same_set[0] if len(same_set) == 1 else None


def dumps(plan: Plan) -> str:
    lines = [
        "# harmonize plan: one entry per file/sheet and column.",
        "# Edit kind, engine, convention, missing or a group's convention, then run",
        "#   harmonize apply INPUT --plan THIS_FILE --out DIR",
        "# Lines starting with '# why:' record the evidence behind a decision (shown in reports).",
        f"format = {tomlwrite.string(FORMAT)}",
        f"version = {VERSION}",
    ]
    if plan.options:
        lines.append("")
        tomlwrite.table("options", plan.options, lines, header="[options]")
    for table in plan.tables:
        lines += ["", "[[tables]]", f"file = {tomlwrite.string(table.file)}"]
        if table.sheet is not None:
            lines.append(f"sheet = {tomlwrite.string(table.sheet)}")
        for column in table.columns:
            lines += ["", "[[tables.columns]]"]
            lines += [f"# why: {line}" for line in column.evidence]
            tomlwrite.table("tables.columns", column.to_toml_data(), lines)
    return "\n".join(lines) + "\n"


def save(plan: Plan, path: Path) -> None:
    from harmonize.sources import atomic_write_text
    atomic_write_text(path, dumps(plan))


# ---- reading and validation -------------------------------------------------------

def _column_lines(text: str) -> list[int]:
    """1-based line number of each [[tables.columns]] header, in file order."""
    return [i for i, line in enumerate(text.splitlines(), 1)
            if re.match(r"^\s*\[\[\s*tables\.columns\s*\]\]", line)]


def _why_lines(text: str, header_line: int) -> list[str]:
    """The '# why:' comments right after a column header (1-based line number)."""
    found = []
    for line in text.splitlines()[header_line:]:
        stripped = line.strip()
        if not stripped.startswith("#"):
            break
        if stripped.startswith("# why:"):
            found.append(stripped[len("# why:"):].strip())
    return found


def _field_line(text: str, start: int, name: str) -> int:
    lines = text.splitlines()
    for i in range(start, len(lines)):
        if i > start and lines[i].lstrip().startswith("[["):
            break
        if re.match(rf"^\s*{re.escape(name)}\s*=", lines[i]):
            return i + 1
    return start


def _check(cond: bool, where: str, message: str) -> None:
    if not cond:
        raise PlanError(f"{where}: {message}")


def _read_groups(data: Any, where: str) -> GroupRule | None:
    if data is None:
        return None
    _check(isinstance(data, Mapping) and isinstance(data.get("by"), str), where,
           "field 'groups' needs 'by' (a column name) and 'conventions'")
    conventions = data.get("conventions", {})
    _check(isinstance(conventions, Mapping) and all(isinstance(v, Mapping)
                                                    for v in conventions.values()),
           where, "field 'groups.conventions' must map each group label to a table")
    return GroupRule(by=data["by"], conventions={
        str(label): {k: None if v == NULL_TEXT else v for k, v in conv.items()}
        for label, conv in conventions.items()})


def _read_column(data: Mapping[str, Any], where: str, text: str, line: int) -> ColumnPlan:
    def at(name: str) -> str:
        return f"{where} line {_field_line(text, line - 1, name)}, field '{name}'"

    for name in ("name", "kind", "engine"):
        _check(isinstance(data.get(name), str), at(name), "required text is missing")
    _check(data["kind"] in KINDS, at("kind"),
           f"unknown kind {data['kind']!r}; expected one of {', '.join(KINDS)}")
    from harmonize.engines import engine_named
    try:
        engine_named(data["engine"])
    except KeyError:
        if data["kind"] != "empty":
            raise PlanError(f"{at('engine')}: unknown engine {data['engine']!r}") from None
    confidence = data.get("confidence", 1.0)
    _check(isinstance(confidence, int | float) and 0 <= confidence <= 1, at("confidence"),
           "must be a number between 0 and 1")
    convention = data.get("convention", {})
    _check(isinstance(convention, Mapping), at("convention"), "must be a table")
    convention = {k: None if v == NULL_TEXT else v for k, v in convention.items()}
    groups = _read_groups(data.get("groups"), at("groups"))
    _check_conventions(data["engine"], convention, groups, at)
    missing = data.get("missing", [])
    _check(isinstance(missing, list) and all(isinstance(m, str) for m in missing),
           at("missing"), "must be a list of text")
    for name in ("unit", "output_name"):
        _check(data.get(name) is None or isinstance(data[name], str), at(name), "must be text")
    return ColumnPlan(name=data["name"], kind=data["kind"], engine=data["engine"],
                      confidence=float(confidence), convention=dict(convention),
                      missing=[m.strip().lower() for m in missing],
                      groups=groups,
                      unit=data.get("unit"), output_name=data.get("output_name"),
                      evidence=_why_lines(text, line))


def _check_conventions(engine_name: str, convention: Mapping[str, Any],
                       groups: GroupRule | None, at: Callable[[str], str]) -> None:
    """The engine's own check of the convention, and of each group's merged convention."""
    from harmonize.engines import engine_named
    from harmonize.engines.base import convention_problems
    try:
        engine = engine_named(engine_name)
    except KeyError:
        return
    problems = convention_problems(engine, convention)
    if problems:  # each problem starts with its key: point at that key's line
        key = re.split(r"[\s:]", problems[0], maxsplit=1)[0]
        raise PlanError(f"{at(key)} in the convention: {'; '.join(problems)}")
    for label, part in (groups.conventions.items() if groups else ()):
        problems = convention_problems(engine, {**convention, **part})
        _check(not problems, at("groups"), f"group {label!r}: {'; '.join(problems)}")


def loads(text: str, source: str = "<plan>") -> Plan:
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise PlanError(f"{source}: not a valid plan file: {exc}") from None
    _check(data.get("format") == FORMAT, f"{source}: field 'format'",
           f"expected {FORMAT!r}; is this a harmonize plan?")
    _check(data.get("version") == VERSION, f"{source}: field 'version'",
           f"this harmonize reads plan version {VERSION}, the file says {data.get('version')!r}")
    lines = iter(_column_lines(text))
    tables = []
    for t_index, table in enumerate(data.get("tables", []), 1):
        where = f"{source}: table {t_index}"
        _check(isinstance(table.get("file"), str), f"{where}, field 'file'", "required")
        columns = [_read_column(col, f"{source}", text, next(lines, 1))
                   for col in table.get("columns", [])]
        tables.append(TablePlan(file=table["file"], sheet=table.get("sheet"), columns=columns))
    options = data.get("options", {})
    _check(isinstance(options, Mapping), f"{source}: field 'options'", "must be a table")
    return Plan(tables=tables, options=dict(options))


def load(path: Path) -> Plan:
    try:
        text = Path(path).read_text(encoding="utf-8")
    except OSError as exc:
        raise PlanError(f"{path}: cannot read the plan: {exc.strerror}") from None
    return loads(text, source=str(path))
