"""Synthetic certificates (records, not PDFs) with planted copies and their ground truth.

Deterministic for a seed: `CertificateStream(seed)` yields the same certificates in the same
order every time, so a store of 1,000 is the first 1,000 of a store of 10,000. Every address,
name and number is invented. Readings follow rough domestic shapes (Ze of a TN-C-S or TN-S
supply, R1+R2 by circuit type, Zs ≈ Ze + R1+R2 plus measuring scatter, over-range insulation
readings, RCD times) — common practice, no source; they only need to look like schedules.

Planted faults (each recorded in `truth`):

* ``whole``   – every board copied to a certificate at another address;
* ``nudged``  – the same, with about 40 % of readings moved ±1 in the last printed digit;
* ``board``   – one board copied into a two-board certificate at another address;
* ``run``     – a run of `run_length` consecutive circuits pasted into another board;
* ``repeat``  – a later certificate for the *same* address repeating the earlier readings;
* ``retest``  – a later certificate for the same address with fresh readings (must not link);
* ``dup_number`` – a certificate number reused on a certificate at another address;
* ``overload``   – one inspector signing far more circuits in one day than can be tested.
"""

from __future__ import annotations

import hashlib
import random
from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Any

from certvet.extractor.fields import BOARD, CERTIFICATE, FIELDS
from certvet.extractor.records import Board, Cell, Certificate, Circuit
from certvet.extractor.tokens import parse_value

_STREETS = (
    "Ashwick Lane", "Bramblecote Road", "Cinder Row", "Dunmere Close", "Elderfold Way",
    "Fennick Street", "Gorsebank Avenue", "Hollin Crescent", "Ivygate Terrace", "Juniper Walk",
    "Kestrelmoor Drive", "Larchwell Gardens", "Mossgrove Place", "Nettlebed Court",
    "Oakhythe Road", "Pellow Street", "Quarrymead Lane", "Rookery Fold", "Saltings Way",
    "Tanyard Close", "Underhill Row", "Vetch Lane", "Wharfside Mews", "Yarrowfield Road",
)
# Invented data reads as invented (the convention of fixtures/generator/fictional.py): postcodes
# in the QX area, which does not exist; firms marked "(fictional)"; serials with the neutral "ZX-".
_TOWNS = (("Fernmouth", "QX"), ("Castlebridge", "QX"), ("Lowmoor", "QX"), ("Harwick Vale", "QX"),
          ("Stennet", "QX"), ("Brackwater", "QX"))
_FIRST = ("Alex", "Sam", "Jordan", "Priya", "Tomasz", "Ifeoma", "Gareth", "Mei", "Declan", "Rosa")
_LAST = ("Harrow", "Quill", "Marden", "Okafor", "Lindqvist", "Pemberton", "Rusk", "Tallis",
         "Vane", "Whitlock", "Ashdown", "Brennick")
_FIRMS = tuple(f"{name} (fictional)" for name in (
    "Brightline Electrical", "Volt & Vane", "Coppergate Services", "Northspur Testing",
    "Keystone Wiring Co", "Meridian Electrical", "Fuse & Fettle", "Greenbank Contracting"))

# circuit type → (description, device type, rating, live csa, cpc csa, R1+R2 range Ω, rcd?)
_TYPES: tuple[tuple[str, str, str, str, str, tuple[float, float], bool], ...] = (
    ("Lighting", "B", "6", "1.0", "1.0", (0.35, 1.60), True),
    ("Sockets ring", "B", "32", "2.5", "1.5", (0.15, 0.75), True),
    ("Cooker", "B", "32", "6.0", "2.5", (0.10, 0.45), True),
    ("Immersion", "B", "16", "2.5", "1.5", (0.15, 0.60), True),
    ("Shower", "B", "40", "10.0", "4.0", (0.08, 0.30), True),
    ("Smoke alarms", "B", "6", "1.0", "1.0", (0.40, 1.50), True),
    ("Sockets radial", "B", "20", "2.5", "1.5", (0.20, 0.80), True),
    ("Outside sockets", "B", "16", "2.5", "1.5", (0.30, 1.10), True),
)


@dataclass(frozen=True)
class Planted:
    """One planted fault: `copy` is the certificate that carries it, `source` where it came from."""

    kind: str
    copy: str  # certificate name (number)
    source: str | None = None
    copy_sha256: str = ""  # names can repeat (dup_number); the file hash never does
    source_sha256: str | None = None


@dataclass
class Truth:
    planted: list[Planted] = field(default_factory=list)

    def pairs(self, kinds: tuple[str, ...] = ("whole", "nudged", "board", "run")) -> set[
        frozenset[str]
    ]:
        """Planted links as pairs of file hashes."""
        return {frozenset((p.copy_sha256, p.source_sha256)) for p in self.planted
                if p.kind in kinds and p.source_sha256 is not None}


def _cell(specs: dict[str, Any], name: str, text: str) -> Cell:
    spec = specs[name]
    return Cell(name, parse_value(text, spec.kind, spec.unit))


def _f(x: float, places: int = 2) -> str:
    return f"{x:.{places}f}"


class CertificateStream:
    """An endless, deterministic stream of certificates; `truth` grows as they are drawn."""

    def __init__(self, seed: int = 1, copy_rate: float = 0.03, run_length: int = 5) -> None:
        self.rng = random.Random(seed)
        self.seed = seed
        self.copy_rate = copy_rate
        self.run_length = run_length
        self.truth = Truth()
        self.count = 0
        self._history: list[Certificate] = []  # recent certificates, copy sources
        self._overload_done = False

    # --- people and places ---------------------------------------------------------------
    def _address(self) -> str:
        r = self.rng
        town, pc = r.choice(_TOWNS)
        return (f"{r.randint(1, 240)} {r.choice(_STREETS)}, {town}, "
                f"{pc}{r.randint(1, 19)} {r.randint(1, 9)}{r.choice('ABDEFGHJLNPQRSTUWXYZ')}"
                f"{r.choice('ABDEFGHJLNPQRSTUWXYZ')}")

    def _people(self) -> dict[str, str]:
        # inspector pool grows with the stream so workload per inspector stays plausible
        r = self.rng
        pool = max(12, self.count // 250)
        i = r.randrange(pool)
        firm = _FIRMS[i % len(_FIRMS)]
        name = f"{_FIRST[i % len(_FIRST)]} {_LAST[(i // len(_FIRST)) % len(_LAST)]} #{i:04d}"
        return {"inspector": name, "contractor": firm, "instrument_serial": f"ZX-{70000 + i}"}

    def _date(self) -> str:
        day = self.rng.randrange(730)
        y, rest = (2023, day) if day < 365 else (2024, day - 365)
        month_days = (31, 28 if y == 2023 else 29, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31)
        m = 0
        while rest >= month_days[m]:
            rest -= month_days[m]
            m += 1
        return f"{rest + 1:02d}/{m + 1:02d}/{y}"

    # --- schedules -----------------------------------------------------------------------
    def _board(self, ref: str, ze: float, n: int) -> Board:
        r = self.rng
        b = Board(ref=ref, page=1)
        for name, text in (("board_ref", ref), ("location", r.choice(("Hall", "Kitchen",
                           "Garage", "Under stairs", "Utility"))), ("ze", _f(ze)),
                           ("ipf", _f(r.uniform(0.8, 2.6), 1)), ("earthing", "TN-C-S")):
            b.cells[name] = _cell(BOARD, name, text)
        zs_places = r.choice((2, 2, 2, 1))
        for i in range(n):
            desc, dev, rating, live, cpc, (lo, hi), rcd = _TYPES[
                0 if i == 0 else r.randrange(len(_TYPES))]
            row: dict[str, str] = {
                "circuit_ref": str(i + 1), "description": desc, "device_type": dev,
                "rating": rating, "live_csa": live, "cpc_csa": cpc, "polarity": "✓",
                "ir_test_voltage": "500",
            }
            r1r2 = r.uniform(lo, hi)
            if desc == "Sockets ring":
                r1 = r.uniform(0.2, 0.9)
                r2 = r1 * r.uniform(1.60, 1.72)
                row["r1"], row["rn"], row["r2"] = _f(r1), _f(r1 * r.uniform(0.97, 1.03)), _f(r2)
                r1r2 = (r1 + r2) / 4 + r.uniform(-0.01, 0.01)
            row["r1_r2"] = _f(r1r2)
            row["zs"] = _f(ze + r1r2 + r.uniform(-0.03, 0.09), zs_places)
            row["ir_live_live"] = ">999" if r.random() < 0.5 else _f(r.uniform(20, 999), 0)
            row["ir_live_earth"] = ">999" if r.random() < 0.5 else _f(r.uniform(20, 999), 0)
            if rcd:
                row["rcd_idn"] = "30"
                row["rcd_type"] = "A"
                row["rcd_time"] = _f(r.uniform(14, 38), 1)
                if r.random() < 0.6:
                    row["rcd_time_5x"] = _f(r.uniform(7, 19), 1)
                row["rcd_button"] = "✓"
            c = Circuit(board=ref, ref=row["circuit_ref"], page=1)
            for name, text in row.items():
                c.cells[name] = _cell(FIELDS, name, text)
            b.circuits.append(c)
        return b

    def _certificate(self, boards: int | None = None, address: str | None = None,
                     number: str | None = None, date: str | None = None,
                     people: dict[str, str] | None = None) -> Certificate:
        r = self.rng
        self.count += 1
        people = people or self._people()
        number = number or f"SYN-{self.seed}-{self.count:07d}"
        cert = Certificate(source=f"{number}.pdf",
                           sha256=hashlib.sha256(f"{self.seed}:{self.count}".encode()).hexdigest(),
                           layout="synthetic", engine="synthetic", page_count=3)
        ze = r.uniform(0.12, 0.75)
        values = {"cert_number": number, "address": address or self._address(),
                  "inspection_date": date or self._date(), "report_type": "EICR",
                  "ze": _f(ze), "earthing": "TN-C-S", **people}
        for name, text in values.items():
            cert.cells[name] = _cell(CERTIFICATE, name, text)
        nb = boards if boards is not None else r.choices((1, 2, 3), (80, 15, 5))[0]
        for j in range(nb):
            cert.boards.append(self._board(f"DB{j + 1}", ze if j == 0 else ze + r.uniform(
                0.02, 0.15), r.randint(6, 14)))
        return cert

    # --- planted copies ------------------------------------------------------------------
    def _copy_readings(self, src: Board, dst_ref: str, nudge: float = 0.0) -> Board:
        b = Board(ref=dst_ref, cells=dict(src.cells), page=1)
        b.cells["board_ref"] = _cell(BOARD, "board_ref", dst_ref)
        for c in src.circuits:
            nc = Circuit(board=dst_ref, ref=c.ref, cells=dict(c.cells), page=1)
            if nudge:
                for name in ("r1", "rn", "r2", "r1_r2", "zs", "ir_live_live", "ir_live_earth",
                             "rcd_time", "rcd_time_5x"):
                    v = c.value(name)
                    if v.is_number and self.rng.random() < nudge:
                        nc.cells[name] = _cell(FIELDS, name, _nudge(v.raw, self.rng))
            b.circuits.append(nc)
        return b

    def _planted(self, kind: str) -> Certificate:
        r = self.rng
        src = r.choice(self._history)
        if kind in ("whole", "nudged"):
            cert = self._certificate(boards=0)
            for b in src.boards:
                cert.boards.append(self._copy_readings(b, b.ref, 0.4 if kind == "nudged" else 0))
        elif kind == "board":
            cert = self._certificate(boards=1)
            cert.boards.append(self._copy_readings(r.choice(src.boards), "DB2"))
        elif kind == "run":
            cert = self._certificate(boards=1)
            sb = max(src.boards, key=lambda b: len(b.circuits))
            n = self.run_length
            i = r.randrange(len(sb.circuits) - n + 1)
            db = cert.boards[0]
            while len(db.circuits) < n + 2:
                db.circuits.extend(self._board("DB1", 0.3, 3).circuits)
            j = r.randrange(len(db.circuits) - n + 1)
            for t in range(n):
                c = sb.circuits[i + t]
                ref = db.circuits[j + t].ref
                db.circuits[j + t] = Circuit("DB1", ref, dict(c.cells), page=1)
                db.circuits[j + t].cells["circuit_ref"] = _cell(FIELDS, "circuit_ref", ref)
        elif kind in ("repeat", "retest"):
            cert = self._certificate(boards=0 if kind == "repeat" else None,
                                     address=src.text("address"),
                                     date=_later(src.text("inspection_date")))
            if kind == "repeat":
                for b in src.boards:
                    cert.boards.append(self._copy_readings(b, b.ref))
        elif kind == "dup_number":
            cert = self._certificate(number=src.text("cert_number"))
        else:  # pragma: no cover - programming error
            raise ValueError(kind)
        self.truth.planted.append(Planted(kind, cert.name, src.name, cert.sha256, src.sha256))
        return cert

    def _overload(self) -> list[Certificate]:
        people = {"inspector": "Quentin Overbury #9999", "contractor": "Rapidcert (fictional)",
                  "instrument_serial": "ZX-99999"}
        certs = [self._certificate(boards=1, date="14/03/2024", people=people) for _ in range(7)]
        for c in certs:
            self.truth.planted.append(Planted("overload", c.name, None, c.sha256))
        return certs

    def __iter__(self) -> Iterator[Certificate]:
        kinds = ("whole", "nudged", "board", "run", "repeat", "retest", "dup_number")
        pending: list[Certificate] = []
        while True:
            if pending:
                yield pending.pop(0)
                continue
            if self.count >= 40 and not self._overload_done:
                self._overload_done = True
                pending = self._overload()
                continue
            if self.count >= 20 and self.rng.random() < self.copy_rate:
                # planted certificates are never themselves copied: no chains of copies
                yield self._planted(kinds[self.rng.randrange(len(kinds))])
                continue
            cert = self._certificate()
            self._history.append(cert)
            if len(self._history) > 2000:
                del self._history[: len(self._history) - 2000]
            yield cert

    def take(self, n: int) -> list[Certificate]:
        out = []
        for cert in self:
            out.append(cert)
            if len(out) == n:
                return out
        return out  # pragma: no cover - the stream never ends


def _nudge(raw: str, rng: random.Random) -> str:
    digits = [i for i, ch in enumerate(raw) if ch.isdigit()]
    last = digits[-1]
    value = int(raw[last])
    step = rng.choice((-1, 1))
    if value == 0:
        step = 1
    elif value == 9:
        step = -1
    return raw[:last] + str(value + step) + raw[last + 1:]


def _later(date: str) -> str:
    d, m, y = date.split("/")
    return f"{d}/{m}/{int(y) + 3}"


def generate(n: int, seed: int = 1, **kwargs: Any) -> tuple[list[Certificate], Truth]:
    stream = CertificateStream(seed, **kwargs)
    certs = stream.take(n)
    shas = {c.sha256 for c in certs}
    stream.truth.planted = [p for p in stream.truth.planted if p.copy_sha256 in shas]
    return certs, stream.truth
