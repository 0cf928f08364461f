"""Writing output files so that a failure part-way (disk full, killed) never leaves a truncated
or empty file in place of a good one: write beside it, then rename over it."""

from __future__ import annotations

import os
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import TextIO


@contextmanager
def replaced_atomically(path: str | Path, newline: str | None = None) -> Iterator[TextIO]:
    """A text file (UTF-8) that replaces `path` only when the block finishes; on any error the
    old file (or no file) stays and the partial copy is removed. Errors are the OSError."""
    out = Path(path)
    out.parent.mkdir(parents=True, exist_ok=True)
    tmp = out.with_name(f".{out.name}.{os.getpid()}.tmp")
    try:
        with tmp.open("w", encoding="utf-8", newline=newline) as fh:
            yield fh
        os.replace(tmp, out)
    except BaseException:
        tmp.unlink(missing_ok=True)
        raise
