"""`certvet batch`, `certvet portfolio` and `certvet export`: thin commands over certvet.batch
and the corpus. Mounted by certvet.cli._mount_optional() through `register(app)`.

Heavy libraries (rich, dask, pandas) are imported inside the commands.
"""

from __future__ import annotations

import sys
from enum import StrEnum
from pathlib import Path
from typing import Annotated, Any, Optional

import typer

from certvet import cli_drafting as draft_opts
from certvet.console import err as _err
from certvet.console import make_out_dir, one_line
from certvet.exitcodes import DEFAULT_FAIL_ON, EXIT_FAILED, EXIT_USAGE, parse_fail_on


class ExportFormat(StrEnum):
    csv = "csv"
    parquet = "parquet"
    xlsx = "xlsx"


def _why(exc: OSError) -> str:
    if isinstance(exc, FileExistsError):
        return f"{exc.filename or 'a file'} is a file, not a folder"
    return exc.strerror or str(exc)


def batch(
    inputs: Annotated[list[Path], typer.Argument(
        metavar="PDF", help="PDF files or folders (searched recursively).")],
    layout: Annotated[
        list[Path],
        typer.Option("--layout", "-l", metavar="LAYOUT",
                     help="Layout file or folder of layouts; repeatable. "
                     "Each file's form is recognised automatically among them; files of a form "
                     "none recognises share a layout drafted from the first of them "
                     "(see --no-draft-unknown-forms)."),
    ] = [],  # noqa: B006
    store: Annotated[Path, typer.Option("--store", "-s", help="Corpus store (SQLite file).")
                     ] = Path("corpus.sqlite"),
    out: Annotated[Path, typer.Option("--out", "-o", help="Folder for reports and the portfolio.")
                   ] = Path("certvet-out"),
    workers: Annotated[
        Optional[int], typer.Option("--workers", "-w", min=1,  # noqa: UP045
                                    help="Files audited at once (default: every core).")] = None,
    timeout: Annotated[float, typer.Option("--timeout", min=1.0,
                                           help="Seconds allowed per file.")] = 120.0,
    memory_mb: Annotated[int, typer.Option("--memory-mb", min=0,
                                           help="Resident memory per file, MB (0: none).")] = 2048,
    retry_failed: Annotated[bool, typer.Option("--retry-failed",
                                               help="Re-run files that failed before.")] = False,
    scheduler: Annotated[
        Optional[str], typer.Option("--scheduler",  # noqa: UP045
                                    help="Run on a Dask cluster: tcp://host:port.")] = None,
    profile: Annotated[
        Optional[Path], typer.Option("--profile", help="Rule profile (TOML).")  # noqa: UP045
    ] = None,
    password: Annotated[
        Optional[str], typer.Option("--password", help="Password for encrypted PDFs.")  # noqa: UP045
    ] = None,
    quiet: Annotated[bool, typer.Option("--quiet", "-q", help="Print only the totals.")] = False,
    fail_on: Annotated[
        str, typer.Option("--fail-on", metavar="SEVERITIES",
                          help="Severities that make the exit status 1, comma-separated "
                               "(note, query, breach, impossible); findings across "
                               "certificates count too (a copied schedule is impossible).")
    ] = DEFAULT_FAIL_ON,
    draft_unknown: draft_opts.DraftUnknown = True,
    min_draft_confidence: draft_opts.MinConfidence = draft_opts.READ_AT,
    trusted_draft_confidence: draft_opts.TrustedConfidence = draft_opts.TRUSTED_AT,
) -> None:
    """Audit a folder of certificates into the corpus: resumable, in parallel, never stopped by
    one bad file; then cross-certificate checks and a portfolio page."""
    from certvet.batch import FileOutcome, Status, run_batch
    from certvet.checks.profile import DEFAULT_PROFILE, ProfileError, load_profile
    from certvet.corpus.store import CorpusError
    from certvet.extractor.layout import LayoutError, load_layouts
    from certvet.workers import Limits

    try:
        layouts = load_layouts(layout) if layout else []
        prof = load_profile(profile) if profile else DEFAULT_PROFILE
        severities = parse_fail_on(fail_on)
    except (LayoutError, ProfileError, ValueError) as exc:
        _err(str(exc))
        raise typer.Exit(EXIT_USAGE) from None

    from certvet.api import expand_inputs
    from certvet.reports.verdict import NOT_AUDITED

    if not expand_inputs(inputs):
        _err(f"{', '.join(str(p) for p in inputs)}: no PDF files found")
        raise typer.Exit(EXIT_FAILED)
    make_out_dir(out)

    show_bar = not quiet and sys.stderr.isatty()
    lines: list[str] = []
    counts = {s: 0 for s in Status}
    progress = None
    task = None

    def on_start(total: int) -> None:
        nonlocal progress, task
        if not show_bar:
            return
        from rich.progress import (
            BarColumn,
            MofNCompleteColumn,
            Progress,
            TextColumn,
            TimeElapsedColumn,
            TimeRemainingColumn,
        )

        progress = Progress(TextColumn("auditing"), BarColumn(), MofNCompleteColumn(),
                            TextColumn("[green]{task.fields[audited]} audited[/] · "
                                       "{task.fields[skipped]} skipped · "
                                       "[red]{task.fields[failed]} " + NOT_AUDITED + "[/]"),
                            TimeElapsedColumn(), TimeRemainingColumn(), transient=True)
        progress.start()
        task = progress.add_task("batch", total=total, audited=0, skipped=0, failed=0)

    def on_event(o: FileOutcome) -> None:
        counts[o.status] += 1
        lines.append(o.line())
        if progress is not None and task is not None:
            fields: dict[str, Any] = {s.value: n for s, n in counts.items()}
            progress.update(task, advance=1, **fields)
        elif not quiet:
            typer.echo(lines[-1])

    try:
        report = run_batch(inputs, layouts=layouts, store=store, out_dir=out, workers=workers,
                           limits=Limits(seconds=timeout, memory_mb=memory_mb), profile=prof,
                           password=password, on_event=on_event, retry_failed=retry_failed,
                           scheduler=scheduler, on_start=on_start, fail_on=severities,
                           drafting=draft_opts.draft_options(draft_unknown, min_draft_confidence,
                                                             trusted_draft_confidence))
    except (CorpusError, ConnectionError) as exc:
        _err(str(exc))
        raise typer.Exit(EXIT_FAILED) from None
    finally:
        if progress is not None:
            progress.stop()
    if show_bar and not quiet:
        for ln in lines:
            typer.echo(ln)
    t = report.totals
    if not quiet:
        for name, files in sorted(report.layouts_used.items()):
            typer.echo(f"layout {name}: read {len(files)} file(s)")
        if report.unrecognised:
            typer.echo(f"{len(report.unrecognised)} file(s) no layout recognises:")
            for o in report.unrecognised:
                typer.echo(f"  {one_line(str(o.path))}")
        for cf in report.cross_findings:
            f = cf.finding
            typer.echo(one_line(f"ACROSS   {f.certificate}: {f.check_id} ({f.severity.slug}): "
                                f"{f.message}"))
        if report.decided_again:
            typer.echo("verdicts after comparing with other certificates:")
            for o in report.decided_again:
                typer.echo(o.verdict_line())
    typer.echo(f"\n{len(report.outcomes)} file(s): {t['audited']} audited, {t['skipped']} "
               f"skipped, {t['failed']} {NOT_AUDITED}; {len(report.cross_findings)} "
               "cross-certificate "
               f"finding(s); store {store}; portfolio {report.portfolio}")
    for o in report.failed:
        typer.echo(f"  {NOT_AUDITED}: {one_line(o.reason or '')}")
    for line in report.output_errors:
        _err(line)
    typer.echo("A desk check cannot show an installation is safe; "
               "defer to BS 7671 and licensed practice.")
    raise typer.Exit(report.exit_code)


def portfolio(
    store: Annotated[Path, typer.Option("--store", "-s", help="Corpus store (SQLite file).")
                     ] = Path("corpus.sqlite"),
    out: Annotated[Path, typer.Option("--out", "-o", help="HTML file to write.")] = Path(
        "portfolio.html"),
    reports: Annotated[
        Optional[Path], typer.Option("--reports",  # noqa: UP045
                                     help="Folder of certificate reports to link "
                                          "(a batch's OUT/certificates).")] = None,
) -> None:
    """Write one self-contained HTML page over the whole corpus."""
    from certvet.batch import write_portfolio
    from certvet.corpus.store import CorpusError

    if not store.exists():
        _err(f"{store}: no such corpus store")
        raise typer.Exit(EXIT_USAGE)
    try:
        path = write_portfolio(store, out, reports_dir=reports)
    except CorpusError as exc:
        _err(str(exc))
        raise typer.Exit(EXIT_FAILED) from None
    except OSError as exc:
        _err(f"{out}: cannot write the portfolio: {_why(exc)}")
        raise typer.Exit(EXIT_FAILED) from None
    typer.echo(f"portfolio written: {path}")


def export(
    store: Annotated[Path, typer.Option("--store", "-s", help="Corpus store (SQLite file).")
                     ] = Path("corpus.sqlite"),
    format: Annotated[ExportFormat, typer.Option(
        "--format", "-f", help="csv or parquet (one file per table), or xlsx (one workbook: "
        "cautions and verdicts first, then certificates, circuits, findings…).")
    ] = ExportFormat.csv,
    out: Annotated[Path, typer.Option("--out", "-o", help="Folder to write the tables to.")
                   ] = Path("corpus-export"),
) -> None:
    """Export every table of the corpus as CSV or Parquet files, or one XLSX workbook."""
    from certvet.corpus.store import CorpusError
    from certvet.export import export_store

    if not store.exists():
        _err(f"{store}: no such corpus store")
        raise typer.Exit(EXIT_USAGE)
    try:
        written = export_store(store, out, format.value)
    except (CorpusError, ImportError) as exc:
        _err(" ".join(str(exc).split()))
        raise typer.Exit(EXIT_FAILED) from None
    except OSError as exc:
        _err(f"{out}: cannot write the export: {_why(exc)}")
        raise typer.Exit(EXIT_FAILED) from None
    for p in written:
        typer.echo(str(p))


def register(app: typer.Typer) -> None:
    app.command("batch")(batch)
    app.command("portfolio")(portfolio)
    app.command("export")(export)
