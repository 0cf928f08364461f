"""Continuity of radial circuits and continuity readings in general (R1+R2, R2, r1/rn/r2)."""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

from certvet.checks.base import CircuitCheck, fmt, option
from certvet.checks.devices import CircuitKind, circuit_kind, ring_or_radial_unknown
from certvet.checks.model import Finding, Severity
from certvet.checks.registry import register
from certvet.checks.tables import conductor_mohm_per_m
from certvet.extractor.records import Board, Certificate, Circuit, ValueKind


@register
class RadialLengthPlausible(CircuitCheck):
    """The cable length implied by R1+R2 (or R2) should be a real circuit's length.

    What it checks:
    On a circuit that is not a ring, with the live and cpc sizes recorded, the length implied
    by R1+R2 / ((R_live + R_cpc)/1000), or by R2 / (R_cpc/1000) when only R2 is recorded,
    using IEC 60228 copper resistances at 20 °C. Below min_length_m on a circuit serving at
    least min_points points, or above max_length_m, is reported.

    Why it matters:
    A circuit feeding several points through less than a metre of cable, or a final circuit
    hundreds of metres long, is not what was installed: the reading was mistyped, taken with
    unnulled or nulled-twice leads, or not taken at all.

    Known false alarms:
    Circuits in steel conduit or armoured cable where the cpc is not a copper conductor of
    the recorded size; parallel earth paths that make R2 read low; outbuilding supplies
    that really are long.

    Failing example:
    2.5/1.5 mm² radial with 6 points, R1+R2 = 0.01 Ω (0.5 m); 1.0/1.0 mm² lighting,
    R1+R2 = 6.50 Ω (180 m).

    Passing example:
    2.5/1.5 mm² radial with 6 points, R1+R2 = 0.49 Ω (25 m).

    Options:
    min_length_m: shortest plausible length for a circuit with several points.
    min_points: points served from which the minimum length applies.
    max_length_m: longest plausible final circuit.

    Reference:
    IEC 60228 Table 2 (copper conductor resistance at 20 °C); length limits: common
    practice, no source.
    """

    id = "radial-length-plausible"
    title = "Radial: length implied by R1+R2 is plausible"
    severity = Severity.QUERY
    reference = "IEC 60228 Table 2; length limits: common practice, no source"
    basis = "common practice"
    group = "radial"

    @dataclass(frozen=True)
    class Options:
        min_length_m: float = option(
            1.0, "common practice, no source", "shortest plausible cable run in metres"
        )
        min_points: int = option(
            2, "common practice, no source", "points served from which min_length_m applies"
        )
        max_length_m: float = option(
            150.0, "common practice, no source", "longest plausible final circuit in metres"
        )

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        if circuit_kind(circuit) is CircuitKind.RING or ring_or_radial_unknown(circuit):
            return None  # a ring, or a socket circuit that may be one (no ring readings)
        live, cpc = circuit.number("live_csa"), circuit.number("cpc_csa")
        r_live, r_cpc = conductor_mohm_per_m(live), conductor_mohm_per_m(cpc)
        r1r2, r2 = circuit.number("r1_r2"), circuit.number("r2_only")
        if r1r2 is not None and r_live is not None and r_cpc is not None:
            reading, field, per_m = r1r2, "r1_r2", (r_live + r_cpc) / 1000
            label = f"R1+R2 {fmt(r1r2, 'Ω')}"
        elif r2 is not None and r_cpc is not None:
            reading, field, per_m = r2, "r2_only", r_cpc / 1000
            label = f"R2 {fmt(r2, 'Ω')}"
        else:
            return None
        if reading <= 0:
            return []  # a zero reading is continuity-zero-or-absurd's finding
        length = reading / per_m
        sizes = f"{live:g}/{cpc:g} mm²" if live is not None else f"{cpc:g} mm² cpc"
        o = self.options
        points = circuit.number("points")
        if length < o.min_length_m and points is not None and points >= o.min_points:
            return [
                self.make(
                    cert,
                    f"{label} on {sizes} implies {length:.1f} m of cable for {points:g} points, "
                    f"under {o.min_length_m:g} m; the reading looks wrong.",
                    board=board,
                    circuit=circuit,
                    field=field,
                    expected=f"≥ {fmt(o.min_length_m * per_m, 'Ω')} ({o.min_length_m:g} m)",
                )
            ]
        if length > o.max_length_m:
            return [
                self.make(
                    cert,
                    f"{label} on {sizes} implies about {length:.0f} m of cable, beyond "
                    f"{o.max_length_m:g} m for a final circuit; check the reading and the "
                    "recorded sizes.",
                    board=board,
                    circuit=circuit,
                    field=field,
                    expected=f"≤ {fmt(o.max_length_m * per_m, 'Ω')} ({o.max_length_m:g} m)",
                )
            ]
        return []


_CONTINUITY_FIELDS = ("r1", "rn", "r2", "r1_r2", "r1_rn", "r2_only")
_LABELS = {"r1": "r1", "rn": "rn", "r2": "r2", "r1_r2": "R1+R2", "r1_rn": "R1+Rn",
           "r2_only": "R2"}


@register
class ContinuityZeroOrAbsurd(CircuitCheck):
    """Continuity readings of exactly 0.00 Ω, over-range, or absurdly high.

    What it checks:
    Every continuity reading of a circuit (r1, rn, r2, R1+R2, R1+Rn, R2): a reading of
    0.00 Ω, an over-range reading (">200", "OL" written as a bound) or a reading above
    absurd_ohm.

    Why it matters:
    Every conductor has resistance: 0.00 Ω on a real circuit means the test lead resistance
    was nulled against the circuit, or nothing was measured. An over-range or very high
    continuity reading is an open circuit; if it is true, the circuit has no working cpc or
    conductor and is dangerous.

    Known false alarms:
    A very short circuit (a metre or so of 2.5 mm² to an appliance beside the board) can
    genuinely round to 0.01 Ω or, with nulled leads, 0.00 Ω.

    Failing example:
    R1+R2 = 0.00 Ω; r2 = >200 Ω; R1+R2 = 75 Ω.

    Passing example:
    R1+R2 = 0.42 Ω.

    Options:
    absurd_ohm: continuity readings above this are reported.

    Reference:
    BS 7671:2018+A2:2022 Reg 643.2.1 (continuity of protective and ring conductors); the
    limits are common practice, no source.
    """

    id = "continuity-zero-or-absurd"
    title = "Continuity reading of 0.00 Ω, over-range or absurd"
    severity = Severity.QUERY
    reference = "BS 7671:2018+A2:2022 Reg 643.2.1; limits: common practice, no source"
    basis = "common practice"
    group = "radial"

    @dataclass(frozen=True)
    class Options:
        absurd_ohm: float = option(
            50.0,
            "common practice, no source",
            "continuity readings above this many ohms are reported",
        )

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        present = [f for f in _CONTINUITY_FIELDS if circuit.value(f).number is not None]
        if not present:
            return None
        found: list[Finding] = []
        for name in present:
            v = circuit.value(name)
            assert v.number is not None
            label = _LABELS[name]
            if v.kind is ValueKind.NUMBER and v.number == 0:
                msg = (
                    f"{label} recorded as {v.display()}; every conductor has some resistance, "
                    "so the leads were nulled against the circuit or it was not measured."
                )
                expected = "> 0.00 Ω"
            elif v.kind is ValueKind.LOWER_BOUND:
                msg = (
                    f"{label} recorded as over-range {v.display()}; that is an open circuit, "
                    "so the conductor is broken or the reading is in the wrong column."
                )
                expected = f"≤ {fmt(self.options.absurd_ohm, 'Ω')}"
            elif v.kind is ValueKind.NUMBER and v.number > self.options.absurd_ohm:
                msg = (
                    f"{label} {fmt(v.number, 'Ω')} is above {fmt(self.options.absurd_ohm, 'Ω')}, "
                    "far beyond any final circuit's continuity; check for a misplaced "
                    "decimal point or an insulation reading in the wrong column."
                )
                expected = f"≤ {fmt(self.options.absurd_ohm, 'Ω')}"
            else:
                continue
            found.append(
                self.make(cert, msg, board=board, circuit=circuit, field=name, expected=expected)
            )
        return found


@register
class R1R2ExceedsZs(CircuitCheck):
    """R1+R2 cannot be larger than the measured Zs, which contains it.

    What it checks:
    On a circuit with R1+R2 and measured Zs recorded, that R1+R2 is not larger than Zs by
    more than a small measurement tolerance.

    Why it matters:
    Zs is Ze plus R1+R2: the loop through the supply includes the circuit's own line and
    cpc. An R1+R2 above Zs cannot both be true readings of the same circuit.

    Known false alarms:
    Parallel earth paths (bonded pipework, steel structure) present when Zs was measured but
    not when R1+R2 was; readings written in the wrong columns.

    Failing example:
    R1+R2 = 0.95 Ω, Zs = 0.62 Ω.

    Passing example:
    R1+R2 = 0.45 Ω, Zs = 0.80 Ω.

    Options:
    tolerance_ohm: how far R1+R2 may exceed Zs before it is reported.

    Reference:
    BS 7671:2018+A2:2022 Part 2, definition of earth fault loop impedance (the loop includes
    the circuit's line and protective conductors); tolerance: common practice, no source.
    """

    id = "r1r2-exceeds-zs"
    title = "R1+R2 larger than the measured Zs"
    severity = Severity.IMPOSSIBLE
    reference = (
        "BS 7671:2018+A2:2022 Part 2 definition of Zs; tolerance: common practice, no source"
    )
    basis = "common practice"
    group = "radial"

    @dataclass(frozen=True)
    class Options:
        tolerance_ohm: float = option(
            0.05, "common practice, no source", "how far R1+R2 may exceed Zs"
        )

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        r1r2, zs = circuit.number("r1_r2"), circuit.number("zs")
        if r1r2 is None or zs is None:
            return None
        if r1r2 <= zs + self.options.tolerance_ohm + 1e-9:
            return []
        return [
            self.make(
                cert,
                f"R1+R2 {fmt(r1r2, 'Ω')} is larger than the measured Zs {fmt(zs, 'Ω')}, which "
                "includes R1+R2; both cannot be readings of this circuit.",
                board=board,
                circuit=circuit,
                field="r1_r2",
                expected=f"≤ Zs {fmt(zs, 'Ω')}",
                tolerance=f"+ {fmt(self.options.tolerance_ohm, 'Ω')}",
            )
        ]
