"""Run the catalogue over one certificate: every check ends passed, failed, not applicable
or disabled, and every finding lands in one list."""

from __future__ import annotations

import dataclasses
from collections.abc import Iterable
from dataclasses import dataclass, field
from datetime import date

from certvet.checks.model import CheckRun, Finding, Outcome, Severity
from certvet.checks.profile import DEFAULT_PROFILE, Profile
from certvet.checks.registry import all_checks
from certvet.extractor.records import Certificate


@dataclass
class CheckResults:
    profile: Profile
    runs: list[CheckRun] = field(default_factory=list)
    findings: list[Finding] = field(default_factory=list)

    def worst(self) -> Severity | None:
        counted = [f.severity for f in self.findings if not f.preview]
        return max(counted) if counted else None

    def with_findings(self, extra: Iterable[Finding]) -> CheckResults:
        """These results with more findings (a certificate's cross-certificate findings)."""
        more = list(extra)
        return self if not more else CheckResults(self.profile, self.runs,
                                                  [*self.findings, *more])

    def count(self, severity: Severity) -> int:
        return sum(1 for f in self.findings if f.severity is severity and not f.preview)


def run_checks(
    cert: Certificate, profile: Profile | None = None, *, audit_date: date | None = None
) -> CheckResults:
    """Every check of the catalogue on one certificate. `audit_date` is the date the audit
    speaks for (certificate age, dates in the future); None means the profile's, else today."""
    profile = profile or DEFAULT_PROFILE
    audit_date = audit_date or profile.audit_date
    results = CheckResults(profile)
    for cls in all_checks():
        if cls.scope == "corpus":
            continue  # across certificates: run by the corpus stage (corpus/crosscheck.py)
        settings = profile.settings(cls.id)
        check = profile.instantiate(cls)
        options = dataclasses.asdict(check.options)
        if not settings.enabled:
            results.runs.append(CheckRun(cls.id, cls.title, Outcome.TURNED_OFF, 0, 0, options))
            continue
        check.audit_date = audit_date
        applied, found = check.run(cert)
        if found:
            outcome = Outcome.FOUND
        elif applied:
            outcome = Outcome.RAISED_NOTHING
        else:
            outcome = Outcome.DID_NOT_APPLY
        reason = check.not_applicable_reason if outcome is Outcome.DID_NOT_APPLY else None
        results.runs.append(
            CheckRun(cls.id, cls.title, outcome, applied, len(found), options, reason)
        )
        results.findings.extend(found)
    results.findings.sort(
        key=lambda f: (-f.severity, f.board or "", _ref_key(f.circuit), f.check_id)
    )
    return results


def _ref_key(ref: str | None) -> tuple[int, str]:
    if ref is None:
        return (-1, "")
    digits = "".join(ch for ch in ref if ch.isdigit())
    return (int(digits) if digits else 10**6, ref)
