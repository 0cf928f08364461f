"""Dates and intervals: inspection, issue, next inspection, certificate age, calibration.

Every check here that compares with "now" uses the audit date the run was given
(``run_checks(..., audit_date=...)``, ``certvet audit --audit-date``), else today.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

from certvet.checks.base import CertificateCheck, option
from certvet.checks.certificate_facts import (
    Interval,
    ReportKind,
    cert_date,
    months_before,
    months_between,
    premises_interval,
    report_kind,
)
from certvet.checks.model import Finding, Severity
from certvet.checks.registry import register
from certvet.extractor.records import Certificate

_DATE_FIELDS = ("inspection_date", "issue_date", "next_inspection", "instrument_calibration")


def _unreadable_dates(check: CertificateCheck, cert: Certificate) -> list[Finding]:
    return [check.make(cert, f"The {n.replace('_', ' ')} {cert.text(n)!r} is not a date "
                       "this tool can read (day/month/year).", field=n,
                       expected="a date, e.g. 21/04/2026", severity=Severity.NOTE)
            for n in _DATE_FIELDS if cert.text(n) and cert_date(cert, n) is None
            and n in ("inspection_date", "issue_date")]


@register
class DatesOutOfOrder(CertificateCheck):
    """The certificate's dates are not in the order they must happen.

    What it checks:
    The date of inspection is on or before the date of issue, and neither is after the
    audit date (the date this audit speaks for). A date printed in a form this tool cannot
    read is reported as a note.

    Why it matters:
    A report issued before the inspection, or dated in the future, was not filled in when
    the work was done: it may be a template re-used or a date typed wrongly, and either way
    the date a landlord relies on is not the date of the inspection.

    Known false alarms:
    Forms that print dates month-first (US order): read as day-first they may be misordered.

    Failing example:
    Inspected 14/05/2026, issued 02/05/2026.

    Passing example:
    Inspected 02/05/2026, issued 14/05/2026, audited 01/12/2026.

    Options:
    none.

    Reference:
    Common practice, no source (a record is made after the event it records).
    """

    id = "dates-out-of-order"
    title = "Certificate dates out of order"
    severity = Severity.QUERY
    reference = "common practice, no source"
    basis = "common practice"
    group = "dates"

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        inspected = cert_date(cert, "inspection_date")
        issued = cert_date(cert, "issue_date")
        found = _unreadable_dates(self, cert)
        if inspected is None and issued is None:
            if not found:
                self.not_applicable("no date of inspection or issue printed")
                return None
            return found
        audit = self.today()
        if inspected and issued and issued < inspected:
            found.append(self.make(cert, f"Issued {issued:%d/%m/%Y}, before the inspection on "
                                   f"{inspected:%d/%m/%Y}.", field="issue_date",
                                   expected=f"on or after {inspected:%d/%m/%Y}"))
        for name, when in (("inspection_date", inspected), ("issue_date", issued)):
            if when and when > audit:
                found.append(self.make(cert, f"The {name.replace('_', ' ')} {when:%d/%m/%Y} is "
                                       f"after the audit date {audit:%d/%m/%Y}.", field=name,
                                       expected=f"on or before {audit:%d/%m/%Y}"))
        return found


def _interval_note(iv: Interval) -> str:
    if iv.basis == "published":
        return iv.source
    return f"{iv.source} — usual guidance, not a legal limit"


@register
class NextInspectionInterval(CertificateCheck):
    """The recommended next inspection is not after the inspection, or is further away than
    the premises allow.

    What it checks:
    The next inspection date is after the date of inspection (or issue), and no more than
    the longest interval for the kind of premises the form describes: rented homes in
    England at most 5 years (law); other premises per the usual guidance table, and the
    finding says it is guidance. Not applicable when the form prints no next inspection
    date or no premises description (the reason is given).

    Why it matters:
    The next inspection date is the one a landlord, an agent or a licensing authority works
    to; too long an interval leaves a rented home uninspected past the legal limit.

    Known false alarms:
    An inspector's shorter interval is never reported; a longer one for premises the
    description does not make plain (e.g. "house" that is in fact let).

    Failing example:
    Rented flat, inspected 01/03/2026, next inspection 01/03/2036.

    Passing example:
    Rented flat, inspected 01/03/2026, next inspection 01/03/2031.

    Options:
    tolerance_days: days beyond the limit accepted (a date written as the anniversary).

    Reference:
    The Electrical Safety Standards in the Private Rented Sector (England) Regulations 2020
    (SI 2020/312) reg 3(1)(b); other premises: IET Guidance Note 3 Table 3.2 (from memory);
    checks/data/inspection_intervals.csv.
    """

    id = "next-inspection-interval"
    title = "Next inspection date not within the interval the premises allow"
    severity = Severity.BREACH
    reference = ("SI 2020/312 reg 3(1)(b) (rented homes, England: 5 years); IET Guidance "
                 "Note 3 Table 3.2 (other premises, from memory)")
    basis = "published"
    group = "dates"

    @dataclass(frozen=True)
    class Options:
        tolerance_days: int = option(
            31, "common practice, no source: a next date written a few weeks past the "
            "anniversary", "days beyond the longest interval accepted")

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        start = cert_date(cert, "inspection_date") or cert_date(cert, "issue_date")
        nxt = cert_date(cert, "next_inspection")
        if start is None or nxt is None:
            self.not_applicable("no readable inspection date or next inspection date")
            return None
        if nxt <= start:
            return [self.make(cert, f"Next inspection {nxt:%d/%m/%Y} is not after the "
                              f"inspection on {start:%d/%m/%Y}.", field="next_inspection",
                              expected=f"after {start:%d/%m/%Y}", severity=Severity.QUERY)]
        iv = premises_interval(cert)
        if iv is None:
            self.not_applicable("the form does not say what the premises are")
            return None
        months = months_between(start, nxt) - self.options.tolerance_days / 31.0
        if months <= iv.max_months + 1e-9:
            return []
        severity = self.effective_severity if iv.basis == "published" else Severity.QUERY
        return [self.make(
            cert, f"Next inspection {nxt:%d/%m/%Y} is {months_between(start, nxt) / 12:.1f} "
            f"years after the inspection; {iv.kind} premises: at most {iv.max_months / 12:g} "
            f"years ({_interval_note(iv)}).", field="next_inspection",
            expected=f"within {iv.max_months} months of {start:%d/%m/%Y}", severity=severity)]


@register
class CertificateOutOfDate(CertificateCheck):
    """At the audit date the certificate is past its next inspection date, or older than
    the premises allow.

    What it checks:
    The certificate's age on the audit date against its own recommended next inspection
    date and against the longest interval for the premises (rented homes in England: 5
    years). Not applicable to minor works certificates (they carry no interval) or when no
    readable inspection date is printed.

    Why it matters:
    A landlord must hold a report no older than the interval; an out-of-date report is no
    evidence of the installation's condition today.

    Known false alarms:
    A newer report that exists but was not the one audited.

    Failing example:
    Rented flat inspected 10/01/2020, audited 01/12/2026 (6.9 years).

    Passing example:
    Rented flat inspected 10/01/2024, next inspection 10/01/2029, audited 01/12/2026.

    Options:
    none.

    Reference:
    SI 2020/312 reg 3(1)(b) (rented homes, England); the report's own recommended date;
    other premises IET Guidance Note 3 Table 3.2 (from memory).
    """

    id = "certificate-out-of-date"
    title = "Certificate past its next inspection date at the audit date"
    severity = Severity.QUERY
    reference = "SI 2020/312 reg 3(1)(b); the report's recommended next inspection date"
    basis = "published"
    group = "dates"

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        if report_kind(cert) is ReportKind.MINOR_WORKS:
            self.not_applicable("a minor works certificate carries no inspection interval")
            return None
        start = cert_date(cert, "inspection_date") or cert_date(cert, "issue_date")
        if start is None:
            self.not_applicable("no readable inspection date")
            return None
        audit = self.today()
        age = months_between(start, audit)
        nxt = cert_date(cert, "next_inspection")
        iv = premises_interval(cert)
        if iv is not None and age > iv.max_months:
            severity = Severity.BREACH if iv.basis == "published" else self.effective_severity
            return [self.make(
                cert, f"On {audit:%d/%m/%Y} the certificate is {age / 12:.1f} years old; "
                f"{iv.kind} premises: at most {iv.max_months / 12:g} years "
                f"({_interval_note(iv)}).", field="inspection_date",
                expected=f"inspected after {months_before(audit, iv.max_months):%d/%m/%Y}",
                severity=severity)]
        if nxt is not None and nxt < audit:
            return [self.make(cert, f"The recommended next inspection ({nxt:%d/%m/%Y}) has "
                              f"passed on the audit date {audit:%d/%m/%Y}.",
                              field="next_inspection", expected=f"on or after {audit:%d/%m/%Y}")]
        return []


@register
class InstrumentCalibrationDate(CertificateCheck):
    """The test instrument's calibration date is after the inspection, or too long before.

    What it checks:
    Where the form prints the instrument's calibration date: it is not after the date of
    inspection, and not more than max_months before it.

    Why it matters:
    Readings from an instrument out of calibration carry no known accuracy; a calibration
    date after the inspection means the date is wrong or the instrument is not the one
    used.

    Known false alarms:
    Forms printing the next calibration due date in the same box.

    Failing example:
    Inspected 12/03/2026, instrument calibrated 02/01/2024.

    Passing example:
    Inspected 12/03/2026, instrument calibrated 10/09/2025.

    Options:
    max_months: longest time between calibration and use.

    Reference:
    Common practice, no source (yearly calibration of test instruments, as commonly
    required by certification schemes).
    """

    id = "instrument-calibration-date"
    title = "Instrument calibration date out of range"
    severity = Severity.QUERY
    reference = "common practice, no source (yearly instrument calibration)"
    basis = "common practice"
    group = "dates"

    @dataclass(frozen=True)
    class Options:
        max_months: float = option(12.0, "common practice, no source: yearly calibration",
                                   "longest months between calibration and the inspection")

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        cal = cert_date(cert, "instrument_calibration")
        used = cert_date(cert, "inspection_date") or cert_date(cert, "issue_date")
        if cal is None or used is None:
            self.not_applicable("no readable calibration date or inspection date printed")
            return None
        if cal > used:
            return [self.make(cert, f"Instrument calibrated {cal:%d/%m/%Y}, after the "
                              f"inspection on {used:%d/%m/%Y}.", field="instrument_calibration",
                              expected=f"on or before {used:%d/%m/%Y}")]
        gap = months_between(cal, used)
        if gap > self.options.max_months + 1e-9:
            return [self.make(cert, f"Instrument calibrated {cal:%d/%m/%Y}, {gap:.0f} months "
                              f"before the inspection on {used:%d/%m/%Y}.",
                              field="instrument_calibration",
                              expected=f"within {self.options.max_months:g} months")]
        return []
