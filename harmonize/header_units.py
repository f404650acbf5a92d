"""A row of units under the header: "Weight | Price" above "kg | EUR".

Technical and logistics sheets often write each column's unit in the row below its name.
Read as data, that row would be one stray text cell in every numeric column, and the
numbers below it would lose their unit. When the first row under the header is such a
row, its units join the header ("Weight (kg)", "Price (EUR)"), where the engines read a
header's unit, and the row is not read as data (the report says so).

The row counts as units only when it shows it plainly: every non-empty cell is a unit (a
unit symbol or name the units engine knows, an ISO 4217 currency code or sign, "%"), or
is written in brackets, no cell is a number, and the columns with a unit hold numbers in
the rows below.
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from functools import cache

from harmonize.delimited import NUMERIC_FIELD

ROWS_LOOKED_AT = 20   # rows under the units row that must show numbers
_BRACKETED = re.compile(r"^\s*[(\[{](.+)[)\]}]\s*$")
_NUMBERISH = re.compile(r"^[-+−(]?\s*\D{0,4}\s*[\d.,'’\s]*\d[\d.,'’\s]*\s*\D{0,6}$")


@cache
def _currencies() -> frozenset[str]:
    from babel.numbers import get_currency_symbol, list_currencies
    codes = set(list_currencies())
    return frozenset(codes | {get_currency_symbol(c, "en") for c in codes} | {"€", "$", "£",
                                                                               "¥"})


def _unit_of(cell: str) -> str | None:
    """The unit a cell of a units row names, without brackets; None when it names none."""
    text = cell.strip()
    bracketed = _BRACKETED.match(text)
    inner = bracketed.group(1).strip() if bracketed else text
    if not inner or NUMERIC_FIELD.fullmatch(inner):
        return None
    if inner == "%" or inner.upper() in _currencies() or inner in _currencies():
        return inner
    from harmonize.engines.units_parse import header_unit
    if header_unit(f"x ({inner})") is not None:
        return inner
    return inner if bracketed else None


def names_with_units(header: Sequence[str], rows: Sequence[Sequence[str]]) -> list[str] | None:
    """The header's names with the units of ``rows[0]`` joined, when ``rows[0]`` is a row
    of units (see the module's text); None otherwise."""
    if len(rows) < 2:
        return None
    first = [str(c) for c in rows[0]]
    filled = [i for i, c in enumerate(first) if c.strip()]
    if not filled:
        return None
    units = {i: _unit_of(first[i]) for i in filled}
    if any(u is None for u in units.values()):
        return None
    below = rows[1:1 + ROWS_LOOKED_AT]
    for i in units:
        cells = [str(r[i]).strip() for r in below if i < len(r) and str(r[i]).strip()]
        if not cells or sum(bool(_NUMBERISH.match(c)) for c in cells) < len(cells) / 2:
            return None
    from harmonize.engines.units_parse import header_unit
    names = list(header)
    for i, unit in units.items():
        if i < len(names) and header_unit(names[i]) is None:   # not "Weight (kg) (kg)"
            names[i] = f"{names[i]} ({unit})"
    return names


def units_note(header_row: int) -> str:
    return f"row {header_row + 1} holds the columns' units: joined to the header, not read as data"
