"""Ring final circuit end-to-end readings (r1, rn, r2)."""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass
from typing import ClassVar

from certvet.checks.base import CircuitCheck, fmt, option
from certvet.checks.devices import ring_or_radial_unknown
from certvet.checks.model import Finding, Severity
from certvet.checks.registry import register
from certvet.checks.tables import conductor_mohm_per_m
from certvet.extractor.records import Board, Certificate, Circuit, ValueKind


@register
class RingNeutralMatchesLine(CircuitCheck):
    """rn should equal r1 on a ring whose line and neutral are the same size.

    What it checks:
    On a ring final circuit with r1 and rn recorded, that the neutral end-to-end reading rn
    is within the tolerance of the line end-to-end reading r1 (line and neutral are the same
    conductor size in a ring).

    Why it matters:
    A difference larger than a few hundredths of an ohm means a high-resistance joint, a
    broken or interconnected ring, or a reading that was written down rather than measured.

    Known false alarms:
    Rings where the neutral is a different size from the line (very rare); rings wired in
    single-core cables where a leg has been extended with a different cable.

    Failing example:
    r1 = 0.52 Ω, rn = 0.61 Ω: 0.09 Ω apart, beyond 0.05 Ω.

    Passing example:
    r1 = 0.52 Ω, rn = 0.53 Ω.

    Options:
    tolerance_ohm: largest difference accepted between rn and r1.

    Reference:
    Common practice, no source (a tolerance of 0.05 Ω is what trade guidance and assessors
    commonly apply); the test itself is BS 7671:2018+A2:2022 Reg 643.2.1.
    """

    id = "ring-rn-matches-r1"
    title = "Ring: neutral end-to-end rn matches line r1"
    severity = Severity.QUERY
    reference = "BS 7671:2018+A2:2022 Reg 643.2.1 (test); tolerance: common practice, no source"
    basis = "common practice"
    group = "ring"

    @dataclass(frozen=True)
    class Options:
        tolerance_ohm: float = option(
            0.05, "common practice, no source", "largest accepted |rn - r1| in ohms"
        )

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        r1, rn = circuit.number("r1"), circuit.number("rn")
        if r1 is None or rn is None:
            return None
        tol = self.options.tolerance_ohm
        if abs(rn - r1) <= tol + 1e-9:
            return []
        return [
            self.make(
                cert,
                f"End-to-end neutral rn {fmt(rn, 'Ω')} differs from line r1 {fmt(r1, 'Ω')} "
                f"by {fmt(abs(rn - r1), 'Ω')}; the same size conductors round one ring "
                "should read the same.",
                board=board,
                circuit=circuit,
                field="rn",
                expected=fmt(r1, "Ω"),
                tolerance=f"± {fmt(tol, 'Ω')}",
            )
        ]


# --- helpers shared by the ring checks ---------------------------------------------------------

DEFAULT_RING_LIVE_MM2 = 2.5  # common practice, no source: domestic rings are 2.5 mm² line
DEFAULT_RING_CPC_MM2 = 1.5  # common practice, no source: …in 2.5/1.5 mm² twin and earth


def _ring_sizes(circuit: Circuit, assume: bool) -> tuple[float, float, bool] | None:
    """(live mm², cpc mm², assumed?) for a ring; 2.5/1.5 assumed when blank and `assume`."""
    live, cpc = circuit.number("live_csa"), circuit.number("cpc_csa")
    if live is not None and cpc is not None:
        return live, cpc, False
    if not assume:
        return None
    return (live or DEFAULT_RING_LIVE_MM2), (cpc or DEFAULT_RING_CPC_MM2), True


def _sizes_text(live: float, cpc: float, assumed: bool) -> str:
    text = f"{live:g}/{cpc:g} mm²"
    return f"{text} (assumed, sizes not recorded)" if assumed else text


@register
class RingCpcFitsSizeRatio(CircuitCheck):
    """r2 should be r1 times the ratio of the line and cpc resistances.

    What it checks:
    On a ring with r1 and r2 recorded, that r2 lies between r1 × (the size ratio of the line
    and cpc, 2.5/1.5 = 1.67) and r1 × (the ratio of their IEC 60228 resistances,
    12.1/7.41 = 1.63), widened by a tolerance. Sizes come from the live and cpc CSA columns,
    2.5/1.5 mm² being assumed when both are blank.

    Why it matters:
    The cpc of a ring runs the same route as the line, so its end-to-end resistance is fixed
    by the sizes. An r2 far from that ratio points to a broken or interconnected cpc, the
    wrong cable recorded, or readings that were not measured.

    Known false alarms:
    Rings in singles or steel wire armoured cable where the cpc is not the size recorded, or
    where the armour or conduit is the cpc; a ring extended in a different cable.

    Failing example:
    2.5/1.5 mm² ring, r1 = 0.50 Ω, r2 = 0.50 Ω (ratio 1.00; expected 0.82–0.84 Ω).

    Passing example:
    2.5/1.5 mm² ring, r1 = 0.50 Ω, r2 = 0.83 Ω.

    Options:
    tolerance_ohm: fixed part of the tolerance either side of the expected band.
    tolerance_fraction: part of the tolerance proportional to the expected r2.
    assume_twin_and_earth: assume 2.5/1.5 mm² when the sizes are blank.

    Reference:
    IEC 60228 Table 2 (copper resistances 12.1 and 7.41 mΩ/m at 20 °C); the test itself is
    BS 7671:2018+A2:2022 Reg 643.2.1; the tolerance is common practice, no source.
    """

    id = "ring-r2-fits-csa-ratio"
    title = "Ring: cpc end-to-end r2 fits the line/cpc size ratio"
    severity = Severity.QUERY
    reference = (
        "IEC 60228 Table 2 (conductor resistance); BS 7671:2018+A2:2022 Reg 643.2.1 (test); "
        "tolerance: common practice, no source"
    )
    basis = "common practice"
    group = "ring"

    @dataclass(frozen=True)
    class Options:
        tolerance_ohm: float = option(
            0.05, "common practice, no source", "fixed tolerance in ohms around the r2 band"
        )
        tolerance_fraction: float = option(
            0.06, "common practice, no source", "tolerance as a fraction of the expected r2"
        )
        assume_twin_and_earth: bool = option(
            True, "common practice, no source", "assume 2.5/1.5 mm² when sizes are blank"
        )

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        r1, r2 = circuit.number("r1"), circuit.number("r2")
        if r1 is None or r2 is None or r1 <= 0:
            return None
        sizes = _ring_sizes(circuit, self.options.assume_twin_and_earth)
        if sizes is None:
            return None
        live, cpc, assumed = sizes
        r_live, r_cpc = conductor_mohm_per_m(live), conductor_mohm_per_m(cpc)
        if r_live is None or r_cpc is None or cpc <= 0:
            return None
        by_size, by_resistance = live / cpc, r_cpc / r_live
        low_ratio, high_ratio = sorted((by_size, by_resistance))
        low, high = r1 * low_ratio, r1 * high_ratio
        tol = self.options.tolerance_ohm + self.options.tolerance_fraction * high
        if low - tol - 1e-9 <= r2 <= high + tol + 1e-9:
            return []
        return [
            self.make(
                cert,
                f"End-to-end cpc r2 {fmt(r2, 'Ω')} is {r2 / r1:.2f} × r1 {fmt(r1, 'Ω')}; a "
                f"{_sizes_text(live, cpc, assumed)} ring should read {low_ratio:.2f}–"
                f"{high_ratio:.2f} × r1, i.e. {fmt(low, 'Ω')}–{fmt(high, 'Ω')}.",
                board=board,
                circuit=circuit,
                field="r2",
                expected=f"{fmt(low, 'Ω')}–{fmt(high, 'Ω')}",
                tolerance=f"± {fmt(tol, 'Ω')}",
            )
        ]


class _QuarterRule(CircuitCheck):
    """Shared logic of the two quarter-rule checks (not registered)."""

    pair: ClassVar[tuple[str, str]]  # the end-to-end readings summed, e.g. ("r1", "r2")
    field_name: ClassVar[str]  # the recorded R1+R2 / R1+Rn field
    label: ClassVar[str]

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        a, b = (circuit.number(f) for f in self.pair)
        recorded = circuit.number(self.field_name)
        if a is None or b is None or recorded is None:
            return None
        quarter = (a + b) / 4
        below, above = self.options.below_tolerance_ohm, self.options.spur_allowance_ohm
        names = f"({self.pair[0]}+{self.pair[1]})/4"
        expected = f"{fmt(quarter, 'Ω')} to {fmt(quarter + above, 'Ω')}"
        tolerance = f"-{fmt(below, 'Ω')} / +{fmt(above, 'Ω')} for spurs"
        if recorded < quarter - below - 1e-9:
            return [
                self.make(
                    cert,
                    f"{self.label} {fmt(recorded, 'Ω')} is below {names} = "
                    f"{fmt(quarter, 'Ω', 3)}; "
                    "with the ends cross-connected no point on a ring can read less than a "
                    "quarter of the loop, so the readings cannot all be right.",
                    board=board,
                    circuit=circuit,
                    field=self.field_name,
                    expected=expected,
                    tolerance=tolerance,
                )
            ]
        if recorded > quarter + above + 1e-9:
            return [
                self.make(
                    cert,
                    f"{self.label} {fmt(recorded, 'Ω')} is {fmt(recorded - quarter, 'Ω')} above "
                    f"{names} = {fmt(quarter, 'Ω', 3)}, more than a spur usually adds; check for "
                    "a long spur, a poor termination or an unmeasured figure.",
                    board=board,
                    circuit=circuit,
                    field=self.field_name,
                    expected=expected,
                    tolerance=tolerance,
                    severity=Severity.QUERY,
                )
            ]
        return []


@register
class RingR1R2QuarterRule(_QuarterRule):
    """R1+R2 on a ring should be a quarter of r1 + r2, plus any spur.

    What it checks:
    On a ring with r1, r2 and R1+R2 recorded, that R1+R2 is not below (r1 + r2)/4 by more
    than a small tolerance (impossible as recorded) and not above it by more than a spur
    allowance (query).

    Why it matters:
    With line and cpc cross-connected at the board, every point on a healthy ring reads
    (r1 + r2)/4; spurs add their own length. A lower reading cannot be produced by the
    circuit as recorded; a much higher one means a long spur, a bad joint or a guess.

    Known false alarms:
    Long or several-metre spurs (raise spur_allowance_ohm); a ring whose R1+R2 was taken
    with parallel earth paths through bonded metalwork (reads low).

    Failing example:
    r1 = 0.52 Ω, r2 = 0.86 Ω (quarter 0.345 Ω), R1+R2 = 0.20 Ω (impossible) or
    0.60 Ω (query).

    Passing example:
    r1 = 0.52 Ω, r2 = 0.86 Ω, R1+R2 = 0.36 Ω.

    Options:
    below_tolerance_ohm: how far below the quarter a reading may be before it is impossible.
    spur_allowance_ohm: how far above the quarter a reading may be (spurs).

    Reference:
    BS 7671:2018+A2:2022 Reg 643.2.1 (ring continuity test, step 3 cross-connection);
    tolerances: common practice, no source.
    """

    id = "ring-r1r2-quarter-rule"
    title = "Ring: R1+R2 is a quarter of (r1 + r2)"
    severity = Severity.IMPOSSIBLE
    reference = (
        "BS 7671:2018+A2:2022 Reg 643.2.1 (ring continuity test); "
        "tolerances: common practice, no source"
    )
    basis = "common practice"
    group = "ring"
    pair = ("r1", "r2")
    field_name = "r1_r2"
    label = "R1+R2"

    @dataclass(frozen=True)
    class Options:
        below_tolerance_ohm: float = option(
            0.05, "common practice, no source", "largest accepted shortfall below (r1+r2)/4"
        )
        spur_allowance_ohm: float = option(
            0.10, "common practice, no source", "largest accepted excess above (r1+r2)/4"
        )


@register
class RingR1RnQuarterRule(_QuarterRule):
    """R1+Rn on a ring (where recorded) should be a quarter of r1 + rn, plus any spur.

    What it checks:
    On a ring with r1, rn and R1+Rn recorded, that R1+Rn is not below (r1 + rn)/4 by more
    than a small tolerance (impossible as recorded) and not above it by more than a spur
    allowance (query).

    Why it matters:
    With line and neutral cross-connected, every socket on a healthy ring reads
    (r1 + rn)/4; a lower reading is impossible, a much higher one means a spur, a bad joint
    or an unmeasured figure.

    Known false alarms:
    Long spurs (raise spur_allowance_ohm). Few forms have an R1+Rn column; where it is blank
    the check does not apply.

    Failing example:
    r1 = 0.52 Ω, rn = 0.52 Ω (quarter 0.26 Ω), R1+Rn = 0.15 Ω.

    Passing example:
    r1 = 0.52 Ω, rn = 0.52 Ω, R1+Rn = 0.27 Ω.

    Options:
    below_tolerance_ohm: how far below the quarter a reading may be before it is impossible.
    spur_allowance_ohm: how far above the quarter a reading may be (spurs).

    Reference:
    BS 7671:2018+A2:2022 Reg 643.2.1 (ring continuity test, line-neutral cross-connection);
    tolerances: common practice, no source.
    """

    id = "ring-r1rn-quarter-rule"
    title = "Ring: R1+Rn is a quarter of (r1 + rn)"
    severity = Severity.IMPOSSIBLE
    reference = (
        "BS 7671:2018+A2:2022 Reg 643.2.1 (ring continuity test); "
        "tolerances: common practice, no source"
    )
    basis = "common practice"
    group = "ring"
    pair = ("r1", "rn")
    field_name = "r1_rn"
    label = "R1+Rn"

    @dataclass(frozen=True)
    class Options:
        below_tolerance_ohm: float = option(
            0.05, "common practice, no source", "largest accepted shortfall below (r1+rn)/4"
        )
        spur_allowance_ohm: float = option(
            0.10, "common practice, no source", "largest accepted excess above (r1+rn)/4"
        )


@register
class RingLengthPlausible(CircuitCheck):
    """The ring length implied by r1 should be a real ring's length.

    What it checks:
    On a ring with r1 recorded, the cable length implied by r1 and the line conductor's
    resistance per metre (IEC 60228 Table 2 at 20 °C, 2.5 mm² assumed when the size is
    blank): below min_length_m is implausibly short; on a 2.5 mm² ring, above max_length_m
    is beyond the usual maximum length for a 2.5/1.5 mm² ring on a 32 A device.

    Why it matters:
    A ring of a couple of metres is not a ring; an implied length beyond the design maximum
    means a ring that cannot meet its disconnection time or voltage drop, a broken ring
    measured as two radials, or a misplaced decimal point.

    Known false alarms:
    Measurements at a higher temperature read long (about 4 % per 10 °C); rings designed with
    a lower Ze may legitimately be longer than the tabulated length; small flats may have
    very short rings.

    Failing example:
    2.5 mm² ring, r1 = 0.02 Ω (about 3 m) or r1 = 0.95 Ω (about 128 m).

    Passing example:
    2.5 mm² ring, r1 = 0.40 Ω (about 54 m).

    Options:
    min_length_m: shortest plausible ring.
    max_length_m: longest usual 2.5/1.5 mm² ring on a 32 A device.

    Reference:
    IEC 60228 Table 2 (7.41 mΩ/m for 2.5 mm² copper at 20 °C); max length 106 m from memory
    (IET On-Site Guide maximum cable length table for a 2.5/1.5 mm² ring on a 32 A Type B
    device, not confirmed against a printed copy); minimum length: common practice, no source.
    """

    id = "ring-length-plausible"
    title = "Ring: length implied by r1 is plausible"
    severity = Severity.QUERY
    reference = (
        "IEC 60228 Table 2; maximum length from memory (IET On-Site Guide, 2.5/1.5 mm² ring "
        "on 32 A), minimum: common practice, no source"
    )
    basis = "from memory"
    group = "ring"

    @dataclass(frozen=True)
    class Options:
        min_length_m: float = option(
            5.0, "common practice, no source", "shortest plausible ring length in metres"
        )
        max_length_m: float = option(
            106.0,
            "from memory: IET On-Site Guide, 2.5/1.5 mm² ring on a 32 A Type B device",
            "longest usual 2.5 mm² ring in metres",
        )

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        r1 = circuit.number("r1")
        if r1 is None or r1 <= 0:
            return None  # zero and missing readings are other checks' business
        live = circuit.number("live_csa")
        assumed = live is None
        live = DEFAULT_RING_LIVE_MM2 if live is None else live
        per_m = conductor_mohm_per_m(live)
        if per_m is None:
            return None
        length = r1 / (per_m / 1000)
        size = f"{live:g} mm²" + (" (assumed)" if assumed else "")
        o = self.options
        if length < o.min_length_m:
            return [
                self.make(
                    cert,
                    f"r1 {fmt(r1, 'Ω')} implies a {size} ring only {length:.0f} m long, "
                    f"shorter than {o.min_length_m:g} m; check the reading or whether this is "
                    "a ring at all.",
                    board=board,
                    circuit=circuit,
                    field="r1",
                    expected=f"≥ {o.min_length_m:g} m of cable",
                )
            ]
        if abs(live - 2.5) < 1e-9 and length > o.max_length_m:
            return [
                self.make(
                    cert,
                    f"r1 {fmt(r1, 'Ω')} implies a {size} ring about {length:.0f} m long, beyond "
                    f"the usual {o.max_length_m:g} m for a 2.5/1.5 mm² ring on a 32 A device.",
                    board=board,
                    circuit=circuit,
                    field="r1",
                    expected=f"≤ {o.max_length_m:g} m of cable",
                )
            ]
        return []


_RING_TEXT = re.compile(r"\bring\b|\brfc\b|ring\s*final|ring\s*main")
_READINGS = ("r1", "rn", "r2")


@register
class RingReadingsMissing(CircuitCheck):
    """A circuit described as a ring needs its three end-to-end readings.

    What it checks:
    On a circuit whose description (or type of wiring) names a ring ("Sockets ring",
    "RFC kitchen", "ring main"), or a socket circuit of 2.5 mm² on 30/32 A that the form
    does not call a radial (normally a ring: whether it is one cannot be told, and the
    finding says so), that r1, rn and r2 are all recorded as readings. Blank,
    dash, N/A, unreadable, or LIM with no limitation written on the certificate or in the
    circuit's remarks, are reported.

    Why it matters:
    The end-to-end test is the only way to prove a ring is a ring and not broken into two
    radials on a 32 A device; without it the circuit's continuity is unproven.

    Known false alarms:
    A description that says "ring" for a circuit that has been converted to a radial; a
    limitation agreed in a separate document.

    Failing example:
    "Kitchen ring", r1 = 0.45 Ω, rn = N/A, r2 = blank.

    Passing example:
    "Kitchen ring", r1 = 0.45 Ω, rn = 0.46 Ω, r2 = 0.74 Ω; "Kitchen sockets" 2.5 mm² B32
    with r1/rn/r2 LIM and a limitation recorded.

    Options:
    accept_lim_with_limitation: LIM is accepted where a limitation is written.

    Reference:
    BS 7671:2018+A2:2022 Reg 643.2.1 (continuity of each conductor of a ring final circuit).
    """

    id = "ring-readings-missing"
    title = "Ring: end-to-end readings r1, rn, r2 missing"
    severity = Severity.QUERY
    reference = "BS 7671:2018+A2:2022 Reg 643.2.1"
    basis = "published"
    group = "ring"

    @dataclass(frozen=True)
    class Options:
        accept_lim_with_limitation: bool = option(
            True,
            "BS 7671:2018+A2:2022 Reg 653.2 (limitations recorded on the report), from memory",
            "accept LIM where a limitation is written on the certificate or circuit",
        )

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        said = f"{circuit.text('description')} {circuit.text('wiring_type')}".lower()
        unknown = not _RING_TEXT.search(said) and ring_or_radial_unknown(circuit)
        if not _RING_TEXT.search(said) and not unknown:
            return None
        has_limitation = bool(cert.text("limitations") or circuit.text("remarks"))
        missing: list[str] = []
        for name in _READINGS:
            v = circuit.value(name)
            if v.kind is ValueKind.NUMBER:
                continue
            if (
                v.kind is ValueKind.LIMITATION
                and has_limitation
                and self.options.accept_lim_with_limitation
            ):
                continue
            missing.append(f"{name} {v.display()}")
        if not missing:
            return []
        first = missing[0].split()[0]
        what = ("Socket circuit that may be a ring (2.5 mm² on 30/32 A, not said to be a "
                "radial): ring or radial cannot be told, and it" if unknown
                else "Circuit described as a ring")
        return [
            self.make(
                cert,
                f"{what} has no end-to-end reading for "
                f"{', '.join(missing)}; the ring's continuity is not proven.",
                board=board,
                circuit=circuit,
                field=first,
                expected="r1, rn and r2 recorded",
            )
        ]
