"""The batch on an existing dask.distributed cluster (given its scheduler address).

Only the per-file work is distributed: choosing the layout, extraction, the per-certificate
checks and rendering the certificate's own reports. Each task receives the PDF's bytes (the
workers need not see the client's files) and sends back the AuditResult plus the report files'
bytes; the client writes the reports into its out_dir and alone writes the store, exactly as a
local run does (certvet.batch). Yields the same `certvet.workers.Outcome`s as
`run_isolated`, so the rest of the batch cannot tell the difference.

Limits on a cluster: the time limit is enforced by the client (a task not back in time is
cancelled and the file recorded as failed; Dask cannot stop a task already running on a
worker, so that worker stays busy until it finishes). Memory is the cluster's own
`memory_limit` per worker: a worker that dies on a file makes its task fail, and the file is
recorded as failed with the reason.

dask is imported here only, and this module only when a scheduler is given.
"""

from __future__ import annotations

import tempfile
import time
from collections.abc import Iterator, Sequence
from pathlib import Path
from typing import Any

from certvet.extractor.errors import InputError
from certvet.workers import Limits, Outcome

IN_FLIGHT_PER_WORKER = 2  # tasks submitted ahead per worker: bounds the client's memory


def remote_audit(job: Any, name: str, data: bytes
                 ) -> tuple[str, Any, dict[str, bytes], InputError | None]:
    """Runs on a worker: ("ok", AuditResult, {report file name: bytes}, None) or
    ("error", reason, {}, the InputError behind it or None)."""
    from dataclasses import replace

    original = Path(name)
    with tempfile.TemporaryDirectory(prefix="certvet-") as tmp:
        pdf = Path(tmp) / original.name
        pdf.write_bytes(data)
        reports = Path(tmp) / "reports"
        try:
            result = replace(job, reports_dir=None)(pdf)
            # the certificate names the client's file, not the worker's temporary copy
            result.source = original
            result.certificate.source = str(original)
            files: dict[str, bytes] = {}
            if job.reports_dir is not None:
                written = job.write_reports(result, reports)
                files = {key: p.read_bytes() for key, p in written.items()}
                result.outputs = {key: Path(job.reports_dir) / p.name
                                  for key, p in written.items()}
            return "ok", result, files, None
        except InputError as exc:
            try:  # the same error, naming the client's file
                named = type(exc)(str(original), exc.reason.replace(str(pdf), str(original)))
            except Exception:
                named = None
            return "error", str(exc).replace(str(pdf), str(original)), {}, named
        except Exception as exc:  # a bug must not lose the rest of the batch
            return ("error", f"{original}: internal error ({type(exc).__name__}: {exc})", {},
                    None)


def run_on_cluster(
    paths: Sequence[Path],
    job: Any,
    scheduler: str,
    *,
    limits: Limits | None = None,
    client: Any = None,
) -> Iterator[Outcome]:
    """Yield one Outcome per path (completion order) from a Dask cluster; never raises for a
    bad file. Raises ConnectionError (one line) when the scheduler cannot be reached."""
    from distributed import Client, as_completed

    limits = limits or Limits()
    own = client is None
    if own:
        try:
            client = Client(scheduler, timeout="20s", set_as_default=False)
        except (OSError, TimeoutError) as exc:
            raise ConnectionError(f"{scheduler}: cannot reach the Dask scheduler ({exc})") \
                from None
    try:
        nworkers = max(1, len(client.scheduler_info().get("workers", {})))
        window = nworkers * IN_FLIGHT_PER_WORKER
        pending = list(reversed(paths))
        started: dict[Any, tuple[Path, float]] = {}
        ac = as_completed(loop=client.loop)  # our client is not the default one
        ready: list[Any] = []

        def submit_more() -> Iterator[Outcome]:
            while pending and len(started) < window:
                path = pending.pop()
                try:
                    data = path.read_bytes()
                except OSError as exc:
                    yield Outcome(path, None, f"{path}: cannot read file: {exc.strerror or exc}")
                    continue
                fut = client.submit(remote_audit, job, str(path), data, pure=False)
                started[fut] = (path, time.monotonic())
                ac.add(fut)

        yield from submit_more()
        while started:
            done = _next_done(ac, ready, started, limits.seconds)
            if done is None:  # a task ran past the time limit
                now = time.monotonic()
                for fut, (path, t0) in list(started.items()):
                    if now - t0 >= limits.seconds:
                        fut.cancel()
                        del started[fut]
                        yield Outcome(path, None, f"{path}: stopped after {limits.seconds:g} s "
                                                  "(time limit per file)")
            else:
                path, _ = started.pop(done)
                yield _outcome(done, path, job)
            yield from submit_more()
    finally:
        if own:
            client.close()


def _next_done(ac: Any, ready: list[Any], started: dict[Any, tuple[Path, float]],
               seconds: float) -> Any:
    """The next finished future still tracked, or None when the oldest one is over time."""
    while True:
        while ready:
            fut = ready.pop(0)
            if fut in started:
                return fut
        if ac.has_ready():
            ready.extend(ac.next_batch(block=False))
            continue
        deadline = min(t0 for _, t0 in started.values()) + seconds
        if time.monotonic() >= deadline:
            return None
        time.sleep(0.05)


def _outcome(fut: Any, path: Path, job: Any) -> Outcome:
    try:
        status, payload, files, error = fut.result()
    except Exception as exc:  # the worker died, or the task could not run
        reason = " ".join(f"{type(exc).__name__}: {exc}".split())
        return Outcome(path, None, f"{path}: failed on the cluster ({reason})")
    if status != "ok":
        return Outcome(path, None, " ".join(str(payload).split()), error)
    if files and job.reports_dir is not None:
        from certvet.api import ReportWriteError

        out = Path(job.reports_dir)
        try:
            out.mkdir(parents=True, exist_ok=True)
            for key, data in files.items():
                (out / payload.outputs[key].name).write_bytes(data)
        except OSError as exc:
            err = ReportWriteError(str(path), f"cannot write its reports to "
                                              f"{exc.filename or out}: {exc.strerror or exc}")
            return Outcome(path, None, " ".join(str(err).split()), err)
    return Outcome(path, payload, None)
