"""The library API: everything the CLI does is reachable from here.

    from certvet.api import audit_file, load_layouts
    result = audit_file("cert.pdf", layouts=load_layouts("layouts/"), out_dir="out")
    print(result.verdict.label, len(result.results.findings))
    result.findings_frame()        # pandas DataFrames of the findings and the circuits
    result.circuits_frame()

Heavy libraries (pdfplumber, pandas, jinja2) are imported inside the functions that need them,
so importing this module — and the CLI's --help — stays fast.
"""

from __future__ import annotations

from collections.abc import Callable, Iterable, Sequence
from dataclasses import dataclass, field
from datetime import date
from pathlib import Path
from typing import TYPE_CHECKING

from certvet import __version__
from certvet.checks.profile import DEFAULT_PROFILE, Profile, load_profile
from certvet.checks.runner import CheckResults, run_checks
from certvet.extractor.errors import InputError, NoLayoutMatches, NotRecognised
from certvet.extractor.layout import Layout, LayoutError, load_layout, load_layouts
from certvet.extractor.records import Certificate

if TYPE_CHECKING:  # reports.verdict is imported lazily, in AuditResult.verdict
    import pandas as pd

    from certvet.drafting import DraftedForms, DraftOptions
    from certvet.reports.verdict import Verdict
    from certvet.workers import Limits

__all__ = [
    "AuditResult",
    "BatchSummary",
    "InputError",
    "LayoutError",
    "NoLayoutMatches",
    "NotRecognised",
    "ReportWriteError",
    "audit_file",
    "audit_many",
    "demo_inputs",
    "expand_inputs",
    "load_layout",
    "load_layouts",
    "load_profile",
]

DEMO_DIR = Path(__file__).resolve().parent / "demo" / "certificates"
DEMO_LAYOUTS = Path(__file__).resolve().parent / "demo" / "layouts"


class ReportWriteError(InputError):
    """The certificate's reports could not be written (the output folder's fault, not the
    PDF's): a batch records the file as failed for this run but does not store it as failed."""


@dataclass
class AuditResult:
    source: Path
    certificate: Certificate
    results: CheckResults
    layout: str
    outputs: dict[str, Path] = field(default_factory=dict)

    @property
    def verdict(self) -> Verdict:
        from certvet.reports.verdict import verdict_for

        return verdict_for(self.certificate, self.results)

    def circuits_frame(self) -> pd.DataFrame:
        """The certificate's circuits as a DataFrame (extractor.frame.circuits_frame)."""
        from certvet.extractor.frame import circuits_frame

        return circuits_frame(self.certificate)

    def findings_frame(self) -> pd.DataFrame:
        """The findings as a DataFrame (checks.frame.findings_frame)."""
        from certvet.checks.frame import findings_frame

        return findings_frame(self.results.findings)

    @property
    def has_breach(self) -> bool:
        from certvet.checks.model import Severity

        worst = self.results.worst()
        return worst is not None and worst >= Severity.BREACH


@dataclass(frozen=True)
class Failure:
    source: Path
    reason: str  # one line, naming the file


@dataclass
class BatchSummary:
    audited: list[AuditResult] = field(default_factory=list)
    failed: list[Failure] = field(default_factory=list)

    @property
    def total(self) -> int:
        return len(self.audited) + len(self.failed)


REPORT_FORMATS = ("html", "json", "csv", "summary", "queries")
"""What a per-certificate audit writes: the report (HTML, JSON, CSV), the landlord's summary
(`<stem>.summary.html`) and the contractor's query sheet (`<stem>.queries.html`)."""


def audit_file(
    pdf: str | Path,
    *,
    layouts: Sequence[Layout] = (),
    layout: Layout | None = None,
    profile: Profile | str | Path | None = None,
    out_dir: str | Path | None = None,
    engine: str | None = None,
    password: str | None = None,
    formats: Iterable[str] = REPORT_FORMATS,
    stem: str | None = None,
    drafting: DraftOptions | None = None,
    drafts: DraftedForms | None = None,
    audit_date: date | None = None,
) -> AuditResult:
    """Extract, check and (when out_dir is given) write the reports for one PDF, named
    `<stem>.*` (default: the PDF's name). `audit_date`: the date the audit speaks for
    (default: the profile's, else today).

    When no layout recognises the file, a layout is drafted from it (certvet/drafting.py;
    `drafting=DraftOptions(enabled=False)` turns that off). `drafts` carries the layouts drafted
    earlier in a run, so files of one unknown form share one; by default a drafted layout is
    saved under `<out_dir>/drafted-layouts/`.

    Raises InputError (one-line message naming the file) for input that cannot be audited.
    """
    from certvet.extractor.api import extract

    path = Path(pdf)
    out_dir = Path(out_dir) if out_dir is not None else None
    if isinstance(profile, (str, Path)):
        profile = load_profile(Path(profile))
    if not path.exists():
        raise InputError(str(path), "file not found")
    if path.is_dir():
        raise InputError(str(path), "is a folder, not a PDF")
    if layout is not None:
        chosen, cert = layout, extract(str(path), layout, engine=engine, password=password)
    else:
        if drafts is None:
            drafts = new_drafts(drafting, out_dir, layouts)
        chosen, cert = _recognise_or_draft(str(path), layouts, drafts, engine, password)
    results = run_checks(cert, profile or DEFAULT_PROFILE, audit_date=audit_date)
    result = AuditResult(path, cert, results, chosen.name)
    if out_dir is not None:
        result.outputs = write_reports(result, out_dir, formats, profile or DEFAULT_PROFILE,
                                       stem=stem)
    return result


def new_drafts(drafting: DraftOptions | None, out_dir: Path | None,
               layouts: Sequence[Layout] = ()) -> DraftedForms:
    """The drafted layouts of one run (none yet): saved in `<out_dir>/drafted-layouts` unless
    the options name another folder; named apart from the given `layouts`."""
    from dataclasses import replace

    from certvet.drafting import DRAFTS_SUBDIR, DraftedForms, DraftOptions

    opts = drafting or DraftOptions()
    if opts.folder is None and out_dir is not None:
        opts = replace(opts, folder=out_dir / DRAFTS_SUBDIR)
    return DraftedForms(opts, reserved={lay.name for lay in layouts})


def _recognise_or_draft(
    path: str, layouts: Sequence[Layout], drafts: DraftedForms, engine: str | None,
    password: str | None,
) -> tuple[Layout, Certificate]:
    """The given layout that recognises the file; else one drafted earlier in the run; else
    (when drafting is on) one drafted from the file now. NotRecognised when none."""
    from certvet.extractor.api import extract_recognised
    from certvet.extractor.draft_reading import draft_command

    if layouts:
        found, got = extract_recognised(path, layouts, engine=engine, password=password)
        if found is not None and got is not None:
            return found, got
    try:
        shared = drafts.read_with_shared(path, engine=engine, password=password)
    except InputError:
        if not drafts.options.enabled:
            raise
        shared = None  # a layout drafted from another file recognised it but cannot read it
    if shared is not None:
        return shared
    if drafts.options.enabled:
        return drafts.draft(path, engine=engine, password=password)
    fix = f"`{draft_command(path)}` drafts one to check and edit"
    if not layouts:
        raise NotRecognised(path, f"no layout given (use --layout) and drafting a layout for "
                                  f"unknown forms is off; {fix}")
    names = ", ".join(lay.name for lay in layouts)
    raise NotRecognised(path, f"no layout recognises this form (tried: {names}); {fix}")


def write_reports(
    result: AuditResult,
    out_dir: Path,
    formats: Iterable[str],
    profile: Profile,
    stem: str | None = None,
) -> dict[str, Path]:
    """Write the certificate's reports as `<out_dir>/<stem>.html|.json|.records.csv|
    .findings.csv|.summary.html|.queries.html` (stem: the PDF's name by default). A folder
    that cannot be written is a ReportWriteError (an InputError) naming it, never a traceback."""
    from certvet.reports.csvout import write_csv
    from certvet.reports.html import write_html
    from certvet.reports.jsonout import write_json
    from certvet.reports.readers import write_query_sheet, write_summary

    stem = stem or result.source.stem
    cert, res = result.certificate, result.results
    outputs: dict[str, Path] = {}
    fmts = set(formats)
    try:
        out_dir.mkdir(parents=True, exist_ok=True)
        if "html" in fmts:
            outputs["html"] = write_html(cert, res, out_dir / f"{stem}.html",
                                         certvet_version=__version__, profile=profile)
        if "json" in fmts:
            outputs["json"] = write_json(cert, res, out_dir / f"{stem}.json",
                                         certvet_version=__version__, profile=profile)
        if "csv" in fmts:
            records, findings = write_csv(cert, res, out_dir / stem)
            outputs["records_csv"], outputs["findings_csv"] = Path(records), Path(findings)
        if "summary" in fmts:
            outputs["summary"] = write_summary(cert, res, out_dir / f"{stem}.summary.html",
                                               certvet_version=__version__)
        if "queries" in fmts:
            outputs["queries"] = write_query_sheet(cert, res, out_dir / f"{stem}.queries.html",
                                                   certvet_version=__version__)
    except OSError as exc:
        where = exc.filename or out_dir
        why = exc.strerror or exc
        raise ReportWriteError(str(result.source),
                               f"cannot write its reports to {where}: {why}") from None
    return outputs


def expand_inputs(paths: Iterable[Path]) -> list[Path]:
    """Files as given, folders searched recursively for *.pdf (sorted, no duplicates)."""
    seen: dict[Path, None] = {}
    for p in paths:
        if p.is_dir():
            for f in sorted(p.rglob("*")):
                if f.is_file() and f.suffix.lower() == ".pdf":
                    seen.setdefault(f, None)
        else:
            seen.setdefault(p, None)
    return list(seen)


def audit_many(
    pdfs: Sequence[Path],
    *,
    layouts: Sequence[Layout] = (),
    layout: Layout | None = None,
    profile: Profile | None = None,
    out_dir: Path | None = None,
    engine: str | None = None,
    password: str | None = None,
    on_done: Callable[[Path, AuditResult | None, str | None], None] | None = None,
    drafting: DraftOptions | None = None,
    limits: Limits | None = None,
) -> BatchSummary:
    """Audit each file in turn; a bad file is recorded as failed with its reason, never fatal.
    Files of one unknown form share the layout drafted from the first of them.

    With `limits`, each file is audited in its own child process with that time and memory
    limit (certvet.workers, as `certvet batch` does), still one at a time and in order; a
    layout a child drafts is not passed back, so each file of an unknown form is drafted on
    its own."""
    summary = BatchSummary()
    drafts = new_drafts(drafting, out_dir, layouts)
    used: set[str] = set()  # equal file names in different folders: cert.*, cert-2.*…
    stems: list[tuple[Path, str]] = []
    for pdf in pdfs:
        stem = name = Path(pdf).stem
        n = 1
        while stem.lower() in used:
            n += 1
            stem = f"{name}-{n}"
        used.add(stem.lower())
        stems.append((Path(pdf), stem))

    def one(pdf: Path, stem: str) -> AuditResult:
        return audit_file(pdf, layouts=layouts, layout=layout, profile=profile,
                          out_dir=out_dir, engine=engine, password=password, stem=stem,
                          drafts=drafts)

    def record(pdf: Path, res: AuditResult | None, reason: str | None) -> None:
        if res is None:
            summary.failed.append(Failure(pdf, reason or f"{pdf}: not audited"))
        else:
            summary.audited.append(res)
        if on_done:
            on_done(pdf, res, reason)

    if limits is not None:
        from certvet.workers import run_isolated

        by_path = dict(stems)
        # one child at a time: outcomes come in the order of the inputs
        for o in run_isolated(list(by_path), lambda p: one(p, by_path[p]), workers=1,
                              limits=limits):
            record(o.path, o.result, o.error)
        return summary
    for pdf, stem in stems:
        try:
            res = one(pdf, stem)
        except InputError as exc:
            record(pdf, None, str(exc))
            continue
        except Exception as exc:  # a bug must not lose the rest of the batch
            record(pdf, None, f"{pdf}: internal error while auditing ({type(exc).__name__}: {exc})")
            continue
        record(pdf, res, None)
    return summary


def demo_inputs() -> tuple[list[Path], list[Layout]]:
    """The bundled demo certificates and their layouts."""
    pdfs = sorted(DEMO_DIR.glob("*.pdf"))
    if not pdfs:
        raise InputError(str(DEMO_DIR), "no demo PDFs found (run: python fixtures/generate.py)")
    return pdfs, load_layouts([DEMO_LAYOUTS])
