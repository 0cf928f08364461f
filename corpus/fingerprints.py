"""Signatures of a certificate's measured readings, for finding copied schedules.

Only *measured* readings take part (continuity, insulation, Zs, RCD times): design values
(device, rating, CSA) legitimately repeat across an estate of identical houses, measured values
do not. Each reading is kept as printed: an integer mantissa and its number of decimals, so
"0.42" is (42, 2) and a copy nudged by one in the last place is (41, 2) or (43, 2).

Two kinds of signature are built per board:

* exact fingerprints (`block_fingerprints`): a hash of the whole board's readings, and a hash
  of every run of `k` consecutive circuits' readings. Identical blocks hash alike, so a
  lookup is an index hit.
* a MinHash (datasketch) over shingles of readings quantised on a coarse grid laid twice at
  offset positions, so a value moved by one in the last digit keeps at least one of its two
  grid cells (see `quantise`). The MinHash is cut into LSH bands whose hashes are stored.

Everything here is pure computation; `corpus.similarity` stores and queries it.
"""

from __future__ import annotations

import functools
import hashlib
import json
import math
import re
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field
from typing import Any

from datasketch import MinHash

from certvet.extractor.records import Board, Certificate, Value, ValueKind
from certvet.extractor.tokens import normalise_text

# Measured readings, in the order a schedule prints them.
READING_FIELDS: tuple[str, ...] = (
    "r1", "rn", "r2", "r1_r2", "r1_rn", "r2_only",
    "ir_live_live", "ir_live_earth", "zs", "rcd_time", "rcd_time_5x",
)

_NUM_RE = re.compile(r"\d+(?:[.,]\d+)?|[.,]\d+")


@dataclass(frozen=True)
class Reading:
    """One measured reading as printed: value = mantissa × 10^-decimals."""

    field: str
    mantissa: int
    decimals: int
    raw: str

    @property
    def value(self) -> float:
        return float(self.mantissa / 10**self.decimals)

    def scaled(self, decimals: int) -> int:
        return int(self.mantissa * 10 ** (decimals - self.decimals))


def relation(a: Reading, b: Reading) -> str:
    """'equal' (same value), 'near' (±1 in the last printed digit, same decimals) or 'different'."""
    d = max(a.decimals, b.decimals)
    if a.scaled(d) == b.scaled(d):
        return "equal"
    if a.decimals == b.decimals and abs(a.mantissa - b.mantissa) == 1:
        return "near"
    return "different"


def reading_from_value(name: str, v: Value) -> Reading | None:
    """A plain printed number becomes a Reading; bounds (">999"), N/A, ticks, blanks do not."""
    if v.kind is not ValueKind.NUMBER or v.number is None:
        return None
    m = _NUM_RE.search(normalise_text(v.raw))
    if not m:
        return None
    text = m.group(0).replace(",", ".")
    whole, _, frac = text.partition(".")
    decimals = len(frac)
    mantissa = int((whole or "0") + frac)
    printed = mantissa / 10**decimals
    if printed and abs(v.number - printed) > 1e-9 * max(1.0, abs(printed)):
        # the unit was converted (e.g. "0.5 s" stored as 500 ms): move the decimal point
        shift = round(math.log10(v.number / printed))
        decimals -= shift
        if decimals < 0:
            mantissa *= 10 ** (-decimals)
            decimals = 0
    return Reading(name, mantissa, decimals, v.raw.strip())


@dataclass(frozen=True)
class CircuitReadings:
    ref: str
    readings: tuple[Reading, ...]  # in READING_FIELDS order

    def by_field(self) -> dict[str, Reading]:
        return {r.field: r for r in self.readings}


@dataclass(frozen=True)
class BoardReadings:
    """A board's circuits that carry at least one measured reading, in schedule order.

    Spare ways and circuits with nothing measured are left out: they say nothing about whether
    a schedule was copied, and a run of blank rows would otherwise match every certificate.
    """

    ref: str
    position: int
    circuits: tuple[CircuitReadings, ...]

    @property
    def n_readings(self) -> int:
        return sum(len(c.readings) for c in self.circuits)

    def to_json(self) -> str:
        return json.dumps(
            [[c.ref, [[r.field, r.mantissa, r.decimals, r.raw] for r in c.readings]]
             for c in self.circuits],
            separators=(",", ":"), ensure_ascii=False,
        )

    @classmethod
    def from_json(cls, ref: str, position: int, text: str) -> BoardReadings:
        circuits = tuple(
            CircuitReadings(cref, tuple(Reading(f, m, d, raw) for f, m, d, raw in rows))
            for cref, rows in json.loads(text)
        )
        return cls(ref, position, circuits)


def board_readings(board: Board, position: int) -> BoardReadings:
    circuits = []
    for c in board.circuits:
        rs = tuple(r for f in READING_FIELDS if (r := reading_from_value(f, c.value(f))))
        if rs:
            circuits.append(CircuitReadings(c.ref, rs))
    return BoardReadings(board.ref, position, tuple(circuits))


def certificate_readings(cert: Certificate) -> list[BoardReadings]:
    return [board_readings(b, i) for i, b in enumerate(cert.boards)]


# --- exact fingerprints ---------------------------------------------------------------------


def hash64(data: bytes) -> int:
    """A signed 64-bit hash (fits an SQLite INTEGER)."""
    return int.from_bytes(hashlib.blake2b(data, digest_size=8).digest(), "big", signed=True)


def _circuit_key(c: CircuitReadings) -> str:
    # value-normalised: "0.5" and "0.50" are the same reading
    return ";".join(f"{r.field}={r.value!r}" for r in c.readings)


@dataclass(frozen=True)
class BlockFingerprint:
    hash: int
    kind: str  # "board" or "run"
    start: int  # index into BoardReadings.circuits
    length: int


def block_fingerprints(
    br: BoardReadings, k: int, min_readings: int
) -> list[BlockFingerprint]:
    """The whole board's fingerprint and one per run of `k` consecutive circuits.

    A block counts only when it holds at least `min_readings` readings, so a few lone
    ">999"-style or blank rows never make a match.
    """
    keys = [_circuit_key(c) for c in br.circuits]
    sizes = [len(c.readings) for c in br.circuits]
    out: list[BlockFingerprint] = []
    if keys and sum(sizes) >= min_readings:
        out.append(BlockFingerprint(hash64(("B|" + "|".join(keys)).encode()), "board", 0,
                                    len(keys)))
    for i in range(len(keys) - k + 1):
        if sum(sizes[i:i + k]) >= min_readings:
            h = hash64(("R|" + "|".join(keys[i:i + k])).encode())
            out.append(BlockFingerprint(h, "run", i, k))
    return out


# --- MinHash over quantised shingles ----------------------------------------------------------

GRID = 4  # grid width in units of the last printed digit


def quantise(r: Reading, offset: int) -> int:
    """Grid cell of a reading on grid `offset` (0 or 1); grid 1 is shifted by half a cell.

    Two readings one apart in the last digit straddle a cell boundary on at most one of the two
    grids (the boundaries of grid 0 sit at multiples of 4, those of grid 1 at 2 mod 4), so a
    nudged value still shares a cell with the original on the other grid.
    """
    return (r.mantissa + offset * (GRID // 2)) // GRID


def shingles(br: BoardReadings) -> set[bytes]:
    """Pairs of readings, quantised on both grids (four tokens per pair):

    * two neighbouring readings of one circuit (r1+r2 with Zs, Zs with the RCD time…);
    * the same reading in two neighbouring circuits.

    Single values are left out: a lone "0.45 Ω" is common to thousands of houses, a pair
    much less so.
    """
    out: set[bytes] = set()

    def add(kind: str, a: Reading, b: Reading) -> None:
        for oa in (0, 1):
            for ob in (0, 1):
                out.add(
                    f"{kind}|{a.field}.{a.decimals}.{oa}:{quantise(a, oa)}|"
                    f"{b.field}.{b.decimals}.{ob}:{quantise(b, ob)}".encode()
                )

    prev: dict[str, Reading] = {}
    for c in br.circuits:
        rs = c.readings
        for a, b in zip(rs, rs[1:], strict=False):
            add("c", a, b)
        cur = c.by_field()
        for f, r in cur.items():
            if f in prev:
                add("n", prev[f], r)
        prev = cur
    return out


@dataclass(frozen=True)
class LshParams:
    num_perm: int = 128
    bands: int = 32
    rows: int = 4
    seed: int = 7

    def __post_init__(self) -> None:
        if self.bands * self.rows > self.num_perm:
            raise ValueError("bands × rows must not exceed num_perm")

    def as_text(self) -> str:
        return (f"minhash num_perm={self.num_perm} bands={self.bands} rows={self.rows} "
                f"seed={self.seed} grid={GRID}")


@functools.cache
def _permutations(num_perm: int, seed: int) -> Any:
    # drawing the permutations is a fixed cost per MinHash: draw once per parameter set
    template = MinHash(num_perm=num_perm, seed=seed)
    return template.permutations, template.scheme


def minhashes(sets: Sequence[set[bytes]], params: LshParams) -> list[MinHash]:
    if not sets:
        return []
    perms, scheme = _permutations(params.num_perm, params.seed)
    out: list[MinHash] = MinHash.bulk([sorted(s) for s in sets], num_perm=params.num_perm,
                                      seed=params.seed, permutations=perms, scheme=scheme)
    return out


def band_hashes(mh: MinHash, params: LshParams) -> list[int]:
    hv = mh.hashvalues
    out = []
    for j in range(params.bands):
        chunk = hv[j * params.rows:(j + 1) * params.rows]
        out.append(hash64(j.to_bytes(2, "big") + chunk.tobytes()))
    return out


@dataclass
class BoardSignature:
    readings: BoardReadings
    blocks: list[BlockFingerprint] = field(default_factory=list)
    bands: list[int] = field(default_factory=list)  # empty when the board has too few shingles


def signatures(
    boards: Iterable[BoardReadings], params: LshParams, k: int, min_readings: int
) -> list[BoardSignature]:
    sigs = [BoardSignature(br, block_fingerprints(br, k, min_readings)) for br in boards]
    eligible = [s for s in sigs if s.readings.n_readings >= min_readings]
    sets = [shingles(s.readings) for s in eligible]
    for s, sh, mh in zip(eligible, sets, minhashes(sets, params), strict=True):
        if sh:
            s.bands = band_hashes(mh, params)
    return sigs
