"""Batch runs: every input ends audited, skipped or failed (with its reason), re-runs skip what
is done, an interrupted run resumes to the same corpus, copies across certificates are found.

The generated batch: the demo PDFs, a demo certificate re-generated at another address with
another number (a planted copy), a different certificate reusing a demo certificate's number,
the same bytes twice (in a subfolder), a file that is not a PDF and a zero-byte file.
"""

from __future__ import annotations

import dataclasses
import os
import pickle
import random
import shutil
import signal
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pytest

from certvet.api import DEMO_DIR, DEMO_LAYOUTS, load_layouts
from certvet.batch import Status, run_batch
from certvet.workers import Limits

REPO = Path(__file__).resolve().parents[1]
COPY_NUMBER = "GL-2026-0977"
ORIGINAL_NUMBER = "GL-2026-0412"  # grid-clean-01's number


def make_inputs(folder: Path) -> Path:
    """Write the generated batch into `folder`; returns it."""
    sys.path.insert(0, str(REPO / "fixtures"))
    try:
        from generator import DEFAULT_SEED, grid_form
        from generator.demo_set import grid_clean_01, grid_faulty_03
        from generator.fonts import find_face
    finally:
        sys.path.remove(str(REPO / "fixtures"))
    folder.mkdir(parents=True, exist_ok=True)
    for pdf in sorted(DEMO_DIR.glob("*.pdf")):
        shutil.copy(pdf, folder / pdf.name)
    (folder / "sub").mkdir(exist_ok=True)
    shutil.copy(DEMO_DIR / "grid-clean-01.pdf", folder / "sub" / "grid-clean-01.pdf")
    face = find_face()
    copy = grid_clean_01("grid-copy-07", random.Random(f"{DEFAULT_SEED}:grid-clean-01"))
    copy.details["address"] = "7 Thornbury Walk, Wenbury, QX4 9RD"
    copy.details["cert_number"] = COPY_NUMBER
    grid_form.write(copy, folder / "grid-copy-07.pdf", face)
    other = grid_faulty_03("grid-dupnum-08", random.Random("test:grid-dupnum-08"))
    other.details["address"] = "2 Saltmarsh Lane, Wenbury, QX2 1AB"
    other.details["cert_number"] = ORIGINAL_NUMBER
    grid_form.write(other, folder / "grid-dupnum-08.pdf", face)
    (folder / "not-a-pdf.pdf").write_text("this is a letter, not a certificate\n")
    (folder / "zero.pdf").write_bytes(b"")
    return folder


def n_inputs(folder: Path) -> int:
    return sum(1 for p in folder.rglob("*.pdf"))


def snapshot(store: Path) -> dict[str, list[tuple]]:
    """The corpus's content without row ids and timestamps, in a stable order."""
    conn = sqlite3.connect(store)
    try:
        out: dict[str, list[tuple]] = {}
        out["files"] = sorted(conn.execute(
            "SELECT sha256, path, layout, engine, status, failure_reason FROM files"))

        def rows(sql: str, table: str) -> list[tuple]:
            cur = conn.execute(sql)
            names = [d[0] for d in cur.description]
            keep = [i for i, n in enumerate(names)
                    if n not in ("id", "cert_id", "board_id") or n == "check_id"]
            return sorted((tuple(repr(r[i]) for i in keep) for r in cur), key=str)

        out["certificates"] = rows("SELECT * FROM certificates", "certificates")
        for table in ("boards", "circuits", "findings", "check_runs", "problems",
                      "board_readings"):
            out[table] = rows(f"SELECT c.sha256 AS cert_sha, t.* FROM {table} t "
                              "JOIN certificates c ON c.id = t.cert_id", table)
        return out
    finally:
        conn.close()


_SHARED: dict[str, object] = {}  # one generated batch per session, shared with test_portfolio


def shared_batch(factory: pytest.TempPathFactory):
    """(inputs folder, (report, events, work folder)), made once per test session."""
    if "run" not in _SHARED:
        folder = make_inputs(factory.mktemp("batch") / "inbox")
        work = factory.mktemp("run")
        events: list = []
        report = run_batch([folder], layouts=load_layouts([DEMO_LAYOUTS]),
                           store=work / "corpus.sqlite", out_dir=work / "out", workers=2,
                           limits=Limits(seconds=120, memory_mb=2048), on_event=events.append)
        _SHARED["dir"], _SHARED["run"] = folder, (report, events, work)
    return _SHARED["dir"], _SHARED["run"]


@pytest.fixture()
def batch_dir(tmp_path_factory: pytest.TempPathFactory) -> Path:
    return shared_batch(tmp_path_factory)[0]


@pytest.fixture()
def first_run(tmp_path_factory: pytest.TempPathFactory):
    return shared_batch(tmp_path_factory)[1]


def test_totals_add_up_and_failures_have_reasons(batch_dir: Path, first_run) -> None:
    report, events, _ = first_run
    total = n_inputs(batch_dir)
    assert len(report.outcomes) == total == len(events)
    assert sum(report.totals.values()) == total
    assert sorted(str(o.path) for o in report.outcomes) == sorted(
        str(p) for p in batch_dir.rglob("*.pdf"))
    by = {o.path.relative_to(batch_dir).as_posix(): o for o in report.outcomes}
    assert by["not-a-pdf.pdf"].status is Status.FAILED
    assert "not a PDF" in by["not-a-pdf.pdf"].reason
    assert by["zero.pdf"].status is Status.FAILED and "0 bytes" in by["zero.pdf"].reason
    for o in report.failed:
        assert o.reason and "\n" not in o.reason and str(o.path) in o.reason
    assert by["sub/grid-clean-01.pdf"].status is Status.SKIPPED
    assert "same content" in by["sub/grid-clean-01.pdf"].reason
    audited = [o for o in report.outcomes if o.status is Status.AUDITED]
    assert len(audited) == total - 3
    assert report.totals == {"audited": total - 3, "skipped": 1, "failed": 2}
    assert report.exit_code == 3


def test_layout_chosen_per_file_and_reports_written(batch_dir: Path, first_run) -> None:
    report, _, work = first_run
    used = report.layouts_used
    assert {p.name for p in used["grid-landscape"]} >= {"grid-clean-01.pdf", "grid-copy-07.pdf"}
    for o in report.outcomes:
        if o.status is Status.AUDITED:
            assert o.reports["html"].exists() and o.reports["html"].parent == work / "out" / \
                "certificates"
    assert (work / "out" / "portfolio.html").exists()
    assert (work / "out" / "cross-findings.csv").exists()


def test_cross_certificate_findings_for_planted_copies(first_run) -> None:
    report, _, _ = first_run
    copied = [cf for cf in report.cross_findings
              if cf.finding.check_id == "schedule-copied-from-other-address"]
    pairs = {(cf.finding.certificate, cf.finding.related) for cf in copied}
    assert (COPY_NUMBER, (ORIGINAL_NUMBER,)) in pairs
    assert (ORIGINAL_NUMBER, (COPY_NUMBER,)) in pairs
    reused = [cf for cf in report.cross_findings
              if cf.finding.check_id == "certificate-number-reused"]
    assert len(reused) == 2 and all(cf.finding.certificate == ORIGINAL_NUMBER for cf in reused)
    # the clean demo certificates are not linked to anything
    linked = {cf.finding.certificate for cf in report.cross_findings}
    assert "GL-2026-0433" not in linked or all(
        cf.finding.check_id != "schedule-copied-from-other-address"
        for cf in report.cross_findings if cf.finding.certificate == "GL-2026-0433")


def test_rerun_skips_everything_and_retry_failed_reruns_failures(batch_dir: Path, first_run
                                                                 ) -> None:
    report, _, work = first_run
    before = snapshot(work / "corpus.sqlite")
    layouts = load_layouts([DEMO_LAYOUTS])
    again = run_batch([batch_dir], layouts=layouts, store=work / "corpus.sqlite",
                      out_dir=work / "out2", workers=2)
    assert again.totals == {"audited": 0, "skipped": n_inputs(batch_dir), "failed": 0}
    assert again.exit_code == 3  # two inputs failed before and are still failed
    assert snapshot(work / "corpus.sqlite") == before
    assert len(again.cross_findings) == len(report.cross_findings)

    retry = run_batch([batch_dir / "not-a-pdf.pdf", batch_dir / "grid-clean-01.pdf"],
                      layouts=layouts, store=work / "corpus.sqlite", out_dir=work / "out3",
                      retry_failed=True)
    by = {o.path.name: o.status for o in retry.outcomes}
    assert by == {"not-a-pdf.pdf": Status.FAILED, "grid-clean-01.pdf": Status.SKIPPED}
    assert snapshot(work / "corpus.sqlite") == before


def test_killed_run_resumes_to_the_same_corpus(batch_dir: Path, first_run, tmp_path: Path
                                               ) -> None:
    _, _, work = first_run
    store = tmp_path / "corpus.sqlite"
    total = n_inputs(batch_dir)
    cmd = [sys.executable, "-m", "certvet.cli", "batch", str(batch_dir), "--layout",
           str(DEMO_LAYOUTS), "--store", str(store), "--out", str(tmp_path / "out"),
           "--workers", "1", "--quiet"]
    proc = subprocess.Popen(cmd, cwd=REPO, stdout=subprocess.DEVNULL,
                            stderr=subprocess.DEVNULL, start_new_session=True)
    stored = 0
    try:
        deadline = time.monotonic() + 300
        while time.monotonic() < deadline and proc.poll() is None:
            if store.exists():
                try:
                    with sqlite3.connect(store, timeout=1) as conn:
                        stored = conn.execute(
                            "SELECT count(*) FROM files WHERE status = 'audited'").fetchone()[0]
                except sqlite3.Error:
                    stored = 0
            if stored >= 2:
                break
            time.sleep(0.1)
    finally:
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGKILL)  # the batch and its own children, nothing else
        proc.wait(30)
    assert proc.returncode == -signal.SIGKILL, "the batch finished before it could be killed"
    assert 2 <= stored < total

    resumed = run_batch([batch_dir], layouts=load_layouts([DEMO_LAYOUTS]), store=store,
                        out_dir=tmp_path / "out", workers=2)
    assert sum(resumed.totals.values()) == total
    assert resumed.totals["skipped"] >= stored  # nothing done before is done again
    assert snapshot(store) == snapshot(work / "corpus.sqlite")
    assert [cf.finding for cf in resumed.cross_findings] == [
        cf.finding for cf in first_run[0].cross_findings]


# --- a report folder that cannot be written is not the PDF's failure ------------------------


def _report_write_job(path: Path) -> str:
    from certvet.api import ReportWriteError

    raise ReportWriteError(str(path), "cannot write its reports to /out: Permission denied")


@dataclasses.dataclass(frozen=True)
class _RemoteJob:  # what remote_audit needs of an AuditJob: a dataclass with these fields
    reports_dir: Path | None = None
    profile: object = None

    def __call__(self, path: Path) -> object:
        from certvet.api import ReportWriteError

        raise ReportWriteError(str(path), f"cannot write its reports to {path.parent}: no")


def test_report_write_error_pickles_with_its_class_and_message() -> None:
    from certvet.api import ReportWriteError
    from certvet.extractor.errors import InputError, NoLayoutMatches

    for exc in (ReportWriteError("a b.pdf", "cannot write its reports to out: Read-only"),
                InputError("x.pdf", "not a PDF"), NoLayoutMatches("y.pdf", "no layout")):
        back = pickle.loads(pickle.dumps(exc))
        assert type(back) is type(exc)
        assert (str(back), back.path, back.reason) == (str(exc), exc.path, exc.reason)


def test_report_write_error_survives_a_forked_worker_and_a_dask_task(tmp_path: Path) -> None:
    from certvet.api import ReportWriteError
    from certvet.distributed import remote_audit
    from certvet.workers import run_isolated

    (oc,) = run_isolated([tmp_path / "c.pdf"], _report_write_job, workers=1)
    assert isinstance(oc.exception, ReportWriteError)
    assert oc.error == str(oc.exception) == (
        f"{tmp_path / 'c.pdf'}: cannot write its reports to /out: Permission denied")
    # a Dask task's answer is pickled back to the client
    status, reason, files, exc = pickle.loads(pickle.dumps(
        remote_audit(_RemoteJob(), "/inbox/c.pdf", b"%PDF-")))
    assert (status, files) == ("error", {})
    assert isinstance(exc, ReportWriteError) and exc.path == "/inbox/c.pdf"
    assert str(exc).startswith("/inbox/c.pdf: cannot write its reports")


def test_dask_client_that_cannot_write_the_reports_fails_the_file(tmp_path: Path) -> None:
    from types import SimpleNamespace

    from certvet.api import ReportWriteError
    from certvet.distributed import _outcome

    (tmp_path / "certificates").write_text("a file in the folder's way")
    result = SimpleNamespace(outputs={"html": tmp_path / "certificates" / "c.html"})
    fut = SimpleNamespace(result=lambda: ("ok", result, {"html": b"<html>"}, None))
    job = SimpleNamespace(reports_dir=tmp_path / "certificates")
    oc = _outcome(fut, tmp_path / "c.pdf", job)
    assert oc.result is None and isinstance(oc.exception, ReportWriteError)
    assert oc.error is not None and "cannot write its reports" in oc.error


def test_store_outcome_does_not_store_a_report_write_failure(tmp_path: Path) -> None:
    from certvet.api import ReportWriteError
    from certvet.batch import _store_outcome
    from certvet.corpus.store import Corpus
    from certvet.extractor.errors import InputError
    from certvet.workers import Outcome

    pdf = tmp_path / "c.pdf"
    err = ReportWriteError(str(pdf), "cannot write its reports to out: Read-only file system")
    bad = InputError(str(pdf), "not a PDF (no %PDF header)")
    with Corpus(tmp_path / "c.sqlite") as corpus:
        o = _store_outcome(corpus, Outcome(pdf, None, str(err), err), "a" * 64)
        assert o.status is Status.FAILED and o.reason == str(err)
        assert not corpus.has("a" * 64)  # the next run audits it again
        o = _store_outcome(corpus, Outcome(pdf, None, str(bad), bad), "b" * 64)
        assert o.status is Status.FAILED and corpus.has("b" * 64)  # a bad PDF is remembered


def test_batch_whose_reports_folder_is_blocked_audits_again_later(tmp_path: Path) -> None:
    pdf = DEMO_DIR / "grid-clean-01.pdf"
    out = tmp_path / "out"
    out.mkdir()
    (out / "certificates").write_text("a file where the reports folder should be")
    kw = dict(layouts=load_layouts([DEMO_LAYOUTS]), store=tmp_path / "c.sqlite", out_dir=out,
              workers=1, portfolio=False)
    first = run_batch([pdf], **kw)
    assert first.totals == {"audited": 0, "skipped": 0, "failed": 1}
    assert "cannot write its reports" in (first.outcomes[0].reason or "")
    assert first.exit_code == 3
    (out / "certificates").unlink()
    second = run_batch([pdf], **kw)
    assert second.totals == {"audited": 1, "skipped": 0, "failed": 0}
