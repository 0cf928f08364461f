"""The kind of certificate, and what it must hold because of it (EIC, EICR, minor works)."""

from __future__ import annotations

from collections.abc import Iterable

from certvet.checks.base import CertificateCheck
from certvet.checks.catalogue.completeness import limitations_recorded
from certvet.checks.certificate_facts import ReportKind, observations, report_kind
from certvet.checks.model import Finding, Severity
from certvet.checks.registry import register
from certvet.extractor.fields import CERTIFICATE
from certvet.extractor.records import Certificate, ValueKind

_NEW_WORK = (ReportKind.EIC, ReportKind.MINOR_WORKS)


@register
class ReportTypeNotRead(CertificateCheck):
    """The form's report type (EIC, EICR, minor works) could not be told.

    What it checks:
    That the report type read from the form names an Electrical Installation Certificate
    (EIC), an Electrical Installation Condition Report (EICR) or a Minor Electrical
    Installation Works Certificate. Not applicable when the layout reads no report type.

    Why it matters:
    The report type sets what a finding means: on an EIC every non-compliance fails the
    certificate; on an EICR a shortfall against the current edition is a coded observation.
    Without it the report-type-aware checks cannot apply.

    Known false alarms:
    A form that prints its type only in a logo or a title the layout does not read.

    Failing example:
    Report type "Test sheet".

    Passing example:
    Report type "EICR".

    Options:
    none.

    Reference:
    BS 7671:2018+A2:2022 Regs 644.1 and 653.1 and Appendix 6 (the EIC, the minor works
    certificate and the EICR are different documents with different purposes).
    """

    id = "report-type-not-read"
    title = "Report type not read"
    severity = Severity.NOTE
    reference = "BS 7671:2018+A2:2022 Regs 644.1, 653.1, Appendix 6"
    basis = "published"
    group = "certificate"

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        if "report_type" not in cert.cells:
            self.not_applicable("the layout reads no report type")
            return None
        if report_kind(cert) is not ReportKind.UNKNOWN:
            return []
        return [self.make(cert, "The report type could not be told; the checks that depend "
                          "on it (EIC, EICR, minor works) did not apply.", field="report_type",
                          expected="EIC, EICR or minor works")]


def _lim_cells(cert: Certificate) -> list[tuple[str, str, str]]:
    return [(b.ref, c.ref, name) for b, c in cert.circuits()
            for name, cell in c.cells.items() if cell.value.kind is ValueKind.LIMITATION]


@register
class LimitationOnNewWork(CertificateCheck):
    """A limitation (LIM, or agreed limitations) on a certificate for new work.

    What it checks:
    On an EIC or a minor works certificate: no schedule cell reads LIM, and the agreed
    limitations field records none. One finding per certificate listing where LIM appears.
    Not applicable to an EICR (limitations are agreed there) or when the type is unknown.

    Why it matters:
    New work is inspected and tested in full before it is put into service; a test that was
    not done cannot be certified. Limitations belong to periodic reports.

    Known false alarms:
    A form that uses "LIM" for something else; an EIC for an addition that records a
    limitation about the existing installation it connects to.

    Failing example:
    EIC, circuit 3 R1+R2 "LIM".

    Passing example:
    EICR, circuit 3 R1+R2 "LIM" with a limitation recorded.

    Options:
    none.

    Reference:
    BS 7671:2018+A2:2022 Reg 641.1 (every installation inspected and tested during erection
    and on completion before being put into service); limitations in Reg 653.2 (periodic
    reports): regulation number from memory.
    """

    id = "limitation-on-new-work"
    title = "Limitation recorded on a certificate for new work"
    severity = Severity.BREACH
    reference = "BS 7671:2018+A2:2022 Reg 641.1 (Reg 653.2 for periodic reports, from memory)"
    basis = "published"
    group = "certificate"

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        kind = report_kind(cert)
        if kind not in _NEW_WORK:
            self.not_applicable(f"report type is {kind.value}, not new work")
            return None
        where = _lim_cells(cert)
        found = []
        if where:
            listed = ", ".join(f"{b}/{c} {n}" for b, c, n in where[:6])
            more = f" and {len(where) - 6} more" if len(where) > 6 else ""
            found.append(self.make(
                cert, f"A certificate for new work ({kind.value}) records LIM: {listed}{more}; "
                "every test must be done before the work is put into service.",
                recorded=f"{len(where)} LIM cell(s)", expected="no LIM"))
        if limitations_recorded(cert):
            found.append(self.make(
                cert, f"A certificate for new work ({kind.value}) records limitations: "
                f"{cert.text('limitations')!r}.", field="limitations", expected="none"))
        return found


_SIGNATURES = {
    ReportKind.EIC: ("designer_signature", "constructor_signature", "inspector_signature"),
    ReportKind.MINOR_WORKS: ("inspector_signature",),
    ReportKind.EICR: ("inspector_signature",),
}
_UNSIGNED = {"", "-", "—", "n/a", "none", "unsigned", "not signed"}


@register
class SignaturesMissing(CertificateCheck):
    """A signature the report type needs is blank.

    What it checks:
    An EIC is signed for design, for construction and for inspection and testing; a minor
    works certificate and an EICR for inspection and testing. Each signature field the
    layout reads that is blank, a dash or "unsigned" is reported. Not applicable when the
    type is unknown or the layout reads none of the signature fields.

    Why it matters:
    The signatures are who takes responsibility for each stage; an unsigned certificate is
    not a certificate a client or a building control body can rely on.

    Known false alarms:
    Forms signed by hand after printing (the PDF shows a blank box); a layout that reads the
    printed name rather than the signature box.

    Failing example:
    EIC with "Signed for design" blank.

    Passing example:
    EIC signed for design, construction and inspection (a name or mark in each).

    Options:
    none.

    Reference:
    BS 7671:2018+A2:2022 Reg 644.4 and Appendix 6 (forms of certificate: the EIC signed by
    the persons responsible for design, construction and inspection and testing) — the
    regulation number from memory.
    """

    id = "signatures-missing"
    title = "Signature missing for the report type"
    severity = Severity.QUERY
    reference = "BS 7671:2018+A2:2022 Appendix 6 (Reg 644.4, from memory)"
    basis = "published"
    group = "certificate"

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        kind = report_kind(cert)
        names = _SIGNATURES.get(kind)
        if names is None:
            self.not_applicable("report type unknown")
            return None
        read = [n for n in names if n in cert.cells]
        if not read:
            self.not_applicable("the layout reads no signature field")
            return None
        return [self.make(cert, f"{kind.value}: '{_label(n)}' is not signed.", field=n,
                          expected="a signature")
                for n in read if cert.text(n).strip().lower() in _UNSIGNED]


def _label(name: str) -> str:
    return CERTIFICATE[name].label


@register
class ObservationWithoutCode(CertificateCheck):
    """An observation on a condition report without a classification code.

    What it checks:
    On an EICR, every numbered observation the layout reads carries one of C1, C2, C3 or FI.
    Not applicable to other report types or when the layout reads no observation text.

    Why it matters:
    The codes decide the overall assessment and what the client must do; an uncoded
    observation leaves the client unable to tell a danger from a recommendation.

    Known false alarms:
    An observation that runs on to a second line read as a new observation.

    Failing example:
    "2. Bonding to gas not visible".

    Passing example:
    "2. C2 Bonding to gas not visible".

    Options:
    none.

    Reference:
    BS 7671:2018+A2:2022 Appendix 6 (EICR: each observation given a classification code C1,
    C2, C3 or FI).
    """

    id = "observation-without-code"
    title = "Observation without a classification code"
    severity = Severity.QUERY
    reference = "BS 7671:2018+A2:2022 Appendix 6 (classification codes)"
    basis = "published"
    group = "certificate"

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        if report_kind(cert) is not ReportKind.EICR:
            self.not_applicable("not a condition report")
            return None
        obs = observations(cert)
        if not obs:
            self.not_applicable("no observation text read")
            return None
        return [self.make(cert, f"Observation without a code: {o.text!r}.",
                          field="observations", recorded=o.text, expected="C1, C2, C3 or FI")
                for o in obs if o.code is None]
