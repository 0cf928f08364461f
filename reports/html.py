"""The per-certificate HTML report: one self-contained file (inline CSS, no scripts, no
external resources). The view-model (``reports.model``) decides everything; the template in
``reports/templates/certificate.html.j2`` only lays it out, with autoescaping on.
"""

from __future__ import annotations

from collections.abc import Sequence
from datetime import UTC, datetime
from functools import lru_cache
from pathlib import Path

from jinja2 import Environment, FileSystemLoader, StrictUndefined
from markupsafe import Markup

from certvet.checks.profile import Profile
from certvet.checks.runner import CheckResults
from certvet.extractor.records import Certificate
from certvet.reports.model import (
    SEVERITY_LEGEND,
    SEVERITY_LEGEND_NOTE,
    RelatedFinding,
    ReportView,
    build_report,
    severity_css,
)

TEMPLATES = Path(__file__).parent / "templates"


@lru_cache(maxsize=1)
def environment() -> Environment:
    """One environment per process (certificate and portfolio pages): templates are compiled
    once, not per certificate. The severity legend and marks are globals, defined once in
    ``reports.model``."""
    env = Environment(
        loader=FileSystemLoader(TEMPLATES),
        autoescape=True,  # every value comes from an untrusted PDF
        undefined=StrictUndefined,
        trim_blocks=True,
        lstrip_blocks=True,
        keep_trailing_newline=True,
    )
    env.globals.update(
        severity_css=Markup(severity_css()),  # our own constant text, never from a PDF
        severity_legend=SEVERITY_LEGEND,
        severity_legend_note=SEVERITY_LEGEND_NOTE,
    )
    return env


def warm_up() -> None:
    """Compile the template now (e.g. before forking workers)."""
    environment().get_template("certificate.html.j2")


def render_view(view: ReportView) -> str:
    return environment().get_template("certificate.html.j2").render(r=view)


def render_html(
    cert: Certificate,
    results: CheckResults,
    *,
    certvet_version: str,
    profile: Profile | None = None,
    generated_at: str | None = None,
    related: Sequence[RelatedFinding] = (),
) -> str:
    if generated_at is None:
        generated_at = datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC")
    view = build_report(
        cert, results, certvet_version=certvet_version, profile=profile,
        generated_at=generated_at, related=related,
    )
    return render_view(view)


def write_html(
    cert: Certificate,
    results: CheckResults,
    path: str | Path,
    *,
    certvet_version: str,
    profile: Profile | None = None,
    generated_at: str | None = None,
    related: Sequence[RelatedFinding] = (),
) -> Path:
    """Write the report for one certificate to ``path`` (UTF-8) and return the path.
    ``related``: the findings of the comparison across certificates about this one (a batch
    run fills it in; links in it are relative to ``path``'s folder)."""
    out = Path(path)
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(
        render_html(cert, results, certvet_version=certvet_version, profile=profile,
                    generated_at=generated_at, related=related),
        encoding="utf-8",
    )
    return out
