"""Tables computed from library data, kept in the user's cache folder between runs.

Building some lookups from CLDR (every locale's currency signs, country names in many
languages) costs a large part of a second per process. Their content depends only on
the library version, so each is stored once as JSON under
``$XDG_CACHE_HOME/harmonize`` (``~/.cache/harmonize``), one file per name and version.
A cache that cannot be read or written is simply rebuilt.
"""

from __future__ import annotations

import contextlib
import json
import os
from collections.abc import Callable
from pathlib import Path
from typing import Any


def cache_folder() -> Path:
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "harmonize"


def cached_json(name: str, version: str, build: Callable[[], Any]) -> Any:
    """``build()``'s JSON-able result, from the cache file when it exists."""
    path = cache_folder() / f"{name}-{version}.json"
    try:
        return json.loads(path.read_text("utf-8"))
    except (OSError, ValueError):
        pass
    value = build()
    with contextlib.suppress(OSError):
        path.parent.mkdir(parents=True, exist_ok=True)
        scratch = path.with_name(f".{path.name}.{os.getpid()}")
        scratch.write_text(json.dumps(value, ensure_ascii=False), "utf-8")
        os.replace(scratch, path)  # atomic: parallel workers never read half a file
    return value
