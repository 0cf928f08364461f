"""Run one audit per file in its own child process, several at a time, each with a time and
memory limit, so one PDF that hangs or eats memory is stopped and recorded as failed while
the rest of the batch goes on.

A child is forked from this (already-imported) process, so starting one costs milliseconds.
It audits the file, writes its reports, and sends back the Certificate and CheckResults
(pickled) through a pipe. The parent never does extraction work itself.
"""

from __future__ import annotations

import multiprocessing as mp
import os
import pickle
import traceback
from collections.abc import Callable, Iterable, Iterator
from dataclasses import dataclass
from multiprocessing.connection import Connection, wait
from pathlib import Path
from typing import Any, cast

from extractor.errors import InputError


@dataclass(frozen=True)
class Limits:
    seconds: float = 120.0  # wall-clock seconds per file
    memory_mb: int = 2048  # address-space limit per child process (0 = none)


@dataclass
class Outcome:
    path: Path
    result: Any | None  # certvet.api.AuditResult when audited
    error: str | None  # one line naming the file, when failed
    # the InputError behind `error`, when it was one (pickled back from the child or worker):
    # lets the batch tell a report folder it cannot write (ReportWriteError) from a bad PDF
    exception: InputError | None = None


def _child(conn: Connection, job: Callable[[Path], Any], path: Path, memory_mb: int) -> None:
    try:
        if memory_mb:
            import resource

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
    import time

    while pending or running:
        while pending and len(running) < workers:
            path = pending.pop()
            recv, send = ctx.Pipe(duplex=False)
            proc = ctx.Process(target=_child, args=(send, job, path, limits.memory_mb),
                               daemon=True)
            proc.start()
            send.close()
            running[recv] = (path, proc, time.monotonic())
        now = time.monotonic()
        deadline = min(start + limits.seconds for _, _, start in running.values())
        # wait() is typed for any waitable; we only give it our Connections
        ready = cast(list[Connection], wait(list(running), timeout=max(0.0, deadline - now)))
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
            if now - start >= limits.seconds:
                proc.kill()
                proc.join(5)
                conn.close()
                del running[conn]
                yield Outcome(path, None, f"{path}: stopped after {limits.seconds:g} s "
                                          "(time limit per file)")
