"""Run one audit per file in its own child process, several at a time, each with a time and
memory limit, so one PDF that hangs or eats memory is stopped and recorded as failed while
the rest of the batch goes on.

A child is forked from this (already-imported) process, so starting one costs milliseconds.
It audits the file, writes its reports, and sends back the Certificate and CheckResults
(pickled) through a pipe. The parent never does extraction work itself.

Children die with their parent: on Linux each asks the kernel for SIGKILL when the parent
dies (prctl PR_SET_PDEATHSIG) and checks the parent is still the one that forked it; each
closes the read ends of every result pipe it inherited (its own and its siblings'), so a child
blocked handing over a large result gets EPIPE when the parent is gone instead of waiting for
ever. The memory limit is on resident memory: the parent reads each child's own resident
pages (`resident_mb`) while it waits and stops a child over the limit; an address-space limit
of several times the limit (`AS_BACKSTOP`) remains only as a backstop against a sudden
allocation between two readings (and is the limit where /proc is missing).
"""

from __future__ import annotations

import multiprocessing as mp
import os
import pickle
import signal
import sys
import time
import traceback
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass
from multiprocessing.connection import Connection, wait
from pathlib import Path
from typing import Any, cast

from certvet.extractor.errors import InputError


@dataclass(frozen=True)
class Limits:
    seconds: float = 120.0  # wall-clock seconds per file
    memory_mb: int = 2048  # resident-memory limit per child process in MB (0 = none)


AS_BACKSTOP = 4  # address-space backstop: this many times the memory limit, plus BACKSTOP_MB
BACKSTOP_MB = 4096
POLL_SECONDS = 0.05  # how often the parent reads the children's resident memory
_PR_SET_PDEATHSIG = 1  # <linux/prctl.h>
_PAGE = os.sysconf("SC_PAGE_SIZE") if hasattr(os, "sysconf") else 4096


def resident_mb(pid: int) -> float | None:
    """Resident memory of a process that is its own, in MB: its private pages
    (/proc/<pid>/smaps_rollup), so pages a forked child still shares with its parent do not
    count; the whole resident set (statm) where the rollup is missing; None where /proc
    cannot tell."""
    try:
        with open(f"/proc/{pid}/smaps_rollup", encoding="ascii") as fh:
            kb = sum(int(line.split()[1]) for line in fh if line.startswith("Private_"))
        return kb / 1024
    except (OSError, ValueError, IndexError):
        pass
    try:
        with open(f"/proc/{pid}/statm", encoding="ascii") as fh:
            return int(fh.read().split()[1]) * _PAGE / (1024 * 1024)
    except (OSError, ValueError, IndexError):
        return None


def _die_with_parent(parent: int, inherited: Iterable[Connection]) -> None:
    """In a new child: be killed when the parent dies; drop inherited pipe read ends."""
    if sys.platform.startswith("linux"):
        try:
            import ctypes

            libc = ctypes.CDLL(None, use_errno=True)
            libc.prctl(_PR_SET_PDEATHSIG, signal.SIGKILL, 0, 0, 0)
        except (OSError, AttributeError):  # no prctl: the closed pipes still end the child
            pass
    if os.getppid() != parent:  # the parent died before prctl took effect
        os._exit(1)
    for conn in inherited:
        try:
            conn.close()
        except OSError:
            pass


@dataclass
class Outcome:
    path: Path
    result: Any | None  # certvet.api.AuditResult when audited
    error: str | None  # one line naming the file, when failed
    # the InputError behind `error`, when it was one (pickled back from the child or worker):
    # lets the batch tell a report folder it cannot write (ReportWriteError) from a bad PDF
    exception: InputError | None = None


def _child(conn: Connection, job: Callable[[Path], Any], path: Path, memory_mb: int,
           parent: int, inherited: list[Connection]) -> None:
    try:
        _die_with_parent(parent, inherited)
        if memory_mb:
            import resource

            limit = (memory_mb * AS_BACKSTOP + BACKSTOP_MB) * 1024 * 1024
            if resident_mb(os.getpid()) is None:  # nothing to watch resident memory with
                limit = memory_mb * 1024 * 1024
            resource.setrlimit(resource.RLIMIT_AS, (limit, limit))
        result = job(path)
        conn.send(("ok", result, None))
    except InputError as exc:
        try:  # sent only when it comes back whole: the parent must never fail to unpickle
            pickle.loads(pickle.dumps(exc))
            sent: InputError | None = exc
        except Exception:  # its message is enough
            sent = None
        conn.send(("error", str(exc), sent))
    except MemoryError:
        conn.send(("error", f"{path}: stopped: used more than the memory limit", None))
    except BaseException as exc:  # a bug must not lose the rest of the batch
        last = traceback.extract_tb(exc.__traceback__)[-1:] if exc.__traceback__ else []
        where = f" at {last[0].filename}:{last[0].lineno}" if last else ""
        conn.send(("error", f"{path}: internal error ({type(exc).__name__}: {exc}){where}",
                   None))
    finally:
        conn.close()


def run_isolated(
    paths: Iterable[Path],
    job: Callable[[Path], Any],
    *,
    workers: int | None = None,
    limits: Limits = Limits(),
) -> Iterator[Outcome]:
    """Yield one Outcome per path (in completion order); never raises for a bad file."""
    ctx = mp.get_context("fork")
    workers = max(1, workers or os.cpu_count() or 1)
    pending = list(paths)
    pending.reverse()
    running: dict[Connection, tuple[Path, Any, float]] = {}
    parent = os.getpid()

    while pending or running:
        while pending and len(running) < workers:
            path = pending.pop()
            recv, send = ctx.Pipe(duplex=False)
            inherited = [*running, recv]  # read ends the child must not keep open
            proc = ctx.Process(target=_child,
                               args=(send, job, path, limits.memory_mb, parent, inherited),
                               daemon=True)
            proc.start()
            send.close()
            running[recv] = (path, proc, time.monotonic())
        now = time.monotonic()
        deadline = min(start + limits.seconds for _, _, start in running.values())
        wait_for = max(0.0, deadline - now)
        if limits.memory_mb:
            wait_for = min(wait_for, POLL_SECONDS)
        # wait() is typed for any waitable; we only give it our Connections
        ready = cast(list[Connection], wait(list(running), timeout=wait_for))
        for conn in ready:
            path, proc, _ = running.pop(conn)
            try:
                status, payload, exc = conn.recv()
            except (EOFError, OSError):
                proc.join(1)
                code = proc.exitcode
                reason = (
                    "stopped: used more than the memory limit"
                    if code is not None and code < 0
                    else f"worker ended without an answer (exit code {code})"
                )
                yield Outcome(path, None, f"{path}: {reason}")
                continue
            finally:
                conn.close()
            proc.join(5)
            if status == "ok":
                yield Outcome(path, payload, None)
            else:
                yield Outcome(path, None, payload, exc)
        now = time.monotonic()
        for conn, (path, proc, start) in list(running.items()):
            used = resident_mb(proc.pid) if limits.memory_mb else None
            if used is not None and used > limits.memory_mb:
                proc.kill()
                proc.join(5)
                conn.close()
                del running[conn]
                yield Outcome(path, None, f"{path}: stopped: used more than the memory limit "
                                          f"({used:.0f} MB resident, limit {limits.memory_mb} MB)")
                continue
            if now - start >= limits.seconds:
                proc.kill()
                proc.join(5)
                conn.close()
                del running[conn]
                yield Outcome(path, None, f"{path}: stopped after {limits.seconds:g} s "
                                          "(time limit per file)")
