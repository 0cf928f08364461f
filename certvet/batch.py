"""Batch runs: audit a folder (or list) of PDFs into the corpus, resumable and never stopped
by one bad file.

    from certvet.batch import run_batch
    report = run_batch([Path("inbox/")], layouts=load_layouts([Path("layouts/")]),
                       store=Path("corpus.sqlite"), out_dir=Path("out"))
    print(report.totals)          # {'audited': 412, 'skipped': 30, 'failed': 3}

How a run goes:

1. Inputs are expanded (folders recursively, *.pdf) and hashed (sha256) in this process.
2. A file whose hash is already in the store is *skipped* (audited or failed before; with
   ``retry_failed`` a failed one runs again). A second input with the same bytes as an earlier
   input of this run is skipped too: the store is keyed by content.
3. Every other file runs in its own child process (certvet/workers.py: time and memory limits),
   or on a Dask cluster (certvet/distributed.py) when ``scheduler`` is given. The child picks
   the layout whose recognise rule matches, extracts, runs the checks and writes the
   certificate's own reports (``<stem>-<sha8>.html|json|csv`` in ``out_dir/certificates``).
4. This process alone writes the store: one transaction per file, as each result arrives
   (``Corpus.add`` / ``Corpus.add_failure``). Killing the run at any moment loses nothing
   already stored, and a re-run skips it (nothing is stored twice). A file whose reports
   could not be written (``ReportWriteError``: the output folder, not the PDF) is failed for
   this run but not stored, so the next run audits it again.
5. After the files: the cross-certificate checks (declared in checks/catalogue/across.py, run
   by corpus.crosscheck.run_cross_checks: copied schedules, repeats at an address, reused
   numbers, workload) for every certificate of this batch's inputs — audited now or earlier,
   so a resumed run reports what one uninterrupted run would — and every certificate a copy
   links them to. They are stored in the findings table (stage ``corpus``) and written to
   ``cross-findings.csv`` / ``.json``. They count like any finding: each certificate with one
   gets its verdict decided again (a copy's verdict is "readings copied", on both
   certificates, naming the other and the likely source), stored, and its HTML, JSON and
   findings CSV re-written (section "Compared with other certificates", a link to the other
   certificate's report): the certificate, findings, check runs and the rule profile it was
   audited with come back from the store, so a certificate skipped in this run whose reports
   are in ``out_dir/certificates`` is covered too (``rewrite_related_reports``). Then the
   portfolio page is written (``out_dir/portfolio.html``).

Every input ends in exactly one of ``audited``, ``skipped`` or ``failed`` (with a one-line
reason naming the file): ``len(report.outcomes) == len(inputs)``.

Exit status (``BatchReport.exit_code``, as ``certvet audit``): 3 when any input is failed (now,
or skipped because it failed before); else 1 when any certificate of the batch has a counted
finding at a ``fail_on`` severity (default breach and impossible; ``--fail-on``), per
certificate or across certificates (a copied schedule is "impossible"); else 0.
"""

from __future__ import annotations

import json
import os
from collections.abc import Callable, Iterable, Iterator, Sequence
from dataclasses import dataclass, field, replace
from enum import StrEnum
from pathlib import Path
from typing import TYPE_CHECKING, Any

from certvet.checks.model import Severity
from certvet.checks.profile import DEFAULT_PROFILE, Profile
from certvet.drafting import DraftedForms, DraftOptions, audit_unknown_forms
from certvet.exitcodes import DEFAULT_FAIL_ON as DEFAULT_FAIL_ON_TEXT
from certvet.exitcodes import EXIT_CLEAN, EXIT_FAILED, EXIT_FINDINGS, parse_fail_on
from certvet.extractor.errors import InputError, NotRecognised
from certvet.extractor.layout import Layout
from certvet.extractor.untrusted import one_line
from certvet.reports.verdict import NOT_AUDITED
from certvet.workers import Limits, Outcome, run_isolated

if TYPE_CHECKING:
    from certvet.api import AuditResult
    from certvet.checks.model import Finding
    from certvet.corpus.crosscheck import CrossFinding
    from certvet.corpus.store import Corpus
    from certvet.reports.portfolio import PortfolioData
    from certvet.reports.verdict import Verdict

__all__ = ["BatchReport", "FileOutcome", "Status", "run_batch", "write_portfolio"]

DEFAULT_FAIL_ON: frozenset[Severity] = parse_fail_on(DEFAULT_FAIL_ON_TEXT)
REPORTS_SUBDIR = "certificates"
# readings an inspector measures (last-digit chart); ratings, sizes and test voltages are not
MEASURED_FIELDS = frozenset({"r1", "rn", "r2", "r1_r2", "r1_rn", "r2_only", "ir_live_live",
                             "ir_live_earth", "zs", "rcd_time", "rcd_time_5x"})


class Status(StrEnum):
    AUDITED = "audited"
    SKIPPED = "skipped"
    FAILED = "failed"


@dataclass(frozen=True)
class FileOutcome:
    """How one input ended. `reason` is one line naming the file (failed or skipped)."""

    path: Path
    status: Status
    sha256: str | None
    reason: str | None = None
    layout: str | None = None
    certificate: str | None = None  # certificate name (number, or file name)
    verdict: str | None = None  # verdict headline, when audited in this run
    findings: int = 0  # counted (non-preview) findings, when audited in this run
    breach: bool = False  # a counted finding at a fail-on severity (now or stored earlier)
    previously_failed: bool = False  # skipped, and the stored outcome is a failure
    reports: dict[str, Path] = field(default_factory=dict)
    drafted: str | None = None  # read with a layout drafted in this run: the note saying so

    def line(self) -> str:
        """One line for the console (control characters in names and reasons escaped); a
        second for the note when read with a drafted layout."""
        if self.status is Status.AUDITED:
            note = f"\n{'':<22} {one_line(self.drafted)}" if self.drafted else ""
            return one_line(f"{(self.verdict or '').upper():<22} {self.path}  ({self.findings} "
                            f"findings, layout {self.layout})") + note
        if self.status is Status.SKIPPED:
            return one_line(f"{'SKIPPED':<22} {self.reason}")
        return one_line(f"{NOT_AUDITED.upper():<22} {self.reason}")

    def verdict_line(self) -> str:
        """The line of a certificate whose verdict the comparison with other certificates
        decided again (audited in this run or before)."""
        return one_line(f"{(self.verdict or '').upper():<22} {self.path}  ({self.findings} "
                        "findings, after comparing with other certificates)")


@dataclass
class BatchReport:
    store: Path
    out_dir: Path | None
    outcomes: list[FileOutcome] = field(default_factory=list)
    cross_findings: list[CrossFinding] = field(default_factory=list)
    portfolio: Path | None = None
    # certificate reports re-written with their cross-certificate findings (html, json, csv)
    related_reports: list[Path] = field(default_factory=list)
    # outcomes whose verdict the cross-certificate findings changed (their final state)
    decided_again: list[FileOutcome] = field(default_factory=list)
    output_errors: list[str] = field(default_factory=list)  # one line per unwritable output

    def count(self, status: Status) -> int:
        return sum(1 for o in self.outcomes if o.status is status)

    @property
    def totals(self) -> dict[str, int]:
        return {s.value: self.count(s) for s in Status}

    @property
    def failed(self) -> list[FileOutcome]:
        return [o for o in self.outcomes if o.status is Status.FAILED]

    @property
    def layouts_used(self) -> dict[str, list[Path]]:
        """Which layout read which file (files audited in this run)."""
        out: dict[str, list[Path]] = {}
        for o in self.outcomes:
            if o.status is Status.AUDITED and o.layout:
                out.setdefault(o.layout, []).append(o.path)
        return out

    @property
    def unrecognised(self) -> list[FileOutcome]:
        """Failed because no layout recognises the form."""
        return [o for o in self.failed if o.reason and "no layout recognises" in o.reason]

    @property
    def exit_code(self) -> int:
        if self.output_errors or any(o.status is Status.FAILED or o.previously_failed
                                     for o in self.outcomes):
            return EXIT_FAILED
        return EXIT_FINDINGS if any(o.breach for o in self.outcomes) else EXIT_CLEAN

    @property
    def shas(self) -> list[str]:
        return [o.sha256 for o in self.outcomes if o.sha256]

    def portfolio_data(self) -> PortfolioData:
        """The portfolio view-model over this batch's certificates (read from the store)."""
        from certvet.corpus.store import Corpus

        reports = {o.sha256: o.reports["html"] for o in self.outcomes
                   if o.sha256 and "html" in o.reports}
        with Corpus(self.store) as corpus:
            stored = {f.sha256: f for f in corpus.files() if f.status == "failed"}
            # what could not be audited: failed now, or failed in an earlier run (from the
            # store), each with its reason
            failures = [(str(o.path), o.reason or "") for o in self.failed
                        if not (o.sha256 and o.sha256 in stored)]
            failures += [(str(o.path), _reason_only(stored[o.sha256].failure_reason))
                         for o in self.outcomes if o.sha256 in stored]
            return collect_portfolio(corpus, shas=set(self.shas), reports=reports,
                                     failures=failures, reports_dir=self._reports_dir(),
                                     cross=self.cross_findings, title="Batch portfolio")

    def _reports_dir(self) -> Path | None:
        return self.out_dir / REPORTS_SUBDIR if self.out_dir else None


# --- the per-file job (runs in a child process, or on a Dask worker) ------------------------


def report_stem(source: Path, sha256: str) -> str:
    """File stem of a certificate's own reports: unique even for equal names in subfolders."""
    return f"{source.stem}-{sha256[:8]}"


@dataclass(frozen=True)
class AuditJob:
    """Audit one file: choose its layout, extract, check, write its reports.

    Picklable (layouts and profile are plain data), so the same job runs in a forked child
    or on a Dask worker.
    """

    layouts: tuple[Layout, ...]
    profile: Profile = DEFAULT_PROFILE
    reports_dir: Path | None = None
    engine: str | None = None
    password: str | None = None
    drafts: DraftedForms | None = None  # layouts drafted in this run (workers: frozen copies)

    def __call__(self, path: Path) -> AuditResult:
        from certvet.api import audit_file

        result = audit_file(path, layouts=self.layouts, profile=self.profile, out_dir=None,
                            engine=self.engine, password=self.password,
                            drafts=self.drafts or DraftedForms(DraftOptions(enabled=False)))
        if self.reports_dir is not None:
            result.outputs = self.write_reports(result, self.reports_dir)
        return result

    def write_reports(self, result: AuditResult, out_dir: Path) -> dict[str, Path]:
        """The certificate's own reports (html, json, csv) as `<stem>-<sha8>.*` in out_dir
        (also called by a Dask worker, certvet/distributed.py, with the job it was given)."""
        from certvet.api import REPORT_FORMATS, write_reports

        stem = report_stem(result.source, result.certificate.sha256)
        return write_reports(result, out_dir, REPORT_FORMATS, self.profile, stem)


# --- the run --------------------------------------------------------------------------------


def _hash(path: Path) -> tuple[str | None, str | None]:
    """(sha256, None) or (None, one-line reason)."""
    from certvet.extractor.api import file_sha256

    if path.is_dir():
        return None, f"{path}: is a folder, not a PDF"
    if not path.exists():
        return None, f"{path}: file not found"
    try:
        return file_sha256(str(path)), None
    except InputError as exc:
        return None, str(exc).replace("\n", " ")


def _reason_only(reason: str | None) -> str:
    """A stored failure reason without its leading '<file>: ' (the line names the file)."""
    text = reason or "no reason recorded"
    head, sep, rest = text.partition(": ")
    return rest if sep and head.lower().endswith(".pdf") else text


def _one_line(text: str) -> str:
    return " ".join(text.split())


def run_batch(
    inputs: Iterable[Path | str],
    *,
    layouts: Sequence[Layout],
    store: Path | str,
    out_dir: Path | str | None = None,
    workers: int | None = None,
    limits: Limits | None = None,
    profile: Profile | None = None,
    engine: str | None = None,
    password: str | None = None,
    on_event: Callable[[FileOutcome], None] | None = None,
    retry_failed: bool = False,
    scheduler: str | None = None,
    portfolio: bool = True,
    on_start: Callable[[int], None] | None = None,
    fail_on: frozenset[Severity] = DEFAULT_FAIL_ON,
    drafting: DraftOptions | None = None,
) -> BatchReport:
    """Audit every input into the store; see the module docstring. Never raises for a bad
    file; raises CorpusError (one line) when the store itself cannot be used."""
    from certvet.api import expand_inputs
    from certvet.corpus.store import Corpus

    prof = profile or DEFAULT_PROFILE
    out = Path(out_dir) if out_dir is not None else None
    files = expand_inputs([Path(p) for p in inputs])
    report = BatchReport(Path(store), out)
    if on_start:
        on_start(len(files))

    def emit(o: FileOutcome) -> None:
        report.outcomes.append(o)
        if on_event:
            on_event(o)

    with Corpus(store) as corpus, corpus.lock():
        stored = {f.sha256: f for f in corpus.files()}
        breach_shas = corpus.shas_with_findings(fail_on)
        todo: list[Path] = []
        sha_of: dict[Path, str] = {}
        first_with: dict[str, Path] = {}
        for path in files:
            sha, err = _hash(path)
            if sha is None:
                emit(FileOutcome(path, Status.FAILED, None, reason=err))
                continue
            if sha in first_with:
                emit(FileOutcome(path, Status.SKIPPED, sha, reason=(
                    f"{path}: same content as {first_with[sha]} (already in this batch)"),
                    breach=sha in breach_shas))
                continue
            first_with[sha] = path
            row = stored.get(sha)
            if row is not None and not (retry_failed and row.status == "failed"):
                failed_before = row.status == "failed"
                what = (f"{NOT_AUDITED} before ({_reason_only(row.failure_reason)}); "
                        "--retry-failed runs it again" if failed_before
                        else f"already audited ({row.audited_at}, layout {row.layout})")
                emit(FileOutcome(path, Status.SKIPPED, sha, reason=_one_line(f"{path}: {what}"),
                                 layout=row.layout, breach=sha in breach_shas,
                                 previously_failed=failed_before))
                continue
            todo.append(path)
            sha_of[path] = sha

        reports_dir = out / REPORTS_SUBDIR if out else None
        from certvet.api import new_drafts

        drafts = new_drafts(drafting, out, layouts)
        job = AuditJob(tuple(layouts), prof, reports_dir, engine, password, drafts.frozen())

        def run(paths: list[Path], job: Callable[[Path], Any]) -> Iterator[Outcome]:
            if scheduler:
                from certvet.distributed import run_on_cluster

                return run_on_cluster(paths, job, scheduler, limits=limits or Limits())
            return run_isolated(paths, job, workers=workers, limits=limits or Limits())

        if todo and not scheduler:
            warm_up(layouts, engine)
        unknown: list[Path] = []  # no given layout recognises them: drafted for below
        for oc in run(todo, job):
            if drafts.options.enabled and isinstance(oc.exception, NotRecognised):
                unknown.append(oc.path)
                continue
            emit(_store_outcome(corpus, oc, sha_of[oc.path], fail_on))
        order = {p: k for k, p in enumerate(todo)}
        unknown.sort(key=order.__getitem__)
        for oc in audit_unknown_forms(unknown, drafts, lambda d: replace(job, drafts=d), run,
                                      password=password):
            emit(_store_outcome(corpus, oc, sha_of[oc.path], fail_on))

        _compare_across(corpus, report, prof, reports_dir, fail_on)
        keys = corpus.certificate_keys()
    if out is not None:
        try:
            write_cross_findings(report.cross_findings, out, keys)
        except OSError as exc:
            report.output_errors.append(f"{out}: cannot write cross-findings: {_why(exc)}")
        if portfolio:
            report.portfolio = out / "portfolio.html"
            try:
                write_portfolio(report, report.portfolio)
            except OSError as exc:
                report.output_errors.append(
                    f"{report.portfolio}: cannot write the portfolio: {_why(exc)}")
                report.portfolio = None
    return report


def _why(exc: OSError) -> str:
    return exc.strerror or str(exc)


def _compare_across(corpus: Corpus, report: BatchReport, profile: Profile,
                    reports_dir: Path | None, fail_on: frozenset[Severity]) -> None:
    """The cross-certificate phase: run and store the checks, decide again the verdict of
    every certificate they concern (stored; the outcomes of this run updated), re-write
    those certificates' reports."""
    from certvet.corpus.crosscheck import run_cross_checks

    ids = {cid for sha in set(report.shas) if (cid := corpus.find(sha)) is not None}
    phase = run_cross_checks(corpus, ids, profile)
    report.cross_findings = [cf for cf in phase.findings if cf.cert_id in ids]
    by_cert: dict[int, list[Finding]] = {}
    for cf in phase.findings:
        if cf.cert_id is not None:
            by_cert.setdefault(cf.cert_id, []).append(cf.finding)
    decided = decide_again(corpus, phase.changed, by_cert)
    corpus.set_verdicts({cid: v.key.value for cid, v in decided.items()})
    for i, o in enumerate(report.outcomes):
        cid = corpus.find(o.sha256) if o.sha256 else None
        if cid is None or cid not in decided or o.status is Status.FAILED:
            continue
        counted = [f for f in corpus.findings(cid, stage=None) if not f.preview]
        new = replace(o, verdict=decided[cid].label, findings=len(counted),
                      breach=any(f.severity in fail_on for f in counted))
        report.outcomes[i] = new
        if new.verdict != o.verdict or new.findings != o.findings:
            report.decided_again.append(new)
    if reports_dir is not None:
        report.related_reports = rewrite_related_reports(
            corpus, phase.findings, reports_dir, profile, report.outcomes,
            only=phase.changed)


def decide_again(corpus: Corpus, cert_ids: Iterable[int],
                 cross: dict[int, list[Finding]]) -> dict[int, Verdict]:
    """The verdict of each stored certificate with its cross-certificate findings counted."""
    from certvet.checks.runner import CheckResults
    from certvet.reports.verdict import decide

    out = {}
    for cid in sorted(cert_ids):
        cert = corpus.certificate(cid)
        results = CheckResults(DEFAULT_PROFILE, [], corpus.findings(cid))
        out[cid] = decide(cert, results.with_findings(cross.get(cid, [])))
    return out


def warm_up(layouts: Sequence[Layout], engine: str | None) -> None:
    """Do once in the parent what every child would otherwise do per file: import the
    engines and report modules, load the catalogue and its reference tables, compile the
    report template. Children are forked from the parent, so they start warm."""
    from certvet.checks.runner import run_checks
    from certvet.extractor.api import warm_up_engine
    from certvet.reports.csvout import write_csv  # noqa: F401  (imported for the children)
    from certvet.reports.html import render_html
    from certvet.reports.jsonout import report_dict

    for name in {engine} if engine else {lay.engine for lay in layouts}:
        try:
            warm_up_engine(name)
        except InputError:
            pass  # the child reports it, once per file
    cert = _warm_up_certificate()
    results = run_checks(cert)  # loads every check and the tables they read
    render_html(cert, results, certvet_version="warm-up")
    report_dict(cert, results, certvet_version="warm-up")


def _warm_up_certificate() -> Any:
    """A two-circuit certificate (a ring and a radial) that touches every kind of check."""
    from certvet.extractor.fields import BOARD, FIELDS
    from certvet.extractor.records import Board, Cell, Certificate, Circuit
    from certvet.extractor.tokens import parse_value

    def cells(specs: dict[str, Any], values: dict[str, str]) -> dict[str, Cell]:
        return {
            k: Cell(k, parse_value(v, specs[k].kind, specs[k].unit)) for k, v in values.items()
        }

    common = {"device_standard": "61009", "device_type": "B", "rcd_idn": "30",
              "rcd_time": "21", "rcd_button": "✓", "polarity": "✓", "ir_test_voltage": "500",
              "ir_live_live": ">999", "ir_live_earth": ">999", "max_zs": "1.37"}
    ring = dict(common, circuit_ref="1", description="Sockets ring", live_csa="2.5",
                cpc_csa="1.5", rating="32", r1="0.40", rn="0.40", r2="0.66", r1_r2="0.27",
                zs="0.55")
    radial = dict(common, circuit_ref="2", description="Lights", live_csa="1.5", cpc_csa="1.0",
                  rating="6", r1_r2="0.80", zs="1.08", max_zs="7.28")
    board = Board("DB1", cells(BOARD, {"board_ref": "DB1", "ze": "0.28", "ipf": "0.82",
                                       "earthing": "TN-C-S"}))
    for raw in (ring, radial):
        board.circuits.append(Circuit("DB1", raw["circuit_ref"], cells(FIELDS, raw), 1))
    cert = Certificate("warm-up.pdf", "0" * 64, "warm-up", "warm-up", 1)
    cert.boards.append(board)
    return cert


def _drafted_line(res: AuditResult) -> str | None:
    note = res.certificate.drafted
    return note.message(str(res.source)) if note is not None else None


def _store_outcome(corpus: Corpus, oc: Outcome, sha: str,
                   fail_on: frozenset[Severity] = DEFAULT_FAIL_ON) -> FileOutcome:
    """Write one result to the store (one transaction) and say how the file ended.

    A file whose reports could not be written (ReportWriteError: the output folder's fault,
    not the PDF's) is failed for this run but not stored, so the next run audits it again.
    A store that cannot take the result (disk full, read-only, damaged) stops the run with a
    one-line CorpusError naming the store and the file: nothing of the file is stored, so it
    is never recorded as failed for the store's fault, and a re-run audits it."""
    from certvet.api import ReportWriteError
    from certvet.corpus.store import CorpusError

    if oc.error is None and oc.result is not None:
        res: AuditResult = oc.result
        verdict = res.verdict
        try:
            corpus.add(res.certificate, res.results, verdict=verdict.key.value)
        except CorpusError as exc:
            raise CorpusError(f"{exc} (while storing {oc.path}; nothing of it was stored, "
                              "a re-run audits it)") from None
        counted = [f for f in res.results.findings if not f.preview]
        return FileOutcome(oc.path, Status.AUDITED, sha, layout=res.layout,
                           certificate=res.certificate.name, verdict=verdict.label,
                           findings=len(counted),
                           breach=any(f.severity in fail_on for f in counted),
                           reports=dict(res.outputs), drafted=_drafted_line(res))
    reason = _one_line(oc.error or f"{oc.path}: no result")
    if not isinstance(oc.exception, ReportWriteError):
        corpus.add_failure(sha, str(oc.path), reason)
    return FileOutcome(oc.path, Status.FAILED, sha, reason=reason)


# --- cross-certificate findings -----------------------------------------------------------


def cross_findings(corpus: Corpus, shas: set[str], profile: Profile | None = None
                   ) -> list[CrossFinding]:
    """Copies, repeats, reused numbers and workload for the certificates with these hashes
    (computed, not stored: the portfolio's side-by-side readings)."""
    from certvet.corpus.crosscheck import check_certificate, workload

    ids = {cid for sha in sorted(shas) if (cid := corpus.find(sha)) is not None}
    found: list[CrossFinding] = []
    for cid in sorted(ids):
        found.extend(check_certificate(corpus, cid, profile))
    found.extend(cf for cf in workload(corpus, profile) if cf.cert_id in ids)
    found.sort(key=lambda cf: (cf.finding.certificate, cf.finding.check_id,
                               cf.finding.related, cf.finding.message))
    return found


def _report_html(sha: str, stems: Sequence[str], reports_dir: Path) -> Path | None:
    """The certificate's own HTML report in `reports_dir`, when it exists."""
    for stem in stems:
        path = reports_dir / f"{stem}.html"
        if path.exists():
            return path
    return None


def related_findings(
    corpus: Corpus, found: Sequence[CrossFinding], report_of: Callable[[int], Path | None]
) -> dict[int, list[Any]]:
    """The cross-certificate findings as `reports.model.RelatedFinding`s, by the id of the
    certificate each is about. `report_of(cert_id)` gives a certificate's HTML report (or
    None); links are its file name, as the reports are siblings in one folder."""
    from urllib.parse import quote

    from certvet.corpus.store import CertificateRow
    from certvet.reports.model import OtherCertificate, PairedValue, RelatedFinding

    rows: dict[int, CertificateRow] = {}

    def row(cid: int) -> CertificateRow:
        if cid not in rows:
            rows[cid] = corpus.certificate_row(cid)
        return rows[cid]

    def others_of(cf: CrossFinding) -> list[CertificateRow]:
        if cf.match is not None:
            return [row(cf.match.cert_b)]
        return [row(o) for o in cf.others]

    out: dict[int, list[Any]] = {}
    for cf in found:
        owner = cf.cert_id
        if owner is None and cf.match is not None:
            owner = cf.match.cert_a
        if owner is None:
            continue
        others = []
        for o in others_of(cf):
            html = report_of(o.id)
            others.append(OtherCertificate(
                name=o.name, address=o.address or "", date=o.inspection_date or "",
                inspector=o.inspector or "", report=quote(html.name) if html else None))
        readings = tuple(
            PairedValue(board=b.board_a, circuit=r.circuit_a, field=r.field,
                        here=r.raw_a or "", there=r.raw_b or "", relation=r.relation,
                        board_there=b.board_b, circuit_there=r.circuit_b)
            for b in (cf.match.blocks if cf.match is not None else ()) for r in b.readings)
        out.setdefault(owner, []).append(RelatedFinding(cf.finding, tuple(others), readings))
    return out


def rewrite_related_reports(
    corpus: Corpus,
    found: Sequence[CrossFinding],
    reports_dir: Path,
    profile: Profile,
    outcomes: Sequence[FileOutcome] = (),
    only: set[int] | None = None,
) -> list[Path]:
    """Re-write the HTML, JSON and findings CSV reports of every certificate with a
    cross-certificate finding (or of the certificates in `only`: also those that no longer
    have one), with the findings in them (section "Compared with other certificates"). The
    certificate, its findings, check runs and the rule profile it was audited with come back
    from the store, so certificates audited in an earlier run are covered too, when their
    reports are in `reports_dir`. `profile` (this run's) stands in for a certificate stored
    before profiles were recorded, and its report says so. Returns the files written; a
    report that cannot be written is left as it was."""
    from datetime import datetime

    from certvet import __version__
    from certvet.checks.runner import CheckResults
    from certvet.reports.csvout import write_findings_csv
    from certvet.reports.html import write_html
    from certvet.reports.jsonout import write_json

    files = {f.sha256: f for f in corpus.files()}
    stems_of: dict[str, list[str]] = {}
    for o in outcomes:
        if o.sha256 and "html" in o.reports:
            stems_of.setdefault(o.sha256, []).append(o.reports["html"].stem)
        elif o.sha256:
            stems_of.setdefault(o.sha256, []).append(report_stem(o.path, o.sha256))
    for sha, f in files.items():
        stems_of.setdefault(sha, []).append(report_stem(Path(f.path), sha))
    html_of: dict[int, Path | None] = {}

    def report_of(cid: int) -> Path | None:
        if cid not in html_of:
            sha = corpus.certificate_row(cid).sha256
            html_of[cid] = _report_html(sha, stems_of.get(sha, []), reports_dir)
        return html_of[cid]

    written: list[Path] = []
    by_cert = related_findings(corpus, found, report_of)
    for cid in sorted(only if only is not None else by_cert):
        related = by_cert.get(cid, [])
        html = report_of(cid)
        if html is None:
            continue  # never reported into this folder
        cert = corpus.certificate(cid)
        used = corpus.profile(cid) or _unrecorded(profile)
        results = CheckResults(used, corpus.check_runs(cid), corpus.findings(cid))
        stored = files.get(cert.sha256)
        when = datetime.fromisoformat(stored.audited_at) if stored else None
        try:
            written.append(write_html(
                cert, results, html, certvet_version=__version__, profile=used,
                generated_at=when.strftime("%Y-%m-%d %H:%M UTC") if when else None,
                related=related))
            written.append(write_json(
                cert, results, html.with_suffix(".json"), certvet_version=__version__,
                profile=used, generated_at=when.isoformat() if when else None,
                related=related))
            written.append(write_findings_csv(
                results.with_findings(rf.finding for rf in related),
                html.with_name(html.stem + ".findings.csv")))
        except OSError:
            continue
    return written


def _unrecorded(profile: Profile) -> Profile:
    """This run's profile, standing in for one the store did not record (a certificate
    stored before schema version 2): the report's profile line says so."""
    note = "not recorded with this certificate; this run's profile shown"
    text = f"{profile.description}; {note}" if profile.description else note
    return replace(profile, description=text)


def write_cross_findings(found: Sequence[CrossFinding], out_dir: Path,
                         keys: dict[int, tuple[str, str | None]] | None = None
                         ) -> tuple[Path, Path]:
    """`cross-findings.json` (format_version 2: each finding with `cert_sha256`, `cert_number`
    and `related_sha256`, the certificates' stable keys) and `cross-findings.csv` (the same
    columns). `keys` maps store ids to (content hash, number). Each file replaces the old one
    only once written in full (a full disk leaves the old file, never an empty one)."""
    from certvet.checks.model import FINDING_COLUMNS
    from certvet.reports.csvout import write_table
    from certvet.reports.files import replaced_atomically
    from certvet.reports.model import CAUTIONS

    keys = keys or {}
    rows = []
    for cf in found:
        sha, number = keys.get(cf.cert_id or -1, ("", None))
        rows.append({"cert_sha256": sha, "cert_number": number, **cf.finding.to_dict(),
                     "related_sha256": [keys[o][0] for o in cf.others if o in keys]})
    js = out_dir / "cross-findings.json"
    with replaced_atomically(js) as fh:
        json.dump({"format_version": 2, "cautions": list(CAUTIONS), "findings": rows}, fh,
                  indent=1)
    cols = (["cert_sha256", "cert_number"] + [c for c in FINDING_COLUMNS if c != "box"]
            + ["related", "related_sha256"])
    cs = write_table(out_dir / "cross-findings.csv", cols,
                     (["; ".join(r[c]) if c in ("related", "related_sha256") else r[c]
                       for c in cols] for r in rows))
    return js, cs


# --- the portfolio (view-model from the store; rendering lives in reports/portfolio.py) -----


def write_portfolio(store_or_results: Any, path: Path | str, *,
                    reports_dir: Path | None = None) -> Path:
    """Write the portfolio page for a BatchReport, a Corpus, or a store path."""
    from certvet.corpus.store import Corpus
    from certvet.reports.portfolio import render_portfolio

    if isinstance(store_or_results, BatchReport):
        data = store_or_results.portfolio_data()
    elif isinstance(store_or_results, Corpus):
        data = collect_portfolio(store_or_results, reports_dir=reports_dir)
    else:
        with Corpus(Path(store_or_results)) as corpus:
            data = collect_portfolio(corpus, reports_dir=reports_dir)
    return render_portfolio(data, Path(path))


def collect_portfolio(
    corpus: Corpus,
    *,
    shas: set[str] | None = None,
    reports: dict[str, Path] | None = None,
    failures: Sequence[tuple[str, str]] | None = None,
    reports_dir: Path | None = None,
    cross: Sequence[CrossFinding] | None = None,
    title: str = "Corpus portfolio",
) -> PortfolioData:
    """Gather the portfolio view-model from the store: the certificates with these hashes
    (every certificate when `shas` is None), their findings, the cross-certificate findings,
    readings for the charts, and a link to each certificate's own report when known
    (`reports` by hash, else `reports_dir/<stem>-<sha8>.html` when that file exists)."""
    from certvet.checks.devices import parse_device
    from certvet.checks.model import Severity
    from certvet.checks.runner import CheckResults
    from certvet.checks.tables import max_zs
    from certvet.corpus.crosscheck import party_stats, workload_limit
    from certvet.corpus.store import STAGE_CORPUS
    from certvet.extractor.records import ValueKind
    from certvet.reports.portfolio import CertInput, LinkInput, PartyInput, PortfolioData
    from certvet.reports.verdict import decide

    rows = [r for r in corpus.certificates() if shas is None or r.sha256 in shas]
    known = {r.sha256 for r in rows}
    paths = {f.sha256: f.path for f in corpus.files()}
    if failures is None:
        failures = [(f.path, f.failure_reason or "") for f in corpus.files()
                    if f.status == "failed" and (shas is None or f.sha256 in shas)]
    if cross is None:
        cross = cross_findings(corpus, known)
    reports = reports or {}
    certs: list[CertInput] = []
    zs_ratios: list[float] = []
    digits = [0] * 10
    for row in rows:
        cert = corpus.certificate(row.id)
        found = corpus.findings(row.id)
        # the verdict counts the stored cross-certificate findings too (listed as links)
        verdict = decide(cert, CheckResults(DEFAULT_PROFILE, [], found).with_findings(
            corpus.findings(row.id, stage=STAGE_CORPUS)))
        for _, c in cert.circuits():
            zs = c.number("zs")
            if zs is not None:
                limit = max_zs(parse_device(c))
                if limit is not None and limit.ohm > 0:
                    zs_ratios.append(zs / limit.ohm)
            for name, cell in c.cells.items():
                if name in MEASURED_FIELDS and cell.value.kind is ValueKind.NUMBER:
                    last = [ch for ch in cell.value.raw if ch.isdigit()]
                    if last:
                        digits[int(last[-1])] += 1
        report = reports.get(row.sha256)
        if report is None and reports_dir is not None:
            stem = report_stem(Path(paths.get(row.sha256, row.name)), row.sha256)
            guess = reports_dir / f"{stem}.html"
            report = guess if guess.exists() else None
        certs.append(CertInput(
            id=row.id, name=row.name, sha256=row.sha256, source=paths.get(row.sha256, ""),
            address=row.address, inspector=row.inspector, contractor=row.contractor,
            date=row.inspection_date, verdict_key=verdict.key.value,
            verdict_label=verdict.label, tone=verdict.tone, circuits=row.n_circuits,
            tested=row.n_tested,
            findings=tuple((f.check_id, f.severity.slug, f.message) for f in found
                           if not f.preview),
            report=report,
        ))
    links: list[LinkInput] = []  # one per cross-certificate finding, on its certificate
    for cf in cross:
        f, m = cf.finding, cf.match
        owner = cf.cert_id if cf.cert_id is not None else (m.cert_a if m is not None else None)
        other = m.cert_b if m is not None else None
        blocks = tuple(
            (b.board_a, b.board_b,
             tuple((r.field, r.circuit_a, r.raw_a, r.circuit_b, r.raw_b, r.relation)
                   for r in b.readings))
            for b in (m.blocks if m is not None else ())
        )
        if owner is not None:
            links.append(LinkInput(
                cert=owner, other=other, check_id=f.check_id, severity=f.severity.slug,
                message=f.message, kind=m.kind if m is not None else None,
                share=m.share if m is not None else None, blocks=blocks,
                related=f.related))
    names_in_scope = {(c.inspector or "") for c in certs}
    workload = [
        (who or "inspector unread", day, n) for who, day, n in corpus.tested_per_day()
        if shas is None or (who or "") in names_in_scope
    ]
    parties = [
        PartyInput(role, p.party, p.last_digit_chi2, p.share_last_digit_0_or_5,
                   p.share_zs_exactly_calculated, p.zs_compared, p.readings)
        for role in ("contractor", "inspector") for p in party_stats(corpus, role)
    ]
    return PortfolioData(
        title=title,
        scope=("this batch" if shas is not None else "the whole corpus"),
        store=str(corpus.path),
        certificates=certs, failures=list(failures), links=links, parties=parties,
        zs_ratios=zs_ratios, last_digits=digits, workload=workload,
        workload_limit=workload_limit(),
        severities=[s.slug for s in sorted(Severity, reverse=True)],
    )


def cpu_workers() -> int:
    return max(1, os.cpu_count() or 1)
