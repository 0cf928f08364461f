"""Do a column's values look like the field its heading names? (used by `extractor.draft`)

A heading alone can mislead: "Test" may head a voltage or a button, "Type" a device curve or an
RCD type, and a label printed over the wrong column sends a draft astray. `fit(field, samples)`
says how well the values printed under a column agree with a canonical field, from 0 (none
fits) to 1 (all fit), with a short reason for the disagreeing case.

Each field has a value profile: the kind of value (reading, tick, short code, free text) and,
for readings, the range or the set of values the trade prints. Blank cells, N/A, LIM and dashes
say nothing about a column and are left out; a column holding nothing else fits every field.

The figures are the usual printed values (common practice, no source): test voltages 250/500/
1000 V (BS 7671:2018+A2:2022 Table 64, from memory), RCD IΔn 10/30/100/300/500 mA,
standard device ratings and conductor sizes, loop and continuity readings under about 20 Ω.
"""

from __future__ import annotations

import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass

from certvet.extractor.fields import FIELDS, FieldKind
from certvet.extractor.records import Value, ValueKind
from certvet.extractor.tokens import parse_value

NEUTRAL = {
    ValueKind.EMPTY,
    ValueKind.NOT_APPLICABLE,
    ValueKind.LIMITATION,
    ValueKind.DASH,
}
TICKS = {ValueKind.CONFIRMED, ValueKind.NOT_CONFIRMED}
NUMBERS = {ValueKind.NUMBER, ValueKind.LOWER_BOUND, ValueKind.UPPER_BOUND}

RATINGS: frozenset[float] = frozenset(
    {1, 2, 3, 4, 5, 6, 10, 13, 15, 16, 20, 25, 30, 32, 40, 45, 50, 60, 63, 80, 100, 125}
)
CSA: frozenset[float] = frozenset(
    {0.75, 1.0, 1.5, 2.5, 4.0, 6.0, 10.0, 16.0, 25.0, 35.0, 50.0, 70.0, 95.0, 120.0}
)
IR_VOLTS: frozenset[float] = frozenset({50, 100, 250, 500, 1000})
IDN_MA: frozenset[float] = frozenset({10, 30, 100, 300, 500, 1000})
KA: frozenset[float] = frozenset({1, 1.5, 3, 4.5, 6, 10, 15, 16, 20, 25, 36, 50, 80})
DISCONNECT_S: frozenset[float] = frozenset({0.1, 0.2, 0.4, 1, 5})


@dataclass(frozen=True)
class Fit:
    share: float  # share of telling values that fit (1.0 when none tells)
    telling: int  # values that said something (not blank, N/A, LIM, dash)
    reason: str = ""  # what the values look like instead, when share is low


def _num(v: Value) -> float | None:
    return v.number if v.kind in NUMBERS else None


def _in(values: frozenset[float]) -> Callable[[Value, str], bool]:
    def ok(v: Value, _: str) -> bool:
        n = _num(v)
        return (
            n is not None and v.kind is ValueKind.NUMBER and any(abs(n - x) < 1e-6 for x in values)
        )

    return ok


def _between(lo: float, hi: float, bounds: bool = False) -> Callable[[Value, str], bool]:
    def ok(v: Value, _: str) -> bool:
        n = _num(v)
        if n is None or (v.kind is not ValueKind.NUMBER and not bounds):
            return False
        return lo <= n <= hi

    return ok


def _tick(v: Value, _: str) -> bool:
    return v.kind in TICKS


def _code(max_len: int, pattern: str = r"[A-Za-z0-9+\-/ ]+") -> Callable[[Value, str], bool]:
    rx = re.compile(pattern)

    def ok(_: Value, text: str) -> bool:
        t = text.strip()
        return 0 < len(t) <= max_len and rx.fullmatch(t) is not None

    return ok


def _words(_: Value, text: str) -> bool:
    return re.search(r"[A-Za-z]{2,}", text) is not None


def _standard(_: Value, text: str) -> bool:
    return re.search(r"\b\d{2,5}(?:-\d+)?\b", text) is not None and len(text) <= 24


def _ref(_: Value, text: str) -> bool:
    return (
        re.fullmatch(r"[A-Z]{0,3}\d{1,3}[A-Z]?(?:[/.-]?(?:L?[123]|[A-Z]))?", text.strip())
        is not None
    )


OHMS = _between(0.0, 20.0)
RULES: dict[str, tuple[str, Callable[[Value, str], bool]]] = {
    "circuit_ref": ("circuit numbers", _ref),
    "description": ("words", _words),
    "remarks": ("words", _words),
    "wiring_type": ("a short code", _code(3)),
    "ref_method": ("a short code", _code(4)),
    "points": ("a count", _between(0, 200)),
    "live_csa": ("conductor sizes", _in(CSA)),
    "cpc_csa": ("conductor sizes", _in(CSA)),
    "max_disconnection_time": ("disconnection times", _in(DISCONNECT_S)),
    "device_standard": ("standard numbers", _standard),
    "rcd_standard": ("standard numbers", _standard),
    "device_type": ("a device type", _code(4, r"[A-Da-d1-4]|g[GM]|a[MR]|[A-Z]{1,3}")),
    "rating": ("device ratings", _in(RATINGS)),
    "rcd_rating": ("device ratings", _in(RATINGS)),
    "breaking_capacity": ("breaking capacities", _in(KA)),
    "rcd_type": ("an RCD type", _code(3, r"A|AC|F|B|S|A-S|AS|[A-Z]{1,2}")),
    "rcd_idn": ("RCD rated residual currents", _in(IDN_MA)),
    "max_zs": ("loop impedances", _between(0.01, 2000.0)),
    "r1": ("continuity readings", OHMS),
    "rn": ("continuity readings", OHMS),
    "r2": ("continuity readings", OHMS),
    "r1_r2": ("continuity readings", OHMS),
    "r1_rn": ("continuity readings", OHMS),
    "r2_only": ("continuity readings", OHMS),
    "zs": ("loop impedances", _between(0.01, 2000.0)),
    "ir_test_voltage": ("test voltages", _in(IR_VOLTS)),
    "ir_live_live": ("insulation readings", _between(0.0, 10000.0, bounds=True)),
    "ir_live_earth": ("insulation readings", _between(0.0, 10000.0, bounds=True)),
    "ir_neutral_earth": ("insulation readings", _between(0.0, 10000.0, bounds=True)),
    "polarity": ("ticks", _tick),
    "rcd_button": ("ticks", _tick),
    "afdd_button": ("ticks", _tick),
    "spd_indicator": ("ticks", _tick),
    "spd_type": ("an SPD type", _code(3, r"T?[123]|[123]\+[123]")),
    "rcd_time": ("trip times", _between(1.0, 2000.0, bounds=True)),
    "rcd_time_5x": ("trip times", _between(1.0, 500.0, bounds=True)),
}


def _looks(values: Sequence[tuple[Value, str]]) -> str:
    if all(parse_value(t, FieldKind.CONFIRM).kind in TICKS for _, t in values):
        return "ticks"
    as_numbers = [parse_value(t, FieldKind.NUMBER) for _, t in values]
    nums = [v.number for v in as_numbers if v.kind is ValueKind.NUMBER and v.number is not None]
    if len(nums) == len(values) and nums:
        return f"numbers {min(nums):g}–{max(nums):g}"
    if any(v.kind is ValueKind.LOWER_BOUND for v in as_numbers):
        return "readings with bounds (>999)"
    return "text"


def fit(field: str, samples: Sequence[str]) -> Fit:
    """How well the values under a column fit `field` (see the module docstring)."""
    spec = FIELDS[field]
    rule = RULES.get(field)
    telling: list[tuple[Value, str]] = []
    for s in samples:
        text = " ".join(s.split())
        if not text:
            continue
        v = parse_value(text, spec.kind, spec.unit)
        if v.kind in NEUTRAL:
            continue
        telling.append((v, text))
    if not telling or rule is None:
        return Fit(1.0, len(telling))
    what, ok = rule
    good = sum(1 for v, t in telling if ok(v, t))
    share = good / len(telling)
    reason = "" if share >= 0.8 else f"values look like {_looks(telling)}, not {what}"
    return Fit(share, len(telling), reason)
