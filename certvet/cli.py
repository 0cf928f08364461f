"""The `certvet` command: a thin layer over certvet.api.

Heavy libraries are imported inside the commands, so `certvet --help` answers quickly.
Exit codes: certvet/exitcodes.py (one table, shown in README).
"""

from __future__ import annotations

import os
import sys
from pathlib import Path
from typing import TYPE_CHECKING, Annotated, Any, Optional

import typer

from certvet import cli_drafting as draft_opts
from certvet.console import err as _err
from certvet.console import make_out_dir as _make_out_dir
from certvet.console import one_line
from certvet.exitcodes import (
    DEFAULT_FAIL_ON,
    EXIT_CLEAN,
    EXIT_FAILED,
    EXIT_FINDINGS,
    EXIT_INTERNAL,
    EXIT_USAGE,
    parse_fail_on,
)
from certvet.extractor.engines.names import EngineName


def _readable_metavars() -> None:
    """Help shows words a user reads (PATH, TEXT, N, PDF...) rather than typer's Python types
    (<path>, <list[Path]>, <int range>); an argument with its own metavar shows only that.
    Typer has no setting for this, so its two display methods are wrapped here, once; if a
    typer release renames them nothing changes and tests/test_cli_conventions.py fails."""
    import re

    import typer.core as tc

    param = getattr(tc, "_TyperParameter", None)
    if param is None or not hasattr(param, "display_type") or getattr(param, "_certvet", False):
        return
    words = {"path": "PATH", "str": "TEXT", "int": "N", "int range": "N", "float": "NUMBER",
             "float range": "NUMBER", "Path": "PATH", "bool": "BOOL"}
    type_of = param.display_type

    def display_type(self: Any, ctx: Any) -> str:
        label = str(type_of(self, ctx)).strip("<>")
        many = re.fullmatch(r"list\[(.*)\]", label)
        label = many[1] if many else label
        return words.get(label, label) + ("..." if many else "")

    param.display_type = display_type
    arg_type = tc.TyperArgument.display_type_rich

    def argument_type(self: Any, ctx: Any) -> str | None:
        return None if self.metavar else arg_type(self, ctx)

    tc.TyperArgument.display_type_rich = argument_type  # type: ignore[method-assign]
    param._certvet = True


_readable_metavars()

if TYPE_CHECKING:  # for annotations only: heavy modules are imported inside the commands
    from certvet.api import AuditResult
    from certvet.checks.profile import Profile
    from certvet.drafting import DraftOptions
    from certvet.extractor.layout import Layout
    from certvet.workers import Limits

app = typer.Typer(
    name="certvet",
    help=(
        "Desk-audit the schedule of test results in BS 7671 electrical certificates (PDF).\n\n"
        "A desk check of recorded results cannot show that an installation is safe: it tells "
        "you which results to question. Defer to BS 7671, local codes and licensed practice."
    ),
    no_args_is_help=True,
    add_completion=True,  # --install-completion / --show-completion (bash, zsh, fish, pwsh)
    rich_markup_mode=None,
    pretty_exceptions_enable=False,
    context_settings={"help_option_names": ["-h", "--help"]},
)


def _show_version(value: bool) -> None:
    if value:
        from certvet import __version__

        typer.echo(f"certvet {__version__}")
        raise typer.Exit(EXIT_CLEAN)


@app.callback()
def _main_options(
    version: Annotated[
        bool,
        typer.Option("--version", "-V", callback=_show_version, is_eager=True,
                     help="Print certvet's version and exit."),
    ] = False,
) -> None:
    """Options before any command (the help text is the app's, above)."""



EngineChoice = EngineName  # the names defined once, in extractor/engines/names.py


def _load_inputs(
    layout_paths: list[Path], profile_path: Path | None, audit_date: str | None = None
) -> tuple[list[Layout], Profile]:
    import dataclasses

    from certvet.checks.profile import DEFAULT_PROFILE, ProfileError, load_profile, parse_audit_date
    from certvet.extractor.layout import LayoutError, load_layouts

    try:
        layouts = load_layouts(layout_paths) if layout_paths else []
        profile = load_profile(profile_path) if profile_path else DEFAULT_PROFILE
        if audit_date is not None:
            profile = dataclasses.replace(
                profile, audit_date=parse_audit_date(audit_date, "--audit-date"))
    except (LayoutError, ProfileError) as exc:
        _err(str(exc))
        raise typer.Exit(EXIT_USAGE) from None
    return layouts, profile


AuditDateOption = Annotated[
    Optional[str],  # noqa: UP045
    typer.Option("--audit-date", metavar="YYYY-MM-DD",
                 help="The date the audit speaks for (certificate age, future dates); "
                 "default: today."),
]


def _run_batch(
    pdfs: list[Path],
    layouts: list[Layout],
    profile: Profile,
    out_dir: Path,
    engine: str | None,
    password: str | None,
    quiet: bool,
    fail_on: frozenset[Any],
    drafting: DraftOptions | None = None,
    verbose: bool = False,
    as_json: bool = False,
    limits: Limits | None = None,
) -> int:
    from certvet.api import audit_many
    from certvet.reports.verdict import NOT_AUDITED

    quiet = quiet or as_json  # --json: stdout holds the document alone; errors go to stderr
    show_bar = len(pdfs) > 3 and not quiet and sys.stderr.isatty()
    lines: list[str] = []
    printed = [0]  # lines already echoed

    def done(path: Path, result: AuditResult | None, error: str | None) -> None:
        if error and quiet:
            _err(error)  # --quiet prints nothing but errors
        if error:
            lines.append(f"{NOT_AUDITED.upper():<22} {one_line(error)}")
        else:
            assert result is not None  # audit_many gives a result or an error
            v = result.verdict
            n = len([f for f in result.results.findings if not f.preview])
            lines.append(
                f"{v.label.upper():<22} {one_line(str(path))}  ({n} findings, layout "
                f"{result.layout})"
            )
            if result.certificate.drafted is not None:
                note = result.certificate.drafted.message(str(path))
                lines.append(f"{'':<22} {one_line(note)}")
            if verbose:
                lines.extend(_finding_lines(result))
        if not show_bar and not quiet:
            typer.echo("\n".join(lines[printed[0]:]))
        printed[0] = len(lines)

    if show_bar:
        from rich.progress import Progress

        with Progress(transient=True) as bar:
            task = bar.add_task("auditing", total=len(pdfs))

            def step(path: Path, result: AuditResult | None, error: str | None) -> None:
                done(path, result, error)
                bar.advance(task)

            summary = audit_many(
                pdfs,
                layouts=layouts,
                profile=profile,
                out_dir=out_dir,
                engine=engine,
                password=password,
                on_done=step,
                drafting=drafting,
                limits=limits,
            )
        for ln in lines:
            typer.echo(ln)
    else:
        summary = audit_many(
            pdfs,
            layouts=layouts,
            profile=profile,
            out_dir=out_dir,
            engine=engine,
            password=password,
            on_done=done,
            drafting=drafting,
            limits=limits,
        )
    breach = any(f.severity in fail_on and not f.preview
                 for r in summary.audited for f in r.results.findings)
    if not quiet:
        typer.echo(
            f"\n{summary.total} file(s): {len(summary.audited)} audited, "
            f"{len(summary.failed)} {NOT_AUDITED}; reports in {out_dir}"
        )
        for f in summary.failed:
            typer.echo(f"  {NOT_AUDITED}: {one_line(f.reason)}")
        typer.echo(
            "A desk check cannot show an installation is safe; "
            "defer to BS 7671 and licensed practice."
        )
    code = EXIT_FAILED if summary.failed else (EXIT_FINDINGS if breach else EXIT_CLEAN)
    if as_json:
        import json

        from certvet.jsonresult import audit_result_document

        typer.echo(json.dumps(audit_result_document(summary, code), indent=1,
                              ensure_ascii=False))
    return code


def _finding_lines(result: AuditResult) -> list[str]:
    """`--verbose`: one line per finding under the file's line."""
    out = []
    for f in result.results.findings:
        where = "/".join(x for x in (f.board, f.circuit) if x) or "certificate"
        tag = f"{f.severity.label}{' (preview)' if f.preview else ''}"
        out.append(one_line(f"    {tag:<24} {where:<10} {f.check_id}: {f.message}"))
    return out


@app.command()
def audit(
    pdfs: Annotated[
        list[Path],
        typer.Argument(metavar="PDF", help="PDF files or folders (searched recursively)."),
    ],
    layout: Annotated[
        list[Path],
        typer.Option(
            "--layout",
            "-l",
            metavar="LAYOUT",
            help="Layout file or folder of layouts; repeatable. "
            "Each file's form is recognised automatically among them; a file none recognises "
            "is read with a layout drafted from it (see --no-draft-unknown-forms).",
        ),
    ] = [],  # noqa: B006
    out: Annotated[Path, typer.Option("--out", "-o", help="Folder for the reports.")] = Path(
        "certvet-out"
    ),
    profile: Annotated[
        Optional[Path], typer.Option("--profile", help="Rule profile (TOML).")  # noqa: UP045
    ] = None,
    engine: Annotated[
        Optional[EngineChoice],  # noqa: UP045
        typer.Option("--engine", help="Override the layout's extraction engine."),
    ] = None,
    password: Annotated[
        Optional[str],  # noqa: UP045
        typer.Option("--password", help="Password for encrypted PDFs."),
    ] = None,
    quiet: Annotated[bool, typer.Option("--quiet", "-q", help="Print nothing but errors.")] = False,
    verbose: Annotated[
        bool, typer.Option("--verbose", "-v", help="Also print every finding under its file.")
    ] = False,
    as_json: Annotated[
        bool, typer.Option("--json", help="Print a machine-readable result on stdout (JSON with "
                           "its format_version; see certvet/jsonresult.py) instead of the "
                           "console lines.")
    ] = False,
    fail_on: Annotated[
        str, typer.Option("--fail-on", metavar="SEVERITIES",
                          help="Severities that make the exit status 1, comma-separated "
                               "(note, query, breach, impossible).")
    ] = DEFAULT_FAIL_ON,
    timeout: Annotated[
        float, typer.Option("--timeout", min=1.0, help="Seconds allowed per file.")
    ] = 120.0,
    memory_mb: Annotated[
        int, typer.Option("--memory-mb", min=0, help="Resident memory per file in MB (0 = none).")
    ] = 2048,
    draft_unknown: draft_opts.DraftUnknown = True,
    min_draft_confidence: draft_opts.MinConfidence = draft_opts.READ_AT,
    trusted_draft_confidence: draft_opts.TrustedConfidence = draft_opts.TRUSTED_AT,
    audit_date: AuditDateOption = None,
) -> None:
    """Audit certificates: extract the schedule, run every check, write HTML/JSON/CSV reports.
    Each file is audited in its own process with the time and memory limits of `batch`."""
    from certvet.api import expand_inputs
    from certvet.workers import Limits

    try:
        severities = parse_fail_on(fail_on)
    except ValueError as exc:
        _err(str(exc))
        raise typer.Exit(EXIT_USAGE) from None
    layouts, prof = _load_inputs(layout, profile, audit_date)
    files = expand_inputs(pdfs)
    if not files:
        _err(f"{', '.join(str(p) for p in pdfs)}: no PDF files found")
        raise typer.Exit(EXIT_FAILED)
    _make_out_dir(out)
    limits = Limits(seconds=timeout, memory_mb=memory_mb)
    options = draft_opts.draft_options(draft_unknown, min_draft_confidence,
                                       trusted_draft_confidence)
    code = _run_batch(files, layouts, prof, out, engine.value if engine else None, password, quiet,
                      severities, options, verbose=verbose, as_json=as_json,
                      limits=limits)
    raise typer.Exit(code)


@app.command()
def demo(
    out: Annotated[Path, typer.Option("--out", "-o", help="Folder for the reports.")] = Path(
        "certvet-out/demo"
    ),
) -> None:
    """Audit the bundled demo certificates (fixtures/demo) as a batch: a report per
    certificate, the corpus, cross-certificate checks and the portfolio page."""
    from certvet.api import DEMO_DIR, DEMO_LAYOUTS
    from certvet.cli_batch import batch

    if not any(DEMO_DIR.glob("*.pdf")):
        _err(f"{DEMO_DIR}: no demo PDFs found (run: python fixtures/generate.py)")
        raise typer.Exit(EXIT_FAILED)
    code: int = EXIT_CLEAN
    try:
        batch(
            [DEMO_DIR], layout=[DEMO_LAYOUTS], store=out / "corpus.sqlite", out=out,
            workers=None, timeout=120.0, memory_mb=2048, retry_failed=False, scheduler=None,
            profile=None, password=None, quiet=False, fail_on=DEFAULT_FAIL_ON,
        )
    except typer.Exit as done:
        code = done.exit_code
    typer.echo(
        f"Open {out / 'portfolio.html'} in a browser: it links every certificate's report. "
        "(Running the demo again skips certificates already in the corpus.)"
    )
    # The demo deliberately includes faulty certificates: finding them is success.
    raise typer.Exit(EXIT_FAILED if code == EXIT_FAILED else EXIT_CLEAN)


@app.command("checks")
def list_checks() -> None:
    """List the catalogue of checks with their severity and reference."""
    from certvet.checks.describe import catalogue_rows

    for row in catalogue_rows():
        typer.echo(f"{row.id:<34} {row.severity:<11} {row.title}")
        typer.echo(f"{'':<34} {'':<11} ref: {row.reference}")


@app.command()
def explain(
    check_id: Annotated[
        str, typer.Argument(metavar="CHECK-ID", help="A check id, see `certvet checks`.")
    ],
) -> None:
    """Explain one check: what it checks, why, false alarms, examples, options, reference."""
    from certvet.checks.describe import explain_check

    try:
        typer.echo(explain_check(check_id))
    except KeyError as exc:
        _err(str(exc.args[0]))
        raise typer.Exit(EXIT_USAGE) from None


@app.command()
def fields() -> None:
    """List the canonical fields a layout can map columns and labels to."""
    from certvet.extractor.fields import BOARD_FIELDS, CERTIFICATE_FIELDS, CIRCUIT_FIELDS

    for title, specs in (
        ("circuit (columns)", CIRCUIT_FIELDS),
        ("board", BOARD_FIELDS),
        ("certificate", CERTIFICATE_FIELDS),
    ):
        typer.echo(f"{title}:")
        for f in specs:
            unit = f" [{f.unit}]" if f.unit else ""
            typer.echo(f"  {f.name:<24} {f.kind.value:<8} {f.label}{unit}")


@app.command("check-layout")
def check_layout(
    layouts: Annotated[
        list[Path],
        typer.Argument(metavar="LAYOUT", help="Layout files or folders to validate."),
    ],
) -> None:
    """Validate layout files; print one line per problem."""
    from certvet.extractor.layout import LayoutError, load_layout

    bad = 0
    files: list[Path] = []
    for p in layouts:
        found = sorted(p.rglob("*.toml")) if p.is_dir() else [p]
        if not found:
            bad += 1
            typer.echo(f"invalid  {one_line(str(p))}: no layout files (*.toml) in this folder")
        files.extend(found)
    for f in files:
        try:
            lay = load_layout(f)
            typer.echo(f"ok       {one_line(str(f))} (form {lay.name}, {len(lay.columns)} columns)")
        except LayoutError as exc:
            bad += 1
            typer.echo(f"invalid  {one_line(str(exc))}")
    raise typer.Exit(EXIT_USAGE if bad else EXIT_CLEAN)


def _mount_optional() -> None:
    """Sub-command modules written as separate units mount themselves here when present."""
    import importlib

    for name in ("certvet.cli_layouts", "certvet.cli_batch"):
        try:
            mod = importlib.import_module(name)
        except ModuleNotFoundError as exc:
            if exc.name != name:
                raise
            continue
        mod.register(app)


_mount_optional()


def main() -> None:
    """The console entry point: an uncaught error is one line and its own exit code, never a
    traceback (CERTVET_DEBUG=1 shows it) and never the code of a finding."""
    try:
        app()
    except KeyboardInterrupt:
        _err("interrupted")
        sys.exit(130)
    except Exception as exc:  # a bug: say so in one line
        if os.environ.get("CERTVET_DEBUG"):
            raise
        _err(f"internal error ({type(exc).__name__}: {exc}); set CERTVET_DEBUG=1 for details")
        sys.exit(EXIT_INTERNAL)


if __name__ == "__main__":
    main()
