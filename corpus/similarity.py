"""Find certificates whose readings are the same, or nearly so, without comparing all pairs.

A lookup touches only candidates: boards sharing an exact block fingerprint (index hit on
`block_fingerprints.hash`) or at least one LSH band (index hit on `lsh_bands.band_hash`).
Each candidate is then verified by comparing aligned readings one by one: a reading is
`equal`, `near` (±1 in the last printed digit) or `different`, and a block matches when the
share of equal-or-near readings reaches `match_share` over at least `min_compared` readings.

Index-time parameters (`IndexParams`) are written to the store's `meta` table when it is
created; a store built with other parameters is refused rather than silently half-matched.
"""

from __future__ import annotations

import sqlite3
from collections import defaultdict
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field

from certvet.checks.catalogue.across import ReadingsMatchOptions
from certvet.corpus.fingerprints import (
    BoardReadings,
    BoardSignature,
    CircuitReadings,
    LshParams,
    relation,
    signatures,
)


@dataclass(frozen=True)
class IndexParams:
    """Fixed when a store is created (kept in its `meta` table)."""

    run_length: int = 4
    min_block_readings: int = 8
    lsh: LshParams = field(default_factory=LshParams)

    def as_text(self) -> str:
        return (f"run_length={self.run_length} min_block_readings={self.min_block_readings} "
                f"{self.lsh.as_text()}")


# When two certificates' readings count as the same: the options of the readings-match checks
# (declared with them in checks/catalogue/across.py, set in a rule profile).
MatchOptions = ReadingsMatchOptions


# --- matches -----------------------------------------------------------------------------------


@dataclass(frozen=True)
class PairedReading:
    """One reading of each side, side by side."""

    field: str
    circuit_a: str
    circuit_b: str
    raw_a: str | None
    raw_b: str | None
    relation: str  # "equal", "near", "different"


@dataclass(frozen=True)
class BlockMatch:
    """A block of aligned circuits (a whole board or a run) whose readings agree."""

    board_a: str
    board_b: str
    first_a: str
    last_a: str
    first_b: str
    last_b: str
    circuits: int
    readings: tuple[PairedReading, ...]
    board_position_b: int = 0

    @property
    def compared(self) -> int:
        return len(self.readings)

    @property
    def equal(self) -> int:
        return sum(1 for r in self.readings if r.relation == "equal")

    @property
    def near(self) -> int:
        return sum(1 for r in self.readings if r.relation == "near")

    @property
    def share(self) -> float:
        return (self.equal + self.near) / self.compared if self.compared else 0.0


@dataclass(frozen=True)
class Match:
    """Certificate A (the one looked up) against certificate B (already in the store)."""

    cert_a: int | None  # None when A is not in the store
    cert_b: int
    kind: str  # "whole" (every board), "board" (one or more boards), "run" (circuits only)
    blocks: tuple[BlockMatch, ...]

    @property
    def compared(self) -> int:
        return sum(b.compared for b in self.blocks)

    @property
    def equal(self) -> int:
        return sum(b.equal for b in self.blocks)

    @property
    def near(self) -> int:
        return sum(b.near for b in self.blocks)

    @property
    def share(self) -> float:
        return (self.equal + self.near) / self.compared if self.compared else 0.0

    @property
    def exact(self) -> bool:
        return self.equal == self.compared


# --- comparison of aligned readings ----------------------------------------------------------


def _pair_circuits(a: CircuitReadings, b: CircuitReadings) -> list[PairedReading]:
    fa, fb = a.by_field(), b.by_field()
    out = []
    for f in fa.keys() | fb.keys():
        ra, rb = fa.get(f), fb.get(f)
        rel = relation(ra, rb) if ra and rb else "different"
        out.append(PairedReading(f, a.ref, b.ref, ra.raw if ra else None,
                                 rb.raw if rb else None, rel))
    out.sort(key=lambda p: p.field)
    return out


def _share(pairs: Sequence[PairedReading]) -> float:
    return sum(1 for p in pairs if p.relation != "different") / len(pairs) if pairs else 0.0


def compare_boards(
    a: BoardReadings, b: BoardReadings, max_offset: int
) -> BlockMatch | None:
    """Best alignment of two boards (circuit i of A against i+offset of B)."""
    best: tuple[float, int, list[PairedReading], int, int] | None = None
    for off in range(-max_offset, max_offset + 1):
        pairs: list[PairedReading] = []
        idx = [(i, i + off) for i in range(len(a.circuits)) if 0 <= i + off < len(b.circuits)]
        for i, j in idx:
            pairs.extend(_pair_circuits(a.circuits[i], b.circuits[j]))
        # readings on circuits left unaligned count against the match
        unaligned = sum(len(c.readings) for i, c in enumerate(a.circuits)
                        if not 0 <= i + off < len(b.circuits))
        unaligned += sum(len(c.readings) for j, c in enumerate(b.circuits)
                         if not 0 <= j - off < len(a.circuits))
        total = len(pairs) + unaligned
        share = sum(1 for p in pairs if p.relation != "different") / total if total else 0.0
        if idx and (best is None or share > best[0]):
            best = (share, off, pairs, idx[0][0], idx[-1][0])
    if best is None:
        return None
    _, off, pairs, i0, i1 = best
    return BlockMatch(a.ref, b.ref, a.circuits[i0].ref, a.circuits[i1].ref,
                      b.circuits[i0 + off].ref, b.circuits[i1 + off].ref, i1 - i0 + 1,
                      tuple(pairs), b.position)


def extend_run(
    a: BoardReadings, b: BoardReadings, i: int, j: int, match_share: float
) -> BlockMatch:
    """Grow an aligned run around circuit i of A / j of B while each circuit pair agrees."""
    def ok(x: int, y: int) -> bool:
        return (0 <= x < len(a.circuits) and 0 <= y < len(b.circuits)
                and _share(_pair_circuits(a.circuits[x], b.circuits[y])) >= match_share)

    lo = 0
    while ok(i - lo - 1, j - lo - 1):
        lo += 1
    hi = 0
    while ok(i + hi + 1, j + hi + 1):
        hi += 1
    i0, i1, j0, j1 = i - lo, i + hi, j - lo, j + hi
    pairs: list[PairedReading] = []
    for t in range(i1 - i0 + 1):
        pairs.extend(_pair_circuits(a.circuits[i0 + t], b.circuits[j0 + t]))
    return BlockMatch(a.ref, b.ref, a.circuits[i0].ref, a.circuits[i1].ref,
                      b.circuits[j0].ref, b.circuits[j1].ref, i1 - i0 + 1, tuple(pairs),
                      b.position)


# --- the index in SQLite ------------------------------------------------------------------------


def build_signatures(boards: Iterable[BoardReadings], params: IndexParams) -> list[BoardSignature]:
    return signatures(boards, params.lsh, params.run_length, params.min_block_readings)


def index_boards(
    conn: sqlite3.Connection, cert_id: int, rows: Sequence[tuple[int, BoardSignature]]
) -> None:
    """Write the signatures of a certificate's boards (inside the caller's transaction)."""
    conn.executemany(
        "INSERT INTO board_readings (board_id, cert_id, n_readings, readings) VALUES (?,?,?,?)",
        [(bid, cert_id, s.readings.n_readings, s.readings.to_json()) for bid, s in rows],
    )
    conn.executemany(
        "INSERT OR IGNORE INTO block_fingerprints (hash, board_id, start, length, kind) "
        "VALUES (?,?,?,?,?)",
        [(fp.hash, bid, fp.start, fp.length, fp.kind) for bid, s in rows for fp in s.blocks],
    )
    conn.executemany(
        "INSERT OR IGNORE INTO lsh_bands (band_hash, board_id) VALUES (?,?)",
        [(h, bid) for bid, s in rows for h in s.bands],
    )


def stored_boards(conn: sqlite3.Connection, cert_id: int) -> list[BoardReadings]:
    rows = conn.execute(
        "SELECT b.ref, b.position, r.readings FROM board_readings r JOIN boards b "
        "ON b.id = r.board_id WHERE r.cert_id = ? ORDER BY b.position", (cert_id,),
    ).fetchall()
    return [BoardReadings.from_json(ref, pos, text) for ref, pos, text in rows]


def _in(n: int) -> str:
    return ",".join("?" * n)


def find_similar(
    conn: sqlite3.Connection,
    sigs: Sequence[BoardSignature],
    params: IndexParams,
    options: MatchOptions | None = None,
    exclude_cert: int | None = None,
) -> list[Match]:
    """Certificates in the store whose readings match the given boards' readings."""
    opts = options or MatchOptions()
    score: dict[int, int] = defaultdict(int)  # candidate board → hits
    lsh_pairs: set[tuple[int, int]] = set()  # (query board index, candidate board)
    run_hits: set[tuple[int, int, int, int]] = set()  # (query board, q start, cand board, start)

    band_owner: dict[int, list[int]] = defaultdict(list)
    for qi, s in enumerate(sigs):
        for h in s.bands:
            band_owner[h].append(qi)
    if band_owner:
        keys = list(band_owner)
        for h, bid in conn.execute(
            f"SELECT band_hash, board_id FROM lsh_bands WHERE band_hash IN ({_in(len(keys))})",
            keys,
        ):
            score[bid] += 1
            for qi in band_owner[h]:
                lsh_pairs.add((qi, bid))
    fp_owner: dict[int, list[tuple[int, int, str]]] = defaultdict(list)
    for qi, s in enumerate(sigs):
        for fp in s.blocks:
            fp_owner[fp.hash].append((qi, fp.start, fp.kind))
    if fp_owner:
        keys = list(fp_owner)
        for h, bid, start, _kind in conn.execute(
            "SELECT hash, board_id, start, kind FROM block_fingerprints "
            f"WHERE hash IN ({_in(len(keys))})", keys,
        ):
            score[bid] += 100  # an exact block outranks any number of band hits
            for qi, qstart, qkind in fp_owner[h]:
                if qkind == "board":
                    lsh_pairs.add((qi, bid))
                else:
                    run_hits.add((qi, qstart, bid, start))
    if not score:
        return []

    chosen = sorted(score, key=lambda b: -score[b])[: opts.max_candidates]
    info: dict[int, tuple[int, BoardReadings]] = {}
    for bid, cid, ref, pos, text in conn.execute(
        "SELECT r.board_id, r.cert_id, b.ref, b.position, r.readings FROM board_readings r "
        f"JOIN boards b ON b.id = r.board_id WHERE r.board_id IN ({_in(len(chosen))})",
        chosen,
    ):
        if cid != exclude_cert:
            info[bid] = (cid, BoardReadings.from_json(ref, pos, text))

    # certificate → [(query board, match)]
    blocks: dict[int, list[tuple[int, BlockMatch]]] = defaultdict(list)
    matched_pairs: set[tuple[int, int]] = set()
    for qi, bid in sorted(lsh_pairs):
        if bid not in info:
            continue
        cid, other = info[bid]
        m = compare_boards(sigs[qi].readings, other, opts.max_offset)
        if m and m.compared >= opts.min_compared and m.share >= opts.match_share:
            blocks[cid].append((qi, m))
            matched_pairs.add((qi, bid))
    seen_runs: set[tuple[int, int, str, str]] = set()
    for qi, qstart, bid, start in sorted(run_hits):
        if bid not in info or (qi, bid) in matched_pairs:
            continue
        cid, other = info[bid]
        m = extend_run(sigs[qi].readings, other, qstart, start, opts.match_share)
        key = (qi, bid, m.first_a, m.first_b)
        if key in seen_runs:
            continue
        seen_runs.add(key)
        if m.compared >= opts.min_compared and m.circuits >= params.run_length:
            blocks[cid].append((qi, m))
    if not blocks:
        return []

    # how many boards with enough readings each matched certificate has, to tell a whole copy
    eligible_q = {i for i, s in enumerate(sigs)
                  if s.readings.n_readings >= params.min_block_readings}
    cids = list(blocks)
    eligible_b = dict(conn.execute(
        "SELECT cert_id, count(*) FROM board_readings WHERE n_readings >= ? AND cert_id IN "
        f"({_in(len(cids))}) GROUP BY cert_id", [params.min_block_readings, *cids],
    ).fetchall())
    out = []
    for cid, found in blocks.items():
        board_blocks = [(qi, m) for qi, m in found
                        if m.circuits == len(sigs[qi].readings.circuits)
                        or m.compared >= 0.9 * sigs[qi].readings.n_readings]
        boards_a = {qi for qi, _ in board_blocks}
        boards_b = {m.board_position_b for _, m in board_blocks}
        if board_blocks and boards_a >= eligible_q and len(boards_b) >= eligible_b.get(cid, 0):
            kind = "whole"
        elif board_blocks:
            kind = "board"
        else:
            kind = "run"
        found.sort(key=lambda t: (t[0], t[1].first_a))
        out.append(Match(None, cid, kind, tuple(m for _, m in found)))
    out.sort(key=lambda m: (-m.share, m.cert_b))
    return out
