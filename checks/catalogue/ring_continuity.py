"""Ring final circuit end-to-end readings (r1, rn, r2)."""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

from checks.base import CircuitCheck, fmt, option
from checks.model import Finding, Severity
from checks.registry import register
from extractor.records import Board, Certificate, Circuit


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
