"""The BS 7671 edition a form claims, against the form's own date and its report type."""

from __future__ import annotations

from collections.abc import Iterable

from certvet.checks.base import CertificateCheck
from certvet.checks.certificate_facts import (
    ReportKind,
    certificate_date,
    edition_in_force,
    parse_edition,
    report_kind,
)
from certvet.checks.model import Finding, Severity
from certvet.checks.registry import register
from certvet.extractor.records import Certificate


@register
class EditionAfterCertificateDate(CertificateCheck):
    """The form claims a BS 7671 edition published after the form's own date.

    What it checks:
    The edition or amendment named on the form (e.g. "BS 7671:2018+A2:2022") was published
    on or before the date of issue (else of inspection). An edition this tool cannot read
    is reported as a note. Publication dates: checks/data/bs7671_editions.csv.

    Why it matters:
    A form cannot be to an edition that did not exist when it was written: the date or the
    edition is wrong, which is how back-dated or re-used certificates show themselves.

    Known false alarms:
    Publication dates are recorded from memory to the day; a certificate dated within days
    of a publication may be flagged wrongly.

    Failing example:
    Issued 10/01/2022, claims BS 7671:2018+A2:2022 (published March 2022).

    Passing example:
    Issued 10/01/2023, claims BS 7671:2018+A2:2022.

    Options:
    none.

    Reference:
    The publication dates of BS 7671 and its amendments (checks/data/bs7671_editions.csv,
    from memory, each row says so).
    """

    id = "edition-after-certificate-date"
    title = "Edition claimed is later than the certificate's date"
    severity = Severity.QUERY
    reference = "BS 7671 editions' publication dates (from memory)"
    basis = "from memory"
    group = "edition"

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        text = cert.text("bs7671_edition")
        when = certificate_date(cert)
        if not text or when is None:
            self.not_applicable("no edition claimed or no readable date")
            return None
        ed = parse_edition(text)
        if ed is None:
            return [self.make(cert, f"The edition claimed ({text!r}) could not be read.",
                              field="bs7671_edition", expected="e.g. BS 7671:2018+A2:2022",
                              severity=Severity.NOTE)]
        if ed.published <= when:
            return []
        return [self.make(cert, f"Dated {when:%d/%m/%Y} but claims {ed.name}, published "
                          f"{ed.published:%d/%m/%Y} ({ed.source}).", field="bs7671_edition",
                          expected=f"an edition published by {when:%d/%m/%Y}")]


@register
class EditionNotInForce(CertificateCheck):
    """The form claims an edition no longer in force on its date.

    What it checks:
    An EIC or a minor works certificate is to the edition in force on its date of issue
    (new work is designed and certified to it); an EICR assesses against the edition in
    force on the date of inspection (the current one), whatever the installation was built
    to. A claimed edition older than that is reported. Not applicable when the type, the
    edition or the date is not read.

    Why it matters:
    New work certified to a withdrawn edition may miss what the current one requires
    (AFDDs, RCDs on lighting, SPDs); a condition report judged against an old edition can
    call satisfactory what the current one codes.

    Known false alarms:
    A contract that fixed the edition at design time (work straddling a change); in-force
    dates recorded from memory.

    Failing example:
    EIC issued 12/05/2024 to BS 7671:2018+A1:2020 (A2 in force 27/09/2022).

    Passing example:
    EIC issued 12/05/2024 to BS 7671:2018+A2:2022.

    Options:
    none.

    Reference:
    The in-force dates of BS 7671 and its amendments (checks/data/bs7671_editions.csv, from
    memory); BS 7671:2018+A2:2022 Reg 651.1 (periodic inspection against the current
    requirements, regulation number from memory).
    """

    id = "edition-not-in-force"
    title = "Edition claimed is not the one in force on the certificate's date"
    severity = Severity.QUERY
    reference = "BS 7671 editions' in-force dates (from memory); Reg 651.1 (from memory)"
    basis = "from memory"
    group = "edition"

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        kind = report_kind(cert)
        ed = parse_edition(cert.text("bs7671_edition"))
        when = certificate_date(cert)
        if kind is ReportKind.UNKNOWN or ed is None or when is None:
            self.not_applicable("report type, edition or date not read")
            return None
        due = edition_in_force(when)
        if ed.in_force >= due.in_force:
            return []
        why = ("new work is certified to the edition in force" if kind is not ReportKind.EICR
               else "a condition report assesses against the current edition")
        return [self.make(cert, f"{kind.value} dated {when:%d/%m/%Y} claims {ed.name}; "
                          f"{due.name} was in force from {due.in_force:%d/%m/%Y} ({why}).",
                          field="bs7671_edition", expected=due.name)]
