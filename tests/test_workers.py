"""Per-file isolation: a file that hangs or eats memory is stopped and recorded as failed,
and every other file still ends audited (nothing lost)."""

from __future__ import annotations

import time
from pathlib import Path

from certvet.workers import Limits, run_isolated
from extractor.errors import InputError


def _job(path: Path) -> str:
    name = path.name
    if name.startswith("hang"):
        time.sleep(60)
    if name.startswith("hog"):
        blocks = []
        while True:  # grows until the address-space limit stops it
            blocks.append(bytearray(50 * 1024 * 1024))
    if name.startswith("bad"):
        raise InputError(str(path), "not a PDF (no %PDF header)")
    if name.startswith("bug"):
        raise RuntimeError("boom")
    return f"audited {name}"


def test_every_file_ends_audited_or_failed_with_reason() -> None:
    names = ["a.pdf", "hang.pdf", "b.pdf", "hog.pdf", "bad.pdf", "bug.pdf", "c.pdf"]
    outcomes = list(
        run_isolated([Path(n) for n in names], _job, workers=2,
                     limits=Limits(seconds=2.0, memory_mb=400))
    )
    assert sorted(o.path.name for o in outcomes) == sorted(names)
    by = {o.path.name: o for o in outcomes}
    for ok in ("a.pdf", "b.pdf", "c.pdf"):
        assert by[ok].result == f"audited {ok}" and by[ok].error is None
    assert "time limit" in by["hang.pdf"].error
    assert "memory" in by["hog.pdf"].error
    assert by["bad.pdf"].error == "bad.pdf: not a PDF (no %PDF header)"
    assert "internal error" in by["bug.pdf"].error and "boom" in by["bug.pdf"].error
    for o in outcomes:
        if o.error:
            assert "\n" not in o.error and o.error.startswith(o.path.name)
