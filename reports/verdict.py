"""The overall verdict of one desk audit, in our own small vocabulary.

Every wording the reports use for a verdict lives here, and only here. The verdict comes from
the worst finding that counts (preview findings never count). A certificate that could not be
read completely (extraction problems, unreadable cells, or no circuits at all), or was read
with a drafted layout whose confidence is below the trusted level, is never called
"no concerns found": the audit is incomplete, and the verdict says so.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import StrEnum

from certvet.checks.catalogue.across import READINGS_MATCH_CHECKS
from certvet.checks.model import Severity
from certvet.checks.runner import CheckResults
from certvet.extractor.records import Certificate, ValueKind


class VerdictKey(StrEnum):
    READINGS_COPIED = "readings_copied"
    NOT_CREDIBLE = "not_credible"
    FAILS_REQUIREMENTS = "fails_requirements"
    QUERIES = "queries"
    INCOMPLETE = "incomplete"
    NO_CONCERNS = "no_concerns"


@dataclass(frozen=True)
class VerdictWording:
    headline: str
    explanation: str
    tone: str  # CSS/severity slug used for the colour band; the headline carries the meaning


WORDING: dict[VerdictKey, VerdictWording] = {
    VerdictKey.READINGS_COPIED: VerdictWording(
        "readings copied",
        "The readings on this certificate match those of another certificate, named below. "
        "Independent tests do not give the same readings twice, so at most one of the two "
        "records measurements of its own installation. Rely on neither until the contractor "
        "has shown how the readings were taken.",
        "impossible",
    ),
    VerdictKey.NOT_CREDIBLE: VerdictWording(
        "results not credible",
        "At least one set of recorded figures cannot all be right as written (for example "
        "R1+R2 larger than the measured Zs): the record is wrong somewhere, which by itself "
        "says nothing about danger. Do not rely on this certificate until the contractor has "
        "explained or re-tested it.",
        "impossible",
    ),
    VerdictKey.FAILS_REQUIREMENTS: VerdictWording(
        "fails requirements",
        "At least one recorded result fails a requirement of BS 7671 as written on the "
        "certificate. Ask the contractor for remedial work or a corrected record.",
        "breach",
    ),
    VerdictKey.QUERIES: VerdictWording(
        "queries to raise",
        "Some recorded results do not add up, are incomplete or look unmeasured. Send the "
        "queries below to the contractor before relying on the certificate.",
        "query",
    ),
    VerdictKey.INCOMPLETE: VerdictWording(
        "audit incomplete",
        "Part of the certificate could not be read, so some checks could not be applied. "
        "Nothing found is not the same as nothing wrong: review the certificate by hand.",
        "incomplete",
    ),
    VerdictKey.NO_CONCERNS: VerdictWording(
        "no concerns found",
        "Every check that applied raised nothing. This is a check of the "
        "paperwork only, not of the installation.",
        "clear",
    ),
}

# A file that could not be audited (unreadable, encrypted, no layout…), in every console line
# and summary. Never "failed": a reader would take it for a check that found something (a
# check's outcome is "found N", see checks.model.Outcome).
NOT_AUDITED = "not audited"

_BY_SEVERITY = {
    Severity.IMPOSSIBLE: VerdictKey.NOT_CREDIBLE,
    Severity.BREACH: VerdictKey.FAILS_REQUIREMENTS,
    Severity.QUERY: VerdictKey.QUERIES,
}


@dataclass(frozen=True)
class Verdict:
    key: VerdictKey
    headline: str
    explanation: str
    tone: str
    incomplete_reasons: tuple[str, ...] = ()  # why the audit could not cover everything
    copies: tuple[str, ...] = ()  # the readings-match findings: the other certificate named

    @property
    def label(self) -> str:
        """The headline, e.g. "queries to raise" (what the CLI prints per file)."""
        return self.headline

    @property
    def complete(self) -> bool:
        return not self.incomplete_reasons

    def to_dict(self) -> dict[str, object]:
        return {
            "key": self.key.value,
            "headline": self.headline,
            "explanation": self.explanation,
            "complete": self.complete,
            "incomplete_reasons": list(self.incomplete_reasons),
            "copies": list(self.copies),
        }


def incomplete_reasons(cert: Certificate) -> tuple[str, ...]:
    """Why an audit of this certificate cannot be complete (empty when it can)."""
    reasons: list[str] = []
    if cert.drafted is not None and not cert.drafted.trusted:
        reasons.append(cert.drafted.untrusted_reason())
    if not any(b.circuits for b in cert.boards):
        reasons.append("no circuits were read from the schedule of test results")
    if cert.problems:
        n = len(cert.problems)
        reasons.append(f"{n} extraction problem{'s' if n != 1 else ''} recorded while reading")
    unreadable = sum(
        1
        for _, c in cert.circuits()
        for cell in c.cells.values()
        if cell.value.kind is ValueKind.UNREADABLE
    )
    if unreadable:
        reasons.append(
            f"{unreadable} cell{'s' if unreadable != 1 else ''} in the schedule could not be "
            "parsed"
        )
    return tuple(reasons)


def decide(cert: Certificate, results: CheckResults) -> Verdict:
    """The verdict for one audited certificate."""
    reasons = incomplete_reasons(cert)
    worst = results.worst()
    copied = [f for f in results.findings if f.check_id in READINGS_MATCH_CHECKS and not f.preview]
    if copied and max(f.severity for f in copied) == worst:
        key = VerdictKey.READINGS_COPIED  # the copy is the worst: it is the verdict
    elif worst is not None and worst in _BY_SEVERITY:
        key = _BY_SEVERITY[worst]
    elif reasons:
        key = VerdictKey.INCOMPLETE
    else:
        key = VerdictKey.NO_CONCERNS
    w = WORDING[key]
    return Verdict(key, w.headline, w.explanation, w.tone, reasons,
                   tuple(f.message for f in copied))


verdict_for = decide  # the name certvet.api uses
