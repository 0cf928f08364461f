"""Per-file isolation: a file that hangs or eats memory is stopped and recorded as failed,
and every other file still ends audited (nothing lost)."""

from __future__ import annotations

import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import pytest

from certvet.extractor.errors import InputError
from certvet.workers import Limits, run_isolated


def _job(path: Path) -> str:
    name = path.name
    if name.startswith("hang"):
        time.sleep(60)
    if name.startswith("hog"):
        blocks = []
        while True:  # resident memory grows until the limit stops it
            blocks.append(b"\x01" * (50 * 1024 * 1024))
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


_ORPHAN_SCRIPT = r"""
import os, sys, time
from pathlib import Path
from certvet.workers import Limits, run_isolated

pids = Path(sys.argv[1])

def job(path):
    (pids / f"{os.getpid()}.pid").write_text(path.name)
    if path.name.startswith("quick"):
        return "done"
    if path.name.startswith("big"):
        time.sleep(1)  # after the parent has taken the quick result and stopped reading
        return b"x" * (64 * 1024 * 1024)  # far larger than a pipe holds: blocks in send
    time.sleep(120)

files = [Path("quick-1"), Path("big-2"), Path("sleep-3")]
for outcome in run_isolated(files, job, workers=3, limits=Limits(seconds=300, memory_mb=0)):
    time.sleep(300)  # the parent is busy: the big result waits in the pipe
"""


def _alive(pid: int) -> bool:
    try:
        with open(f"/proc/{pid}/stat", encoding="ascii") as fh:
            return fh.read().split()[2] != "Z"
    except OSError:
        return False


@pytest.mark.skipif(not sys.platform.startswith("linux"), reason="reads /proc")
def test_children_die_with_a_killed_parent(tmp_path: Path) -> None:
    """kill -9 of the parent: no child lingers, neither one blocked handing over a large
    result nor one still working (polled for up to 30 s; no timing is asserted)."""
    root = Path(__file__).resolve().parents[1]
    parent = subprocess.Popen([sys.executable, "-c", _ORPHAN_SCRIPT, str(tmp_path)], cwd=root)
    try:
        for _ in range(600):
            if len(list(tmp_path.glob("*.pid"))) == 3:
                break
            time.sleep(0.05)
        children = [int(p.stem) for p in tmp_path.glob("*.pid")]
        assert len(children) == 3
        time.sleep(2.0)  # the quick child is done; the big one is blocked handing over
        assert any(_alive(pid) for pid in children)
    finally:
        parent.kill()
        parent.wait()
    for _ in range(600):
        if not any(_alive(pid) for pid in children):
            break
        time.sleep(0.05)
    lingering = [pid for pid in children if _alive(pid)]
    for pid in lingering:
        os.kill(pid, signal.SIGKILL)
    assert lingering == []
