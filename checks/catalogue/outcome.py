"""A condition report's overall assessment and observations against its own evidence."""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

from certvet.checks.base import CertificateCheck, option
from certvet.checks.certificate_facts import (
    ReportKind,
    observations,
    outcome,
    recorded_codes,
    report_kind,
    summary_counts,
)
from certvet.checks.model import Finding, Severity
from certvet.checks.registry import get_check, register
from certvet.extractor.records import Board, Certificate, Circuit, ValueKind

# The checks whose breach findings are schedule failures an inspector must code C1 or C2.
FAILURE_CHECKS = ("zs-over-max-for-device,ir-below-minimum,rcd-time-limit,rcd-time-5x-limit,"
                  "polarity-not-confirmed")
_CONTINUITY = ("r1_r2", "r2_only", "r1", "r2", "rn")


def _eicr_only(check: CertificateCheck, cert: Certificate) -> bool:
    if report_kind(cert) is not ReportKind.EICR:
        check.not_applicable("not a condition report (EICR)")
        return False
    return True


def schedule_failures(cert: Certificate, check_ids: tuple[str, ...]
                      ) -> list[tuple[Board, Circuit, str]]:
    """(board, circuit, what failed) for each failed reading on the schedule: the breach
    findings of the named checks, and continuity recorded open (over-range, "OL")."""
    rows = {(b.ref, c.ref): (b, c) for b, c in cert.circuits()}
    out: list[tuple[Board, Circuit, str]] = []
    for cid in check_ids:
        _, found = get_check(cid)().run(cert)
        for f in found:
            where = rows.get((f.board or "", f.circuit or ""))
            if where is not None and f.severity >= Severity.BREACH:
                out.append((where[0], where[1], f"{cid}: {f.message}"))
    for board, circuit in cert.circuits():
        out += [(board, circuit, f"continuity {name} open ({circuit.value(name).raw})")
                for name in _CONTINUITY if circuit.value(name).kind is ValueKind.LOWER_BOUND]
    return out


def _named(cert: Certificate, board: str, circuit: str, codes: tuple[str, ...]) -> bool:
    single = len(cert.boards) == 1
    for o in observations(cert):
        if o.code not in codes:
            continue
        for b, c in o.circuits:
            if c == circuit.upper() and (b is None and single or b == board.upper()):
                return True
    return False


@register
class SatisfactoryDespiteFailedReadings(CertificateCheck):
    """A condition report called satisfactory while its own schedule records failures.

    What it checks:
    On an EICR whose overall assessment is satisfactory: every failed reading on the
    schedule — Zs over the tabulated maximum, insulation resistance under the minimum, an
    RCD over its trip-time limit, polarity recorded incorrect (the breach findings of the
    checks named in the option), continuity recorded open — is reported, saying whether an
    observation names the circuit. Any of these is at least potentially dangerous (C2) by
    the usual classification, so the report cannot be satisfactory.

    Why it matters:
    A landlord or agent reads the overall assessment, not the schedule. A satisfactory
    verdict over failing readings hides a danger behind the one word they rely on.

    Known false alarms:
    A reading that the check misreads (see the finding of the check named); a failure the
    inspector put right during the inspection and noted in remarks.

    Failing example:
    "Satisfactory", circuit 4 Zs 2.10 Ω on a B32 (max 1.37 Ω), no observations.

    Passing example:
    "Unsatisfactory" with "1. C2 Circuit 4 Zs over maximum"; or "Satisfactory" with every
    reading within its limit.

    Options:
    checks: the checks whose breach findings count as schedule failures.

    Reference:
    BS 7671:2018+A2:2022 Appendix 6 (EICR guidance: C1 or C2 make the overall assessment
    unsatisfactory); the classification of each failure as C2 follows common practice, no
    source.
    """

    id = "satisfactory-despite-failing-readings"
    title = "Satisfactory report over failing readings"
    severity = Severity.BREACH
    reference = "BS 7671:2018+A2:2022 Appendix 6 (classification codes, overall assessment)"
    basis = "published"
    group = "outcome"

    @dataclass(frozen=True)
    class Options:
        checks: str = option(
            FAILURE_CHECKS, "common practice, no source: the readings that fail a requirement",
            "ids of the checks whose breach findings are schedule failures, comma-separated")

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        if not _eicr_only(self, cert):
            return None
        if outcome(cert) != "satisfactory":
            self.not_applicable("overall assessment is not satisfactory")
            return None
        found = []
        for board, circuit, what in schedule_failures(cert, tuple(
                i.strip() for i in self.options.checks.split(",") if i.strip())):
            named = _named(cert, board.ref, circuit.ref, ("C1", "C2"))
            note = ("an observation codes it C1/C2, so the assessment is wrong" if named
                    else "no C1/C2 observation names it")
            found.append(self.make(
                cert, f"Overall assessment satisfactory, but {board.ref}/{circuit.ref} failed "
                f"({what}); {note}.", board=board, circuit=circuit,
                recorded=cert.value("overall_outcome").display(),
                expected="Unsatisfactory, with a C1/C2 observation for the failure"))
        return found


@register
class UnsatisfactoryWithoutCodes(CertificateCheck):
    """A condition report called unsatisfactory with no C1, C2 or FI to say why.

    What it checks:
    On an EICR whose overall assessment is unsatisfactory: that the summary table, the
    listed observations or the observation codes record at least one C1, C2 or FI. Not
    applicable when the report records no observations in any form the layout reads.

    Why it matters:
    An unsatisfactory report must tell the client what to put right; without a C1, C2 or FI
    the client cannot act on it, and a remedial quote cannot be checked against it.

    Known false alarms:
    Observations on a continuation sheet the layout does not read.

    Failing example:
    "Unsatisfactory", observations "1. C3 No labels at the board".

    Passing example:
    "Unsatisfactory", observations "1. C2 No main bonding to gas".

    Options:
    none.

    Reference:
    BS 7671:2018+A2:2022 Appendix 6 (EICR guidance: the overall assessment is unsatisfactory
    when a C1, C2 or FI is recorded).
    """

    id = "unsatisfactory-without-codes"
    title = "Unsatisfactory report with no C1, C2 or FI"
    severity = Severity.QUERY
    reference = "BS 7671:2018+A2:2022 Appendix 6 (classification codes, overall assessment)"
    basis = "published"
    group = "outcome"

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        if not _eicr_only(self, cert):
            return None
        if outcome(cert) != "unsatisfactory":
            self.not_applicable("overall assessment is not unsatisfactory")
            return None
        if not any(n in cert.cells for n in ("observations", "observation_codes", "c1_count")):
            self.not_applicable("the layout reads no observations or codes")
            return None
        codes = recorded_codes(cert)
        if any(codes.get(c, 0) > 0 for c in ("C1", "C2", "FI")):
            return []
        listed = ", ".join(f"{c} ×{n}" for c, n in sorted(codes.items()) if n) or "none"
        return [self.make(cert, "Overall assessment unsatisfactory, but no C1, C2 or FI is "
                          f"recorded (codes: {listed}).", field="overall_outcome",
                          expected="at least one C1, C2 or FI")]


@register
class ObservationCountsDisagree(CertificateCheck):
    """The summary table's observation counts differ from the observations listed.

    What it checks:
    Where the form prints both a summary of how many C1, C2, C3 and FI observations there
    are and the numbered observations themselves, that each count equals the number of
    listed observations with that code.

    Why it matters:
    The summary is what a client or agent reads; a count that disagrees with the list means
    one of them was edited without the other, and either may be the wrong one.

    Known false alarms:
    Observations continued on a sheet the layout does not read.

    Failing example:
    Summary "C2: 0", observations list "3. C2 No RCD for sockets".

    Passing example:
    Summary "C2: 1, C3: 1" with one C2 and one C3 listed.

    Options:
    none.

    Reference:
    Common practice, no source (a document's own totals must agree with its entries).
    """

    id = "observation-counts-disagree"
    title = "Observation counts disagree with the list"
    severity = Severity.QUERY
    reference = "common practice, no source"
    basis = "common practice"
    group = "outcome"

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        counts = summary_counts(cert)
        obs = observations(cert)
        if counts is None or not obs:
            self.not_applicable("the form prints no summary counts or no observation list")
            return None
        listed: dict[str, int] = {}
        for o in obs:
            if o.code:
                listed[o.code] = listed.get(o.code, 0) + 1
        found = []
        for code in ("C1", "C2", "C3", "FI"):
            n, m = counts.get(code), listed.get(code, 0)
            if n is not None and n != m:
                found.append(self.make(
                    cert, f"The summary counts {n} {code} observation(s); the list has {m}.",
                    field=f"{code.lower()}_count", expected=str(m)))
        return found


@register
class ObservationNamesUnknownCircuit(CertificateCheck):
    """An observation names a circuit that is not on the schedule.

    What it checks:
    Each listed observation that names a circuit ("circuit 7", "cct 7", "DB2/7") names one
    the schedule holds (on the board it names, or on any board when it names none).

    Why it matters:
    An observation about a circuit the schedule does not have was copied from another
    report or refers to a board left off the schedule: either way the report does not
    describe this installation.

    Known false alarms:
    Circuits numbered differently in the observation text (e.g. "way 3L1").

    Failing example:
    Schedule with circuits 1–6; observation "2. C3 Circuit 9 label missing".

    Passing example:
    Observation "2. C3 Circuit 4 label missing" with circuit 4 on the schedule.

    Options:
    none.

    Reference:
    Common practice, no source (the observations and the schedule describe one installation).
    """

    id = "observation-names-unknown-circuit"
    title = "Observation names a circuit not on the schedule"
    severity = Severity.QUERY
    reference = "common practice, no source"
    basis = "common practice"
    group = "outcome"

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        obs = [o for o in observations(cert) if o.circuits]
        if not obs or not cert.boards:
            self.not_applicable("no observation names a circuit")
            return None
        have = {(b.ref.upper(), c.ref.upper()) for b, c in cert.circuits()}
        refs = {c for _, c in have}
        found = []
        for o in obs:
            for board, circuit in o.circuits:
                known = (board, circuit) in have if board else circuit in refs
                if not known:
                    where = f"{board}/{circuit}" if board else f"circuit {circuit}"
                    found.append(self.make(
                        cert, f"Observation {o.text!r} names {where}, which is not on the "
                        "schedule.", field="observations", recorded=o.text,
                        expected="a circuit on the schedule"))
        return found
