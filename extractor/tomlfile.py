"""Reading the project's TOML files (layouts, rule profiles) with limits on size and nesting.

A layout or profile is a few kilobytes with tables two or three levels deep; a file far
larger, or nested far deeper (which makes the TOML parser recurse until Python stops it), is
refused with one line before or instead of parsing it.
"""

from __future__ import annotations

import tomllib
from typing import Any

MAX_BYTES = 1_000_000  # common practice, no source: the largest bundled layout is under 10 kB
MAX_DEPTH = 8  # tables and arrays inside one another


class TomlProblem(ValueError):
    """Why a TOML text was refused (the caller adds the file name)."""


def _depth(value: Any) -> int:
    if isinstance(value, dict):
        return 1 + max((_depth(v) for v in value.values()), default=0)
    if isinstance(value, list):
        return 1 + max((_depth(v) for v in value), default=0)
    return 0


def parse_toml(text: str) -> dict[str, Any]:
    """The parsed document; raises TomlProblem naming what is wrong."""
    size = len(text.encode("utf-8"))
    if size > MAX_BYTES:
        raise TomlProblem(f"file too large ({size:,} bytes; at most {MAX_BYTES:,})")
    # the brackets opened before any closes bound the nesting: refuse before recursing
    depth = peak = 0
    for ch in text:
        if ch in "[{":
            depth += 1
            peak = max(peak, depth)
        elif ch in "]}":
            depth = max(0, depth - 1)
    try:
        data = tomllib.loads(text) if peak <= 4 * MAX_DEPTH else None
    except tomllib.TOMLDecodeError as exc:
        raise TomlProblem(f"not valid TOML: {exc}") from None
    except RecursionError:
        data = None
    if data is None or _depth(data) > MAX_DEPTH:
        raise TomlProblem(f"nested too deeply (at most {MAX_DEPTH} levels of tables and arrays)")
    return data
