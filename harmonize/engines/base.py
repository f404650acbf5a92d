"""The protocol every engine speaks.

An engine looks at one column's *distinct* values (``ColumnEvidence``) and its
surroundings (``Context``) and may answer with a ``Decision``: what kind of values
the column holds, the convention they follow, and how sure it is. Applying a
decision calls ``convert`` once on the distinct raw strings; the caller maps the
results back onto the rows. ``convert`` must depend only on its arguments, so that a
saved plan re-applied to next month's data gives the same answer for the same value.

Adding a kind of value means adding one module with a class that has ``name``,
``propose`` and ``convert``, and listing it in ``harmonize.engines.ENGINES``.
"""

from __future__ import annotations

import enum
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Any, ClassVar, Protocol

import numpy as np

if TYPE_CHECKING:
    from harmonize.context import Context
    from harmonize.evidence import ColumnEvidence

KINDS = ("date", "datetime", "time", "number", "quantity", "phone", "boolean", "text",
         "identifier", "empty")


class Outcome(enum.IntEnum):
    """What became of a cell. Every input cell ends in exactly one of these."""

    CONVERTED = 0
    MISSING = 1
    UNRESOLVED = 2
    PASSED = 3

    @property
    def label(self) -> str:
        return ("converted", "missing", "unresolved", "passed")[self]


@dataclass(frozen=True)
class GroupRule:
    """Per-group conventions: rows are split by the value of column ``by``.

    ``conventions`` maps a group label (the by-column's trimmed value) to the keys that
    differ from the column's base convention. Labels not listed use the base convention.
    """

    by: str
    conventions: Mapping[str, Mapping[str, Any]]

    def convention_for(self, base: Mapping[str, Any], label: str) -> dict[str, Any]:
        return {**base, **self.conventions.get(label, {})}


@dataclass(frozen=True)
class Decision:
    """An engine's answer for one column.

    fit:        share of the column's non-missing cells (weighted by count) that the
                engine can read under this decision; used to pick the winning engine.
    confidence: probability that kind *and* convention are right (calibrated).
    convention: everything ``convert`` needs; plain JSON/TOML values; a person may edit it.
    evidence:   short sentences saying why, shown in reports.
    details:    extra JSON-able facts for the report (the convention is added to it).
    """

    kind: str
    engine: str
    fit: float
    confidence: float
    convention: Mapping[str, Any] = field(default_factory=dict)
    groups: GroupRule | None = None
    evidence: tuple[str, ...] = ()
    details: Mapping[str, Any] = field(default_factory=dict)
    unit: str | None = None
    output_name: str | None = None

    def __post_init__(self) -> None:
        if self.kind not in KINDS:
            raise ValueError(f"unknown kind {self.kind!r}; expected one of {', '.join(KINDS)}")
        for name in ("fit", "confidence"):
            value = getattr(self, name)
            if not 0.0 <= value <= 1.0:
                raise ValueError(f"{name} must lie in [0, 1], got {value!r}")


@dataclass
class Converted:
    """Results of converting distinct values, aligned with the ``values`` given.

    text:       output text per value ("" where there is none).
    outcome:    an ``Outcome`` per value (int8 array).
    reasons:    index -> why the value is unresolved (or passed through).
    candidates: index -> the readings an unresolved value allows (output text each).
    best:       index -> the most likely reading of an unresolved value, if any.
    extra:      companion output columns, suffix -> text per value (e.g. a currency).
    """

    text: list[str]
    outcome: np.ndarray
    reasons: dict[int, str] = field(default_factory=dict)
    candidates: dict[int, list[str]] = field(default_factory=dict)
    best: dict[int, str] = field(default_factory=dict)
    extra: dict[str, list[str]] = field(default_factory=dict)

    @classmethod
    def empty(cls, n: int) -> Converted:
        """Start with every value passed through unchanged; engines fill it in."""
        return cls(text=[""] * n, outcome=np.full(n, Outcome.PASSED, dtype=np.int8))

    def set(self, i: int, text: str, outcome: Outcome = Outcome.CONVERTED) -> None:
        self.text[i] = text
        self.outcome[i] = outcome

    def unresolved(self, i: int, reason: str, candidates: Sequence[str] = (),
                   best: str | None = None) -> None:
        self.text[i] = ""
        self.outcome[i] = Outcome.UNRESOLVED
        self.reasons[i] = reason
        if candidates:
            self.candidates[i] = list(candidates)
        if best is not None:
            self.best[i] = best


class Engine(Protocol):
    """One kind of value. Stateless; instances are shared."""

    name: ClassVar[str]

    def propose(self, column: ColumnEvidence, context: Context) -> Decision | None:
        """Read the evidence and answer, or return None when the column is not ours."""
        ...

    def convert(self, values: Sequence[str], convention: Mapping[str, Any]) -> Converted:
        """Convert distinct raw values (never missing ones) under ``convention``."""
        ...


def companions_of(engine: Engine, convention: Mapping[str, Any]) -> tuple[str, ...]:
    """Suffixes of the companion columns an engine writes under a convention.

    Optional part of the protocol (``companions(convention)``): declaring them lets every
    chunk, partition and empty table carry the same columns, whatever its values.
    """
    declare = getattr(engine, "companions", None)
    return tuple(declare(convention)) if declare else ()


def convention_problems(engine: Engine, convention: Mapping[str, Any]) -> list[str]:
    """What is wrong with a convention a person wrote in a plan, in plain words.

    Optional part of the protocol (``problems(convention)``): a plan file is edited by
    hand, and a bad value should stop the run at load time with the plan's line number,
    not fail on the first cell it meets.
    """
    check = getattr(engine, "problems", None)
    return list(check(convention)) if check else []
