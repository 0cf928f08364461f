"""Residual current devices: additional protection for sockets, trip times, test button."""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass
from datetime import date

from certvet.checks.base import CircuitCheck, fmt, option
from certvet.checks.certificate_facts import Applies, observation_note, requirement_applies
from certvet.checks.devices import (
    RcdProtection,
    is_ring,
    might_be_ring,
    rcd_protection,
    serves_sockets,
)
from certvet.checks.model import Finding, Severity
from certvet.checks.registry import register
from certvet.extractor.records import Board, Certificate, Circuit, ValueKind

_S_TYPE = re.compile(r"(?:^|[\s/,(-])s(?:$|[\s/,)-])|selective|time[- ]?delay", re.IGNORECASE)


def is_socket_circuit(circuit: Circuit) -> bool:
    """A circuit serving socket-outlets: its description names sockets, or it is a ring."""
    return serves_sockets(circuit) or is_ring(circuit) or might_be_ring(circuit)


def has_rcd(circuit: Circuit, board: Board | None = None) -> bool:
    """An RCD protects the circuit (checks.devices.rcd_protection, the one definition)."""
    return rcd_protection(circuit, board) is not None


def socket_rcd_gap(circuit: Circuit, board: Board | None, max_rating_a: float,
                   max_idn_ma: float) -> str | None:
    """Why a socket circuit lacks 30 mA additional protection, or None when it has it / n/a.

    Pure logic, no severity: a check that must treat an older installation differently
    (an observation on a periodic report rather than a breach) calls this and picks its own
    severity (see ``RcdMissingForSockets.severity_for``).
    """
    if not is_socket_circuit(circuit):
        return None
    rating = circuit.number("rating")
    if rating is not None and rating > max_rating_a + 1e-9:
        return None
    found: RcdProtection | None = rcd_protection(circuit, board)
    if found is None:
        return (
            "Socket-outlet circuit shows no RCD protection (no IΔn, no RCBO, no trip time, "
            f"no board RCD over its way); sockets up to {fmt(max_rating_a, 'A', 0)} need a "
            f"{fmt(max_idn_ma, 'mA', 0)} RCD."
        )
    if found.idn_ma is not None and found.idn_ma > max_idn_ma + 1e-9:
        where = "the board's RCD" if found.source == "board" else "an RCD"
        return (
            f"Socket-outlet circuit protected by {where} of IΔn {fmt(found.idn_ma, 'mA', 0)}; "
            f"additional protection needs {fmt(max_idn_ma, 'mA', 0)} or less."
        )
    return ""  # protected: an RCD of 30 mA or less, or an RCBO / trip time with no IΔn


def is_time_delayed(circuit: Circuit) -> bool:
    """The RCD is a time-delayed ("S", selective) type, from the RCD type column."""
    return bool(_S_TYPE.search(circuit.text("rcd_type")))


@register
class RcdMissingForSockets(CircuitCheck):
    """A socket-outlet circuit without 30 mA RCD protection.

    What it checks:
    A circuit serving socket-outlets (description words such as "socket", "skt", "ring",
    or a ring final circuit) rated up to 32 A must show 30 mA RCD protection: an RCD IΔn of
    30 mA or less, or an RCBO (BS EN 61009) with no larger IΔn recorded. A recorded IΔn
    above 30 mA (100 mA, 300 mA), or no RCD at all, is reported.

    Why it matters:
    Additional protection by a 30 mA RCD is required for socket-outlets rated up to 32 A;
    without it a person touching a faulty appliance or a damaged flex has only the circuit's
    overcurrent device between them and a lethal shock.

    Known false alarms:
    An RCD upstream (an RCD main switch or a split-load RCD) recorded on its own row rather
    than on each circuit row or in the board's RCD fields (board_rcd_idn, board_rcd_ways,
    which are read); a documented risk assessment for sockets in
    a non-domestic installation (allowed by the exception to Reg 411.3.3). On an EICR of an
    installation built before the 2008 edition (its estimated age says so) the finding is a
    query: an observation to raise, not a failed report.

    Failing example:
    "Kitchen sockets", BS EN 60898 B32, RCD IΔn "N/A".

    Passing example:
    "Kitchen sockets", BS EN 61009 B32, RCD IΔn 30 mA.

    Options:
    max_rating_a: socket circuits rated up to this need RCD protection (A).
    max_idn_ma: largest IΔn that counts as additional protection (mA).
    since: on an EICR of an installation built before this date (from its estimated age),
    the finding is an observation to raise (query), not a breach.

    Reference:
    BS 7671:2018+A2:2022 Reg 411.3.3 (additional protection by RCD for socket-outlets
    rated up to 32 A) and Reg 415.1.1 (IΔn not exceeding 30 mA).
    """

    id = "rcd-missing-for-sockets"
    title = "Socket-outlet circuit without 30 mA RCD protection"
    severity = Severity.BREACH
    reference = "BS 7671:2018+A2:2022 Reg 411.3.3, Reg 415.1.1"
    basis = "published"
    group = "rcd"

    @dataclass(frozen=True)
    class Options:
        max_rating_a: float = option(
            32.0,
            "BS 7671:2018+A2:2022 Reg 411.3.3: socket-outlets rated up to 32 A",
            "socket circuits rated up to this (A) need RCD protection", above=0.0
        )
        max_idn_ma: float = option(
            30.0,
            "BS 7671:2018+A2:2022 Reg 415.1.1: IΔn not exceeding 30 mA",
            "largest RCD IΔn (mA) that counts as additional protection",
        )
        since: str = option(
            "2008-07-01",
            "from memory: BS 7671:2008 (RCDs for all sockets up to 32 A) in force 1 July 2008",
            "an EICR of an installation built before this date (YYYY-MM-DD) raises an "
            "observation (query), not a breach",
        )

    def _older(self, cert: Certificate) -> bool:
        """An EICR of an installation built before the requirement (report-type aware)."""
        since = date.fromisoformat(self.options.since)
        return requirement_applies(cert, since) is Applies.OBSERVATION

    def severity_for(self, cert: Certificate, board: Board, circuit: Circuit) -> Severity:
        """The severity of a finding on this circuit: on an EICR of an older installation an
        observation (query), else the configured severity."""
        if self._older(cert):
            return min(self.effective_severity, Severity.QUERY)
        return self.effective_severity

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        limit = self.options.max_idn_ma
        message = socket_rcd_gap(circuit, board, self.options.max_rating_a, limit)
        if message is None:
            return None
        if not message:
            return []
        if self._older(cert):
            since = date.fromisoformat(self.options.since)
            message = f"{message.rstrip('.')}; {observation_note(since)}."
        return [
            self.make(
                cert,
                message,
                board=board,
                circuit=circuit,
                field="rcd_idn",
                expected=f"≤ {fmt(limit, 'mA', 0)}",
                severity=self.severity_for(cert, board, circuit),
            )
        ]


def _time_limits(circuit: Circuit, general: tuple[float, float],
                 delayed: tuple[float, float]) -> tuple[float, float, str]:
    if is_time_delayed(circuit):
        return delayed[0], delayed[1], "time-delayed (S)"
    return general[0], general[1], "general"


def _rcd_time_findings(check: CircuitCheck, cert: Certificate, board: Board,
                       circuit: Circuit, field: str, what: str,
                       general: tuple[float, float], delayed: tuple[float, float]
                       ) -> list[Finding] | None:
    v = circuit.value(field)
    if v.kind is ValueKind.NOT_CONFIRMED:  # "NT", "No trip": the RCD did not trip at all
        return [
            check.make(
                cert,
                f"RCD trip time {what} recorded as {v.display()}: the RCD did not trip, "
                "so it has failed its test.",
                board=board,
                circuit=circuit,
                field=field,
                expected="a trip time within the limit",
            )
        ]
    if v.kind not in (ValueKind.NUMBER, ValueKind.LOWER_BOUND) or v.number is None:
        return None  # "<40" (an upper bound) is within any limit it is written against
    low, high, kind = _time_limits(circuit, general, delayed)
    t = v.number
    if t > high + 1e-9 or (v.kind is ValueKind.LOWER_BOUND and t >= high - 1e-9):
        return [
            check.make(
                cert,
                f"RCD trip time {what} {v.display()} ms is over the {fmt(high, 'ms', 0)} "
                f"limit for a {kind} RCD.",
                board=board,
                circuit=circuit,
                field=field,
                expected=f"≤ {fmt(high, 'ms', 0)}",
            )
        ]
    if low > 0 and v.kind is ValueKind.NUMBER and t < low - 1e-9:
        return [
            check.make(
                cert,
                f"RCD trip time {what} {v.display()} ms is faster than the "
                f"{fmt(low, 'ms', 0)} minimum of a {kind} RCD: is the RCD type right?",
                board=board,
                circuit=circuit,
                field=field,
                expected=f"{fmt(low, 'ms', 0)} to {fmt(high, 'ms', 0)}",
                severity=Severity.QUERY,
            )
        ]
    return []


@register
class RcdTimeLimit(CircuitCheck):
    """An RCD trip time at IΔn beyond the device standard's limit.

    What it checks:
    The RCD trip time recorded at the rated residual current IΔn: a general (undelayed) RCD
    must trip within 300 ms; a time-delayed "S" type (RCD type column showing "S") between
    130 ms and 500 ms. Over the maximum is a breach; an S type tripping faster than its
    minimum is a query about the recorded type (reported at query severity).

    Why it matters:
    A slow RCD does not disconnect in the time the protective measure relies on; a time
    over the limit means the RCD has failed its test.

    Known false alarms:
    Time-delayed RCDs recorded without "S" in the RCD type column; readings written in
    seconds without a unit (0.3 read as 0.3 ms is not flagged, 300 with a unit is).

    Failing example:
    General RCBO, 30 mA, trip time at IΔn 320 ms.

    Passing example:
    General RCBO, 30 mA, trip time 24 ms; S type RCD, trip time 190 ms.

    Options:
    general_max_ms: maximum trip time at IΔn for a general RCD (ms).
    delayed_min_ms: minimum trip time at IΔn for an S type RCD (ms).
    delayed_max_ms: maximum trip time at IΔn for an S type RCD (ms).

    Reference:
    BS EN 61008-1 and BS EN 61009-1 trip-time limits (general 300 ms; S type 130–500 ms)
    as applied by BS 7671:2018+A2:2022 Reg 643.8.
    """

    id = "rcd-time-limit"
    title = "RCD trip time at IΔn over the limit"
    severity = Severity.BREACH
    reference = "BS EN 61008-1 / BS EN 61009-1 trip-time limits, BS 7671:2018+A2:2022 Reg 643.8"
    basis = "published"
    group = "rcd"

    @dataclass(frozen=True)
    class Options:
        general_max_ms: float = option(
            300.0, "BS EN 61008-1/61009-1: general type at IΔn ≤ 300 ms",
            "maximum trip time at IΔn for a general RCD (ms)")
        delayed_min_ms: float = option(
            130.0, "BS EN 61008-1/61009-1: S type at IΔn ≥ 130 ms",
            "minimum trip time at IΔn for a time-delayed S type RCD (ms)")
        delayed_max_ms: float = option(
            500.0, "BS EN 61008-1/61009-1: S type at IΔn ≤ 500 ms",
            "maximum trip time at IΔn for a time-delayed S type RCD (ms)")

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        o = self.options
        return _rcd_time_findings(self, cert, board, circuit, "rcd_time", "at IΔn",
                                  (0.0, o.general_max_ms), (o.delayed_min_ms, o.delayed_max_ms))


@register
class RcdTime5xLimit(CircuitCheck):
    """An RCD trip time at 5×IΔn beyond the device standard's limit.

    What it checks:
    The trip time recorded at five times the rated residual current: a general RCD must
    trip within 40 ms; a time-delayed "S" type between 50 ms and 150 ms. Over the maximum
    is a breach; an S type faster than its minimum is a query about the recorded type.

    Why it matters:
    The 5×IΔn test shows the RCD gives additional protection: disconnection fast enough
    that a shock through the body is survivable. Over 40 ms, the 30 mA RCD is not doing
    that job.

    Known false alarms:
    Time-delayed RCDs recorded without "S" in the RCD type column.

    Failing example:
    General RCBO, 30 mA, trip time at 5×IΔn 46 ms.

    Passing example:
    General RCBO, 30 mA, trip time at 5×IΔn 14 ms, or "<40".

    Options:
    general_max_ms: maximum trip time at 5×IΔn for a general RCD (ms).
    delayed_min_ms: minimum trip time at 5×IΔn for an S type RCD (ms).
    delayed_max_ms: maximum trip time at 5×IΔn for an S type RCD (ms).

    Reference:
    BS EN 61008-1 and BS EN 61009-1 trip-time limits at 5×IΔn (general 40 ms; S type
    50–150 ms) as applied by BS 7671:2018+A2:2022 Reg 643.8.
    """

    id = "rcd-time-5x-limit"
    title = "RCD trip time at 5×IΔn over the limit"
    severity = Severity.BREACH
    reference = (
        "BS EN 61008-1 / BS EN 61009-1 trip-time limits at 5×IΔn, BS 7671:2018+A2:2022 "
        "Reg 643.8"
    )
    basis = "published"
    group = "rcd"

    @dataclass(frozen=True)
    class Options:
        general_max_ms: float = option(
            40.0, "BS EN 61008-1/61009-1: general type at 5×IΔn ≤ 40 ms",
            "maximum trip time at 5×IΔn for a general RCD (ms)")
        delayed_min_ms: float = option(
            50.0, "BS EN 61008-1/61009-1: S type at 5×IΔn ≥ 50 ms",
            "minimum trip time at 5×IΔn for a time-delayed S type RCD (ms)")
        delayed_max_ms: float = option(
            150.0, "BS EN 61008-1/61009-1: S type at 5×IΔn ≤ 150 ms",
            "maximum trip time at 5×IΔn for a time-delayed S type RCD (ms)")

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        o = self.options
        return _rcd_time_findings(self, cert, board, circuit, "rcd_time_5x", "at 5×IΔn",
                                  (0.0, o.general_max_ms), (o.delayed_min_ms, o.delayed_max_ms))


@register
class RcdButtonNotConfirmed(CircuitCheck):
    """The RCD's test button operation is not confirmed on an RCD-protected circuit.

    What it checks:
    On a circuit protected by an RCD (an IΔn, a trip time or an RCBO recorded), that the
    "RCD test button" column holds a tick. A cross, a blank, a dash or N/A is queried. A
    board whose schedule has no test-button column at all is not checked; LIM is left to
    the limitation checks.

    Why it matters:
    The test button proves the mechanism trips; the user is told to press it regularly. A
    blank or cross means either the check was skipped or the device failed it.

    Known false alarms:
    Forms where the button result is recorded once for a shared RCD on its own row rather
    than on every circuit it protects.

    Failing example:
    RCBO 30 mA, trip time 22 ms, RCD test button blank.

    Passing example:
    RCBO 30 mA, trip time 22 ms, RCD test button ✓.

    Options:
    none.

    Reference:
    BS 7671:2018+A2:2022 Reg 643.8 (RCD testing) and the schedule of test results'
    "RCD test button operation" column; severity: common practice, no source.
    """

    id = "rcd-button-not-confirmed"
    title = "RCD test button operation not confirmed"
    severity = Severity.QUERY
    reference = "BS 7671:2018+A2:2022 Reg 643.8; schedule column: common practice, no source"
    basis = "common practice"
    group = "rcd"

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        if not has_rcd(circuit, board):
            return None
        if not any("rcd_button" in c.cells for c in board.circuits):
            return None  # this form has no test-button column
        v = circuit.value("rcd_button")
        if v.kind in (ValueKind.CONFIRMED, ValueKind.LIMITATION, ValueKind.UNREADABLE):
            return []
        what = "recorded as failed" if v.kind is ValueKind.NOT_CONFIRMED else "not recorded"
        return [
            self.make(
                cert,
                f"RCD test button operation {what} ({v.display()}) on an RCD-protected "
                "circuit.",
                board=board,
                circuit=circuit,
                field="rcd_button",
                expected="✓",
            )
        ]
