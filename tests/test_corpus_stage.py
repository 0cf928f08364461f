"""The corpus stage end to end: a copy changes the verdict of both certificates and the exit
status, every output says the same (store, exports, cross-findings files, reports, portfolio),
the portfolio remembers what could not be audited, and the store survives misuse (a second
writer, a full disk, a damaged file) with one line, never a traceback.

The demo's grid-copied-07 carries grid-clean-01's readings at another address (planted by
fixtures/generator/demo_set.py); grid-clean-01 is the earlier certificate.
"""

from __future__ import annotations

import json
import shutil
import sqlite3
import subprocess
import sys
import time
from pathlib import Path

import pytest
from typer.testing import CliRunner

from certvet.api import DEMO_DIR, DEMO_LAYOUTS, load_layouts
from certvet.batch import Status, run_batch
from certvet.checks.model import Severity
from certvet.cli import app
from certvet.corpus import Corpus, CorpusError
from certvet.reports.csvout import read_table
from certvet.reports.portfolio import build_view

CLEAN, COPIED, FAULTY = "grid-clean-01", "grid-copied-07", "grid-faulty-03"
COPIED_CHECK = "schedule-copied-from-other-address"


def _inbox(folder: Path, broken: bool = True) -> Path:
    folder.mkdir(parents=True, exist_ok=True)
    for stem in (CLEAN, COPIED, FAULTY):
        shutil.copy(DEMO_DIR / f"{stem}.pdf", folder / f"{stem}.pdf")
    if broken:
        (folder / "letter.pdf").write_text("a letter, not a certificate\n")
    return folder


@pytest.fixture(scope="module")
def run(tmp_path_factory: pytest.TempPathFactory):
    work = tmp_path_factory.mktemp("stage")
    inbox = _inbox(work / "inbox")
    report = run_batch([inbox], layouts=load_layouts([DEMO_LAYOUTS]),
                       store=work / "c.sqlite", out_dir=work / "out", workers=2)
    return report, work


def test_both_certificates_say_readings_copied_and_fail_the_run(run) -> None:
    report, work = run
    by = {o.path.stem: o for o in report.outcomes}
    assert by[CLEAN].verdict == by[COPIED].verdict == "readings copied"
    assert by[CLEAN].breach and by[COPIED].breach  # impossible: a fail-on severity
    assert {o.path.stem for o in report.decided_again} == {CLEAN, COPIED}
    with Corpus(work / "c.sqlite") as corpus:
        verdicts = {r.sha256: r.verdict for r in corpus.certificates()}
        stage = corpus.rows("SELECT stage, check_id, severity FROM findings "
                            "WHERE stage = 'corpus'")
    assert sorted(verdicts.values()) == ["fails_requirements", "readings_copied",
                                         "readings_copied"]
    assert sorted(stage) == [("corpus", COPIED_CHECK, "impossible")] * 2
    # each report names the other and says which is the earlier (the likely source)
    for here in (CLEAN, COPIED):
        (js,) = (work / "out" / "certificates").glob(f"{here}-*.json")
        doc = json.loads(js.read_text(encoding="utf-8"))
        assert doc["verdict"]["key"] == "readings_copied"
        assert doc["counts"]["impossible"] == 1
        (line,) = doc["verdict"]["copies"]
        assert "likely source" in line
        assert ("this certificate is the earlier" in line) is (here == CLEAN)
        rows = read_table(js.with_name(js.stem + ".findings.csv"))
        assert [r["check_id"] for r in rows] == [COPIED_CHECK]


def test_fail_on_chooses_the_severities_of_the_exit_status(run, tmp_path: Path) -> None:
    _, work = run
    store = tmp_path / "c.sqlite"
    shutil.copy(work / "c.sqlite", store)
    inbox = _inbox(tmp_path / "in", broken=False)
    layouts = load_layouts([DEMO_LAYOUTS])
    default = run_batch([inbox], layouts=layouts, store=store, out_dir=tmp_path / "o")
    assert default.totals["skipped"] == 3 and default.exit_code == 1
    copies = [inbox / f"{CLEAN}.pdf", inbox / f"{COPIED}.pdf"]
    assert run_batch(copies, layouts=layouts, store=store).exit_code == 1  # the copy fails it
    only_breach = run_batch(copies, layouts=layouts, store=store,
                            fail_on=frozenset({Severity.BREACH}))
    assert only_breach.exit_code == 0
    result = CliRunner().invoke(app, ["batch", str(inbox), "-l", str(DEMO_LAYOUTS), "-s",
                                      str(store), "-o", str(tmp_path / "o"), "--fail-on", "loud"])
    assert result.exit_code == 2 and "--fail-on: unknown severity 'loud'" in result.output


def test_one_findings_table_in_every_export_with_stable_keys(run, tmp_path: Path) -> None:
    report, work = run
    with Corpus(work / "c.sqlite") as corpus:
        stored = corpus.rows("SELECT count(*) FROM findings")[0][0]
        keys = corpus.certificate_keys()
        written = corpus.export(tmp_path / "x", "csv")
    (findings_csv,) = [p for p in written if p.name == "findings.csv"]
    rows = read_table(findings_csv)
    assert len(rows) == stored
    assert {r["stage"] for r in rows} == {"certificate", "corpus"}
    shas = {sha for sha, _ in keys.values()}
    assert all(r["cert_sha256"] in shas and r["severity"] in
               ("note", "query", "breach", "impossible") for r in rows)
    copies = [r for r in rows if r["check_id"] == COPIED_CHECK]
    assert len(copies) == 2 and all(json.loads(r["related_sha256"]) for r in copies)
    # the batch's own files: the same findings, counted once, the same way
    cross = read_table(work / "out" / "cross-findings.csv")
    doc = json.loads((work / "out" / "cross-findings.json").read_text(encoding="utf-8"))
    assert len(cross) == len(doc["findings"]) == len(report.cross_findings) == len(copies)
    assert {r["cert_sha256"] for r in cross} == {r["cert_sha256"] for r in copies}
    view = build_view(report.portfolio_data(), work / "out" / "portfolio.html")
    assert view.cross_count == len(report.cross_findings)


def test_portfolio_remembers_what_could_not_be_audited(run, tmp_path: Path) -> None:
    _, work = run
    store = tmp_path / "c.sqlite"
    shutil.copy(work / "c.sqlite", store)
    again = run_batch([work / "inbox"], layouts=load_layouts([DEMO_LAYOUTS]), store=store,
                      out_dir=tmp_path / "o")
    assert again.totals == {"audited": 0, "skipped": 4, "failed": 0}
    data = again.portfolio_data()
    (failure,) = data.failures
    assert failure[0].endswith("letter.pdf") and "not a PDF" in failure[1]
    assert build_view(data, tmp_path / "o" / "portfolio.html").failed == 1


def test_a_second_writer_is_told_in_one_line(run, tmp_path: Path) -> None:
    _, work = run
    store = tmp_path / "c.sqlite"
    shutil.copy(work / "c.sqlite", store)
    holder = subprocess.Popen(
        [sys.executable, "-c",
         "import sys, time; from corpus import Corpus\n"
         "with Corpus(sys.argv[1]) as c, c.lock():\n"
         "    print('held', flush=True); time.sleep(60)\n", str(store)],
        stdout=subprocess.PIPE, text=True)
    try:
        assert holder.stdout is not None and holder.stdout.readline().strip() == "held"
        result = CliRunner().invoke(app, ["batch", str(work / "inbox"), "-l", str(DEMO_LAYOUTS),
                                          "-s", str(store), "-o", str(tmp_path / "o")])
    finally:
        holder.kill()
        holder.wait(10)
    assert result.exit_code == 3, result.output
    lines = [ln for ln in result.output.splitlines() if ln.strip()]
    assert len(lines) == 1 and "in use by another certvet batch" in lines[0]
    assert f"process {holder.pid}" in lines[0]


def test_a_full_store_stops_the_run_and_records_no_good_pdf_as_failed(
        tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    real_add = Corpus.add

    def add_on_a_full_disk(self: Corpus, *args, **kwargs):  # type: ignore[no-untyped-def]
        pages = self.conn.execute("PRAGMA page_count").fetchone()[0]
        self.conn.execute(f"PRAGMA max_page_count = {pages}")  # SQLite: database or disk is full
        return real_add(self, *args, **kwargs)

    monkeypatch.setattr(Corpus, "add", add_on_a_full_disk)
    inbox = _inbox(tmp_path / "in", broken=False)
    store = tmp_path / "c.sqlite"
    with pytest.raises(CorpusError) as caught:
        run_batch([inbox], layouts=load_layouts([DEMO_LAYOUTS]), store=store,
                  out_dir=tmp_path / "o", workers=1)
    message = str(caught.value)
    assert "\n" not in message and "full" in message and ".pdf" in message
    conn = sqlite3.connect(store)
    assert conn.execute("SELECT count(*) FROM files").fetchone()[0] == 0  # none stored failed
    result = CliRunner().invoke(app, ["batch", str(inbox), "-l", str(DEMO_LAYOUTS), "-s",
                                      str(store), "-o", str(tmp_path / "o"), "-w", "1"])
    assert result.exit_code == 3 and "Traceback" not in result.output
    assert "nothing of it was stored" in result.output


def test_cross_findings_are_never_left_empty(run, tmp_path: Path,
                                             monkeypatch: pytest.MonkeyPatch) -> None:
    _, work = run
    store, out = tmp_path / "c.sqlite", tmp_path / "o"
    shutil.copy(work / "c.sqlite", store)
    shutil.copytree(work / "out", out)
    before = (out / "cross-findings.json").read_text(encoding="utf-8")

    def disk_full(*args, **kwargs):  # type: ignore[no-untyped-def]
        raise OSError(28, "No space left on device")

    monkeypatch.setattr(json, "dump", disk_full)
    again = run_batch([work / "inbox"], layouts=load_layouts([DEMO_LAYOUTS]), store=store,
                      out_dir=out)
    assert again.output_errors == [f"{out}: cannot write cross-findings: No space left on device"]
    assert again.exit_code == 3
    assert (out / "cross-findings.json").read_text(encoding="utf-8") == before
    assert not [p for p in out.iterdir() if p.name.endswith(".tmp")]


def test_a_damaged_store_gives_one_line(run, tmp_path: Path) -> None:
    _, work = run
    store = tmp_path / "c.sqlite"
    shutil.copy(work / "c.sqlite", store)
    with sqlite3.connect(store) as conn:
        conn.execute("PRAGMA wal_checkpoint(TRUNCATE)")
    data = bytearray(store.read_bytes())
    data[4096:len(data) - 4096] = bytes(len(data) - 8192)  # every page but the first zeroed
    store.write_bytes(bytes(data))
    time.sleep(0.01)
    runner = CliRunner()
    for args in (["export", "-s", str(store), "-o", str(tmp_path / "x")],
                 ["portfolio", "-s", str(store), "-o", str(tmp_path / "p.html")],
                 ["batch", str(work / "inbox"), "-l", str(DEMO_LAYOUTS), "-s", str(store),
                  "-o", str(tmp_path / "o")]):
        result = runner.invoke(app, args)
        lines = [ln for ln in result.output.splitlines() if ln.strip()]
        assert result.exit_code == 3, (args[0], result.output)
        assert len(lines) == 1 and str(store) in lines[0], (args[0], result.output)
        assert "Traceback" not in result.output


def test_every_outcome_status_is_counted(run) -> None:
    report, _ = run
    assert report.totals == {"audited": 3, "skipped": 0, "failed": 1}
    assert [o.status for o in report.outcomes if o.path.name == "letter.pdf"] == [Status.FAILED]
