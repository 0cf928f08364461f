"""Supply and bonding from the first page: earthing and bonding conductors, TT electrode."""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

from certvet.checks.base import CertificateCheck, fmt, option
from certvet.checks.catalogue.loop import earthing_of
from certvet.checks.model import Finding, Severity
from certvet.checks.registry import register
from certvet.checks.tables import load, table_54_7_min_cpc
from certvet.extractor.records import Certificate


def pme_min_bonding(neutral_csa: float) -> float:
    """Table 54.8: the minimum main bonding csa (copper) for a PME supply neutral csa."""
    for r in load("pme_bonding_table_54_8").rows:
        if r.num("neutral_min_mm2") < neutral_csa <= r.num("neutral_max_mm2"):
            return r.num("bonding_mm2")
    raise ValueError(f"no Table 54.8 row for {neutral_csa} mm²")


def _origin_earthing(cert: Certificate) -> str | None:
    return earthing_of(cert, cert.boards[0] if cert.boards else None) if not cert.text(
        "earthing") else earthing_of(cert)


@register
class MainEarthingConductorUndersized(CertificateCheck):
    """The main earthing conductor is smaller than Table 54.7 gives for the supply.

    What it checks:
    On a TN supply, where the form records the supply (meter tails) conductor csa and the
    main earthing conductor csa: the earthing conductor is at least the Table 54.7 minimum
    for that line csa (S up to 16 mm²: S; up to 35 mm²: 16 mm²; above: S/2). Not applicable
    on TT (the electrode conductor is sized differently) or when either size is not printed.

    Why it matters:
    The main earthing conductor carries the whole earth fault current of the installation;
    undersized, it can overheat or fuse before the supply's fuse clears the fault.

    Known false alarms:
    An earthing conductor sized by calculation (Reg 543.1.3) rather than by the table.

    Failing example:
    TN-C-S, tails 25 mm², main earthing conductor 10 mm².

    Passing example:
    TN-C-S, tails 25 mm², main earthing conductor 16 mm².

    Options:
    none.

    Reference:
    BS 7671:2018+A2:2022 Reg 542.3.1 and Table 54.7 (protective conductors of the same
    material as the line conductor).
    """

    id = "main-earthing-conductor-undersized"
    title = "Main earthing conductor smaller than Table 54.7"
    severity = Severity.BREACH
    reference = "BS 7671:2018+A2:2022 Reg 542.3.1, Table 54.7"
    basis = "published"
    group = "supply"

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        supply, earthing = cert.number("supply_csa"), cert.number("main_earthing_csa")
        system = _origin_earthing(cert)
        if supply is None or earthing is None or system is None or system == "TT":
            self.not_applicable("supply or earthing conductor size not printed, or TT")
            return None
        need = table_54_7_min_cpc(supply)
        if earthing >= need - 1e-9:
            return []
        return [self.make(cert, f"Main earthing conductor {fmt(earthing, 'mm²', 0)} for "
                          f"{fmt(supply, 'mm²', 0)} supply conductors; Table 54.7 gives "
                          f"{fmt(need, 'mm²', 0)}.", field="main_earthing_csa",
                          expected=f"≥ {fmt(need, 'mm²', 0)}")]


@register
class MainBondingConductorUndersized(CertificateCheck):
    """The main protective bonding conductor is smaller than the supply requires.

    What it checks:
    Where the form records the main bonding conductor csa: on a PME (TN-C-S) supply, at
    least the Table 54.8 figure for the supply neutral (taken as the recorded supply
    conductor csa: derived, single-phase tails carry equal line and neutral); on other
    systems, at least half the Table 54.7 earthing conductor csa and 6 mm², with no more
    than 25 mm² needed. Not applicable when the sizes needed are not printed.

    Why it matters:
    On PME the bonding carries part of the neutral current if the supply's neutral breaks;
    an undersized conductor can overheat where it runs through the building.

    Known false alarms:
    Three-phase supplies with a reduced neutral; a DNO asking for a larger size.

    Failing example:
    TN-C-S, tails 25 mm², main bonding 6 mm².

    Passing example:
    TN-C-S, tails 25 mm², main bonding 10 mm².

    Options:
    min_mm2: the smallest main bonding conductor on any system.
    max_needed_mm2: the largest size the half-earthing rule ever requires.

    Reference:
    BS 7671:2018+A2:2022 Reg 544.1.1 and Table 54.8 (PME conditions).
    """

    id = "main-bonding-conductor-undersized"
    title = "Main bonding conductor smaller than the supply requires"
    severity = Severity.BREACH
    reference = "BS 7671:2018+A2:2022 Reg 544.1.1, Table 54.8"
    basis = "published"
    group = "supply"

    @dataclass(frozen=True)
    class Options:
        min_mm2: float = option(6.0, "BS 7671:2018+A2:2022 Reg 544.1.1: not less than 6 mm²",
                                "smallest main bonding conductor (mm²)")
        max_needed_mm2: float = option(25.0, "BS 7671:2018+A2:2022 Reg 544.1.1: need not "
                                       "exceed 25 mm²", "largest size the rule requires (mm²)")

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        bonding, supply = cert.number("main_bonding_csa"), cert.number("supply_csa")
        system = _origin_earthing(cert)
        if bonding is None or supply is None or system is None:
            self.not_applicable("bonding or supply conductor size, or the earthing, not printed")
            return None
        if system == "TN-C-S":
            need, why = pme_min_bonding(supply), "Table 54.8 (PME)"
        else:
            half = table_54_7_min_cpc(supply) / 2
            need = min(max(half, self.options.min_mm2), self.options.max_needed_mm2)
            why = "Reg 544.1.1 (half the earthing conductor, at least 6 mm²)"
        if bonding >= need - 1e-9:
            return []
        return [self.make(cert, f"Main bonding {fmt(bonding, 'mm²', 0)} for "
                          f"{fmt(supply, 'mm²', 0)} supply conductors on {system}; {why} gives "
                          f"{fmt(need, 'mm²', 0)}.", field="main_bonding_csa",
                          expected=f"≥ {fmt(need, 'mm²', 0)}")]


@register
class TtElectrodeRaAboveZe(CertificateCheck):
    """TT: the electrode resistance RA recorded is above the loop impedance Ze.

    What it checks:
    On a TT installation where both are recorded: Ze (the loop through the installation's
    electrode) is not below RA (the electrode alone) by more than the tolerance. Where RA is
    recorded, the checks of RA × IΔn use it in place of Ze.

    Why it matters:
    The loop through the electrode includes the electrode; a loop below it means the two
    were measured on different electrodes, or one was not measured.

    Known false alarms:
    An electrode whose resistance changed between the two tests (rain).

    Failing example:
    TT, RA 140 Ω, Ze 96 Ω.

    Passing example:
    TT, RA 92 Ω, Ze 96 Ω.

    Options:
    tolerance_fraction: part of RA accepted as scatter between the two instruments.

    Reference:
    Common practice, no source (RA is one part of the TT fault loop; BS 7671:2018+A2:2022
    Reg 411.5.3 defines RA).
    """

    id = "tt-electrode-ra-above-ze"
    title = "TT: electrode RA above the loop Ze"
    severity = Severity.QUERY
    reference = "common practice, no source; BS 7671:2018+A2:2022 Reg 411.5.3 (RA)"
    basis = "common practice"
    group = "supply"

    @dataclass(frozen=True)
    class Options:
        tolerance_fraction: float = option(0.1, "common practice, no source: TT readings "
                                           "scatter by several ohms", "part of RA accepted")

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        ra = cert.number("electrode_ra")
        ze = cert.number("ze")
        if ze is None and cert.boards:
            ze = cert.boards[0].number("ze")
        if ra is None or ze is None or _origin_earthing(cert) != "TT":
            self.not_applicable("not TT, or RA or Ze not printed")
            return None
        if ze >= ra * (1 - self.options.tolerance_fraction) - 1e-9:
            return []
        return [self.make(cert, f"TT: Ze {fmt(ze, 'Ω', 0)} is below the electrode's RA "
                          f"{fmt(ra, 'Ω', 0)}; the loop includes the electrode.",
                          field="electrode_ra", expected=f"≤ {fmt(ze, 'Ω', 0)}")]
