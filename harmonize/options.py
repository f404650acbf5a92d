"""Run options shared by every engine and by the pipeline."""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import asdict, dataclass, field
from typing import Any

FILL_MODES = ("empty", "raw", "best")


@dataclass(frozen=True)
class Options:
    """Settings a user can give; every field is recorded in the report.

    default_region:  ISO 3166 alpha-2 region for phones and locale hints when the data
                     names none (e.g. "GB").
    date_order:      "DMY", "MDY" or "YMD" to state the order of ambiguous numeric dates.
    locale:          a CLDR locale used as a prior where the data gives no hint ("de_DE").
    unresolved_fill: what an undecided cell holds in the output: "empty", "raw" text, or
                     the "best" reading.
    min_fit:         share of a column's cells an engine must read to claim the column.
    unit_targets:    dimension -> output unit, e.g. {"volume": "L"} (SI when absent).
    year_window:     two-digit years: the century is chosen so the year falls in the 100
                     years from ``year_window - 1`` years before this year to
                     ``100 - year_window`` years after it (default 80: 79 back, 20 ahead).
    missing_words:   extra words that mean "no value" in every column.
    engine:          per-engine options, engine name -> {key: value}.
    neutralise_formulas: text cells a spreadsheet would run as formulas (=, +, -, @, tab,
                     carriage return) are written with a leading quote in CSV and XLSX.
    """

    default_region: str | None = None
    date_order: str | None = None
    locale: str | None = None
    unresolved_fill: str = "empty"
    min_fit: float = 0.8
    unit_targets: Mapping[str, str] = field(default_factory=dict)
    year_window: int = 80
    missing_words: tuple[str, ...] = ()
    engine: Mapping[str, Mapping[str, Any]] = field(default_factory=dict)
    neutralise_formulas: bool = True

    def __post_init__(self) -> None:
        if self.unresolved_fill not in FILL_MODES:
            raise ValueError(f"unresolved_fill must be one of {', '.join(FILL_MODES)}, "
                             f"got {self.unresolved_fill!r}")
        if self.date_order is not None and self.date_order not in ("DMY", "MDY", "YMD"):
            raise ValueError(f"date_order must be DMY, MDY or YMD, got {self.date_order!r}")
        if self.default_region is not None and not (
                len(self.default_region) == 2 and self.default_region.isalpha()):
            raise ValueError(f"default_region must be an ISO 3166 alpha-2 code, "
                             f"got {self.default_region!r}")
        if not 0 < self.min_fit <= 1:
            raise ValueError(f"min_fit must lie in (0, 1], got {self.min_fit!r}")

    def for_engine(self, name: str) -> Mapping[str, Any]:
        return self.engine.get(name, {})

    def to_dict(self) -> dict[str, Any]:
        data = asdict(self)
        data["missing_words"] = list(self.missing_words)
        return data
