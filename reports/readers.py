"""Two outputs for two readers, generated from the findings: a plain-language summary for the
landlord or owner (what the certificate means, what to do, with the cautions) and a query
sheet for the contractor (each question, where, recorded against expected, the reference).

Both are view-models here and dumb templates (``templates/summary.html.j2``,
``templates/queries.html.j2``), printable on A4 (``@page size: A4``). Every sentence is
chosen from the verdict and the findings; nothing is written about the installation that the
checks did not find.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path

from certvet.checks.certificate_facts import report_kind
from certvet.checks.model import Finding, Severity
from certvet.checks.runner import CheckResults
from certvet.extractor.records import Certificate
from certvet.reports.model import CAUTIONS, field_label, location_text
from certvet.reports.verdict import VerdictKey, decide

# checks whose findings tell the reader about the certificate's dates rather than its readings
DATE_CHECKS = ("certificate-out-of-date", "next-inspection-interval", "dates-out-of-order")
OUTCOME_CHECKS = ("satisfactory-despite-failing-readings", "unsatisfactory-without-codes",
                  "outcome-contradicts-observations")

_KIND_WORDS = {
    "EIC": "an Electrical Installation Certificate (new work)",
    "EICR": "an Electrical Installation Condition Report (periodic inspection)",
    "minor works": "a Minor Electrical Installation Works Certificate",
}

_IN_SHORT: dict[VerdictKey, str] = {
    VerdictKey.NOT_CREDIBLE: (
        "Some results written on this certificate are impossible as recorded or show a "
        "danger. Do not rely on it until the contractor has explained or re-tested them."),
    VerdictKey.FAILS_REQUIREMENTS: (
        "The certificate itself records results that do not meet the wiring regulations "
        "(BS 7671). Ask the contractor what remedial work is needed, and for a corrected "
        "certificate once it is done."),
    VerdictKey.QUERIES: (
        "The certificate has points that do not add up or are missing. None of them shows "
        "a danger by itself, but the contractor should answer them before you rely on it."),
    VerdictKey.INCOMPLETE: (
        "Part of the certificate could not be read, so it could not be checked in full. "
        "Have it reviewed by hand before relying on it."),
    VerdictKey.NO_CONCERNS: (
        "Nothing on the paperwork looked wrong to the checks that could be applied. This "
        "says nothing about the installation itself, only about what is written."),
}


@dataclass(frozen=True)
class SummaryView:
    title: str
    address: str
    what_it_is: str
    headline: str
    in_short: str
    points: list[str]  # a few sentences: outcome, dates
    actions: list[str]
    cautions: tuple[str, ...]
    generated_at: str
    certvet_version: str


@dataclass(frozen=True)
class QueryView:
    number: int
    question: str
    where: str
    recorded: str
    expected: str
    reference: str
    severity: str


@dataclass(frozen=True)
class QuerySheetView:
    title: str
    cert_name: str
    address: str
    contractor: str
    inspector: str
    inspection_date: str
    queries: list[QueryView]
    notes: int  # findings left off (notes: no action needed)
    cautions: tuple[str, ...]
    generated_at: str
    certvet_version: str


def _asked(results: CheckResults) -> list[Finding]:
    """The findings a contractor is asked about: not notes, not preview checks."""
    return [f for f in results.findings if not f.preview and f.severity >= Severity.QUERY]


def _kind_words(cert: Certificate) -> str:
    kind = report_kind(cert).value
    return _KIND_WORDS.get(kind, "an electrical certificate of a type that could not be read")


def build_summary(cert: Certificate, results: CheckResults, *, certvet_version: str,
                  generated_at: str) -> SummaryView:
    verdict = decide(cert, results)
    asked = _asked(results)
    by_check = {f.check_id for f in asked}
    points: list[str] = []
    outcome = cert.text("overall_outcome")
    if outcome:
        sentence = f"The inspector's overall assessment is \u201c{outcome}\u201d."
        if by_check & set(OUTCOME_CHECKS):
            sentence += " The certificate's own readings or observations do not support it."
        points.append(sentence)
    dates = [f for f in asked if f.check_id in DATE_CHECKS]
    points += [f.message for f in dates]
    nxt = cert.text("next_inspection")
    if nxt and "certificate-out-of-date" not in by_check:
        points.append(f"The next inspection is recommended by {nxt}.")
    breaches = sum(1 for f in asked if f.severity >= Severity.BREACH)
    queries = len(asked) - breaches
    actions: list[str] = []
    if breaches:
        actions.append(f"Ask the contractor about the {breaches} result(s) that fail a "
                       "requirement, and what remedial work is needed.")
    if queries:
        actions.append(f"Send the query sheet ({queries} question(s)) to the contractor and "
                       "keep their reply with the certificate.")
    if "certificate-out-of-date" in by_check:
        actions.append("Arrange a new inspection: this report is out of date.")
    if not verdict.complete:
        actions.append("Have the parts that could not be read checked by hand.")
    if not actions:
        actions.append("Keep the certificate and this summary; diary the next inspection.")
    return SummaryView(
        title=f"What this certificate means: {cert.name}",
        address=cert.text("address") or "address not read",
        what_it_is=f"This is {_kind_words(cert)}"
        + (f", inspected {cert.text('inspection_date')}." if cert.text("inspection_date")
           else "."),
        headline=verdict.headline,
        in_short=_IN_SHORT[verdict.key],
        points=points,
        actions=actions,
        cautions=CAUTIONS,
        generated_at=generated_at,
        certvet_version=certvet_version,
    )


def _question(f: Finding) -> str:
    text = f.message.rstrip()
    if not text.endswith((".", "?")):
        text += "."
    return f"{text} Please check and confirm, or correct the record."


def build_query_sheet(cert: Certificate, results: CheckResults, *, certvet_version: str,
                      generated_at: str) -> QuerySheetView:
    asked = _asked(results)
    rows = []
    for i, f in enumerate(asked, 1):
        where = location_text(f)
        label = field_label(f)
        if label:
            where += f" — {label}"
        if f.page is not None:
            where += f" (page {f.page})"
        rows.append(QueryView(i, _question(f), where, f.recorded or "—", f.expected or "—",
                              f.reference, f.severity.label))
    notes = sum(1 for f in results.findings if not f.preview) - len(asked)
    return QuerySheetView(
        title=f"Queries on certificate {cert.name}",
        cert_name=cert.name,
        address=cert.text("address") or "address not read",
        contractor=cert.text("contractor") or "—",
        inspector=cert.text("inspector") or "—",
        inspection_date=cert.text("inspection_date") or "—",
        queries=rows,
        notes=notes,
        cautions=CAUTIONS[:1] + CAUTIONS[2:3],
        generated_at=generated_at,
        certvet_version=certvet_version,
    )


def _now(generated_at: str | None) -> str:
    return generated_at or datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC")


def render_summary(cert: Certificate, results: CheckResults, *, certvet_version: str,
                   generated_at: str | None = None) -> str:
    from certvet.reports.html import environment

    view = build_summary(cert, results, certvet_version=certvet_version,
                         generated_at=_now(generated_at))
    return environment().get_template("summary.html.j2").render(r=view)


def render_query_sheet(cert: Certificate, results: CheckResults, *, certvet_version: str,
                       generated_at: str | None = None) -> str:
    from certvet.reports.html import environment

    view = build_query_sheet(cert, results, certvet_version=certvet_version,
                             generated_at=_now(generated_at))
    return environment().get_template("queries.html.j2").render(r=view)


def _write(path: str | Path, text: str) -> Path:
    out = Path(path)
    out.parent.mkdir(parents=True, exist_ok=True)
    out.write_text(text, encoding="utf-8")
    return out


def write_summary(cert: Certificate, results: CheckResults, path: str | Path, *,
                  certvet_version: str, generated_at: str | None = None) -> Path:
    """The landlord's summary as one self-contained HTML file (A4 when printed)."""
    return _write(path, render_summary(cert, results, certvet_version=certvet_version,
                                       generated_at=generated_at))


def write_query_sheet(cert: Certificate, results: CheckResults, path: str | Path, *,
                      certvet_version: str, generated_at: str | None = None) -> Path:
    """The contractor's query sheet as one self-contained HTML file (A4 when printed)."""
    return _write(path, render_query_sheet(cert, results, certvet_version=certvet_version,
                                           generated_at=generated_at))
