"""Reference tables in ``checks/data/*.csv``, loaded once and cached.

Every CSV starts with ``#`` lines naming its source, edition and units, then a header row;
every row carries a ``source`` column ("BS 7671:2018+A2:2022 Table 41.3", "IEC 60228 Table 2",
"from memory: …", "common practice, no source"). Checks ask this module, never the files.
"""

from __future__ import annotations

import csv
import io
import re
from dataclasses import dataclass
from functools import cache
from pathlib import Path

from certvet.checks.devices import Device
from certvet.extractor.tokens import ticked_choice

DATA_DIR = Path(__file__).parent / "data"

CURRENT = "2018"  # BS 7671:2018+A2:2022
PRE_2015 = "2008"  # BS 7671:2008 before Amendment 3 (230 V, no Cmin)
SIXTEENTH = "2001"  # BS 7671:2001, 16th edition (240 V)
EDITION_NAMES = {
    CURRENT: "BS 7671:2018+A2:2022",
    PRE_2015: "BS 7671:2008 (pre-2015, no Cmin)",
    SIXTEENTH: "BS 7671:2001 (16th edition, 240 V)",
}


@dataclass(frozen=True)
class TableRow:
    values: dict[str, str]

    def __getitem__(self, key: str) -> str:
        return self.values[key]

    def num(self, key: str) -> float:
        return float(self.values[key])

    @property
    def source(self) -> str:
        return self.values.get("source", "")

    @property
    def from_memory(self) -> bool:
        return self.source.lower().startswith("from memory")


@dataclass(frozen=True)
class Table:
    name: str
    comments: tuple[str, ...]
    rows: tuple[TableRow, ...]


@cache
def load(name: str) -> Table:
    """One table by file stem, e.g. ``load("conductor_resistance")``."""
    path = DATA_DIR / f"{name}.csv"
    text = path.read_text(encoding="utf-8")
    comments = tuple(ln[1:].strip() for ln in text.splitlines() if ln.startswith("#"))
    body = "\n".join(ln for ln in text.splitlines() if ln.strip() and not ln.startswith("#"))
    reader = csv.DictReader(io.StringIO(body))
    rows = tuple(TableRow({k: (v or "").strip() for k, v in r.items()}) for r in reader)
    return Table(name, comments, rows)


# --- conductors -------------------------------------------------------------------------------


@cache
def _resistances() -> dict[float, float]:
    return {r.num("csa_mm2"): r.num("mohm_per_m") for r in load("conductor_resistance").rows}


def conductor_mohm_per_m(csa_mm2: float | None) -> float | None:
    """Copper conductor resistance at 20 °C in mΩ/m (IEC 60228 Table 2), or None."""
    if csa_mm2 is None:
        return None
    return _resistances().get(round(float(csa_mm2), 2))


# --- maximum Zs -------------------------------------------------------------------------------


@dataclass(frozen=True)
class MaxZs:
    """A tabulated maximum Zs and where it comes from."""

    ohm: float
    source: str
    from_memory: bool
    disconnection_s: float | None  # None for circuit-breakers (the same for 0.4 s and 5 s)


@cache
def _breakers() -> dict[tuple[str, str, float, str], TableRow]:
    return {
        (r["edition"], r["curve"], r.num("rating_a"), r["disconnection_s"]): r
        for r in load("max_zs_breakers").rows
    }


@cache
def _fuses() -> dict[tuple[str, str, float, float], TableRow]:
    return {
        (r["edition"], r["standard"], r.num("rating_a"), r.num("disconnection_s")): r
        for r in load("max_zs_fuses").rows
    }


def _time_column(disconnection_s: float) -> float:
    """The tabulated time that applies: 5 s for 5 s, else 0.4 s (the stricter, for 1 s too)."""
    return 5.0 if disconnection_s >= 5 - 1e-9 else 0.4


def max_zs(device: Device, disconnection_s: float = 0.4, edition: str = CURRENT) -> MaxZs | None:
    """The tabulated maximum Zs for a device, or None when the table has no row for it.

    Circuit-breakers and RCBOs: Table 41.3; types B and C have one value for 0.4 s and 5 s,
    type D at 5 s uses Ia = 10 × In. Fuses: Table 41.2 for 0.4 s, Table 41.4 for 5 s. A time
    between 0.4 s and 5 s (1 s, a TT distribution circuit) uses the 0.4 s value; no table
    applies below 0.4 s.
    """
    if device.rating is None or disconnection_s < 0.4 - 1e-9:
        return None
    t = _time_column(disconnection_s)
    if device.is_breaker and device.curve:
        rows = _breakers()
        row = rows.get((edition, device.curve, float(device.rating), "any"))
        if row is None:
            row = rows.get((edition, device.curve, float(device.rating), f"{t:g}"))
        if row is None:
            return None
        timed = None if row["disconnection_s"] == "any" else t
        return MaxZs(row.num("max_zs_ohm"), row.source, row.from_memory, timed)
    if device.is_fuse:
        frow = _fuses().get((edition, device.family.value, float(device.rating), t))
        if frow is None:
            return None
        return MaxZs(frow.num("max_zs_ohm"), frow.source, frow.from_memory, t)
    return None


def fuse_points(device: Device, edition: str = CURRENT) -> list[tuple[float, float]]:
    """(current Ia in A, time in s) points of a fuse's characteristic from its tabulated
    maxima: Ia = Cmin × U0 / Zs (derived, Cmin 0.95, U0 230 V), for 0.4 s and 5 s."""
    if not device.is_fuse or device.rating is None:
        return []
    out = []
    for t in (0.4, 5.0):
        row = _fuses().get((edition, device.family.value, float(device.rating), t))
        if row is not None:
            out.append((0.95 * 230.0 / row.num("max_zs_ohm"), t))
    return out


@cache
def _resolutions() -> list[tuple[float, float]]:
    return sorted((r.num("range_max_ohm"), r.num("resolution_ohm"))
                  for r in load("loop_resolution").rows)


def loop_resolution(ohm: float) -> float:
    """The resolution a loop tester shows a reading of this size at (loop_resolution.csv)."""
    for top, res in _resolutions():
        if ohm <= top + 1e-9:
            return res
    return _resolutions()[-1][1]


# --- disconnection times, declared Ze, factors -------------------------------------------------


EARTHING_CHOICES = ("TN-C-S", "TN-S", "TT", "TN-C", "PME", "TNCS", "TNS")


def normalise_earthing(text: str) -> str | None:
    """"TN-C-S", "TNCS", "PME" → "TN-C-S"; "TN-S" → "TN-S"; "TT" → "TT"; else None.

    A tick-box line printing every system ("TN-S ☐ TN-C-S ☑ TT ☐") gives the ticked one,
    and None when which one is ticked cannot be told.
    """
    named = [c for c in ("TN-C-S", "TN-S", "TT", "TN-C", "PME")
             if re.search(r"(?<![\w-])" + re.escape(c) + r"(?![\w-])", text, re.IGNORECASE)]
    if len(named) > 1 or any(ch in text for ch in "☐□☑☒"):
        choice, _ = ticked_choice(text, EARTHING_CHOICES)
        if choice is None:
            return None
        text = choice
    s = text.upper().replace(" ", "").replace("_", "-").replace("–", "-")
    compact = s.replace("-", "")
    if compact in ("TNCS", "PME", "PNB") or "TNCS" in compact or "PME" in compact:
        return "TN-C-S"
    if compact in ("TNS",) or compact.startswith("TNS"):
        return "TN-S"
    if compact == "TT" or compact.startswith("TT"):
        return "TT"
    if compact == "TNC":
        return "TN-C"
    return None


def max_disconnection_time(system: str, circuit: str, u0_v: float = 230.0) -> float | None:
    """Table 41.1 / Regs 411.3.2.3-4: system "TN" or "TT", circuit "final" or "distribution"."""
    for r in load("disconnection_times").rows:
        if r["system"] == system and r["circuit"] == circuit:
            if r.num("u0_min_v") < u0_v <= r.num("u0_max_v"):
                return r.num("max_time_s")
    return None


def declared_ze(earthing: str) -> float | None:
    for r in load("declared_ze").rows:
        if r["earthing"] == earthing:
            return r.num("ze_ohm")
    return None


def factor(name: str) -> float:
    for r in load("temperature_factors").rows:
        if r["name"] == name:
            return r.num("factor")
    raise KeyError(f"no factor {name!r} in temperature_factors.csv")


def rcd_max_ra(idn_ma: float) -> float | None:
    """Table 41.5 maximum RA for an RCD of the given IΔn, or None when not tabulated."""
    for r in load("rcd_ra_limits").rows:
        if abs(r.num("idn_ma") - idn_ma) < 1e-9:
            return r.num("max_ra_ohm")
    return None


# --- cables and protective conductors (added for checks.catalogue.devices_cables) ------------


def cable_capacity(csa_mm2: float | None) -> TableRow | None:
    """Table 4D5 method C row (Iz, flat twin and earth, clipped direct) for a live csa, or None."""
    if csa_mm2 is None:
        return None
    for r in load("cable_capacity_4d5").rows:
        if abs(r.num("csa_mm2") - float(csa_mm2)) < 1e-9:
            return r
    return None


def cpc_k(insulation: str = "thermoplastic_70c") -> TableRow:
    """Table 54.3 row holding k for a copper cpc in a cable with this insulation."""
    for r in load("cpc_k_values").rows:
        if r["insulation"] == insulation:
            return r
    raise KeyError(f"no k for {insulation!r} in cpc_k_values.csv")


def table_54_7_min_cpc(line_csa_mm2: float) -> float:
    """The minimum cpc csa of Table 54.7 (same material) for a line conductor csa."""
    for r in load("cpc_table_54_7").rows:
        if r.num("line_min_mm2") < line_csa_mm2 <= r.num("line_max_mm2"):
            if r["rule"] == "same":
                return float(line_csa_mm2)
            if r["rule"] == "fixed":
                return r.num("cpc_mm2")
            return float(line_csa_mm2) / 2
    raise ValueError(f"no Table 54.7 row for {line_csa_mm2} mm²")
