"""Readings that look written down rather than measured.

None of these proves a test was skipped; each asks the contractor to show the instrument's
record. Their false-alarm rates are stated in each docstring.
"""

from __future__ import annotations

import math
import re
from collections import Counter
from collections.abc import Iterable
from dataclasses import dataclass

from certvet.checks.base import BoardCheck, CertificateCheck, fmt, option
from certvet.checks.devices import circuit_kind, is_rcbo, is_ring
from certvet.checks.model import Finding, Severity
from certvet.checks.registry import register
from certvet.extractor.records import Board, Certificate, Circuit, Value

_DECIMALS = re.compile(r"[.,](\d+)")


def decimals(v: Value) -> int:
    """How many decimal places the reading was written with ("0.80" → 2, "24" → 0)."""
    m = _DECIMALS.search(v.raw)
    return len(m.group(1)) if m else 0


@register
class ZsAllExactlyCalculated(BoardCheck):
    """Every Zs on a board is exactly Ze + (R1+R2), to the last digit written.

    What it checks:
    On each board, the circuits with a plain Zs, a plain R1+R2 and a Ze (the board's, else
    the origin's). When there are at least the option's number of them and every one has
    Zs equal to Ze + (R1+R2) to the last decimal place written, the board is queried.

    Why it matters:
    A measured Zs differs from Ze + (R1+R2) by a few hundredths at least (parallel earth
    paths, the supply's own variation, instrument tolerance). Every circuit agreeing to the
    last digit means the Zs column was calculated, not measured; a calculated Zs is
    legitimate only when the certificate says so.

    Known false alarms:
    Certificates whose Zs was deliberately calculated (e.g. a new installation not yet
    energised) and say so in the remarks; very short boards where a few coincidences are
    likely (hence the minimum number of circuits).

    Failing example:
    Ze 0.35; four circuits with R1+R2 0.44, 0.82, 0.21, 0.60 and Zs 0.79, 1.17, 0.56, 0.95.

    Passing example:
    The same, with one Zs measured as 1.19 instead of 1.17.

    Options:
    min_circuits: fewest circuits with Zs, Ze and R1+R2 before the pattern counts.

    Reference:
    BS 7671:2018+A2:2022 Reg 643.7.3 (earth fault loop impedance to be determined by
    measurement or by calculation with the measured values); the pattern test: common
    practice, no source.
    """

    id = "zs-all-exactly-calculated"
    title = "Every Zs equals Ze + R1+R2 exactly"
    severity = Severity.QUERY
    reference = "BS 7671:2018+A2:2022 Reg 643.7.3; pattern: common practice, no source"
    basis = "common practice"
    group = "unmeasured"

    @dataclass(frozen=True)
    class Options:
        min_circuits: int = option(
            4, "common practice, no source",
            "fewest circuits with Zs, Ze and R1+R2 before the pattern is reported")

    def check_board(self, cert: Certificate, board: Board) -> Iterable[Finding] | None:
        ze = board.number("ze")
        if ze is None:
            ze = cert.number("ze")
        if ze is None:
            return None
        rows = []
        for c in board.circuits:
            zs, r12 = c.number("zs"), c.number("r1_r2")
            if zs is None or r12 is None:
                continue
            half_unit = 0.5 * 10 ** -decimals(c.value("zs"))
            rows.append(abs(zs - (ze + r12)) < half_unit - 1e-9)
        if len(rows) < self.options.min_circuits:
            return None
        if not all(rows):
            return []
        return [
            self.make(
                cert,
                f"All {len(rows)} circuits record Zs exactly Ze ({fmt(ze, 'Ω')}) + R1+R2 to "
                "the last digit: the Zs column looks calculated, not measured.",
                board=board,
                field="ze",
                recorded=f"{len(rows)} of {len(rows)} exact",
                expected="measured Zs values that differ a little from Ze + R1+R2",
            )
        ]


@register
class RingAllExactQuarter(CertificateCheck):
    """Every ring's R1+R2 is exactly (r1 + r2)/4, rounded to two places.

    What it checks:
    The ring final circuits with plain r1, r2 and R1+R2. When there are at least the
    option's number of rings and every one records R1+R2 equal to (r1 + r2)/4 rounded to
    0.01 Ω (either way at a half), the certificate is queried.

    Why it matters:
    (r1 + r2)/4 is what R1+R2 should be at the mid-point of a sound ring, but the recorded
    value is the highest measured at the sockets, which usually sits a little above it
    (spurs, connections, instrument nulling). Every ring landing on the quarter exactly
    suggests the column was worked out, not measured.

    Known false alarms:
    Honest readings land on the quarter quite often (our estimate, no source: perhaps one
    ring in three or four), so with only two rings the pattern would appear by chance on
    roughly one genuine certificate in ten; the default therefore waits for three rings
    (roughly one in thirty to sixty). A scheme that wants two can set min_rings = 2.

    Failing example:
    Ring 1: r1 0.52, r2 0.86, R1+R2 0.35; ring 2: r1 0.40, r2 0.66, R1+R2 0.27; ring 3:
    r1 0.36, r2 0.56, R1+R2 0.23.

    Passing example:
    The same, with ring 2's R1+R2 0.29.

    Options:
    min_rings: fewest rings with r1, r2 and R1+R2 before the pattern is reported.

    Reference:
    BS 7671:2018+A2:2022 Reg 643.2.1 (ring continuity test); the pattern: common practice,
    no source.
    """

    id = "ring-all-exact-quarter"
    title = "Every ring's R1+R2 is exactly (r1+r2)/4"
    severity = Severity.QUERY
    reference = "BS 7671:2018+A2:2022 Reg 643.2.1; pattern: common practice, no source"
    basis = "common practice"
    group = "unmeasured"

    @dataclass(frozen=True)
    class Options:
        min_rings: int = option(
            3, "common practice, no source (3 rather than 2 to keep chance matches rare)",
            "fewest rings with r1, r2 and R1+R2 before the pattern is reported")

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        rings: list[tuple[Board, Circuit, bool]] = []
        for board, c in cert.circuits():
            r1, r2, r12 = c.number("r1"), c.number("r2"), c.number("r1_r2")
            if r1 is None or r2 is None or r12 is None or not is_ring(c):
                continue
            rings.append((board, c, abs(r12 - (r1 + r2) / 4) <= 0.005 + 1e-9))
        if len(rings) < self.options.min_rings:
            return None
        if not all(exact for _, _, exact in rings):
            return []
        board, first, _ = rings[0]
        refs = ", ".join(c.ref for _, c, _ in rings)
        return [
            self.make(
                cert,
                f"All {len(rings)} rings (circuits {refs}) record R1+R2 exactly (r1 + r2)/4 "
                "to 0.01 Ω: the column looks worked out rather than measured.",
                board=board,
                circuit=first,
                field="r1_r2",
                expected="the highest R1+R2 measured at the sockets",
            )
        ]


def _signature(c: Circuit) -> tuple[object, ...]:
    return (circuit_kind(c).value, c.number("live_csa"), c.number("cpc_csa"), c.number("rating"))


@register
class IdenticalReadingsAcrossKinds(BoardCheck):
    """The same R1+R2 and Zs pair on circuits of different kinds or sizes.

    What it checks:
    On each board, circuits with a plain R1+R2 and a plain Zs. It queries a pair of readings
    (the same R1+R2 and the same Zs) shared by at least the option's number of circuits (3
    by default) that are not all of one kind and size (ring or radial, live and cpc size,
    rating).

    Why it matters:
    R1+R2 depends on the cable's size and length; a lighting circuit in 1.0 mm² and a cooker
    circuit in 6 mm² giving the same figures, again and again, points to a row of readings
    copied rather than measured.

    Known false alarms:
    Readings cluster (short radials in large cable all read 0.1-0.3 Ω), so one shared value,
    even on three or four circuits of a realistic board, happens by chance and is not
    reported; the pair is required because a measured Zs varies independently by a few
    hundredths. Where Zs was calculated as Ze + R1+R2 the pair is no stronger than one
    value, and chance matches become likely: that is why this check is a preview.

    Failing example:
    Lights (1.5/1.0 B6), cooker (6/2.5 B40) and shower (10/4 B40) all with R1+R2 0.41 Ω and
    Zs 0.76 Ω.

    Passing example:
    Lights 0.41/0.76, cooker 0.41/0.74, shower 0.41/0.78 (R1+R2 shared, Zs not).

    Options:
    min_circuits: fewest circuits sharing one R1+R2 and Zs pair before it is reported.

    Reference:
    Common practice, no source.
    """

    id = "identical-readings-across-kinds"
    title = "Identical readings on circuits of different kinds"
    severity = Severity.QUERY
    reference = "common practice, no source"
    basis = "common practice"
    group = "unmeasured"
    preview = True

    @dataclass(frozen=True)
    class Options:
        min_circuits: int = option(
            3, "common practice, no source",
            "fewest circuits (not all alike) sharing one R1+R2 and Zs pair before reporting")

    def check_board(self, cert: Certificate, board: Board) -> Iterable[Finding] | None:
        pairs: dict[tuple[float, float], list[Circuit]] = {}
        for c in board.circuits:
            r12, zs = c.number("r1_r2"), c.number("zs")
            if r12 is not None and zs is not None:
                pairs.setdefault((round(r12, 4), round(zs, 4)), []).append(c)
        if sum(len(m) for m in pairs.values()) < 2:
            return None
        found: list[Finding] = []
        for (r12, zs), members in sorted(pairs.items()):
            if len(members) < self.options.min_circuits:
                continue
            if len({_signature(c) for c in members}) < 2:
                continue
            refs = ", ".join(c.ref for c in members)
            found.append(self.make(
                cert,
                f"{len(members)} circuits of different kinds or sizes ({refs}) all record "
                f"R1+R2 {fmt(r12, 'Ω')} and Zs {fmt(zs, 'Ω')}: copied readings?",
                board=board, circuit=members[0], field="r1_r2",
                expected="readings that follow each circuit's cable size and length",
            ))
        return found


@register
class RcdTimesAllIdentical(CertificateCheck):
    """Every RCD trip time on the certificate is the same figure.

    What it checks:
    Plain RCD trip times (at IΔn, and separately at 5×IΔn) on circuits with their own
    RCBO. When at least the option's number are recorded and all are equal, the
    certificate is queried. Circuits behind a shared RCD are left out by default, since
    one device tested once legitimately gives the same time on every circuit it protects.

    Why it matters:
    Separate RCBOs tested separately give different times (typically spread over ten or
    twenty milliseconds); one figure for all of them suggests a single test copied down
    the column, or none.

    Known false alarms:
    Instruments that report a capped or rounded time (e.g. every RCBO tripping at a
    displayed "20 ms" step) on a small board.

    Failing example:
    Five RCBOs, every trip time at IΔn 24 ms.

    Passing example:
    Five RCBOs: 18, 24, 22, 31, 16 ms.

    Options:
    min_times: fewest trip times before the pattern is reported.
    rcbo_only: only count circuits protected by their own RCBO.

    Reference:
    Common practice, no source.
    """

    id = "rcd-times-all-identical"
    title = "Every RCD trip time is identical"
    severity = Severity.QUERY
    reference = "common practice, no source"
    basis = "common practice"
    group = "unmeasured"

    @dataclass(frozen=True)
    class Options:
        min_times: int = option(3, "common practice, no source",
                                "fewest trip times before the pattern is reported")
        rcbo_only: bool = option(True, "common practice, no source",
                                 "count only circuits protected by their own RCBO")

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        applied = False
        found: list[Finding] = []
        for name, what in (("rcd_time", "at IΔn"), ("rcd_time_5x", "at 5×IΔn")):
            rows = [(b, c) for b, c in cert.circuits()
                    if c.number(name) is not None and (is_rcbo(c) or not self.options.rcbo_only)]
            if len(rows) < self.options.min_times:
                continue
            applied = True
            values = {c.number(name) for _, c in rows}
            if len(values) != 1:
                continue
            b, c = rows[0]
            found.append(self.make(
                cert,
                f"All {len(rows)} RCD trip times {what} are {c.value(name).display()} ms: "
                "separate devices tested separately give different times.",
                board=b, circuit=c, field=name,
                expected="times that vary from device to device",
            ))
        return found if applied else None


# --- last-digit preference ----------------------------------------------------------------

# Where the "last digit" is taken, per field: the hundredths of an ohm for resistances and
# impedances (instruments show 0.01 Ω), whole milliseconds for trip times. Taking a fixed
# place, not the last character written, keeps "0.5" (software dropping a trailing zero)
# from looking like a preference for 5.
_DIGIT_PLACE = {"r1": 2, "rn": 2, "r2": 2, "r1_r2": 2, "r1_rn": 2, "r2_only": 2, "zs": 2,
                "rcd_time": 0, "rcd_time_5x": 0}


def chi_square_sf(x: float, df: int) -> float:
    """P(X ≥ x) for a chi-square variable with an odd number of degrees of freedom.

    Closed form of the regularised upper incomplete gamma Q(df/2, x/2) for half-integer
    shape: erfc(√(x/2)) + √(2/π)·e^(−x/2)·Σ_{r=1}^{(df−1)/2} x^(r−½) / (1·3·…·(2r−1)).
    """
    if df < 1 or df % 2 == 0:
        raise ValueError("odd degrees of freedom only")
    if x <= 0:
        return 1.0
    total = 0.0
    term_den = 1.0
    for r in range(1, (df - 1) // 2 + 1):
        term_den *= 2 * r - 1
        total += x ** (r - 0.5) / term_den
    return math.erfc(math.sqrt(x / 2)) + math.sqrt(2 / math.pi) * math.exp(-x / 2) * total


def last_digits(cert: Certificate, fields: Iterable[str],
                coarse_above_ohm: float = 20.0) -> list[int]:
    """The digit at each field's fixed place, for every plain reading on the certificate.

    Readings in ohms above coarse_above_ohm are left out: a loop tester shows them on a
    coarser range (0.1 Ω or 1 Ω, checks/data/loop_resolution.csv), so their hundredths are
    always 0 (TT Zs of 145 Ω) and say nothing about how they were written.
    """
    digits = []
    for _, c in cert.circuits():
        for name in fields:
            x = c.number(name)
            if x is None:
                continue
            if c.value(name).unit == "Ω" and x > coarse_above_ohm:
                continue
            place = _DIGIT_PLACE.get(name, 2)
            digits.append(int(round(x * 10**place)) % 10)
    return digits


@register
class LastDigitPreference(CertificateCheck):
    """The last digits of the readings are not evenly spread (a chi-square test).

    What it checks:
    The last digit of every plain reading on the certificate in the option's fields
    (hundredths of an ohm for r1, r2, R1+R2, R2 and Zs; whole milliseconds for RCD
    times); readings above 20 Ω (TT loop readings, shown by the tester in 0.1 Ω or 1 Ω
    steps) are left out. With at least the minimum sample, a chi-square test of uniformity over the
    ten digits (9 degrees of freedom) is made; a p-value below the significance level α
    is queried. The false-alarm rate on genuinely measured readings is α: with the
    default α = 0.001, about one honest certificate in a thousand is queried.

    Why it matters:
    People inventing numbers prefer some digits (0 and 5, or favourites) and avoid others;
    instrument readings do not. A strong preference is a sign that readings were written
    down rather than measured.

    Known false alarms:
    Readings that are tied to each other by design repeat a digit without any invention:
    one shared RCD's time copied to every circuit it protects, rn equal to r1 on every ring
    (rn is left out of the default fields for that reason), Zs close to Ze + R1+R2. These
    make the true false-alarm rate somewhat above α; the minimum sample and the small α
    keep it low.

    Failing example:
    48 readings whose last digits are all 0 or 5.

    Passing example:
    48 readings whose last digits are spread across 0-9.

    Options:
    alpha: significance level (the false-alarm rate on honest readings).
    min_digits: fewest readings before the test is made.
    fields: comma-separated circuit fields whose readings are tested.
    coarse_above_ohm: readings in ohms above this are left out (coarse tester range).

    Reference:
    Common practice, no source (digit-preference screening); chi-square tail probability
    computed in closed form, checked against the critical values of the NIST/SEMATECH
    e-Handbook of Statistical Methods, section 1.3.6.7.4 (9 df: 16.919 at 0.05, 27.877 at
    0.001).
    """

    id = "last-digit-preference"
    title = "Readings' last digits show a preference"
    severity = Severity.QUERY
    reference = "common practice, no source; chi-square test, NIST/SEMATECH e-Handbook 1.3.6.7.4"
    basis = "common practice"
    group = "unmeasured"

    @dataclass(frozen=True)
    class Options:
        alpha: float = option(0.001, "common practice, no source",
                              "significance level: the false-alarm rate on honest readings",
                              above=0.0, below=1.0)
        min_digits: int = option(40, "common practice, no source (about 4 expected per digit)",
                                 "fewest readings before the test is made")
        fields: str = option("r1,r2,r1_r2,r2_only,zs,rcd_time",
                             "common practice, no source",
                             "comma-separated circuit fields whose readings are tested",
                             names="circuit")
        coarse_above_ohm: float = option(
            20.0, "from memory: loop testers change to a 0.1 Ω range above 20 Ω "
            "(checks/data/loop_resolution.csv)",
            "readings in ohms above this are shown coarsely and left out")

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        names = [f.strip() for f in self.options.fields.split(",") if f.strip()]
        digits = last_digits(cert, names, self.options.coarse_above_ohm)
        n = len(digits)
        if n < self.options.min_digits:
            return None
        counts = Counter(digits)
        expected = n / 10
        chi2 = sum((counts.get(d, 0) - expected) ** 2 / expected for d in range(10))
        p = chi_square_sf(chi2, 9)
        if p >= self.options.alpha:
            return []
        spread = " ".join(f"{d}:{counts.get(d, 0)}" for d in range(10))
        return [
            self.make(
                cert,
                f"The last digits of {n} readings are unevenly spread ({spread}); chi-square "
                f"{chi2:.1f} on 9 df, p = {p:.2g} < α = {self.options.alpha:g}.",
                recorded=spread,
                expected=f"about {expected:.1f} of each digit",
                tolerance=f"α = {self.options.alpha:g}",
            )
        ]
