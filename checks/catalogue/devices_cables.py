"""Devices and cables: the device against the cable it protects, and the cpc against the fault."""

from __future__ import annotations

import math
import re
from collections.abc import Iterable
from dataclasses import dataclass

from certvet.checks import tables
from certvet.checks.base import CircuitCheck, fmt, option
from certvet.checks.catalogue.loop import earthing_of
from certvet.checks.devices import (
    Device,
    is_ring,
    parse_device,
    rcd_protection,
    ring_or_radial_unknown,
)
from certvet.checks.model import Finding, Severity
from certvet.checks.registry import register
from certvet.extractor.records import Board, Certificate, Circuit

# Wiring that is not flat twin and earth, where Table 4D5 does not apply (SWA, XLPE, MI).
_OTHER_CABLE = re.compile(r"\b(?:swa|xlpe|micc|mi|mims|lsf|90\s*°?\s*c)\b", re.IGNORECASE)

# Instantaneous tripping current as a multiple of In, BS EN 60898-1 (upper limits of the
# band): type B 5, type C 10, type D 20. The same multiples give Ia in BS 7671 Table 41.3.
_INSTANT_MULTIPLE = {"B": 5.0, "C": 10.0, "D": 20.0}


@register
class CableRatingFitsDevice(CircuitCheck):
    """The device rating is above what the cable can carry even at its best.

    What it checks:
    For a radial circuit (rings are excluded) with a device rating In and a live conductor
    size, that In does not exceed the current-carrying capacity Iz of flat twin-and-earth
    cable of that size clipped direct (Table 4D5, reference method C): 1.0 mm² 16 A,
    1.5 mm² 20 A, 2.5 mm² 27 A, 4 mm² 37 A, 6 mm² 47 A, 10 mm² 64 A, 16 mm² 85 A. This is
    the cable's best case, so In above it fails whatever the installation method.

    Why it matters:
    Overload protection needs In ≤ Iz; a device larger than the cable can carry lets the
    cable overheat under a sustained overload without the device operating.

    A socket circuit of 2.5 mm² on a 30/32 A device whose ring readings are LIM, N/A or
    blank and whose description does not say radial is normally a ring: whether it is one
    cannot be told, so it is not judged as a radial (ring-readings-missing asks for the
    readings).

    Known false alarms:
    Cables other than twin and earth (singles, SWA, 90 °C thermosetting) can have a higher
    Iz; wiring described as SWA, XLPE or MI is skipped, other codes are not recognised.
    Circuits where overload protection is provided elsewhere (e.g. a fused connection unit
    or a load that cannot overload) are reported as recorded.

    Failing example:
    Radial sockets, 2.5 mm², B32: 32 A above the 27 A of Table 4D5 method C.

    Passing example:
    Cooker, 6 mm², B40: 40 A within 47 A.

    Options:
    none.

    Reference:
    BS 7671:2018+A2:2022 Reg 433.1.1 (In ≤ Iz) and Appendix 4 Table 4D5 method C; the
    tabulated Iz values are from memory, not checked against a printed copy.
    """

    id = "cable-rating-fits-device"
    title = "Device rating above the cable's current-carrying capacity"
    severity = Severity.BREACH
    reference = (
        "BS 7671:2018+A2:2022 Reg 433.1.1, Appendix 4 Table 4D5 method C (Iz from memory)"
    )
    basis = "from memory"
    group = "device"

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        if is_ring(circuit) or _OTHER_CABLE.search(circuit.text("wiring_type")):
            return None
        if ring_or_radial_unknown(circuit):
            return None  # a 2.5 mm² socket circuit on 32 A with no ring readings: ring or radial?
        rating, csa = circuit.number("rating"), circuit.number("live_csa")
        if rating is None or csa is None:
            return None
        row = tables.cable_capacity(csa)
        if row is None:
            return None
        iz = row.num("iz_a")
        if rating <= iz + 1e-9:
            return []
        return [
            self.make(
                cert,
                f"A {fmt(rating, 'A', 0)} device on {csa:g} mm² cable: above the cable's "
                f"best-case current-carrying capacity of {fmt(iz, 'A', 0)} "
                f"({row.source}).",
                board=board,
                circuit=circuit,
                field="rating",
                expected=f"≤ {fmt(iz, 'A', 0)}",
            )
        ]


@register
class RingDeviceRating(CircuitCheck):
    """A 2.5 mm² ring final circuit on a device larger than 32 A.

    What it checks:
    A ring final circuit (description names a ring, or r1/rn/r2 readings recorded) with
    2.5 mm² live conductors whose device rating is above 32 A.

    Why it matters:
    A ring of 2.5 mm² cable is allowed on a 30 A or 32 A device because its two legs share
    the load; a 40 A device no longer protects either leg against overload.

    Known false alarms:
    A radial described as a "ring" on the form.

    Failing example:
    "Sockets ring", 2.5 mm², B40.

    Passing example:
    "Sockets ring", 2.5 mm², B32.

    Options:
    max_rating_a: largest device rating allowed for a 2.5 mm² ring (A).

    Reference:
    BS 7671:2018+A2:2022 Reg 433.1.204 (ring final circuits with BS 1363 accessories:
    30 A or 32 A device, 2.5 mm² copper).
    """

    id = "ring-device-rating"
    title = "2.5 mm² ring on a device above 32 A"
    severity = Severity.BREACH
    reference = "BS 7671:2018+A2:2022 Reg 433.1.204"
    basis = "published"
    group = "device"

    @dataclass(frozen=True)
    class Options:
        max_rating_a: float = option(
            32.0, "BS 7671:2018+A2:2022 Reg 433.1.204: 30 A or 32 A device",
            "largest device rating allowed for a 2.5 mm² ring (A)", above=0.0)

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        if not is_ring(circuit):
            return None
        csa, rating = circuit.number("live_csa"), circuit.number("rating")
        if csa is None or rating is None or abs(csa - 2.5) > 1e-9:
            return None
        limit = self.options.max_rating_a
        if rating <= limit + 1e-9:
            return []
        return [
            self.make(
                cert,
                f"A 2.5 mm² ring on a {fmt(rating, 'A', 0)} device; a ring of this size "
                f"is allowed up to {fmt(limit, 'A', 0)}.",
                board=board,
                circuit=circuit,
                field="rating",
                expected=f"≤ {fmt(limit, 'A', 0)}",
            )
        ]


@dataclass(frozen=True)
class Adiabatic:
    """The adiabatic sum for one circuit: S_min = √(I²t)/k."""

    fault_current_a: float
    time_s: float
    k: float
    min_cpc_mm2: float
    assumption: str


def fuse_i2t(device: Device, current_a: float) -> tuple[float, float, str] | None:
    """(I² t in A²s, the time t, how it was found) for a fuse at a fault current, the worst
    case along its characteristic, or None when the tables give too little to say.

    The characteristic is known at two points from the tabulated maxima: Ia(0.4 s) and
    Ia(5 s), Ia = Cmin U0 / Zs max (tables.fuse_points, derived). A fuse's pre-arcing I²t
    does not rise with current (from memory: gG and BS 88-3 time-current curves are at
    least as steep as I⁻² above 0.1 s), so for any fault current at or above Ia(0.4 s) the
    worst case is the 0.4 s point itself, I²t = Ia(0.4 s)² × 0.4. Between the two points the
    time is read from the straight line joining them on log-log axes.
    """
    points = tables.fuse_points(device)
    at_04 = next((p for p in points if p[1] == 0.4), None)
    at_5 = next((p for p in points if p[1] == 5.0), None)
    if at_04 is None:
        return None
    ia04, _ = at_04
    if current_a >= ia04 - 1e-9:
        return ia04**2 * 0.4, 0.4, (
            f"fuse worst case at its 0.4 s point (Ia {ia04:.0f} A, derived from the "
            "tabulated maximum Zs)")
    if at_5 is None or current_a < at_5[0] - 1e-9:
        return None
    ia5 = at_5[0]
    slope = math.log(5.0 / 0.4) / math.log(ia04 / ia5)
    t = 0.4 * (ia04 / current_a) ** slope
    return current_a**2 * t, t, (
        f"fuse time {t:.2f} s read between its 0.4 s and 5 s points (derived)")


def adiabatic(circuit: Circuit, device: Device, u0_v: float, breaker_time_s: float,
              board: Board | None = None, rcd_time_s: float = 0.3,
              tt: bool = False) -> Adiabatic | None:
    """The adiabatic minimum cpc size for a circuit, or None when it cannot be worked out.

    I = U0/Zs (measured Zs). Circuit-breakers: t = breaker_time_s, valid only when I is at
    or above the instantaneous tripping current (5/10/20 × In for B/C/D). Fuses: I²t from
    the fuse's characteristic at the worst case (fuse_i2t). Below those, on a TT
    installation (tt), an RCD protecting the circuit (checks.devices.rcd_protection) clears
    an earth fault current of at least its IΔn within rcd_time_s (a fault of a few
    amperes); otherwise None.
    """
    zs = circuit.number("zs")
    if zs is None or zs <= 0 or device.rating is None:
        return None
    current = u0_v / zs
    k = tables.cpc_k("thermoplastic_70c").num("k")
    got: tuple[float, float, str] | None = None
    if device.is_breaker and device.curve in _INSTANT_MULTIPLE:
        if current >= _INSTANT_MULTIPLE[device.curve] * device.rating - 1e-9:
            t = breaker_time_s
            got = (current**2 * t, t,
                   f"circuit-breaker in its instantaneous region, t assumed {t:g} s")
    elif device.is_fuse:
        got = fuse_i2t(device, current)
    if got is None:
        rcd = rcd_protection(circuit, board)
        idn_a = (rcd.idn_ma if rcd is not None and rcd.idn_ma is not None else 30.0) / 1000
        if not tt or rcd is None or current < idn_a:
            return None
        got = (current**2 * rcd_time_s, rcd_time_s,
               f"the RCD disconnects within {rcd_time_s:g} s (BS EN 61008-1/61009-1 at IΔn)")
    i2t, t, assumption = got
    return Adiabatic(current, t, k, math.sqrt(i2t) / k, assumption)


@register
class CpcAdiabatic(CircuitCheck):
    """The cpc is smaller than the adiabatic equation needs for the recorded fault current.

    What it checks:
    With a measured Zs, a cpc size and a device, the minimum cpc size by the adiabatic
    equation S = √(I²t)/k, with I = U0/Zs (U0 230 V), k = 115 (70 °C thermoplastic copper
    cpc in a cable, Table 54.3) and t: for a circuit-breaker, an assumed 0.01 s when I is in
    its instantaneous region (at least 5/10/20 × In for type B/C/D; otherwise not applied);
    for a fuse, the I²t at the worst case along its characteristic: for a fault current at
    or above the fuse's 0.4 s current Ia (derived from the tabulated maximum Zs, Ia = 0.95 ×
    230 / Zs max) that is Ia² × 0.4 s, since a fuse's I²t does not rise with current; below
    it, the time read between the 0.4 s and 5 s points. Where the overcurrent device is
    slow (on TT: a fault of a few amperes) and an RCD protects the circuit, t is the RCD's
    300 ms. The recorded cpc smaller than S is queried.

    Why it matters:
    The cpc must carry the earth fault current until the device clears it without its
    insulation overheating; an undersized cpc can be damaged, or fail, in the first fault.

    Known false alarms:
    The times are assumptions, not the device's own data. For a circuit-breaker in its
    instantaneous region we assume 0.01 s (half a cycle at 50 Hz, within which an
    energy-limiting breaker typically clears: from memory); a fixed 0.1 s, the upper limit
    of the instantaneous region, would query ordinary twin-and-earth rings and lighting
    circuits near the origin (e.g. a 2.5/1.5 ring at Zs 0.35 Ω) that the maker's I²t data
    shows are adequate. A fuse is taken at 0.4 s, conservative when the fault current is
    well above the 0.4 s current. Cables with 90 °C insulation have a higher k (143). That
    is why this is a query, not a breach.

    Failing example:
    Sockets ring on a BS 3036 30 A rewirable fuse with 1.0 mm² cpc (older 2.5/1.0 cable),
    Zs 0.80 Ω: Ia(0.4 s) = 0.95 × 230 / 1.04 = 210 A, S = 210 × √0.4 / 115 = 1.16 mm².

    Passing example:
    Sockets ring, B32, 1.5 mm² cpc, Zs 0.35 Ω: I = 657 A, t 0.01 s, S = 0.57 mm²;
    immersion, BS 88-3 20 A, 1.0 mm² cpc, Zs 0.60 Ω: Ia(0.4 s) = 0.95 × 230 / 1.55 =
    141 A, S = 141 × √0.4 / 115 = 0.78 mm² (0.4 s at the 383 A measured would say 2.11).

    Options:
    u0_v: nominal voltage to earth used for the fault current (V).
    breaker_time_s: disconnection time assumed for a circuit-breaker in its instantaneous
    region (s).
    rcd_time_s: time for an RCD to clear a fault current the overcurrent device is slow on.

    Reference:
    BS 7671:2018+A2:2022 Reg 543.1.3 (adiabatic equation) and Table 54.3 (k = 115); the
    0.01 s breaker time is our stated assumption (from memory: energy-limiting class 3
    breakers clear within about half a cycle; BS EN 60898-1 instantaneous trip within
    0.1 s).
    """

    id = "cpc-adiabatic"
    title = "cpc smaller than the adiabatic equation needs"
    severity = Severity.QUERY
    reference = (
        "BS 7671:2018+A2:2022 Reg 543.1.3, Table 54.3 (k 115); breaker t = 0.01 s assumed "
        "(from memory: energy-limiting breakers clear within about half a cycle)"
    )
    basis = "from memory"
    group = "device"

    @dataclass(frozen=True)
    class Options:
        u0_v: float = option(230.0, "BS 7671:2018+A2:2022 Table 41.1: U0 230 V",
                             "nominal voltage to earth for the fault current I = U0/Zs (V)",
                             above=0.0)
        breaker_time_s: float = option(
            0.01, "from memory: half a cycle at 50 Hz, within which an energy-limiting breaker "
            "typically clears (our assumption; 0.1 s is the BS EN 60898-1 upper limit)",
            "time assumed for a circuit-breaker in its instantaneous region (s)",
            above=0.0)
        rcd_time_s: float = option(
            0.3, "BS EN 61008-1 / 61009-1: a general RCD trips within 300 ms at IΔn",
            "time for an RCD to clear a fault below the overcurrent device's fast region (s)",
            above=0.0)

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        cpc = circuit.number("cpc_csa")
        if cpc is None:
            return None
        o = self.options
        result = adiabatic(circuit, parse_device(circuit), o.u0_v, o.breaker_time_s, board,
                           o.rcd_time_s, earthing_of(cert, board) == "TT")
        if result is None:
            return None
        if cpc >= result.min_cpc_mm2 - 1e-9:
            return []
        return [
            self.make(
                cert,
                f"cpc {cpc:g} mm² is below the adiabatic minimum {result.min_cpc_mm2:.2f} mm² "
                f"(I = {o.u0_v:g} V / Zs = {result.fault_current_a:.0f} A, "
                f"{result.assumption}, k {result.k:g}).",
                board=board,
                circuit=circuit,
                field="cpc_csa",
                expected=f"≥ {result.min_cpc_mm2:.2f} mm²",
            )
        ]


@register
class CpcBelowTable547(CircuitCheck):
    """The cpc is smaller than Table 54.7 and the adiabatic check cannot vouch for it.

    What it checks:
    A cpc smaller than Table 54.7 gives for the line conductor (the same size up to 16 mm²,
    16 mm² up to 35 mm², half above) is acceptable when the adiabatic equation shows it is
    big enough, which is the usual case for twin and earth (2.5/1.5, 1.5/1.0, 6/2.5). This
    note is raised only when the adiabatic sum cannot be worked out from the schedule (no
    Zs, an unknown device, or a breaker outside its instantaneous region); when the sum can
    be made and fails, cpc-adiabatic reports it instead.

    Why it matters:
    A reduced cpc is justified by calculation; when the schedule gives nothing to calculate
    with, the reader cannot see that the cpc is adequate.

    Known false alarms:
    Circuits whose designer did the calculation on a separate design record.

    Failing example:
    2.5/1.5 mm² radial, Zs blank.

    Passing example:
    2.5/1.5 mm² ring on B32 with Zs 0.74 Ω (adiabatic minimum 0.27 mm²); 2.5/2.5 mm².

    Options:
    none.

    Reference:
    BS 7671:2018+A2:2022 Reg 543.1.1 (cpc by Table 54.7 or by calculation, Reg 543.1.3)
    and Table 54.7.
    """

    id = "cpc-below-table-54-7"
    title = "cpc below Table 54.7 without a calculation to back it"
    severity = Severity.NOTE
    reference = "BS 7671:2018+A2:2022 Reg 543.1.1, Table 54.7"
    basis = "published"
    group = "device"

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        live, cpc = circuit.number("live_csa"), circuit.number("cpc_csa")
        if live is None or cpc is None or live <= 0:
            return None
        minimum = tables.table_54_7_min_cpc(live)
        if cpc >= minimum - 1e-9:
            return []
        defaults = CpcAdiabatic.Options()
        if adiabatic(circuit, parse_device(circuit), defaults.u0_v, defaults.breaker_time_s,
                     board, defaults.rcd_time_s, earthing_of(cert, board) == "TT") is not None:
            return []  # the adiabatic sum can be made: cpc-adiabatic decides
        return [
            self.make(
                cert,
                f"cpc {cpc:g} mm² is below Table 54.7 ({minimum:g} mm² for {live:g} mm² line) "
                "and the schedule does not show it adequate by calculation (no Zs, an unknown "
                "device, or a fault current no device clears quickly).",
                board=board,
                circuit=circuit,
                field="cpc_csa",
                expected=f"≥ {minimum:g} mm², or a calculation",
            )
        ]
