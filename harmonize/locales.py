"""Plain-text word lists that CLDR does not carry (missing-value words, boolean words,
unit names, magnitude words ...), loaded lazily from ``harmonize/locales/*.txt``.

File format (documented again at the top of each file):

    # comment lines and blank lines are ignored
    <key>: <entry> | <entry> | ...

``key`` is usually a language code (``en``, ``de``) or a canonical name (a unit, a
value); entries are separated by `` | `` so that they may contain commas and dots.
"""

from __future__ import annotations

from functools import cache
from importlib import resources


class LocaleDataError(ValueError):
    """A malformed line in a word list."""


@cache
def load_entries(name: str) -> dict[str, tuple[str, ...]]:
    """Read ``locales/<name>.txt`` into key -> entries (order kept, keys may repeat)."""
    folder = resources.files("harmonize").joinpath("locales")
    text = folder.joinpath(f"{name}.txt").read_text("utf-8")
    table: dict[str, list[str]] = {}
    for number, line in enumerate(text.splitlines(), start=1):
        stripped = line.strip()
        if not stripped or stripped.startswith("#"):
            continue
        key, sep, rest = stripped.partition(":")
        if not sep or not key.strip():
            raise LocaleDataError(f"locales/{name}.txt line {number}: expected 'key: a | b'")
        entries = [e.strip() for e in rest.split(" | ") if e.strip()]
        table.setdefault(key.strip(), []).extend(entries)
    return {k: tuple(v) for k, v in table.items()}


def all_entries(name: str) -> frozenset[str]:
    """Every entry of a list, whatever its key."""
    return frozenset(e for entries in load_entries(name).values() for e in entries)
