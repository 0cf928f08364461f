"""Earth fault loop impedance: Zs against Ze + R1+R2, against the device's maximum, and TT."""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass
from datetime import date

from certvet.checks.base import CertificateCheck, CircuitCheck, fmt, option
from certvet.checks.certificate_facts import tables_edition
from certvet.checks.devices import parse_device, rcd_protection
from certvet.checks.model import Finding, Severity
from certvet.checks.registry import register
from certvet.checks.tables import (
    CURRENT,
    EDITION_NAMES,
    PRE_2015,
    SIXTEENTH,
    MaxZs,
    loop_resolution,
    max_disconnection_time,
    max_zs,
    normalise_earthing,
    rcd_max_ra,
)
from certvet.checks.tables import factor as table_factor
from certvet.extractor.records import Board, Certificate, Circuit, Value

# --- helpers shared with checks.catalogue.supply -------------------------------------------------


def board_ze(cert: Certificate, board: Board | None) -> tuple[float | None, str]:
    """Ze at a board: the board's own Ze/Zdb, else the certificate's Ze at the origin.

    Returns (value, where) with where "board" or "certificate" (or "" when neither is read).
    """
    if board is not None:
        z = board.number("ze")
        if z is not None:
            return z, "board"
    z = cert.number("ze")
    return z, ("certificate" if z is not None else "")


def earthing_of(cert: Certificate, board: Board | None = None) -> str | None:
    """The earthing system ("TN-C-S", "TN-S", "TT", "TN-C"): the board's, else the certificate's."""
    if board is not None:
        e = normalise_earthing(board.text("earthing"))
        if e:
            return e
    return normalise_earthing(cert.text("earthing"))


def system_of(earthing: str | None) -> str | None:
    """"TN" or "TT" (the two columns of Table 41.1), or None."""
    if earthing is None:
        return None
    return "TT" if earthing == "TT" else "TN"


def origin_ze(cert: Certificate) -> tuple[float | None, Board | None, str]:
    """Ze at the origin: the certificate's, else the first board's (as a stand-in)."""
    z = cert.number("ze")
    if z is not None:
        return z, None, "ze"
    if cert.boards:
        b = cert.boards[0]
        z = b.number("ze")
        if z is not None:
            return z, b, "ze"
    return None, None, "ze"


_DISTRIBUTION = re.compile(
    r"sub[\s-]?main|distribution|\bdb\d*\b|consumer unit|\bc/?u\b|sub[\s-]?board|\bboard\b"
)
_SOCKETS = re.compile(r"socket|\bskts?\b|\bs/?o\b|\bring\b|\brfc\b")


@dataclass(frozen=True)
class RequiredTime:
    """The maximum disconnection time BS 7671 sets for a circuit, and why."""

    seconds: float
    kind: str  # "final" or "distribution" (the rows of checks/data/disconnection_times.csv)
    why: str  # "a 32 A final circuit with socket-outlets", "a distribution circuit", …
    system: str  # "TN" or "TT"


def required_disconnection(cert: Certificate, board: Board | None, circuit: Circuit,
                           u0_v: float = 230.0) -> RequiredTime | None:
    """Reg 411.3.2 from the circuit itself: final circuits up to 63 A with socket-outlets or
    up to 32 A: Table 41.1 (0.4 s TN, 0.2 s TT at 230 V); distribution circuits and larger
    final circuits: 5 s TN (Reg 411.3.2.3), 1 s TT (Reg 411.3.2.4). None when the earthing
    system or what the circuit is cannot be read."""
    system = system_of(earthing_of(cert, board))
    if system is None:
        return None
    desc = circuit.text("description").lower()
    rating = circuit.number("rating")
    if rating is None:
        rating = parse_device(circuit).rating
    sockets = bool(_SOCKETS.search(desc))
    if _DISTRIBUTION.search(desc) and not sockets:
        kind, why = "distribution", "a distribution circuit"
    elif rating is not None and (rating <= 32 or (sockets and rating <= 63)):
        kind = "final"
        why = (f"a {rating:g} A final circuit with socket-outlets" if sockets
               else f"a {rating:g} A final circuit")
    elif rating is None and sockets:
        kind, why = "final", "a final circuit with socket-outlets"
    elif rating is not None:
        kind, why = "distribution", f"a {rating:g} A circuit"
    else:
        return None
    seconds = max_disconnection_time(system, kind, u0_v)
    return RequiredTime(seconds, kind, why, system) if seconds is not None else None


def disconnection_time_for(cert: Certificate, board: Board | None, circuit: Circuit) -> float:
    """The disconnection time whose table applies: the one Reg 411.3.2 sets for the circuit
    (required_disconnection), else the recorded one, else 0.4 s. A TT final circuit's 0.2 s
    is judged at 0.4 s here (the shortest tabulated time; TT circuits rely on RCDs)."""
    required = required_disconnection(cert, board, circuit)
    if required is not None:
        return max(required.seconds, 0.4)
    t = circuit.number("max_disconnection_time")
    return t if t is not None and t > 0 else 0.4


def printed_resolution(v: Value) -> float:
    """The last printed decimal place of a reading: "0.34" → 0.01, "145" → 1, "21.5" → 0.1."""
    m = re.search(r"\d+(?:[.,](\d+))?", v.raw)
    if m is None:
        return 0.01
    return 10.0 ** -len(m.group(1) or "")


def _table_name(m: MaxZs) -> str:
    if m.disconnection_s is None:
        return "Table 41.3"
    return "Table 41.4" if m.disconnection_s >= 5 else "Table 41.2"


def _memory_note(m: MaxZs) -> str:
    if not m.from_memory:
        return ""
    return " (tabulated value from memory, confirm against the printed table)"


def _has_rcd(circuit: Circuit, board: Board | None) -> bool:
    return rcd_protection(circuit, board) is not None


_TT_SCATTER = option(
    5.0,
    "common practice, no source: a TT electrode's resistance moves by a few ohms between "
    "the Ze and the Zs test",
    "extra tolerance in ohms on TT installations",
)


# --- checks ------------------------------------------------------------------------------------


@register
class ZsMatchesZePlusR1R2(CircuitCheck):
    """Measured Zs should be about Ze + R1+R2.

    What it checks:
    On a circuit with Zs and R1+R2 recorded, that |Zs − (Ze + R1+R2)| is within
    tolerance_ohm + tolerance_fraction × (Ze + R1+R2) + the loop tester's resolution at that
    size (0.01 Ω to 20 Ω, 0.1 Ω to 200 Ω, 1 Ω above: loop_resolution.csv), plus
    tt_tolerance_ohm on a TT installation, where the electrode's resistance moves by a few
    ohms between the Ze and the Zs test. Ze is the board's Ze/Zdb, falling back to the
    certificate's Ze at the origin.

    Why it matters:
    The earth fault loop is the supply's loop plus the circuit's line and cpc, so the two
    ways of getting Zs should agree. A large gap means a reading was copied, calculated from
    the wrong Ze, or taken on a different circuit.

    Known false alarms:
    Parallel earth paths through bonded metalwork make measured Zs lower; a sub-board's Zdb
    recorded as the origin's Ze; readings taken on different days with the supply loaded
    differently.

    Failing example:
    Ze = 0.35 Ω, R1+R2 = 0.40 Ω, Zs = 1.10 Ω (expected 0.75 Ω ± 0.10 Ω); TT, Ze 145 Ω,
    R1+R2 0.40 Ω, Zs 190 Ω.

    Passing example:
    Ze = 0.35 Ω, R1+R2 = 0.40 Ω, Zs = 0.77 Ω; TT, Ze 145 Ω, R1+R2 0.40 Ω, Zs 141 Ω.

    Options:
    tolerance_ohm: fixed part of the tolerance.
    tolerance_fraction: part of the tolerance proportional to Ze + R1+R2.
    tt_tolerance_ohm: extra tolerance on TT installations.

    Reference:
    BS 7671:2018+A2:2022 Reg 643.7.3 (Zs determined by measurement, or by calculation from
    Ze and R1+R2), from memory; tolerance: common practice, no source.
    """

    id = "zs-matches-ze-plus-r1r2"
    title = "Loop: measured Zs agrees with Ze + R1+R2"
    severity = Severity.QUERY
    reference = (
        "BS 7671:2018+A2:2022 Reg 643.7.3 (from memory); tolerance: common practice, no source"
    )
    basis = "common practice"
    group = "loop"

    @dataclass(frozen=True)
    class Options:
        tolerance_ohm: float = option(0.05, "common practice, no source", "fixed tolerance in ohms")
        tolerance_fraction: float = option(
            0.05, "common practice, no source", "tolerance as a fraction of Ze + R1+R2"
        )
        tt_tolerance_ohm: float = _TT_SCATTER

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        zs, r1r2 = circuit.number("zs"), circuit.number("r1_r2")
        ze, where = board_ze(cert, board)
        if zs is None or r1r2 is None or ze is None:
            return None
        expected = ze + r1r2
        tol = (self.options.tolerance_ohm + self.options.tolerance_fraction * expected
               + loop_resolution(max(zs, expected)))
        if earthing_of(cert, board) == "TT":
            tol += self.options.tt_tolerance_ohm
        if abs(zs - expected) <= tol + 1e-9:
            return []
        ze_name = "Zdb" if where == "board" else "Ze"
        return [
            self.make(
                cert,
                f"Measured Zs {fmt(zs, 'Ω')} is {fmt(abs(zs - expected), 'Ω')} "
                f"{'above' if zs > expected else 'below'} {ze_name} {fmt(ze, 'Ω')} + R1+R2 "
                f"{fmt(r1r2, 'Ω')} = {fmt(expected, 'Ω')}, beyond ± {fmt(tol, 'Ω')}.",
                board=board,
                circuit=circuit,
                field="zs",
                expected=fmt(expected, "Ω"),
                tolerance=f"± {fmt(tol, 'Ω')}",
            )
        ]


@register
class ZsBelowZe(CircuitCheck):
    """Measured Zs lower than Ze at the board.

    What it checks:
    On a circuit with Zs recorded, that Zs is not below the board's Ze/Zdb (falling back to
    the certificate's Ze) by more than the printed resolution of the two readings (0.01 Ω
    for "0.34", 1 Ω for "145"), plus tt_tolerance_ohm on a TT installation (the electrode
    moves by a few ohms between tests).

    Why it matters:
    A circuit's loop is the supply's loop plus its own conductors, so on its own it cannot
    read lower than Ze. It can only do so through parallel earth paths (bonded pipework,
    structural steel), which are not to be relied on; otherwise a reading is wrong. It is
    reported as a query, not as impossible, because parallel paths make it possible.

    Known false alarms:
    Installations with extensive bonded metalwork; Ze measured with the main earthing
    conductor disconnected (correctly) while Zs was measured with parallel paths in place.

    Failing example:
    Ze = 0.35 Ω, Zs = 0.21 Ω; Ze = 0.35 Ω, Zs = 0.30 Ω (5 hundredths below, the readings are
    printed to 0.01 Ω).

    Passing example:
    Ze = 0.35 Ω, Zs = 0.74 Ω; Ze 0.35 Ω, Zs 0.34 Ω (within the last printed digit); TT, Ze
    145 Ω, Zs 142 Ω.

    Options:
    extra_tolerance_ohm: allowed below Ze on top of the printed resolution.
    tt_tolerance_ohm: extra tolerance on TT installations.

    Reference:
    BS 7671:2018+A2:2022 Part 2, definitions of Ze and earth fault loop impedance (from
    memory); tolerance: common practice, no source.
    """

    id = "zs-below-ze"
    title = "Loop: measured Zs lower than Ze"
    severity = Severity.QUERY
    reference = "BS 7671:2018+A2:2022 Part 2 definitions (from memory); tolerance: common practice"
    basis = "common practice"
    group = "loop"

    @dataclass(frozen=True)
    class Options:
        extra_tolerance_ohm: float = option(
            0.0, "common practice, no source",
            "how far below Ze a Zs may read beyond the printed resolution"
        )
        tt_tolerance_ohm: float = _TT_SCATTER

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        zs = circuit.number("zs")
        ze, where = board_ze(cert, board)
        if zs is None or ze is None:
            return None
        ze_value = board.value("ze") if where == "board" else cert.value("ze")
        tol = max(printed_resolution(circuit.value("zs")), printed_resolution(ze_value))
        tol += self.options.extra_tolerance_ohm
        if earthing_of(cert, board) == "TT":
            tol += self.options.tt_tolerance_ohm
        if zs >= ze - tol - 1e-9:
            return []
        ze_name = "Zdb" if where == "board" else "Ze"
        return [
            self.make(
                cert,
                f"Measured Zs {fmt(zs, 'Ω')} is below {ze_name} {fmt(ze, 'Ω')}; only parallel "
                "earth paths through bonded metalwork could give that, otherwise a reading is "
                "wrong.",
                board=board,
                circuit=circuit,
                field="zs",
                expected=f"≥ {fmt(ze, 'Ω')}",
                tolerance=f"- {fmt(tol, 'Ω')}",
            )
        ]


def _device_max_in_force(
    cert: Certificate, board: Board, circuit: Circuit, audit: date
) -> tuple[MaxZs, str, str] | None:
    """The maximum Zs from the tables the certificate is judged by (tables_edition: an EIC or
    minor works at its issue date, an EICR the current ones), with a note naming the edition
    when it is not the current one. An older table with no row for the device falls back to
    the current table, which is never more lenient, and says so."""
    device = parse_device(circuit)
    t = disconnection_time_for(cert, board, circuit)
    edition = tables_edition(cert, audit)
    if edition != CURRENT:
        old = max_zs(device, t, edition)
        if old is not None:
            return old, device.describe(), f"{EDITION_NAMES[edition]}, in force at issue"
    m = max_zs(device, t)
    if m is None:
        return None
    if edition != CURRENT:
        return m, device.describe(), (f"current tables: {EDITION_NAMES[edition]}, in force at "
                                      "issue, has no row for this device")
    return m, device.describe(), ""


@register
class ZsOverMaxForDevice(CircuitCheck):
    """Measured Zs above the maximum for the protective device.

    What it checks:
    On a circuit with Zs, device type/standard and rating recorded, that Zs does not exceed
    the maximum Zs for the device: Table 41.3 for circuit-breakers and RCBOs (types B, C,
    D; type D at 5 s from Ia = 10 × In), Table 41.2 (0.4 s) or Table 41.4 (5 s) for fuses.
    The time is the one Reg 411.3.2 sets for the circuit (0.4 s for final circuits up to
    63 A with sockets or up to 32 A, 5 s for distribution circuits and larger final
    circuits in TN), falling back to the recorded time, then 0.4 s. Devices whose type or
    rating cannot be read are not applicable; tabulated gaps are zs-device-not-tabulated's.
    In a TT system, circuits with RCD protection are skipped (the RCD provides fault
    protection, see tt-rcd-ra-limit). The table is the one the certificate is judged by: an
    EIC or minor works certificate by the edition in force at its issue date (e.g. BS
    7671:2008 before Amendment 3, no Cmin: B32 1.44 Ω), an EICR by the current edition; the
    finding names an older edition when it used one, and a device an older table has no row
    for is judged by the current table, saying so.

    Why it matters:
    Above the maximum, an earth fault may not draw enough current to operate the device in
    the required time, leaving exposed metalwork live for longer than allowed.

    Known false alarms:
    TN circuits whose fault protection is provided by an RCD rather than the overcurrent
    device; a device type misread (a C where the form says B). Fuse maxima in our table are
    from memory and say so in the message.

    Failing example:
    B32, Zs = 1.45 Ω (maximum 1.37 Ω); "Sub-main to garage" D32, TN-S, Zs 0.75 Ω (5 s
    maximum 0.68 Ω).

    Passing example:
    B32, Zs = 0.85 Ω; "Sub-main to garage" D32, TN-S, Zs 0.60 Ω (above the 0.4 s 0.34 Ω,
    within the 5 s 0.68 Ω).

    Options:
    skip_tt_with_rcd: skip RCD-protected circuits in TT systems.

    Reference:
    BS 7671:2018+A2:2022 Reg 411.4.4 and Tables 41.2, 41.3, 41.4 (regulation number from
    memory).
    """

    id = "zs-over-max-for-device"
    title = "Loop: measured Zs above the maximum for the device"
    severity = Severity.BREACH
    reference = "BS 7671:2018+A2:2022 Tables 41.2, 41.3, 41.4"
    basis = "published"
    group = "loop"

    @dataclass(frozen=True)
    class Options:
        skip_tt_with_rcd: bool = option(
            True,
            "BS 7671:2018+A2:2022 Reg 411.5.3 (RCD fault protection in TT systems)",
            "skip RCD-protected circuits in TT systems",
        )

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        zs = circuit.number("zs")
        if zs is None:
            return None
        if (self.options.skip_tt_with_rcd and earthing_of(cert, board) == "TT"
                and _has_rcd(circuit, board)):
            return None
        found = _device_max_in_force(cert, board, circuit, self.today())
        if found is None:
            return None
        m, name, edition_note = found
        if zs <= m.ohm + 1e-9:
            return []
        table = f"BS 7671 {_table_name(m)}" + (f"; {edition_note}" if edition_note else "")
        return [
            self.make(
                cert,
                f"Measured Zs {fmt(zs, 'Ω')} is above the maximum {fmt(m.ohm, 'Ω')} for a {name} "
                f"({table}){_memory_note(m)}; the device may not disconnect "
                "an earth fault in time.",
                board=board,
                circuit=circuit,
                field="zs",
                expected=f"≤ {fmt(m.ohm, 'Ω')}",
            )
        ]


@register
class ZsOver80PercentRule(CircuitCheck):
    """Measured Zs above 80 % of the device's maximum (the rule of thumb for cold readings).

    What it checks:
    On a circuit whose measured Zs is within the device's maximum (Tables 41.2–41.4) but
    above factor × maximum (0.8 by default), at the disconnection time Reg 411.3.2 sets for
    the circuit. TT circuits with RCD protection are left out (the RCD gives fault
    protection there).

    Why it matters:
    Zs is measured with the cables cool; under fault and full load the conductors are hotter
    and their resistance higher (about 20 % at 70 °C for copper), so a reading close to the
    maximum may exceed it in service. The 0.8 factor allows for that rise.

    Known false alarms:
    Circuits tested while loaded and warm; designs that have checked Zs at operating
    temperature by calculation.

    Failing example:
    B32, Zs = 1.20 Ω (0.8 × 1.37 = 1.10 Ω).

    Passing example:
    B32, Zs = 0.85 Ω.

    Options:
    factor: fraction of the tabulated maximum a cold reading should stay below.

    Reference:
    Common practice, no source (the 0.8 factor; its basis is the rise of conductor
    resistance with temperature); maxima: BS 7671:2018+A2:2022 Tables 41.2, 41.3, 41.4.
    """

    id = "zs-over-80-percent-rule"
    title = "Loop: measured Zs above 80 % of the maximum"
    severity = Severity.QUERY
    reference = "Common practice, no source (0.8 factor); BS 7671:2018+A2:2022 Tables 41.2–41.4"
    basis = "common practice"
    group = "loop"

    @dataclass(frozen=True)
    class Options:
        factor: float = option(
            table_factor("rule_of_thumb_80_percent"),
            "common practice, no source (checks/data/temperature_factors.csv)",
            "fraction of the tabulated maximum a cold Zs should stay below", above=0.0
        )

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        zs = circuit.number("zs")
        if zs is None:
            return None
        if earthing_of(cert, board) == "TT" and _has_rcd(circuit, board):
            return None  # the RCD gives fault protection: tt-rcd-ra-limit judges it
        found = _device_max_in_force(cert, board, circuit, self.today())
        if found is None:
            return None
        m, name, edition_note = found
        if edition_note:
            name = f"{name} ({edition_note})"
        limit = self.options.factor * m.ohm
        if zs <= limit + 1e-9 or zs > m.ohm + 1e-9:
            return []  # above the maximum itself is zs-over-max-for-device's finding
        return [
            self.make(
                cert,
                f"Measured Zs {fmt(zs, 'Ω')} is above {self.options.factor:g} × "
                f"{fmt(m.ohm, 'Ω')} = {fmt(limit, 'Ω')} for a {name}{_memory_note(m)}; at "
                "operating temperature it may exceed the maximum.",
                board=board,
                circuit=circuit,
                field="zs",
                expected=f"≤ {fmt(limit, 'Ω')}",
            )
        ]


@register
class MaxZsRecordedWrong(CircuitCheck):
    """The recorded maximum Zs is not the tabulated value for the device.

    What it checks:
    On a circuit with a recorded maximum Zs and a readable device, that the recorded value
    is not above the current table's value (Table 41.3 for circuit-breakers and RCBOs,
    Table 41.2/41.4 for fuses). A value equal to the BS 7671:2008 pre-2015 value (230 V, no
    Cmin) or the 16th edition's 240 V value is named as such. A lower recorded value
    (for example the 80 % figure) is conservative and accepted unless flag_lower is set. On
    an RCD-protected circuit, the Table 41.5 limit 50 V / IΔn (1667 Ω for 30 mA) is the
    right figure to record where the RCD gives fault protection (TT especially) and is
    accepted.

    Why it matters:
    Software or a pad left on an old edition overstates the maximum, so a circuit can be
    passed with a Zs the current table does not allow.

    Known false alarms:
    Installations designed to an earlier edition and inspected against it on purpose (the
    report should say so); devices whose manufacturer publishes a different maximum.

    Failing example:
    B32 with max Zs recorded as 1.44 Ω (the pre-2015 value; current 1.37 Ω).

    Passing example:
    B32 with max Zs recorded as 1.37 Ω, or 1.10 Ω (80 %); TT, RCBO B32 30 mA with max Zs
    recorded as 1667 Ω (50 V / 30 mA, Table 41.5).

    Options:
    tolerance_ohm: difference treated as rounding.
    flag_lower: also report recorded values below the table.

    Reference:
    BS 7671:2018+A2:2022 Table 41.3 (and Tables 41.2, 41.4); BS 7671:2008 Table 41.3
    (230 V, no Cmin) and BS 7671:2001 (240 V) for the old values, computed from U0/Ia.
    """

    id = "max-zs-recorded-wrong"
    title = "Loop: recorded maximum Zs is not the current tabulated value"
    severity = Severity.QUERY
    reference = "BS 7671:2018+A2:2022 Tables 41.2, 41.3, 41.4"
    basis = "published"
    group = "loop"

    @dataclass(frozen=True)
    class Options:
        tolerance_ohm: float = option(
            0.01, "common practice, no source", "difference treated as rounding"
        )
        flag_lower: bool = option(
            False, "common practice, no source", "also report recorded maxima below the table"
        )

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        recorded = circuit.number("max_zs")
        if recorded is None:
            return None
        device = parse_device(circuit)
        t = disconnection_time_for(cert, board, circuit)
        current = max_zs(device, t, CURRENT)
        if current is None:
            return None
        tol = self.options.tolerance_ohm + 1e-9
        if abs(recorded - current.ohm) <= tol:
            return []
        rcd = rcd_protection(circuit, board)
        if rcd is not None:  # Table 41.5: RA (or Zs) × IΔn ≤ 50 V, for the RCD's IΔn
            limit = rcd_max_ra(rcd.idn_ma if rcd.idn_ma is not None else 30.0)
            if limit is not None and abs(recorded - limit) <= 1.0 + 1e-9:
                return []
        name = device.describe()
        expected = fmt(current.ohm, "Ω")
        for edition, label in ((PRE_2015, "the pre-2015 value (BS 7671:2008, 230 V, no Cmin)"),
                               (SIXTEENTH, "the 16th-edition value (240 V)")):
            old = max_zs(device, t, edition)
            if old is not None and abs(recorded - old.ohm) <= tol:
                return [
                    self.make(
                        cert,
                        f"Recorded max Zs {fmt(recorded, 'Ω')} for a {name} is {label}; the "
                        f"current table gives {expected}.",
                        board=board,
                        circuit=circuit,
                        field="max_zs",
                        expected=expected,
                        tolerance=f"± {fmt(self.options.tolerance_ohm, 'Ω')}",
                    )
                ]
        if recorded > current.ohm or self.options.flag_lower:
            word = "higher" if recorded > current.ohm else "lower"
            return [
                self.make(
                    cert,
                    f"Recorded max Zs {fmt(recorded, 'Ω')} for a {name} is {word} than "
                    f"{expected} in BS 7671 {_table_name(current)}{_memory_note(current)}.",
                    board=board,
                    circuit=circuit,
                    field="max_zs",
                    expected=expected,
                    tolerance=f"± {fmt(self.options.tolerance_ohm, 'Ω')}",
                )
            ]
        return []


@register
class DisconnectionTimeApplies(CircuitCheck):
    """The recorded maximum disconnection time does not fit Table 41.1.

    What it checks:
    On a circuit with a maximum disconnection time recorded and a known earthing system,
    that the recorded time is not longer than the one that applies: for final circuits up to
    63 A with socket-outlets, or up to 32 A, Table 41.1 (0.4 s TN, 0.2 s TT at U0 230 V);
    for distribution circuits (descriptions naming a sub-main, board or consumer unit) and
    larger final circuits, 5 s in TN and 1 s in TT. A shorter recorded time is stricter and
    accepted.

    Why it matters:
    The time decides which maximum Zs applies: a final socket circuit recorded at 5 s can
    be passed against a fuse's 5 s maximum, which is far higher than the 0.4 s one.

    Known false alarms:
    Descriptions that do not say what the circuit feeds; TT installations where the
    overcurrent device disconnects and all extraneous-conductive-parts are bonded, for which
    the TN time may be used (from memory, Reg 411.3.2.2).

    Failing example:
    TN-C-S, "Sockets ring", 32 A, max disconnection time 5 s (0.4 s applies).

    Passing example:
    TN-C-S, "Sockets ring", 32 A, 0.4 s; "Sub-main to garage", 63 A, 5 s.

    Options:
    u0_v: nominal line-to-earth voltage used to pick the column of Table 41.1.

    Reference:
    BS 7671:2018+A2:2022 Reg 411.3.2.2 and Table 41.1; Regs 411.3.2.3 (TN 5 s) and
    411.3.2.4 (TT 1 s).
    """

    id = "disconnection-time-applies"
    title = "Loop: recorded max disconnection time fits Table 41.1"
    severity = Severity.QUERY
    reference = "BS 7671:2018+A2:2022 Reg 411.3.2.2, Table 41.1, Regs 411.3.2.3-4"
    basis = "published"
    group = "loop"

    @dataclass(frozen=True)
    class Options:
        u0_v: float = option(
            230.0,
            "UK nominal voltage 230 V (Electricity Safety, Quality and Continuity Regulations "
            "2002)",
            "nominal U0 in volts for Table 41.1", above=0.0
        )

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        recorded = circuit.number("max_disconnection_time")
        if recorded is None:
            return None
        req = required_disconnection(cert, board, circuit, self.options.u0_v)
        if req is None:
            return None
        required, why, system = req.seconds, req.why, req.system
        if recorded <= required + 1e-9:
            return []
        return [
            self.make(
                cert,
                f"Recorded max disconnection time {recorded:g} s is longer than the {required:g} s "
                f"that applies to {why} in a {system} system.",
                board=board,
                circuit=circuit,
                field="max_disconnection_time",
                expected=f"≤ {required:g} s",
            )
        ]


@register
class TtRcdRaLimit(CircuitCheck):
    """TT: RA × IΔn must not exceed 50 V.

    What it checks:
    In a TT system, on a circuit with an RCD IΔn recorded, that RA × IΔn ≤ 50 V, where RA is
    the electrode resistance where the form records it, else the board's Ze (falling back
    to the certificate's) — an upper estimate of the electrode plus protective conductor
    resistance.

    Why it matters:
    In a TT system the RCD gives fault protection; if RA is too high, a fault can hold
    exposed metalwork above 50 V without the RCD seeing enough current to trip.

    Known false alarms:
    Ze includes the network's own source earth, so it overstates RA; an RA measured
    separately (not on our forms) may be within the limit.

    Failing example:
    TT, Ze = 200 Ω, RCD 300 mA (60 V; limit 167 Ω).

    Passing example:
    TT, Ze = 120 Ω, RCD 30 mA (3.6 V).

    Options:
    touch_voltage_v: the limit on RA × IΔn.

    Reference:
    BS 7671:2018+A2:2022 Reg 411.5.3 and Table 41.5.
    """

    id = "tt-rcd-ra-limit"
    title = "TT: RA × IΔn within 50 V"
    severity = Severity.BREACH
    reference = "BS 7671:2018+A2:2022 Reg 411.5.3, Table 41.5"
    basis = "published"
    group = "loop"

    @dataclass(frozen=True)
    class Options:
        touch_voltage_v: float = option(
            50.0, "BS 7671:2018+A2:2022 Reg 411.5.3", "largest RA × IΔn in volts", above=0.0
        )

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        if earthing_of(cert, board) != "TT":
            return None
        idn = circuit.number("rcd_idn")
        ra, where = board_ze(cert, board)
        if cert.number("electrode_ra") is not None:  # RA measured: used in place of Ze
            ra, where = cert.number("electrode_ra"), "electrode's measured"
        if idn is None or idn <= 0 or ra is None:
            return None
        volts = ra * idn / 1000
        limit = self.options.touch_voltage_v
        if volts <= limit + 1e-9:
            return []
        max_ra = limit / (idn / 1000)
        return [
            self.make(
                cert,
                f"RA {ra:g} Ω (the {where} Ze) × IΔn {idn:g} mA = {volts:.0f} V, above "
                f"{limit:g} V; a {idn:g} mA RCD needs RA ≤ {max_ra:.0f} Ω.",
                board=board,
                circuit=circuit,
                field="rcd_idn",
                recorded=f"{idn:g} mA, RA {fmt(ra, 'Ω')}",
                expected=f"RA ≤ {max_ra:.0f} Ω",
            )
        ]


@register
class TtElectrodeUnstable(CertificateCheck):
    """TT: an electrode resistance above 200 Ω may not be stable.

    What it checks:
    In a TT installation, whether Ze at the origin (the certificate's, else the first
    board's) is above limit_ohm.

    Why it matters:
    An electrode of this resistance may still satisfy RA × IΔn ≤ 50 V with a 30 mA RCD, but
    its resistance can rise sharply as the ground dries or freezes, so it may not stay
    within the limit through the year.

    Known false alarms:
    Ze includes the network's source earth and the test leads, so it slightly overstates the
    electrode; rocky ground where nothing lower is achievable (the report should say so).

    Failing example:
    TT, Ze = 350 Ω.

    Passing example:
    TT, Ze = 85 Ω.

    Options:
    limit_ohm: electrode resistance above which the note is made.

    Reference:
    From memory: IET Guidance Note 3 / On-Site Guide, which note that an electrode resistance
    above 200 Ω may not be stable; not confirmed against a printed copy.
    """

    id = "tt-electrode-unstable"
    title = "TT: electrode resistance above 200 Ω may not be stable"
    severity = Severity.NOTE
    reference = "From memory: IET Guidance Note 3 / On-Site Guide (200 Ω), not confirmed"
    basis = "from memory"
    group = "loop"

    @dataclass(frozen=True)
    class Options:
        limit_ohm: float = option(
            200.0,
            "from memory: IET Guidance Note 3 / On-Site Guide",
            "electrode resistance above which stability is questioned",
        )

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        ze, board, field = origin_ze(cert)
        if ze is None or earthing_of(cert, board) != "TT":
            return None
        if ze <= self.options.limit_ohm + 1e-9:
            return []
        return [
            self.make(
                cert,
                f"TT electrode: Ze {ze:g} Ω is above {self.options.limit_ohm:g} Ω, which "
                "may not stay stable as the ground dries or freezes.",
                board=board,
                field=field,
                expected=f"≤ {self.options.limit_ohm:g} Ω",
            )
        ]


@register
class ZsDeviceNotTabulated(CircuitCheck):
    """The device has no tabulated maximum Zs in our tables, so its Zs was not judged.

    What it checks:
    On a circuit with a measured Zs and a readable device (a type B/C/D circuit-breaker or
    a fuse of a known standard, with its rating) for which Tables 41.2, 41.3 and 41.4, as
    held in checks/data, give no maximum at the disconnection time that applies. The note
    says plainly that zs-over-max-for-device could not judge the circuit. TT circuits with
    RCD protection are left out (the RCD gives fault protection there).

    Why it matters:
    A silent "not applicable" reads like a pass. The reader should know that this circuit's
    loop impedance was not compared with any maximum, and check it by hand.

    Known false alarms:
    Ratings the printed tables do give but our tables leave out (we keep out values we
    could not source or recall with confidence: several fuse ratings at 5 s).

    Failing example:
    "Sub-main to outbuilding", BS 88-3 45 A fuse, TN-C-S, Zs 0.52 Ω (no 5 s row).

    Passing example:
    "Sub-main to garage", BS 88-2 63 A fuse, TN-S, Zs 0.40 Ω (Table 41.4 row, 0.82 Ω).

    Options:
    none.

    Reference:
    BS 7671:2018+A2:2022 Tables 41.2, 41.3 and 41.4 (which devices are tabulated);
    checks/data/max_zs_breakers.csv and max_zs_fuses.csv say which rows we hold.
    """

    id = "zs-device-not-tabulated"
    title = "Loop: no tabulated maximum Zs for the device"
    severity = Severity.NOTE
    reference = "BS 7671:2018+A2:2022 Tables 41.2, 41.3, 41.4 (rows held in checks/data)"
    basis = "published"
    group = "loop"

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        if circuit.number("zs") is None:
            return None
        device = parse_device(circuit)
        if device.rating is None or not (device.is_fuse or (device.is_breaker and device.curve)):
            return None
        if earthing_of(cert, board) == "TT" and _has_rcd(circuit, board):
            return None
        t = disconnection_time_for(cert, board, circuit)
        if max_zs(device, t) is not None:
            return []
        return [
            self.make(
                cert,
                f"No tabulated maximum Zs for a {device.describe()} at {t:g} s in our tables: "
                "this circuit's Zs was not compared with a maximum; check it by hand.",
                board=board,
                circuit=circuit,
                field="zs",
                expected=f"a tabulated maximum for {t:g} s",
            )
        ]
