"""Insulation resistance: readings against Table 64, low-but-passing readings, test voltage."""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass

from certvet.checks.base import CircuitCheck, fmt, option
from certvet.checks.model import Finding, Severity
from certvet.checks.registry import register
from certvet.extractor.records import Board, Certificate, Circuit, Value, ValueKind

IR_FIELDS = ("ir_live_live", "ir_live_earth")
_IR_LABEL = {"ir_live_live": "live-live", "ir_live_earth": "live-earth"}
# Words that mark a SELV/PELV (extra-low voltage) circuit, tested at 250 V under Table 64.
_ELV_WORDS = re.compile(r"\b(?:selv|pelv|elv|extra[- ]low|12\s*v|24\s*v)\b", re.IGNORECASE)


def is_extra_low_voltage(circuit: Circuit) -> bool:
    """The description says SELV/PELV/ELV (e.g. "SELV downlights 12 V")."""
    return bool(_ELV_WORDS.search(circuit.text("description")))


def table_64_minimum(test_voltage: float, extra_low_voltage: bool = False) -> float:
    """Minimum insulation resistance in MΩ, BS 7671:2018+A2:2022 Table 64.

    SELV and PELV circuits (tested at 250 V d.c.): 0.5 MΩ; circuits up to and including
    500 V (tested at 500 V d.c.): 1 MΩ; above 500 V (1000 V d.c.): 1 MΩ. A 230 V circuit
    tested at 250 V because surge devices or equipment could not be disconnected
    (Reg 643.3.3) still needs 1 MΩ: the 0.5 MΩ belongs to the SELV/PELV row, not to the
    test voltage.
    """
    return 0.5 if extra_low_voltage and test_voltage <= 250 else 1.0


def _minimum_for(circuit: Circuit, voltage: float) -> float:
    return table_64_minimum(voltage, is_extra_low_voltage(circuit))


def _ir_readings(circuit: Circuit) -> list[tuple[str, Value]]:
    """The IR cells holding a reading (plain number or bound)."""
    out = []
    for name in IR_FIELDS:
        v = circuit.value(name)
        if v.kind in (ValueKind.NUMBER, ValueKind.LOWER_BOUND, ValueKind.UPPER_BOUND):
            out.append((name, v))  # a LOWER_BOUND may have no figure ("OL", "∞")
    return out


def _test_voltage(circuit: Circuit, assumed: float) -> tuple[float, bool]:
    """(test voltage, whether it was recorded) for a circuit."""
    v = circuit.number("ir_test_voltage")
    return (v, True) if v is not None else (assumed, False)


@register
class InsulationBelowMinimum(CircuitCheck):
    """An insulation resistance reading below the Table 64 minimum for its test voltage.

    What it checks:
    Each recorded insulation resistance (live-live and live-earth) against the minimum of
    BS 7671 Table 64: 0.5 MΩ for a SELV/PELV circuit (described as such) tested at 250 V,
    1 MΩ for every other circuit, including a 230 V circuit tested at 250 V because surge
    devices could not be disconnected (Reg 643.3.3). An over-range reading such as ">999",
    ">200" or "OL" is a pass (the true value is above the bound), never taken as a number;
    an under-range reading such as "<0.5" at or below the minimum fails. Where no test
    voltage is recorded, 500 V is assumed (250 V for a circuit described as SELV/PELV).

    Why it matters:
    Insulation below the minimum means damaged or wet insulation, a neutral-earth fault or
    equipment left connected; the circuit does not meet the requirement for basic protection.

    Known false alarms:
    Readings taken with equipment left connected (heaters, electronic drivers) that were
    recorded without a note; the reading still fails as recorded, but the remark explains it.

    Failing example:
    500 V test, live-earth 0.8 MΩ: below 1 MΩ; "Sockets" tested at 250 V (SPD left
    connected), live-earth 0.7 MΩ: still below 1 MΩ.

    Passing example:
    500 V test, live-earth ">999" MΩ; live-live 1.5 MΩ; "SELV garden lights 12 V" at
    250 V, 0.7 MΩ.

    Options:
    assumed_test_voltage: test voltage assumed when none is recorded (V).

    Reference:
    BS 7671:2018+A2:2022 Reg 643.3, Reg 643.3.3 and Table 64 (SELV/PELV at 250 V: 0.5 MΩ;
    up to 500 V at 500 V: 1 MΩ; above 500 V at 1000 V: 1 MΩ).
    """

    id = "ir-below-minimum"
    title = "Insulation resistance below the Table 64 minimum"
    severity = Severity.BREACH
    reference = "BS 7671:2018+A2:2022 Reg 643.3, Table 64"
    basis = "published"
    group = "insulation"

    @dataclass(frozen=True)
    class Options:
        assumed_test_voltage: float = option(
            500.0,
            "BS 7671:2018+A2:2022 Table 64: 500 V d.c. for circuits up to 500 V",
            "test voltage (V) assumed when the schedule records none", above=0.0
        )

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        readings = _ir_readings(circuit)
        if not readings:
            return None
        assumed = 250.0 if is_extra_low_voltage(circuit) else self.options.assumed_test_voltage
        voltage, recorded = _test_voltage(circuit, assumed)
        minimum = _minimum_for(circuit, voltage)
        found = []
        for name, v in readings:
            if v.kind is ValueKind.LOWER_BOUND or v.number is None:
                continue  # ">999", "OL": above the bound, a pass whatever the bound is
            if v.kind is ValueKind.UPPER_BOUND:
                failing = v.number <= minimum + 1e-9
            else:
                failing = v.number < minimum - 1e-9
            if not failing:
                continue
            how = f"at {fmt(voltage, 'V', 0)}" + ("" if recorded else " (assumed)")
            found.append(
                self.make(
                    cert,
                    f"Insulation resistance {_IR_LABEL[name]} {v.display()} MΩ {how} is below "
                    f"the {fmt(minimum, 'MΩ', 1)} minimum of Table 64.",
                    board=board,
                    circuit=circuit,
                    field=name,
                    expected=f"≥ {fmt(minimum, 'MΩ', 1)}",
                )
            )
        return found


@register
class InsulationWorthInvestigating(CircuitCheck):
    """An insulation resistance that passes Table 64 but is low enough to look into.

    What it checks:
    A plain insulation resistance reading at or above the Table 64 minimum but below the
    investigation level (2 MΩ by default).

    Why it matters:
    A new or sound circuit normally reads hundreds of megohms. A reading of a megohm or two
    passes, but points to deteriorating insulation, damp, or equipment left connected, and
    is commonly treated as a reason to investigate before the next inspection.

    Known false alarms:
    Long circuits or circuits with many points in parallel, and circuits tested with
    equipment that could not be disconnected, read lower for good reasons.

    Failing example:
    500 V test, live-earth 1.4 MΩ (passes the 1 MΩ minimum, under 2 MΩ).

    Passing example:
    500 V test, live-earth 2.5 MΩ or ">200".

    Options:
    investigate_below_mohm: readings below this (MΩ) are noted.

    Reference:
    BS 7671:2018+A2:2022 Reg 643.3 (the test); the 2 MΩ investigation level is from memory
    of IET Guidance Note 3 (readings under 2 MΩ warrant investigation), not confirmed here.
    """

    id = "ir-worth-investigating"
    title = "Insulation resistance passes but is under the investigation level"
    severity = Severity.NOTE
    reference = (
        "BS 7671:2018+A2:2022 Reg 643.3 (test); 2 MΩ investigation level: IET Guidance "
        "Note 3, from memory"
    )
    basis = "from memory"
    group = "insulation"

    @dataclass(frozen=True)
    class Options:
        investigate_below_mohm: float = option(
            2.0,
            "from memory: IET Guidance Note 3, investigate readings below 2 MΩ",
            "plain readings (MΩ) under this level, but passing Table 64, are noted",
        )

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        readings = _ir_readings(circuit)
        if not readings:
            return None
        assumed = 250.0 if is_extra_low_voltage(circuit) else 500.0
        voltage, _ = _test_voltage(circuit, assumed)
        minimum = _minimum_for(circuit, voltage)
        level = self.options.investigate_below_mohm
        found = []
        for name, v in readings:
            if v.kind is not ValueKind.NUMBER or v.number is None:
                continue
            if minimum - 1e-9 <= v.number < level - 1e-9:
                found.append(
                    self.make(
                        cert,
                        f"Insulation resistance {_IR_LABEL[name]} {v.display()} MΩ passes "
                        f"Table 64 but is under {fmt(level, 'MΩ', 1)}; worth investigating.",
                        board=board,
                        circuit=circuit,
                        field=name,
                        expected=f"≥ {fmt(level, 'MΩ', 1)}",
                    )
                )
        return found


_REASON_WORDS = re.compile(
    r"\b(?:spd|surge|electronic|sensitive|equipment|643\.3\.3|dimmer|driver|ballast|"
    r"cannot be disconnected|not disconnected|left connected)\b",
    re.IGNORECASE,
)


@register
class InsulationTestVoltageUnsuitable(CircuitCheck):
    """An insulation test voltage that does not fit the circuit.

    What it checks:
    The recorded IR test voltage against Table 64: a 230 V circuit is tested at 500 V; a
    SELV/PELV circuit (described as such) at 250 V. It queries 250 V on a circuit not
    described as SELV/PELV unless the remarks give a reason (surge protective devices or
    sensitive equipment that could not be disconnected, Reg 643.3.3), any voltage other
    than 250, 500 or 1000 V, and 1000 V on a circuit not above 500 V.

    Why it matters:
    A lower test voltage stresses the insulation less and can pass a fault that 500 V finds;
    1000 V on a 230 V circuit risks damaging connected equipment, and suggests the column
    was filled without the test.

    Known false alarms:
    Circuits where the reason for a 250 V test was recorded elsewhere on the certificate
    (general remarks), or a 400 V three-phase circuit tested at 500 V (not flagged).

    Failing example:
    "Kitchen sockets ring", test voltage 250 V, no remark.

    Passing example:
    "Kitchen sockets ring", test voltage 500 V; or 250 V with the remark "SPD not
    disconnected".

    Options:
    none.

    Reference:
    BS 7671:2018+A2:2022 Table 64 (test voltages by circuit voltage) and Reg 643.3.3 (250 V
    test where surge protective devices or equipment are left connected).
    """

    id = "ir-test-voltage-unsuitable"
    title = "Insulation test voltage does not fit the circuit"
    severity = Severity.QUERY
    reference = "BS 7671:2018+A2:2022 Table 64, Reg 643.3.3"
    basis = "published"
    group = "insulation"

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        voltage = circuit.number("ir_test_voltage")
        if voltage is None:
            return None
        elv = is_extra_low_voltage(circuit)
        problem = None
        if all(abs(voltage - std) > 1e-6 for std in (250.0, 500.0, 1000.0)):
            problem = "is not one of the Table 64 test voltages (250, 500 or 1000 V)"
        elif abs(voltage - 1000.0) < 1e-6:
            problem = "is for circuits above 500 V; a 230 V circuit is tested at 500 V"
        elif abs(voltage - 250.0) < 1e-6 and not elv:
            if _REASON_WORDS.search(circuit.text("remarks")):
                return []
            problem = (
                "is for SELV/PELV circuits; a 230 V circuit is tested at 500 V unless a "
                "reason (SPDs or equipment left connected) is recorded"
            )
        if problem is None:
            return []
        return [
            self.make(
                cert,
                f"IR test voltage {fmt(voltage, 'V', 0)} {problem}.",
                board=board,
                circuit=circuit,
                field="ir_test_voltage",
                expected="250 V" if elv else "500 V",
            )
        ]
