"""Checks across certificates: copied schedules, repeated readings, reused numbers, workload.

Each cross-certificate finding is a `checks.model.Finding` (with `related` naming the other
certificates) kept beside a `Match` holding the readings side by side, for the portfolio report.

    report = scan(corpus)                      # every certificate in the store
    found = check_certificate(corpus, cert_id)  # one certificate against the rest

Check ids (our own slugs, never reused):

* ``schedule-copied-from-other-address`` – the readings of a whole certificate, a board or a run
  of circuits match those of a certificate for another address (exactly, or ±1 in the last digit).
* ``schedule-repeats-earlier-at-address`` – the readings repeat an earlier certificate for the
  same address.
* ``certificate-number-reused`` – the same certificate number on another certificate.
* ``inspector-workload-implausible`` / ``instrument-workload-implausible`` – more circuits in one
  day for one inspector (or one test instrument) than can be tested.
"""

from __future__ import annotations

import math
import re
from collections import Counter, defaultdict
from dataclasses import dataclass, field

from checks.base import option
from checks.model import Finding, Severity
from corpus.similarity import Match, MatchOptions, compare_boards
from corpus.store import CertificateRow, Corpus

COPIED = "schedule-copied-from-other-address"
REPEATED = "schedule-repeats-earlier-at-address"
NUMBER_REUSED = "certificate-number-reused"
INSPECTOR_WORKLOAD = "inspector-workload-implausible"
INSTRUMENT_WORKLOAD = "instrument-workload-implausible"

_REF_COPY = ("common practice, no source: independent tests of different installations do not "
             "produce the same set of readings")


@dataclass(frozen=True)
class CrossCheckOptions:
    match: MatchOptions = field(default_factory=MatchOptions)
    minutes_per_circuit: float = option(
        10.0, "from memory: dead tests (continuity, insulation, polarity) and live tests (Zs, "
        "RCD) on one final circuit take an experienced inspector well over 10 minutes; a "
        "deliberately generous lower bound — set your own",
        "fewest minutes one circuit's tests can take")
    working_day_hours: float = option(
        10.0, "common practice, no source: a long day on site, travel not deducted",
        "hours of testing one inspector or instrument can do in a day")

    @property
    def max_circuits_per_day(self) -> int:
        return math.floor(self.working_day_hours * 60 / self.minutes_per_circuit)


@dataclass(frozen=True)
class CrossFinding:
    finding: Finding
    match: Match | None = None
    cert_id: int | None = None  # the stored certificate the finding is about (names can repeat)


@dataclass(frozen=True)
class PartyStats:
    """Statistics for one inspector or contractor."""

    party: str
    certificates: int
    tested_circuits: int
    share_with_findings: float  # share of certificates with a query-or-worse finding
    findings_per_circuit: float
    readings: int
    last_digit_counts: tuple[int, ...]  # how often each last printed digit 0–9 occurs
    last_digit_chi2: float  # against equal shares; 16.9 is the 5 % point for 9 d.f.
    share_last_digit_0_or_5: float  # about 0.2 when digits fall evenly
    zs_compared: int  # circuits with Zs, R1+R2 and Ze recorded
    share_zs_exactly_calculated: float  # Zs printed exactly as Ze + (R1+R2)


@dataclass
class CrossCheckReport:
    findings: list[CrossFinding] = field(default_factory=list)
    inspectors: list[PartyStats] = field(default_factory=list)
    contractors: list[PartyStats] = field(default_factory=list)


# --- copies ------------------------------------------------------------------------------------


def _describe(m: Match) -> str:
    """Subject of a copy finding, e.g. "The readings of board DB1 (71 of 71 identical)"."""
    what = {
        "whole": "All boards' readings",
        "board": "The readings of board " + ", ".join(sorted({b.board_a for b in m.blocks})),
        "run": "The readings of circuits "
        + ", ".join(f"{b.board_a} {b.first_a}–{b.last_a}" for b in m.blocks),
    }[m.kind]
    if m.exact:
        how = f"{m.equal} of {m.compared} identical"
    else:
        how = (f"{m.equal} identical and {m.near} within ±1 in the last digit, "
               f"of {m.compared}")
    return f"{what} ({how})"


def _match_finding(
    check_id: str, row: CertificateRow, other: CertificateRow, m: Match, message: str
) -> CrossFinding:
    first = m.blocks[0]
    circuit = None if m.kind != "run" else f"{first.first_a}–{first.last_a}"
    return CrossFinding(
        Finding(
            check_id=check_id, severity=Severity.QUERY, certificate=row.name, message=message,
            reference=_REF_COPY, board=first.board_a, circuit=circuit, field="readings",
            recorded=f"{m.equal} equal, {m.near} ±1 of {m.compared} readings",
            expected="independently measured readings",
            tolerance="equal or ±1 in the last printed digit", related=(other.name,),
        ),
        m,
    )


def _previous_at_address(corpus: Corpus, row: CertificateRow) -> CertificateRow | None:
    if not row.address_norm or not row.inspection_date:
        return None
    rows = corpus.certificates(
        "address_norm = ? AND inspection_date < ? AND id != ? "
        "AND id = (SELECT id FROM certificates c2 WHERE c2.address_norm = certificates.address_norm"
        " AND c2.inspection_date < ? ORDER BY c2.inspection_date DESC, c2.id DESC LIMIT 1)",
        (row.address_norm, row.inspection_date, row.id, row.inspection_date),
    )
    return rows[0] if rows else None


def _direct_match(corpus: Corpus, a: int, b: int, opts: MatchOptions) -> Match | None:
    """Compare two certificates board by board (no index), for the same-address check."""
    boards_a, boards_b = corpus.board_readings(a), corpus.board_readings(b)
    blocks = []
    for ba in boards_a:
        best = None
        for bb in boards_b:
            m = compare_boards(ba, bb, opts.max_offset)
            if m and m.compared >= opts.min_compared and m.share >= opts.match_share and (
                    best is None or m.share > best.share):
                best = m
        if best:
            blocks.append(best)
    if not blocks:
        return None
    kind = "whole" if len(blocks) == len([b for b in boards_a if b.circuits]) else "board"
    return Match(a, b, kind, tuple(blocks))


def check_certificate(
    corpus: Corpus, cert_id: int, options: CrossCheckOptions | None = None
) -> list[CrossFinding]:
    """Copies, repeats and a reused number for one stored certificate."""
    opts = options or CrossCheckOptions()
    row = corpus.certificate_row(cert_id)
    out: list[CrossFinding] = []
    repeated: set[int] = set()
    for m in corpus.similar_to(cert_id, opts.match):
        other = corpus.certificate_row(m.cert_b)
        if row.address_norm and row.address_norm == other.address_norm:
            earlier = (other.inspection_date or "") < (row.inspection_date or "")
            if earlier and other.cert_number != row.cert_number:
                repeated.add(other.id)
                out.append(_repeat_finding(row, other, m))
            continue  # reported on the later certificate, or the same certificate twice
        out.append(_match_finding(
            COPIED, row, other, m,
            f"{_describe(m)} match those of certificate {other.name} for "
            f"{other.address or 'another address'}"
            f" ({other.inspection_date or 'date unread'}, {other.inspector or 'inspector unread'}):"
            " ask how these readings were measured.",
        ))
    prev = _previous_at_address(corpus, row)
    if prev and prev.id not in repeated and prev.cert_number != row.cert_number:
        direct = _direct_match(corpus, cert_id, prev.id, opts.match)
        if direct:
            out.append(_repeat_finding(row, prev, direct))
    out.extend(_number_reused(corpus, row))
    return [CrossFinding(cf.finding, cf.match, cert_id) for cf in out]


def _repeat_finding(row: CertificateRow, other: CertificateRow, m: Match) -> CrossFinding:
    return _match_finding(
        REPEATED, row, other, m,
        f"{_describe(m)} repeat those of certificate {other.name} for this address dated "
        f"{other.inspection_date}: readings seldom come out the same years apart — ask whether "
        "the installation was retested.",
    )


def _number_reused(corpus: Corpus, row: CertificateRow) -> list[CrossFinding]:
    if not row.cert_number:
        return []
    others = corpus.certificates(
        "cert_number_norm = (SELECT cert_number_norm FROM certificates WHERE id = ?) AND id != ?",
        (row.id, row.id),
    )
    if not others:
        return []
    where = "; ".join(f"{o.address or 'address unread'} ({o.inspection_date or 'date unread'})"
                      for o in others)
    return [CrossFinding(Finding(
        check_id=NUMBER_REUSED, severity=Severity.QUERY, certificate=row.name,
        message=f"Certificate number {row.cert_number} is also used on {len(others)} other "
                f"certificate(s): {where}.",
        reference="common practice, no source: a certificate number identifies one report",
        field="cert_number", recorded=row.cert_number, expected="a number used once",
        related=tuple(o.name for o in others),
    ))]


# --- workload ----------------------------------------------------------------------------------


def workload(corpus: Corpus, options: CrossCheckOptions | None = None) -> list[CrossFinding]:
    """Days on which one inspector, or one instrument, signed more circuits than can be tested."""
    opts = options or CrossCheckOptions()
    limit = opts.max_circuits_per_day
    out = []
    for check_id, key, label in ((INSPECTOR_WORKLOAD, "inspector_norm", "inspector"),
                                 (INSTRUMENT_WORKLOAD, "instrument_norm", "instrument")):
        days = corpus.conn.execute(
            f"SELECT {key}, inspection_date, sum(n_tested) FROM certificates "
            f"WHERE {key} IS NOT NULL AND inspection_date IS NOT NULL "
            f"GROUP BY {key}, inspection_date HAVING sum(n_tested) > ?", (limit,),
        ).fetchall()
        for who, day, total in days:
            rows = corpus.certificates(f"{key} = ? AND inspection_date = ?", (who, day))
            shown = rows[0].inspector if label == "inspector" else rows[0].instrument_serial
            for r in rows:
                out.append(CrossFinding(Finding(
                    check_id=check_id, severity=Severity.QUERY, certificate=r.name,
                    message=f"{label.capitalize()} {shown} signed {total} tested circuits on "
                            f"{day} across {len(rows)} certificates; at "
                            f"{opts.minutes_per_circuit:g} min a circuit and "
                            f"{opts.working_day_hours:g} h a day at most {limit} can be tested.",
                    reference="from memory (minutes per circuit), see the options' sources",
                    field="inspection_date", recorded=f"{total} circuits on {day}",
                    expected=f"at most {limit} circuits a day",
                    tolerance=f"{opts.minutes_per_circuit:g} min per circuit, "
                              f"{opts.working_day_hours:g} h per day",
                    related=tuple(o.name for o in rows if o.id != r.id),
                ), cert_id=r.id))
    return out


# --- statistics per inspector and contractor ----------------------------------------------------

_DECIMALS = re.compile(r"[.,](\d+)")


def party_stats(corpus: Corpus, by: str = "inspector") -> list[PartyStats]:
    """Share of findings, last-digit preference and exactly-calculated Zs, per party."""
    if by not in ("inspector", "contractor"):
        raise ValueError("by must be 'inspector' or 'contractor'")
    conn = corpus.conn
    certs: dict[str, list[int]] = defaultdict(list)
    tested: Counter[str] = Counter()
    for who, cid, n in conn.execute(
            f"SELECT {by}, id, n_tested FROM certificates WHERE {by} IS NOT NULL"):
        certs[who].append(cid)
        tested[who] += n
    flagged = dict(conn.execute(
        f"SELECT c.{by}, count(DISTINCT f.cert_id) FROM findings f JOIN certificates c "
        f"ON c.id = f.cert_id WHERE f.severity >= ? AND f.preview = 0 GROUP BY c.{by}",
        (int(Severity.QUERY),)).fetchall())
    nfind = dict(conn.execute(
        f"SELECT c.{by}, count(*) FROM findings f JOIN certificates c ON c.id = f.cert_id "
        f"WHERE f.preview = 0 GROUP BY c.{by}").fetchall())
    digits: dict[str, list[int]] = defaultdict(lambda: [0] * 10)
    import json

    for who, text in conn.execute(
        f"SELECT c.{by}, r.readings FROM board_readings r JOIN certificates c ON c.id = r.cert_id "
        f"WHERE c.{by} IS NOT NULL"
    ):
        counts = digits[who]
        for _ref, rows in json.loads(text):
            for _f, mantissa, _d, _raw in rows:
                counts[mantissa % 10] += 1
    zs_n: Counter[str] = Counter()
    zs_calc: Counter[str] = Counter()
    for who, zs_raw, zs, r1r2, ze_board, ze_cert in conn.execute(
        f"SELECT c.{by}, k.zs_raw, k.zs_num, k.r1_r2_num, b.ze_num, c.ze_num FROM circuits k "
        f"JOIN boards b ON b.id = k.board_id JOIN certificates c ON c.id = k.cert_id "
        f"WHERE c.{by} IS NOT NULL AND k.zs_kind = 'number' AND k.r1_r2_kind = 'number'"
    ):
        ze = ze_board if ze_board is not None else ze_cert
        if ze is None:
            continue
        m = _DECIMALS.search(zs_raw)
        places = len(m.group(1)) if m else 0
        zs_n[who] += 1
        if abs(round(ze + r1r2, places) - zs) < 0.5 * 10**-places - 1e-9:
            zs_calc[who] += 1
    out = []
    for who in sorted(certs):
        counts = digits[who]
        n = sum(counts)
        chi2 = sum((c - n / 10) ** 2 / (n / 10) for c in counts) if n else 0.0
        out.append(PartyStats(
            party=who, certificates=len(certs[who]), tested_circuits=tested[who],
            share_with_findings=flagged.get(who, 0) / len(certs[who]),
            findings_per_circuit=nfind.get(who, 0) / tested[who] if tested[who] else 0.0,
            readings=n, last_digit_counts=tuple(counts), last_digit_chi2=round(chi2, 2),
            share_last_digit_0_or_5=(counts[0] + counts[5]) / n if n else 0.0,
            zs_compared=zs_n[who],
            share_zs_exactly_calculated=zs_calc[who] / zs_n[who] if zs_n[who] else 0.0,
        ))
    return out


def scan(corpus: Corpus, options: CrossCheckOptions | None = None) -> CrossCheckReport:
    """Every cross-certificate check over the whole store."""
    opts = options or CrossCheckOptions()
    report = CrossCheckReport()
    for row in corpus.certificates():
        report.findings.extend(check_certificate(corpus, row.id, opts))
    report.findings.extend(workload(corpus, opts))
    report.inspectors = party_stats(corpus, "inspector")
    report.contractors = party_stats(corpus, "contractor")
    return report
