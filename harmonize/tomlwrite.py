"""A small TOML writer for plan files (the standard library only reads TOML).

Tables are written as sections so that a person editing a plan sees one setting a
line; short dictionaries of plain values are written inline.
"""

from __future__ import annotations

import json
import re
from collections.abc import Mapping
from typing import Any

_BARE_KEY = re.compile(r"^[A-Za-z0-9_-]+$")
INLINE_MAX = 4   # dictionaries with at most this many plain entries are written inline


def key(name: str) -> str:
    return name if _BARE_KEY.match(name) else string(name)


def string(text: str) -> str:
    # JSON's escapes are a subset of TOML basic-string escapes, except that TOML
    # forbids a raw DEL character.
    return json.dumps(text, ensure_ascii=False).replace("\x7f", "\\u007f")


def _is_plain(value: Any) -> bool:
    if isinstance(value, Mapping):
        return len(value) <= INLINE_MAX and all(_is_plain(v) for v in value.values()) and all(
            not isinstance(v, Mapping) for v in value.values())
    if isinstance(value, list | tuple):
        return all(_is_plain(v) and not isinstance(v, Mapping) for v in value)
    return True


def value(item: Any) -> str:
    if isinstance(item, bool):
        return "true" if item else "false"
    if isinstance(item, int | float):
        return repr(item)
    if isinstance(item, str):
        return string(item)
    if isinstance(item, list | tuple):
        return "[" + ", ".join(value(v) for v in item) + "]"
    if isinstance(item, Mapping):
        inner = ", ".join(f"{key(k)} = {value(v)}" for k, v in item.items() if v is not None)
        return "{ " + inner + " }" if inner else "{}"
    raise TypeError(f"cannot write {type(item).__name__} to TOML")


def table(path: str, data: Mapping[str, Any], lines: list[str], header: str = "") -> None:
    """Append ``data`` as the TOML table ``path`` (header written by the caller if given)."""
    if header:
        lines.append(header)
    nested = []
    for name, item in data.items():
        if item is None:
            continue
        if isinstance(item, Mapping) and not _is_plain(item):
            nested.append((name, item))
        else:
            lines.append(f"{key(name)} = {value(item)}")
    for name, item in nested:
        sub = f"{path}.{key(name)}"
        table(sub, item, lines, header=f"[{sub}]")
