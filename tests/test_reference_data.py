"""The reference tables in checks/data, cell by cell against the published values.

Each expected value names its source on its line. The Table 41.3 rows are also recomputed from
Cmin × U0 / Ia (Ia = 5, 10, 20 × In for types B, C, D) and rounded half up to 2 places.
"""

from __future__ import annotations

from decimal import ROUND_HALF_UP, Decimal

import pytest
from casekit import make_certificate

from checks import tables
from checks.devices import CircuitKind, DeviceFamily, circuit_kind, parse_device

# --- IEC 60228 Table 2: plain copper, mΩ/m at 20 °C ------------------------------------------
IEC_60228 = [
    (1.0, 18.1),  # IEC 60228 Table 2
    (1.5, 12.1),  # IEC 60228 Table 2
    (2.5, 7.41),  # IEC 60228 Table 2
    (4, 4.61),  # IEC 60228 Table 2
    (6, 3.08),  # IEC 60228 Table 2
    (10, 1.83),  # IEC 60228 Table 2
    (16, 1.15),  # IEC 60228 Table 2
    (25, 0.727),  # IEC 60228 Table 2
]


@pytest.mark.parametrize(("csa", "mohm"), IEC_60228)
def test_conductor_resistance(csa: float, mohm: float) -> None:
    assert tables.conductor_mohm_per_m(csa) == mohm


def test_conductor_table_has_nothing_else() -> None:
    assert len(tables.load("conductor_resistance").rows) == len(IEC_60228)
    assert tables.conductor_mohm_per_m(3.0) is None


# --- BS 7671:2018+A2:2022 Table 41.3, published values ---------------------------------------
TABLE_41_3 = [
    ("B", 6, 7.28),  # BS 7671:2018+A2:2022 Table 41.3
    ("B", 10, 4.37),  # BS 7671:2018+A2:2022 Table 41.3
    ("B", 16, 2.73),  # BS 7671:2018+A2:2022 Table 41.3
    ("B", 20, 2.19),  # BS 7671:2018+A2:2022 Table 41.3
    ("B", 32, 1.37),  # BS 7671:2018+A2:2022 Table 41.3
    ("B", 40, 1.09),  # BS 7671:2018+A2:2022 Table 41.3
    ("C", 32, 0.68),  # BS 7671:2018+A2:2022 Table 41.3
]
# Pre-2015 and 16th-edition values (computed U0/Ia, printed values from memory)
OLD_TABLES = [
    ("2008", "B", 32, 1.44),  # BS 7671:2008 Table 41.3: 230/160, from memory
    ("2008", "B", 6, 7.67),  # BS 7671:2008 Table 41.3: 230/30, from memory
    ("2008", "C", 32, 0.72),  # BS 7671:2008 Table 41.3: 230/320, from memory
    ("2001", "B", 32, 1.50),  # BS 7671:2001 (16th edition): 240/160, from memory
    ("2001", "B", 6, 8.00),  # BS 7671:2001 (16th edition): 240/30, from memory
]
MULTIPLE = {"B": 5, "C": 10, "D": 20}  # BS 7671:2018+A2:2022 Table 41.3 notes: Ia = 5/10/20 × In


def _row(edition: str, curve: str, rating: int) -> tables.TableRow:
    for r in tables.load("max_zs_breakers").rows:
        if (r["edition"], r["curve"], r.num("rating_a")) == (edition, curve, rating):
            return r
    raise AssertionError(f"no row {edition} {curve}{rating}")


@pytest.mark.parametrize(("curve", "rating", "ohm"), TABLE_41_3)
def test_table_41_3_published(curve: str, rating: int, ohm: float) -> None:
    row = _row("2018", curve, rating)
    assert row.num("max_zs_ohm") == ohm
    assert row.source == "BS 7671:2018+A2:2022 Table 41.3"


@pytest.mark.parametrize(("edition", "curve", "rating", "ohm"), OLD_TABLES)
def test_old_editions(edition: str, curve: str, rating: int, ohm: float) -> None:
    assert _row(edition, curve, rating).num("max_zs_ohm") == ohm


def test_every_breaker_row_recomputes() -> None:
    """Every row equals Cmin × U0 / (k × In), rounded half up to 0.01 Ω."""
    rows = tables.load("max_zs_breakers").rows
    assert len(rows) >= 3 * 12 * 2
    for r in rows:
        ia = Decimal(MULTIPLE[r["curve"]]) * Decimal(r["rating_a"])
        exact = Decimal(r["cmin"]) * Decimal(r["u0_v"]) / ia
        expected = exact.quantize(Decimal("0.01"), rounding=ROUND_HALF_UP)
        assert Decimal(r["max_zs_ohm"]) == expected, (r.values, expected)


def test_edition_parameters() -> None:
    """2018: Cmin 0.95 at 230 V; 2008 pre-2015: 230 V no Cmin; 2001: 240 V (16th edition)."""
    params = {(r["edition"], r["u0_v"], r["cmin"]) for r in tables.load("max_zs_breakers").rows}
    assert params == {("2018", "230", "0.95"), ("2008", "230", "1"), ("2001", "240", "1")}


# --- Fuses (Tables 41.2 / 41.4): every row is marked from memory -----------------------------
FUSES = [
    ("bs88-2", 32, 1.04),  # from memory: BS 7671:2018+A2:2022 Table 41.2
    # from memory: Table 41.2; 0.8 × 0.91 = 0.73
    ("bs88-3", 32, 0.91),
    ("bs3036", 15, 2.43),  # from memory: BS 7671:2018+A2:2022 Table 41.2
    ("bs1362", 13, 2.30),  # from memory: BS 7671:2018+A2:2022 Table 41.2
]


@pytest.mark.parametrize(("standard", "rating", "ohm"), FUSES)
def test_fuse_rows(standard: str, rating: int, ohm: float) -> None:
    rows = {(r["standard"], r.num("rating_a"), r.num("disconnection_s")): r
            for r in tables.load("max_zs_fuses").rows}
    row = rows[(standard, rating, 0.4)]
    assert row.num("max_zs_ohm") == ohm
    assert row.from_memory


def test_every_fuse_row_says_from_memory() -> None:
    assert all(r.from_memory for r in tables.load("max_zs_fuses").rows)


def test_fuse_values_fall_with_rating() -> None:
    """A larger fuse of the same standard needs more current, so its max Zs is lower."""
    by_std: dict[str, list[tuple[float, float]]] = {}
    for r in tables.load("max_zs_fuses").rows:
        by_std.setdefault(r["standard"], []).append((r.num("rating_a"), r.num("max_zs_ohm")))
    for std, pairs in by_std.items():
        values = [z for _, z in sorted(pairs)]
        assert values == sorted(values, reverse=True), std


# --- Table 41.1 and Regs 411.3.2.3/4 ---------------------------------------------------------
DISCONNECTION = [
    ("TN", "final", 230, 0.4),  # BS 7671:2018+A2:2022 Table 41.1, 120 V < U0 ≤ 230 V
    ("TT", "final", 230, 0.2),  # BS 7671:2018+A2:2022 Table 41.1, 120 V < U0 ≤ 230 V
    ("TN", "final", 110, 0.8),  # BS 7671:2018+A2:2022 Table 41.1, 50 V < U0 ≤ 120 V
    ("TT", "final", 110, 0.3),  # BS 7671:2018+A2:2022 Table 41.1, 50 V < U0 ≤ 120 V
    ("TN", "final", 400, 0.2),  # BS 7671:2018+A2:2022 Table 41.1, 230 V < U0 ≤ 400 V
    ("TT", "final", 400, 0.07),  # BS 7671:2018+A2:2022 Table 41.1, 230 V < U0 ≤ 400 V
    ("TN", "distribution", 230, 5),  # BS 7671:2018+A2:2022 Reg 411.3.2.3
    ("TT", "distribution", 230, 1),  # BS 7671:2018+A2:2022 Reg 411.3.2.4
]


@pytest.mark.parametrize(("system", "circuit", "u0", "seconds"), DISCONNECTION)
def test_disconnection_times(system: str, circuit: str, u0: float, seconds: float) -> None:
    assert tables.max_disconnection_time(system, circuit, u0) == seconds


# --- Declared Ze (common practice, no source), Table 41.5, factors ----------------------------
@pytest.mark.parametrize(
    ("earthing", "ohm"),
    [
        ("TN-C-S", 0.35),  # common practice, no source
        ("TN-S", 0.8),  # common practice, no source
        ("TT", 21),  # common practice, no source
    ],
)
def test_declared_ze(earthing: str, ohm: float) -> None:
    assert tables.declared_ze(earthing) == ohm


@pytest.mark.parametrize("idn", [30, 100, 300, 500])
def test_table_41_5_is_50_volts_over_idn(idn: int) -> None:
    """BS 7671:2018+A2:2022 Reg 411.5.3: RA ≤ 50 V / IΔn, rounded to the ohm (Table 41.5)."""
    assert tables.rcd_max_ra(idn) == round(50 / (idn / 1000))


def test_temperature_factors() -> None:
    assert tables.factor("rule_of_thumb_80_percent") == 0.8  # common practice, no source
    # from memory: 70 °C thermoplastic copper 1.20; 0.8 is about 1/1.20 = 0.83 rounded down
    assert tables.factor("resistance_ratio_70c_thermoplastic") == 1.20
    assert tables.factor("rule_of_thumb_80_percent") <= 1 / tables.factor(
        "resistance_ratio_70c_thermoplastic"
    )


@pytest.mark.parametrize("name", [
    "conductor_resistance", "max_zs_breakers", "max_zs_fuses", "disconnection_times",
    "declared_ze", "temperature_factors", "rcd_ra_limits", "bs7671_editions",
    "inspection_intervals", "pme_bonding_table_54_8",
])
def test_every_table_names_its_source_and_units(name: str) -> None:
    t = tables.load(name)
    header = " ".join(t.comments).lower()
    assert "source:" in header
    assert "unit" in header
    assert t.rows and all(r.source for r in t.rows), name


# --- Device and circuit-kind parsing ---------------------------------------------------------
DEVICES = [
    ("60898", "B", "32", DeviceFamily.MCB, "B", 1.37),  # Table 41.3 B32
    ("BS EN 60898", "Type B", "32", DeviceFamily.MCB, "B", 1.37),  # Table 41.3 B32
    ("BS EN 61009", "C", "32", DeviceFamily.RCBO, "C", 0.68),  # Table 41.3 C32
    ("", "B", "6A", DeviceFamily.MCB, "B", 7.28),  # Table 41.3 B6
    ("BS 88-3", "", "32", DeviceFamily.FUSE_BS88_3, None, 0.91),  # Table 41.2, from memory
    ("1361", "", "32", DeviceFamily.FUSE_BS88_3, None, 0.91),  # BS 1361 became BS 88-3
    ("3036", "", "15", DeviceFamily.FUSE_BS3036, None, 2.43),  # Table 41.2, from memory
    ("BS 88-2", "gG", "32", DeviceFamily.FUSE_BS88_2, None, 1.04),  # Table 41.2, from memory
    ("BS EN 61008", "", "63", DeviceFamily.RCD, None, None),  # RCCB: no overcurrent table
    ("", "?", "32", DeviceFamily.UNKNOWN, None, None),  # unreadable type
]


@pytest.mark.parametrize(("std", "typ", "rating", "family", "curve", "ohm"), DEVICES)
def test_parse_device(std: str, typ: str, rating: str, family: DeviceFamily,
                      curve: str | None, ohm: float | None) -> None:
    cert = make_certificate([{"device_standard": std, "device_type": typ, "rating": rating}])
    device = parse_device(cert.boards[0].circuits[0])
    assert device.family is family
    assert device.curve == curve
    m = tables.max_zs(device)
    assert (m.ohm if m else None) == ohm


@pytest.mark.parametrize(("cells", "kind"), [
    ({"description": "Sockets ring"}, CircuitKind.RING),
    ({"description": "Kitchen RFC"}, CircuitKind.RING),
    ({"description": "Lights", "r1": "0.40", "rn": "0.40", "r2": "0.66"}, CircuitKind.RING),
    ({"description": "Sockets radial"}, CircuitKind.RADIAL),
    ({"description": "Cooker", "r1": "N/A", "rn": "N/A", "r2": "N/A", "r1_r2": "0.30"},
     CircuitKind.RADIAL),
    ({"description": "Shower"}, CircuitKind.UNKNOWN),
    ({"description": "Bring-up lights"}, CircuitKind.UNKNOWN),
])
def test_circuit_kind(cells: dict[str, str], kind: CircuitKind) -> None:
    cert = make_certificate([cells])
    assert circuit_kind(cert.boards[0].circuits[0]) is kind
