"""Canonical fields of a certificate: what each column, board value and certificate value means.

Every layout maps a form's columns and labels onto these names; every check and report reads
them by these names. Adding a field here is the only place a new kind of value is declared.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import StrEnum


class FieldKind(StrEnum):
    """How the text of a cell is parsed."""

    TEXT = "text"  # free text kept as written (description, remarks, device type)
    NUMBER = "number"  # a reading or rating with an optional unit, bounds allowed
    CONFIRM = "confirm"  # a tick, cross, "OK", "Yes"/"No"


@dataclass(frozen=True)
class FieldSpec:
    name: str
    label: str
    kind: FieldKind
    unit: str | None = None  # canonical unit the number is stored in
    level: str = "circuit"  # "circuit", "board" or "certificate"


def _c(name: str, label: str, kind: FieldKind, unit: str | None = None) -> FieldSpec:
    return FieldSpec(name, label, kind, unit, "circuit")


T, N, C = FieldKind.TEXT, FieldKind.NUMBER, FieldKind.CONFIRM

CIRCUIT_FIELDS: tuple[FieldSpec, ...] = (
    _c("circuit_ref", "Circuit", T),
    _c("description", "Description", T),
    _c("wiring_type", "Type of wiring", T),
    _c("ref_method", "Reference method", T),
    _c("points", "Points served", N),
    _c("live_csa", "Live CSA", N, "mm²"),
    _c("cpc_csa", "CPC CSA", N, "mm²"),
    _c("max_disconnection_time", "Max disconnection time", N, "s"),
    _c("device_standard", "Device BS (EN)", T),
    _c("device_type", "Device type", T),
    _c("rating", "Rating", N, "A"),
    _c("breaking_capacity", "Breaking capacity", N, "kA"),
    _c("rcd_type", "RCD type", T),
    _c("rcd_idn", "RCD IΔn", N, "mA"),
    # A2:2022 model schedule: the RCD's own standard and rated current when it is a device
    # apart from the overcurrent device (BS 7671:2018+A2:2022 Appendix 6, from memory)
    _c("rcd_standard", "RCD BS (EN)", T),
    _c("rcd_rating", "RCD rating", N, "A"),
    _c("max_zs", "Max Zs (recorded)", N, "Ω"),
    _c("r1", "r1 (line end to end)", N, "Ω"),
    _c("rn", "rn (neutral end to end)", N, "Ω"),
    _c("r2", "r2 (cpc end to end)", N, "Ω"),
    _c("r1_r2", "R1+R2", N, "Ω"),
    _c("r1_rn", "R1+Rn", N, "Ω"),
    _c("r2_only", "R2", N, "Ω"),
    _c("ir_test_voltage", "IR test voltage", N, "V"),
    _c("ir_live_live", "IR live-live", N, "MΩ"),
    _c("ir_live_earth", "IR live-earth", N, "MΩ"),
    _c("ir_neutral_earth", "IR neutral-earth", N, "MΩ"),
    _c("polarity", "Polarity", C),
    _c("zs", "Measured Zs", N, "Ω"),
    _c("rcd_time", "RCD time at IΔn", N, "ms"),
    _c("rcd_time_5x", "RCD time at 5×IΔn", N, "ms"),
    _c("rcd_button", "RCD test button", C),
    _c("afdd_button", "AFDD test button", C),
    # surge protection named on the circuit's row (type 1/2/3, status indicator seen)
    _c("spd_type", "SPD type", T),
    _c("spd_indicator", "SPD status indicator", C),
    _c("remarks", "Remarks", T),
)

BOARD_FIELDS: tuple[FieldSpec, ...] = (
    FieldSpec("board_ref", "Board reference", T, None, "board"),
    FieldSpec("location", "Board location", T, None, "board"),
    FieldSpec("supplied_from", "Supplied from", T, None, "board"),
    FieldSpec("ze", "Ze / Zdb at the board", N, "Ω", "board"),
    FieldSpec("ipf", "Prospective fault current", N, "kA", "board"),
    FieldSpec("earthing", "Earthing system", T, None, "board"),
    FieldSpec("board_polarity", "Polarity at the board", C, None, "board"),
    # An RCD at the board (RCD main switch, or the RCD of a split-load board) protecting the
    # MCB ways listed in board_rcd_ways ("1-6", "1,2,5"; blank or "all": every way).
    FieldSpec("board_rcd_idn", "Board RCD IΔn", N, "mA", "board"),
    FieldSpec("board_rcd_ways", "Ways protected by the board RCD", T, None, "board"),
)

CERTIFICATE_FIELDS: tuple[FieldSpec, ...] = (
    FieldSpec("cert_number", "Certificate number", T, None, "certificate"),
    FieldSpec("report_type", "Report type", T, None, "certificate"),
    FieldSpec("address", "Installation address", T, None, "certificate"),
    FieldSpec("client", "Client", T, None, "certificate"),
    FieldSpec("contractor", "Contractor", T, None, "certificate"),
    FieldSpec("inspection_date", "Date of inspection", T, None, "certificate"),
    FieldSpec("next_inspection", "Next inspection", T, None, "certificate"),
    FieldSpec("inspector", "Inspector", T, None, "certificate"),
    FieldSpec("instrument_serial", "Instrument serial", T, None, "certificate"),
    FieldSpec("earthing", "Earthing system", T, None, "certificate"),
    FieldSpec("ze", "Ze (origin)", N, "Ω", "certificate"),
    FieldSpec("ipf", "Prospective fault current (origin)", N, "kA", "certificate"),
    FieldSpec("overall_outcome", "Overall assessment", T, None, "certificate"),
    FieldSpec("observation_codes", "Observation codes", T, None, "certificate"),
    FieldSpec("limitations", "Agreed limitations", T, None, "certificate"),
    # the certificate as a whole (report type, dates, edition, premises, supply and bonding)
    FieldSpec("issue_date", "Date of issue", T, None, "certificate"),
    FieldSpec("bs7671_edition", "BS 7671 edition claimed", T, None, "certificate"),
    FieldSpec("premises_type", "Premises (use)", T, None, "certificate"),
    FieldSpec("installation_age", "Estimated age of the installation", T, None, "certificate"),
    FieldSpec("instrument_calibration", "Instrument calibration date", T, None, "certificate"),
    FieldSpec("designer_signature", "Signed for design", T, None, "certificate"),
    FieldSpec("constructor_signature", "Signed for construction", T, None, "certificate"),
    FieldSpec("inspector_signature", "Signed for inspection and testing", T, None,
              "certificate"),
    FieldSpec("observations", "Observations (numbered text)", T, None, "certificate"),
    FieldSpec("c1_count", "Number of C1 observations", N, None, "certificate"),
    FieldSpec("c2_count", "Number of C2 observations", N, None, "certificate"),
    FieldSpec("c3_count", "Number of C3 observations", N, None, "certificate"),
    FieldSpec("fi_count", "Number of FI observations", N, None, "certificate"),
    FieldSpec("supply_csa", "Supply (meter tails) conductor csa", N, "mm²", "certificate"),
    FieldSpec("main_earthing_csa", "Main earthing conductor csa", N, "mm²", "certificate"),
    FieldSpec("main_bonding_csa", "Main protective bonding conductor csa", N, "mm²",
              "certificate"),
    FieldSpec("electrode_ra", "Earth electrode resistance RA", N, "Ω", "certificate"),
    FieldSpec("spd_fitted", "Surge protective device", T, None, "certificate"),
)

FIELDS: dict[str, FieldSpec] = {f.name: f for f in CIRCUIT_FIELDS}
BOARD: dict[str, FieldSpec] = {f.name: f for f in BOARD_FIELDS}
CERTIFICATE: dict[str, FieldSpec] = {f.name: f for f in CERTIFICATE_FIELDS}
