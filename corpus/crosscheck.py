"""The cross-certificate checks, run: copied schedules, repeated readings, reused numbers,
workload.

The checks themselves (id, title, severity, reference, options, documentation) are declared in
``checks/catalogue/across.py`` and set in a rule profile like every other check; this module
runs them over the store. Each finding is a `checks.model.Finding` about one stored certificate
(`CrossFinding.cert_id`), naming the other certificates involved (`others`, by store id; the
store keys them by content hash), with the `Match` holding the readings side by side.

    report = scan(corpus)                          # every certificate in the store
    found = check_certificate(corpus, cert_id)     # one certificate against the rest

A copy is reported on both certificates, each naming the other; the earlier (by inspection
date) is named as the likely source.
"""

from __future__ import annotations

import json
import re
from collections import Counter, defaultdict
from dataclasses import dataclass, field

from certvet.checks.base import CorpusCheck
from certvet.checks.catalogue.across import (
    CertificateNumberReused,
    InspectorWorkloadImplausible,
    InstrumentWorkloadImplausible,
    ReadingsMatchOptions,
    ScheduleCopiedFromOtherAddress,
    ScheduleRepeatsEarlierAtAddress,
    WorkloadOptions,
)
from certvet.checks.model import Finding, Severity
from certvet.checks.profile import DEFAULT_PROFILE, Profile
from certvet.corpus.similarity import Match, compare_boards
from certvet.corpus.store import CertificateRow, Corpus, severity_at_least

COPIED = ScheduleCopiedFromOtherAddress.id
REPEATED = ScheduleRepeatsEarlierAtAddress.id
NUMBER_REUSED = CertificateNumberReused.id
INSPECTOR_WORKLOAD = InspectorWorkloadImplausible.id
INSTRUMENT_WORKLOAD = InstrumentWorkloadImplausible.id
CROSS_CHECKS: tuple[type[CorpusCheck], ...] = (
    ScheduleCopiedFromOtherAddress, ScheduleRepeatsEarlierAtAddress, CertificateNumberReused,
    InspectorWorkloadImplausible, InstrumentWorkloadImplausible)


def active(profile: Profile | None, cls: type[CorpusCheck]) -> CorpusCheck | None:
    """The check as the profile sets it (options, severity), or None when it is disabled."""
    prof = profile or DEFAULT_PROFILE
    if not prof.settings(cls.id).enabled:
        return None
    check = prof.instantiate(cls)
    assert isinstance(check, CorpusCheck)
    return check


def workload_limit(profile: Profile | None = None) -> int:
    """Most tested circuits one inspector can sign in a day under this profile."""
    check = (profile or DEFAULT_PROFILE).instantiate(InspectorWorkloadImplausible)
    opts: WorkloadOptions = check.options
    return opts.max_circuits_per_day


@dataclass(frozen=True)
class CrossFinding:
    finding: Finding
    match: Match | None = None
    cert_id: int | None = None  # the stored certificate the finding is about (names can repeat)
    others: tuple[int, ...] = ()  # the other stored certificates involved


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


def likely_source(row: CertificateRow, other: CertificateRow) -> str:
    """Which of two certificates with the same readings came first: the likely source."""
    here, there = row.inspection_date, other.inspection_date
    if here and there and here < there:
        return f"this certificate is the earlier ({here}): the likely source"
    if here and there and there < here:
        return f"certificate {other.name} is the earlier ({there}): the likely source"
    return "which came first is not known (same date, or a date unread)"


def _match_finding(
    check: CorpusCheck, row: CertificateRow, other: CertificateRow, m: Match, message: str
) -> CrossFinding:
    first = m.blocks[0]
    circuit = None if m.kind != "run" else f"{first.first_a}–{first.last_a}"
    return CrossFinding(
        Finding(
            check_id=check.id, severity=check.effective_severity, certificate=row.name,
            message=message, reference=check.reference, board=first.board_a, circuit=circuit,
            field="readings", recorded=f"{m.equal} equal, {m.near} ±1 of {m.compared} readings",
            expected="independently measured readings",
            tolerance="equal or ±1 in the last printed digit", related=(other.name,),
        ),
        m, row.id, (other.id,),
    )


def _adjacent_at_address(corpus: Corpus, row: CertificateRow, later: bool
                         ) -> CertificateRow | None:
    """The certificate for the same address just before (or after) this one."""
    if not row.address_norm or not row.inspection_date:
        return None
    cmp, order = (">", "ASC") if later else ("<", "DESC")
    rows = corpus.certificates(
        f"address_norm = ? AND inspection_date {cmp} ? AND id != ? "
        "AND id = (SELECT id FROM certificates c2 WHERE c2.address_norm = certificates.address_norm"
        f" AND c2.inspection_date {cmp} ? ORDER BY c2.inspection_date {order}, c2.id {order} "
        "LIMIT 1)",
        (row.address_norm, row.inspection_date, row.id, row.inspection_date),
    )
    return rows[0] if rows else None


def _direct_match(corpus: Corpus, a: int, b: int, opts: ReadingsMatchOptions) -> Match | None:
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


def _lookup_options(*checks: CorpusCheck | None) -> ReadingsMatchOptions | None:
    """One index lookup serves both readings-match checks: the loosest of their settings."""
    opts: list[ReadingsMatchOptions] = [c.options for c in checks if c is not None]
    if not opts:
        return None
    return ReadingsMatchOptions(
        match_share=min(o.match_share for o in opts),
        min_compared=min(o.min_compared for o in opts),
        max_candidates=max(o.max_candidates for o in opts),
        max_offset=max(o.max_offset for o in opts))


def _passes(check: CorpusCheck | None, m: Match) -> bool:
    if check is None:
        return False
    o: ReadingsMatchOptions = check.options
    return m.share >= o.match_share and m.compared >= o.min_compared


def check_certificate(
    corpus: Corpus, cert_id: int, profile: Profile | None = None
) -> list[CrossFinding]:
    """Copies, repeats and a reused number for one stored certificate."""
    copied = active(profile, ScheduleCopiedFromOtherAddress)
    repeat = active(profile, ScheduleRepeatsEarlierAtAddress)
    row = corpus.certificate_row(cert_id)
    out: list[CrossFinding] = []
    repeated: set[int] = set()
    lookup = _lookup_options(copied, repeat)
    for m in corpus.similar_to(cert_id, lookup) if lookup else ():
        other = corpus.certificate_row(m.cert_b)
        if row.address_norm and row.address_norm == other.address_norm:
            if other.cert_number != row.cert_number and _passes(repeat, m):
                assert repeat is not None
                repeated.add(other.id)
                out.append(_repeat_finding(repeat, row, other, m))
            continue  # the same certificate twice: a reused number, not a repeat
        if _passes(copied, m):
            assert copied is not None
            out.append(_match_finding(
                copied, row, other, m,
                f"{_describe(m)} match those of certificate {other.name} for "
                f"{other.address or 'another address'}"
                f" ({other.inspection_date or 'date unread'}, "
                f"{other.inspector or 'inspector unread'}); {likely_source(row, other)}."
                " Ask how these readings were measured.",
            ))
    if repeat is not None:
        for later in (False, True):
            adj = _adjacent_at_address(corpus, row, later)
            if adj and adj.id not in repeated and adj.cert_number != row.cert_number:
                direct = _direct_match(corpus, cert_id, adj.id, repeat.options)
                if direct:
                    repeated.add(adj.id)
                    out.append(_repeat_finding(repeat, row, adj, direct))
    numbers = active(profile, CertificateNumberReused)
    if numbers is not None:
        out.extend(_number_reused(numbers, corpus, row))
    return out


def _repeat_finding(check: CorpusCheck, row: CertificateRow, other: CertificateRow, m: Match
                    ) -> CrossFinding:
    return _match_finding(
        check, row, other, m,
        f"{_describe(m)} repeat those of certificate {other.name} for this address dated "
        f"{other.inspection_date}; {likely_source(row, other)}. Readings seldom come out the "
        "same years apart: ask whether the installation was retested.",
    )


def _number_reused(check: CorpusCheck, corpus: Corpus, row: CertificateRow
                   ) -> list[CrossFinding]:
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
        check_id=check.id, severity=check.effective_severity, certificate=row.name,
        message=f"Certificate number {row.cert_number} is also used on {len(others)} other "
                f"certificate(s): {where}.",
        reference=check.reference,
        field="cert_number", recorded=row.cert_number, expected="a number used once",
        related=tuple(o.name for o in others),
    ), None, row.id, tuple(o.id for o in others))]


# --- workload ----------------------------------------------------------------------------------


def workload(corpus: Corpus, profile: Profile | None = None) -> list[CrossFinding]:
    """Days on which one inspector, or one instrument, signed more circuits than can be tested."""
    out = []
    for cls, key, label in ((InspectorWorkloadImplausible, "inspector_norm", "inspector"),
                            (InstrumentWorkloadImplausible, "instrument_norm", "instrument")):
        check = active(profile, cls)
        if check is None:
            continue
        opts: WorkloadOptions = check.options
        limit = opts.max_circuits_per_day
        days = corpus.rows(
            f"SELECT {key}, inspection_date, sum(n_tested) FROM certificates "
            f"WHERE {key} IS NOT NULL AND inspection_date IS NOT NULL "
            f"GROUP BY {key}, inspection_date HAVING sum(n_tested) > ?", (limit,),
        )
        for who, day, total in days:
            rows = corpus.certificates(f"{key} = ? AND inspection_date = ?", (who, day))
            shown = rows[0].inspector if label == "inspector" else rows[0].instrument_serial
            for r in rows:
                out.append(CrossFinding(Finding(
                    check_id=check.id, severity=check.effective_severity, certificate=r.name,
                    message=f"{label.capitalize()} {shown} signed {total} tested circuits on "
                            f"{day} across {len(rows)} certificates; at "
                            f"{opts.minutes_per_circuit:g} min a circuit and "
                            f"{opts.working_day_hours:g} h a day at most {limit} can be tested.",
                    reference=check.reference,
                    field="inspection_date", recorded=f"{total} circuits on {day}",
                    expected=f"at most {limit} circuits a day",
                    tolerance=f"{opts.minutes_per_circuit:g} min per circuit, "
                              f"{opts.working_day_hours:g} h per day",
                    related=tuple(o.name for o in rows if o.id != r.id),
                ), cert_id=r.id, others=tuple(o.id for o in rows if o.id != r.id)))
    return out


# --- statistics per inspector and contractor ----------------------------------------------------

_DECIMALS = re.compile(r"[.,](\d+)")


def party_stats(corpus: Corpus, by: str = "inspector") -> list[PartyStats]:
    """Share of findings, last-digit preference and exactly-calculated Zs, per party."""
    if by not in ("inspector", "contractor"):
        raise ValueError("by must be 'inspector' or 'contractor'")
    certs: dict[str, list[int]] = defaultdict(list)
    tested: Counter[str] = Counter()
    for who, cid, n in corpus.rows(
            f"SELECT {by}, id, n_tested FROM certificates WHERE {by} IS NOT NULL"):
        certs[who].append(cid)
        tested[who] += n
    at_least_query = severity_at_least(Severity.QUERY)
    flagged = dict(corpus.rows(
        f"SELECT c.{by}, count(DISTINCT f.cert_id) FROM findings f JOIN certificates c "
        f"ON c.id = f.cert_id WHERE f.{at_least_query} AND f.preview = 0 GROUP BY c.{by}"))
    nfind = dict(corpus.rows(
        f"SELECT c.{by}, count(*) FROM findings f JOIN certificates c ON c.id = f.cert_id "
        f"WHERE f.preview = 0 GROUP BY c.{by}"))
    digits: dict[str, list[int]] = defaultdict(lambda: [0] * 10)
    for who, text in corpus.rows(
        f"SELECT c.{by}, r.readings FROM board_readings r JOIN certificates c ON c.id = r.cert_id "
        f"WHERE c.{by} IS NOT NULL"
    ):
        counts = digits[who]
        for _ref, rows in json.loads(text):
            for _f, mantissa, _d, _raw in rows:
                counts[mantissa % 10] += 1
    zs_n: Counter[str] = Counter()
    zs_calc: Counter[str] = Counter()
    for who, zs_raw, zs, r1r2, ze_board, ze_cert in corpus.rows(
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


def scan(corpus: Corpus, profile: Profile | None = None) -> CrossCheckReport:
    """Every cross-certificate check over the whole store."""
    report = CrossCheckReport()
    for row in corpus.certificates():
        report.findings.extend(check_certificate(corpus, row.id, profile))
    report.findings.extend(workload(corpus, profile))
    report.inspectors = party_stats(corpus, "inspector")
    report.contractors = party_stats(corpus, "contractor")
    return report


@dataclass
class CrossPhase:
    """What one cross-certificate phase found and stored."""

    findings: list[CrossFinding]
    scope: set[int]  # certificates checked: the batch's and every one a copy links them to
    changed: set[int]  # certificates with cross findings now or stored before (verdict to redo)


def run_cross_checks(corpus: Corpus, cert_ids: set[int], profile: Profile | None = None
                     ) -> CrossPhase:
    """The cross-certificate checks for these stored certificates, stored in the findings
    table (stage corpus) in place of the ones stored before. A copy links two certificates:
    the other one is checked too, so the finding is on both."""
    found: dict[int, list[CrossFinding]] = {}
    todo = sorted(cert_ids)
    while todo:
        cid = todo.pop()
        if cid in found:
            continue
        found[cid] = check_certificate(corpus, cid, profile)
        todo.extend(o for cf in found[cid] for o in cf.others
                    if cf.finding.check_id in (COPIED, REPEATED) and o not in found)
    scope = set(found)
    days = [cf for cf in workload(corpus, profile) if cf.cert_id in scope]
    every = [cf for cfs in found.values() for cf in cfs] + days
    every.sort(key=lambda cf: (cf.finding.certificate, cf.cert_id or 0, cf.finding.check_id,
                               cf.finding.related, cf.finding.message))
    before = scope & {r[0] for r in corpus.rows(
        "SELECT DISTINCT cert_id FROM findings WHERE stage = 'corpus'")}
    corpus.replace_cross_findings(scope, [(cf.cert_id, cf.finding, cf.others) for cf in every
                                          if cf.cert_id is not None])
    return CrossPhase(every, scope, before | {cf.cert_id for cf in every
                                              if cf.cert_id is not None})
