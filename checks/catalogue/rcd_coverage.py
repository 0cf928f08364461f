"""Additional protection beyond sockets: bathrooms, domestic lighting, concealed cables,
RCD types on new work, AFDDs and SPDs where the form records them.

Each requirement came in with an edition; ``certificate_facts.requirement_applies`` says how
it bears on the certificate: in full on new work after it (a breach), as an observation on an
EICR of an installation built before it (a query), not at all on new work before it.
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass
from datetime import date

from certvet.checks.base import CertificateCheck, CircuitCheck, option
from certvet.checks.catalogue.completeness import is_spare
from certvet.checks.catalogue.rcd import is_socket_circuit
from certvet.checks.certificate_facts import (
    Applies,
    ReportKind,
    is_domestic,
    observation_note,
    report_kind,
    requirement_applies,
)
from certvet.checks.devices import rcd_protection
from certvet.checks.model import Finding, Severity
from certvet.checks.registry import register
from certvet.extractor.records import Board, Certificate, Circuit, ValueKind

_BATH = re.compile(r"\b(?:bath(?:room)?s?|shower(?: room)?s?|en[- ]?suites?|wet ?rooms?)\b",
                   re.I)
_LIGHTING = re.compile(r"\b(?:light(?:s|ing)?|ltg|lts|lighting)\b", re.I)
_CONCEALED = re.compile(r"\b(?:concealed|buried|chased|in walls?|in partitions?)\b", re.I)


def _since(text: str) -> date:
    return date.fromisoformat(text)


class _RcdRequirement(CircuitCheck):
    """Shared logic: a circuit of some kind needs 30 mA RCD protection from a date."""

    what: str = ""

    def wants(self, cert: Certificate, circuit: Circuit) -> bool:
        raise NotImplementedError

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        if is_spare(circuit) or not self.wants(cert, circuit):
            return None
        since = _since(self.options.since)
        applies = requirement_applies(cert, since)
        if applies is Applies.NOT_YET:
            return None
        prot = rcd_protection(circuit, board)
        if prot is not None and (prot.idn_ma is None or prot.idn_ma <= 30 + 1e-9):
            return []
        message = f"{self.what} with no 30 mA RCD recorded"
        if applies is Applies.OBSERVATION:
            message += f"; {observation_note(since)}"
            severity = min(self.effective_severity, Severity.QUERY)
        else:
            severity = self.effective_severity
        return [self.make(cert, message + ".", board=board, circuit=circuit, field="rcd_idn",
                          expected="≤ 30 mA", severity=severity)]


@register
class RcdMissingBathroom(_RcdRequirement):
    """A circuit in a room with a bath or shower without 30 mA RCD protection.

    What it checks:
    Every circuit whose description names a bathroom, shower, en-suite or wet room shows
    30 mA RCD protection (IΔn ≤ 30 mA, an RCBO, or a recorded trip time). On an EICR of an
    installation built before the requirement, a finding is an observation (query).

    Why it matters:
    Wet skin and earthed metal make a shock in a bathroom far more dangerous; since the 2008
    edition every circuit of the location needs an RCD, not only the sockets.

    Known false alarms:
    Circuits named after a room they only pass through; SELV circuits (12 V lighting).

    Failing example:
    "Shower 10.5 kW", B40, no IΔn.

    Passing example:
    "Bathroom lights", RCBO B6 30 mA.

    Options:
    since: date from which new work must comply (the 2008 edition in force).

    Reference:
    BS 7671:2018+A2:2022 Reg 701.411.3.3 (all circuits of the location, 30 mA RCD);
    first required by BS 7671:2008 (from memory).
    """

    id = "rcd-missing-bathroom"
    title = "Bath or shower room circuit without 30 mA RCD"
    severity = Severity.BREACH
    reference = "BS 7671:2018+A2:2022 Reg 701.411.3.3"
    basis = "published"
    group = "rcd"
    what = "Circuit in a room with a bath or shower"

    @dataclass(frozen=True)
    class Options:
        since: str = option("2008-07-01", "from memory: BS 7671:2008 in force 1 July 2008",
                            "date from which the requirement applies (YYYY-MM-DD)")

    def wants(self, cert: Certificate, circuit: Circuit) -> bool:
        return bool(_BATH.search(circuit.text("description")))


@register
class RcdMissingDomesticLighting(_RcdRequirement):
    """A lighting circuit in domestic premises without 30 mA RCD protection.

    What it checks:
    In premises the form describes as domestic, every circuit whose description names
    lighting shows 30 mA RCD protection. Not applicable when the form does not say what the
    premises are. On an EICR of an installation built before the 2018 edition, a finding is
    an observation (query).

    Why it matters:
    Changing a lamp or a fitting is where people touch lighting circuits; the 2018 edition
    made RCD protection of domestic lighting a requirement.

    Known false alarms:
    SELV lighting; premises described as "house" that are not dwellings.

    Failing example:
    Domestic, EIC 2024, "Upstairs lights", B6, no RCD.

    Passing example:
    Domestic, EIC 2024, "Upstairs lights", RCBO B6 30 mA.

    Options:
    since: date from which new work must comply (BS 7671:2018 in force).

    Reference:
    BS 7671:2018+A2:2022 Reg 411.3.4 (domestic premises: final circuits supplying luminaires).
    """

    id = "rcd-missing-domestic-lighting"
    title = "Domestic lighting circuit without 30 mA RCD"
    severity = Severity.BREACH
    reference = "BS 7671:2018+A2:2022 Reg 411.3.4"
    basis = "published"
    group = "rcd"
    what = "Domestic lighting circuit"

    @dataclass(frozen=True)
    class Options:
        since: str = option("2019-01-01", "from memory: BS 7671:2018 in force 1 January 2019",
                            "date from which the requirement applies (YYYY-MM-DD)")

    def run(self, cert: Certificate) -> tuple[int, list[Finding]]:
        if not is_domestic(cert):
            self.not_applicable("the form does not say the premises are domestic"
                                if is_domestic(cert) is None else "premises not domestic")
            return 0, []
        return super().run(cert)

    def wants(self, cert: Certificate, circuit: Circuit) -> bool:
        return bool(_LIGHTING.search(circuit.text("description")))


@register
class RcdMissingConcealedCables(_RcdRequirement):
    """A circuit recorded as concealed in a wall without 30 mA RCD protection.

    What it checks:
    Where the form records that a circuit's cables are concealed in a wall or partition
    (its wiring type, description or remarks say "concealed", "buried", "chased", "in
    wall"), that it shows 30 mA RCD protection. Most forms do not record this: then the
    check is not applicable, and says so.

    Why it matters:
    A nail or a drill through a cable buried less than 50 mm deep makes the wall-fixing live
    unless an RCD disconnects it.

    Known false alarms:
    Cables at more than 50 mm depth, in earthed metal conduit or mechanically protected
    (Reg 522.6.204), which the form may not say.

    Failing example:
    "Kitchen radial", remarks "cables concealed in wall", B20, no RCD.

    Passing example:
    The same with RCBO B20 30 mA.

    Options:
    since: date from which new work must comply (BS 7671:2008 in force).

    Reference:
    BS 7671:2018+A2:2022 Regs 522.6.202 and 522.6.203 (cables concealed in walls or
    partitions at less than 50 mm).
    """

    id = "rcd-missing-concealed-cables"
    title = "Cables concealed in walls without 30 mA RCD"
    severity = Severity.BREACH
    reference = "BS 7671:2018+A2:2022 Regs 522.6.202, 522.6.203"
    basis = "published"
    group = "rcd"
    what = "Circuit with cables concealed in a wall"

    @dataclass(frozen=True)
    class Options:
        since: str = option("2008-07-01", "from memory: BS 7671:2008 in force 1 July 2008",
                            "date from which the requirement applies (YYYY-MM-DD)")

    def run(self, cert: Certificate) -> tuple[int, list[Finding]]:
        applied, found = super().run(cert)
        if not applied:
            self.not_applicable("the form does not record where cables are concealed")
        return applied, found

    def wants(self, cert: Certificate, circuit: Circuit) -> bool:
        text = " ".join(circuit.text(n) for n in ("wiring_type", "description", "remarks"))
        return bool(_CONCEALED.search(text))


@register
class RcdTypeAcOnSockets(CircuitCheck):
    """A Type AC RCD protecting socket-outlets on new work.

    What it checks:
    On an EIC or minor works certificate dated from the 2018 edition on: a socket-outlet
    circuit whose RCD type reads "AC". On an EICR the same is an observation (query) for an
    installation built before it. Not applicable where no RCD type is recorded.

    Why it matters:
    A Type AC RCD may not trip on the smoothed DC fault currents of modern appliances
    plugged into sockets; Type A (or better) is needed where the load is not known.

    Known false alarms:
    "AC" written in the RCD type column to mean something else (e.g. a supply type).

    Failing example:
    EIC 2024, "Kitchen sockets", RCD type AC, 30 mA.

    Passing example:
    EIC 2024, "Kitchen sockets", RCD type A, 30 mA.

    Options:
    since: date from which new work must comply.

    Reference:
    BS 7671:2018+A2:2022 Reg 531.3.3 (Type AC only for fixed equipment with no DC component).
    """

    id = "rcd-type-ac-on-sockets"
    title = "Type AC RCD protecting sockets on new work"
    severity = Severity.BREACH
    reference = "BS 7671:2018+A2:2022 Reg 531.3.3"
    basis = "published"
    group = "rcd"

    @dataclass(frozen=True)
    class Options:
        since: str = option("2019-01-01", "from memory: BS 7671:2018 in force 1 January 2019",
                            "date from which the requirement applies (YYYY-MM-DD)")

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        rcd_type = circuit.text("rcd_type").upper().replace("TYPE", "").strip()
        if not rcd_type or not is_socket_circuit(circuit):
            return None
        since = _since(self.options.since)
        applies = requirement_applies(cert, since)
        if applies is Applies.NOT_YET:
            return None
        if rcd_type != "AC":
            return []
        severity = self.effective_severity
        note = ""
        if applies is Applies.OBSERVATION:
            severity, note = min(severity, Severity.QUERY), f"; {observation_note(since)}"
        return [self.make(cert, f"Socket-outlet circuit protected by a Type AC RCD{note}.",
                          board=board, circuit=circuit, field="rcd_type",
                          expected="Type A, F or B", severity=severity)]


_AFDD_PREMISES = re.compile(r"\b(?:hmo|house in multiple occupation|care home|student|"
                            r"high[- ]rise|hrrb|over 18 ?m)\b", re.I)


@register
class AfddNotRecordedWhereRequired(CircuitCheck):
    """No AFDD recorded on a socket circuit where A2:2022 requires one.

    What it checks:
    On new work dated from Amendment 2 in force, in premises the form describes as a house in
    multiple occupation, a care home, purpose-built student accommodation or a high-rise
    residential building: every socket-outlet final circuit up to 32 A shows an AFDD (its
    AFDD test-button column confirmed). Not applicable where the form has no AFDD column or
    does not describe the premises.

    Why it matters:
    Arc faults in damaged cables and loose terminals start fires that an MCB or RCD does not
    see; A2:2022 made AFDDs a requirement where escape is hardest.

    Known false alarms:
    An AFDD recorded elsewhere on the form (remarks, a board-level device).

    Failing example:
    HMO, EIC 2024, "Room 3 sockets" B20, AFDD blank.

    Passing example:
    HMO, EIC 2024, "Room 3 sockets" B20, AFDD test button ✓.

    Options:
    since: date from which new work must comply (A2:2022 in force).
    max_rating_a: socket circuits up to this rating need an AFDD.

    Reference:
    BS 7671:2018+A2:2022 Reg 421.1.7.
    """

    id = "afdd-not-recorded-where-required"
    title = "AFDD not recorded where A2:2022 requires one"
    severity = Severity.BREACH
    reference = "BS 7671:2018+A2:2022 Reg 421.1.7"
    basis = "published"
    group = "rcd"

    @dataclass(frozen=True)
    class Options:
        since: str = option("2022-09-27", "from memory: A2:2022 in force 27 September 2022",
                            "date from which the requirement applies (YYYY-MM-DD)")
        max_rating_a: float = option(32.0, "BS 7671:2018+A2:2022 Reg 421.1.7: up to 32 A",
                                     "socket circuits up to this rating (A)")

    def run(self, cert: Certificate) -> tuple[int, list[Finding]]:
        if not _AFDD_PREMISES.search(cert.text("premises_type")):
            self.not_applicable("premises not described as HMO, care home, student or "
                                "high-rise residential")
            return 0, []
        if not any("afdd_button" in c.cells for _, c in cert.circuits()):
            self.not_applicable("the form has no AFDD column")
            return 0, []
        if report_kind(cert) is ReportKind.EICR:
            self.not_applicable("an EICR: AFDDs are not retrospective")
            return 0, []
        return super().run(cert)

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        rating = circuit.number("rating")
        if is_spare(circuit) or not is_socket_circuit(circuit) or (
                rating is not None and rating > self.options.max_rating_a + 1e-9):
            return None
        if requirement_applies(cert, _since(self.options.since)) is Applies.NOT_YET:
            return None
        if circuit.value("afdd_button").kind is ValueKind.CONFIRMED:
            return []
        return [self.make(cert, "Socket-outlet circuit in premises where A2:2022 requires an "
                          "AFDD, with none recorded.", board=board, circuit=circuit,
                          field="afdd_button", expected="AFDD fitted and tested (✓)")]


_NO = re.compile(r"^\s*(?:no|none|not fitted|n/?a|nil|✗|x)\s*\.?$", re.I)
_RISK = re.compile(r"risk assess", re.I)


@register
class SpdNotRecordedOnNewWork(CertificateCheck):
    """New work with no surge protective device and no risk assessment recorded.

    What it checks:
    On an EIC dated from the 2018 edition on, where the form records the SPD as "No",
    "None" or "Not fitted" and does not mention a risk assessment. Not applicable when the
    form has no SPD field, or to other report types.

    Why it matters:
    Since the 2018 edition protection against transient overvoltage is to be provided
    unless a risk assessment shows it is not needed; "none" with no assessment leaves the
    designer's decision unrecorded.

    Known false alarms:
    A risk assessment recorded on a page the layout does not read.

    Failing example:
    EIC 2024, SPD "None".

    Passing example:
    EIC 2024, SPD "Type 2 at CU"; or "None — risk assessment: not required".

    Options:
    since: date from which new work must comply.

    Reference:
    BS 7671:2018+A2:2022 Reg 443.4 (protection against transient overvoltages).
    """

    id = "spd-not-recorded-on-new-work"
    title = "No SPD and no risk assessment on new work"
    severity = Severity.QUERY
    reference = "BS 7671:2018+A2:2022 Reg 443.4"
    basis = "published"
    group = "rcd"

    @dataclass(frozen=True)
    class Options:
        since: str = option("2019-01-01", "from memory: BS 7671:2018 in force 1 January 2019",
                            "date from which the requirement applies (YYYY-MM-DD)")

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        text = cert.text("spd_fitted")
        if report_kind(cert) is not ReportKind.EIC or not text:
            self.not_applicable("not an EIC, or the form records no SPD")
            return None
        if requirement_applies(cert, _since(self.options.since)) is Applies.NOT_YET:
            self.not_applicable("dated before the requirement")
            return None
        if not _NO.match(text) or _RISK.search(text):
            return []
        return [self.make(cert, f"SPD recorded as {text!r} with no risk assessment noted.",
                          field="spd_fitted", expected="an SPD, or a risk assessment recorded")]
