"""The supply: Ze for the earthing system, prospective fault current, breaking capacity."""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass

from certvet.checks.base import CertificateCheck, CircuitCheck, fmt, option
from certvet.checks.catalogue.loop import earthing_of, origin_ze
from certvet.checks.devices import parse_device
from certvet.checks.model import Finding, Severity
from certvet.checks.registry import register
from certvet.checks.tables import declared_ze
from certvet.extractor.records import Board, Certificate, Circuit, Value, ValueKind


def kiloamps(v: Value) -> float | None:
    """A prospective fault current or breaking capacity in kA.

    Numbers written without a unit above 100 are taken as amperes ("1600" → 1.6 kA): no
    domestic or small commercial supply reaches 100 kA, and forms often print amperes.
    """
    if v.kind is not ValueKind.NUMBER or v.number is None:
        return None
    return v.number / 1000 if v.number > 100 else v.number


@register
class ZeTypicalForEarthing(CertificateCheck):
    """Ze at the origin should fit the recorded earthing system.

    What it checks:
    Ze at the origin (the certificate's, else the first board's) against the value network
    operators commonly declare as the maximum for the earthing system: above 0.35 Ω on
    TN-C-S or 0.8 Ω on TN-S is queried; on TT, a Ze below tt_min_ohm suggests the
    installation is in fact connected to the network's earth.

    Why it matters:
    A Ze above the declared maximum means a poor supply earth, a Ze measured at a sub-board,
    or the wrong earthing system recorded; all change which limits apply.

    Known false alarms:
    Supplies whose operator declares a different figure; rural TN-S supplies with long
    service cables; a TT electrode in very low-resistance ground.

    Failing example:
    TN-C-S, Ze = 0.62 Ω; TT, Ze = 0.30 Ω.

    Passing example:
    TN-C-S, Ze = 0.24 Ω; TT, Ze = 95 Ω.

    Options:
    tolerance_ohm: excess over the declared figure treated as rounding.
    tt_min_ohm: TT Ze below this suggests a network earth.

    Reference:
    Common practice, no source (figures network operators commonly declare: TN-C-S 0.35 Ω,
    TN-S 0.8 Ω; checks/data/declared_ze.csv).
    """

    id = "ze-typical-for-earthing"
    title = "Supply: Ze fits the recorded earthing system"
    severity = Severity.QUERY
    reference = "Common practice, no source (network operators' declared Ze: 0.35 Ω / 0.8 Ω)"
    basis = "common practice"
    group = "supply"

    @dataclass(frozen=True)
    class Options:
        tolerance_ohm: float = option(
            0.01, "common practice, no source", "excess over the declared Ze treated as rounding"
        )
        tt_min_ohm: float = option(
            1.0, "common practice, no source", "a TT Ze below this suggests a network earth"
        )

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        ze, board, field = origin_ze(cert)
        earthing = earthing_of(cert, board)
        if ze is None or earthing not in ("TN-C-S", "TN-S", "TT"):
            return None
        if earthing == "TT":
            if ze >= self.options.tt_min_ohm:
                return []
            return [
                self.make(
                    cert,
                    f"Ze {fmt(ze, 'Ω')} is far lower than a TT electrode gives; check whether the "
                    "installation is in fact on the network's earth (TN).",
                    board=board,
                    field=field,
                    expected=f"≥ {self.options.tt_min_ohm:g} Ω for TT",
                )
            ]
        declared = declared_ze(earthing)
        if declared is None or ze <= declared + self.options.tolerance_ohm + 1e-9:
            return []
        return [
            self.make(
                cert,
                f"Ze {fmt(ze, 'Ω')} is above the {fmt(declared, 'Ω')} commonly declared for "
                f"{earthing}; check the supply earth, where Ze was measured and the recorded "
                "earthing system.",
                board=board,
                field=field,
                expected=f"≤ {fmt(declared, 'Ω')}",
            )
        ]


@register
class IpfConsistentWithZe(CertificateCheck):
    """The recorded prospective fault current should fit U0 / Ze.

    What it checks:
    For the origin (certificate Ze and Ipf) and for each board with its own Ze and Ipf, the
    ratio of the recorded Ipf to the earth fault current U0 / Ze: below min_ratio is
    reported on any system; above max_ratio on TN-C-S (where the short-circuit and earth
    fault loops are nearly the same). On TN-S the short-circuit current may be higher than
    U0 / Ze, so the upper side is checked only for a declared round figure (16 kA by
    default): recorded where the measured Ze implies a fraction of it, on any TN system,
    it is asked whether Ipf was measured or taken by enquiry. TT: lower side only.

    Why it matters:
    Ipf is the larger of the short-circuit and earth fault currents, so it cannot be much
    below U0 / Ze; a figure that does not fit Ze was copied, calculated from the wrong Ze,
    or recorded in the wrong unit.

    Known false alarms:
    Instruments that compute Ipf at the measured voltage (up to 253 V) rather than 230 V;
    Ze and Ipf measured at different times of day.

    Failing example:
    TN-C-S, Ze = 0.25 Ω (920 A), Ipf = 0.3 kA; TN-S, Ze = 0.45 Ω (0.51 kA), Ipf "16 kA".

    Passing example:
    TN-C-S, Ze = 0.25 Ω, Ipf = 0.92 kA; TN-S, Ze = 0.45 Ω, Ipf = 0.9 kA.

    Options:
    u0_v: nominal voltage to earth.
    min_ratio: smallest accepted Ipf / (U0/Ze).
    max_ratio: largest accepted Ipf / (U0/Ze) on TN-C-S, and for a declared figure on TN-S.
    declared_figures_ka: round figures network operators declare (comma-separated kA).

    Reference:
    BS 7671:2018+A2:2022 Reg 643.7.3.201 (prospective fault current, from memory); ratios:
    common practice, no source.
    """

    id = "ipf-consistent-with-ze"
    title = "Supply: prospective fault current fits Ze"
    severity = Severity.QUERY
    reference = (
        "Common practice, no source (Ipf ≈ U0/Ze); test: BS 7671:2018+A2:2022 "
        "Reg 643.7.3.201 (from memory)"
    )
    basis = "common practice"
    group = "supply"

    @dataclass(frozen=True)
    class Options:
        u0_v: float = option(
            230.0,
            "UK nominal voltage 230 V (Electricity Safety, Quality and Continuity Regulations "
            "2002)",
            "nominal U0 in volts", above=0.0
        )
        min_ratio: float = option(0.67, "common practice, no source", "smallest Ipf / (U0/Ze)")
        max_ratio: float = option(
            2.0, "common practice, no source", "largest Ipf / (U0/Ze) on TN-C-S", above=0.0
        )
        declared_figures_ka: str = option(
            "16", "common practice, no source: the 16 kA network operators declare for a "
            "single-phase supply", "declared round figures (kA) queried when Ze implies less")

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        pairs: list[tuple[Board | None, float | None, float | None]] = [
            (None, cert.number("ze"), kiloamps(cert.value("ipf")))
        ]
        pairs += [(b, b.number("ze"), kiloamps(b.value("ipf"))) for b in cert.boards]
        found: list[Finding] = []
        applied = False
        o = self.options
        for board, ze, ipf in pairs:
            if ze is None or ipf is None or ze <= 0:
                continue
            applied = True
            pefc = o.u0_v / ze / 1000
            ratio = ipf / pefc
            earthing = earthing_of(cert, board)
            declared = [float(x) for x in o.declared_figures_ka.split(",") if x.strip()]
            is_declared = any(abs(ipf - d) < 1e-6 for d in declared)
            too_low = ratio < o.min_ratio
            too_high = ratio > o.max_ratio and (
                earthing == "TN-C-S" or (earthing in ("TN-S", "TN-C") and is_declared))
            if not (too_low or too_high):
                continue
            where = f"board {board.ref}" if board else "the origin"
            why = ("; was it measured, or is it the declared figure taken by enquiry?"
                   if too_high and is_declared else "; one of the two is wrong.")
            found.append(
                self.make(
                    cert,
                    f"Ipf {ipf:.2f} kA at {where} is {ratio:.1f} × the {pefc:.2f} kA that Ze "
                    f"{fmt(ze, 'Ω')} gives at {o.u0_v:g} V{why}",
                    board=board,
                    field="ipf",
                    expected=f"{pefc * o.min_ratio:.2f}–{pefc * o.max_ratio:.2f} kA"
                    if earthing == "TN-C-S" else f"≥ {pefc * o.min_ratio:.2f} kA",
                )
            )
        return found if applied else None


_NOT_CONSUMER_UNIT = re.compile(
    r"three[- ]phase|3[- ]?ph|\btp\s*&?\s*n\b|\btpn\b|panel\s*board|switch\s*board|"
    r"\bmcc\b|400\s*v", re.IGNORECASE)


def is_consumer_unit(board: Board) -> bool:
    """A single-phase board of the consumer-unit kind: any board not described as three-phase,
    a panel board or a switchboard (common practice, no source)."""
    said = " ".join(board.text(f) for f in ("board_ref", "location", "supplied_from"))
    return not _NOT_CONSUMER_UNIT.search(said)


@register
class IpfOverBreakingCapacity(CircuitCheck):
    """A device's breaking capacity must not be below the prospective fault current.

    What it checks:
    On a circuit with a breaking capacity recorded, that the prospective fault current at its
    board (the board's Ipf, else the certificate's) is not above it.

    Why it matters:
    A device asked to break more current than it is rated for can fail to clear the fault
    or be destroyed doing so, with arcing and fire inside the board.

    Circuit-breakers and RCBOs in a consumer unit (any board not described as a
    three-phase or panel board) are accepted up to the unit's conditional short-circuit
    rating, 16 kA by default: a consumer unit to BS EN 61439-3 fed through a BS 88-3 fuse of
    100 A or less is rated for 16 kA as an assembly (Reg 536.4.201, BS EN 61439-3 annex ZB
    as commonly applied), so its 6 kA devices under a declared 16 kA are not a breach.
    Set strict to judge every device by its own marking.

    Known false alarms:
    A consumer unit not type-tested to BS EN 61439-3, or fed by a larger or different
    upstream device, has no conditional rating: turn strict on where that is known.

    Failing example:
    Ipf = 7.2 kA, breaking capacity 6 kA, strict; "Three-phase panel board", Ipf 20 kA,
    10 kA devices.

    Passing example:
    Ipf = 1.4 kA, breaking capacity 6 kA; consumer unit, declared Ipf 16 kA, 6 kA devices.

    Options:
    conditional_rating_ka: accept Ipf up to this for devices in a consumer unit with a
    conditional short-circuit rating (0 = off).
    strict: judge every device by its own breaking capacity (no conditional rating).

    Reference:
    BS 7671:2018+A2:2022 Reg 434.5.1 (breaking capacity not less than the prospective fault
    current, from memory) and Reg 536.4.201 (conditional rating of consumer units, from
    memory); BS EN 61439-3 annex ZB (16 kA conditional rating with an upstream BS 88-3
    fuse up to 100 A, as commonly applied; from memory).
    """

    id = "ipf-over-breaking-capacity"
    title = "Supply: prospective fault current above a device's breaking capacity"
    severity = Severity.BREACH
    reference = "BS 7671:2018+A2:2022 Reg 434.5.1 (from memory)"
    basis = "from memory"
    group = "supply"

    @dataclass(frozen=True)
    class Options:
        conditional_rating_ka: float = option(
            16.0,
            "BS 7671:2018+A2:2022 Reg 536.4.201; BS EN 61439-3 annex ZB conditional "
            "short-circuit rating, 16 kA as commonly applied (from memory)",
            "accept Ipf up to this many kA in a conditionally rated consumer unit; 0 = off",
        )
        strict: bool = option(
            False, "common practice, no source",
            "judge every device by its own breaking capacity, no conditional rating",
        )

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        capacity = kiloamps(circuit.value("breaking_capacity"))
        ipf = kiloamps(board.value("ipf"))
        where = f"board {board.ref}"
        if ipf is None:
            ipf = kiloamps(cert.value("ipf"))
            where = "the origin"
        if capacity is None or ipf is None:
            return None
        if ipf <= capacity + 1e-9:
            return []
        o = self.options
        if (not o.strict and 0 < ipf <= o.conditional_rating_ka + 1e-9
                and parse_device(circuit).is_breaker and is_consumer_unit(board)):
            return []
        return [
            self.make(
                cert,
                f"Prospective fault current {ipf:.2f} kA at {where} is above the device's "
                f"breaking capacity of {capacity:g} kA.",
                board=board,
                circuit=circuit,
                field="breaking_capacity",
                expected=f"≥ {ipf:.2f} kA",
            )
        ]
