"""Cross-certificate checks: planted copies found, independent certificates never linked."""

from __future__ import annotations

from pathlib import Path

import pytest
from casekit import make_certificate

from certvet.checks.profile import DEFAULT_PROFILE, CheckSettings, Profile
from certvet.checks.runner import CheckResults
from certvet.corpus import Corpus
from certvet.corpus.crosscheck import (
    COPIED,
    INSPECTOR_WORKLOAD,
    INSTRUMENT_WORKLOAD,
    NUMBER_REUSED,
    REPEATED,
    party_stats,
    scan,
    workload,
)
from certvet.corpus.fingerprints import GRID, Reading, quantise, relation
from certvet.corpus.synthetic import CertificateStream, generate

EMPTY = CheckResults(DEFAULT_PROFILE)


@pytest.fixture(scope="module")
def planted(tmp_path_factory: pytest.TempPathFactory):
    certs, truth = generate(500, seed=21, copy_rate=0.12)
    path = tmp_path_factory.mktemp("corpus") / "c.sqlite"
    corpus = Corpus(path)
    with corpus.batch():
        for c in certs:
            corpus.add(c, EMPTY)
    report = scan(corpus)
    yield corpus, certs, truth, report
    corpus.close()


def _sha(corpus: Corpus, name: str) -> set[str]:
    return {r.sha256 for r in corpus.certificates("name = ?", (name,))}


def _linked(corpus: Corpus, report, check_id: str) -> set[frozenset[str]]:
    pairs = set()
    for cf in report.findings:
        if cf.finding.check_id == check_id:
            a = corpus.certificate_row(cf.match.cert_a).sha256
            b = corpus.certificate_row(cf.match.cert_b).sha256
            pairs.add(frozenset((a, b)))
    return pairs


def test_every_planted_copy_is_found(planted) -> None:
    corpus, _, truth, report = planted
    kinds = {p.kind for p in truth.planted}
    assert {"whole", "nudged", "board", "run", "repeat", "retest", "dup_number"} <= kinds
    copies = truth.pairs(("whole", "nudged", "board", "run"))
    found = _linked(corpus, report, COPIED)
    assert copies <= found, f"missed {len(copies - found)} of {len(copies)}"


def test_no_independent_certificate_is_linked(planted) -> None:
    corpus, _, truth, report = planted
    # two copies taken from one source are rightly linked to each other too
    groups: dict[str, set[str]] = {}
    for p in truth.planted:
        if p.source_sha256 and p.kind in ("whole", "nudged", "board", "run", "repeat"):
            groups.setdefault(p.source_sha256, {p.source_sha256}).add(p.copy_sha256)
    allowed = {frozenset((a, b)) for g in groups.values() for a in g for b in g if a != b}
    found = _linked(corpus, report, COPIED) | _linked(corpus, report, REPEATED)
    assert found - allowed == set()


def test_match_kinds_and_side_by_side_readings(planted) -> None:
    corpus, _, truth, report = planted
    by_pair = {}
    for cf in report.findings:
        if cf.finding.check_id == COPIED:
            a = corpus.certificate_row(cf.match.cert_a).sha256
            b = corpus.certificate_row(cf.match.cert_b).sha256
            by_pair[(a, b)] = cf
    for p in truth.planted:
        cf = by_pair.get((p.copy_sha256, p.source_sha256))
        if p.kind == "nudged":
            assert cf.match.kind == "whole" and cf.match.near > 0 and not cf.match.exact
            nudged = [r for b in cf.match.blocks for r in b.readings if r.relation == "near"]
            assert nudged and all(r.raw_a != r.raw_b for r in nudged)
        elif p.kind == "whole":
            assert cf.match.kind == "whole" and cf.match.exact
        elif p.kind == "board":
            assert cf.match.kind == "board"
        elif p.kind == "run":
            assert cf.match.kind in ("run", "board")
            assert all(b.circuits >= 4 for b in cf.match.blocks)
        if cf is not None:
            assert cf.finding.related == (p.source,)
            assert cf.finding.certificate == p.copy


def test_repeat_and_retest_at_same_address(planted) -> None:
    corpus, _, truth, report = planted
    repeated = _linked(corpus, report, REPEATED)
    for p in truth.planted:
        pair = frozenset((p.copy_sha256, p.source_sha256))
        if p.kind == "repeat":
            assert pair in repeated
        elif p.kind == "retest":
            assert pair not in repeated


def test_reused_numbers_found(planted) -> None:
    corpus, _, truth, report = planted
    flagged = {cf.finding.certificate for cf in report.findings
               if cf.finding.check_id == NUMBER_REUSED}
    expected = {p.copy for p in truth.planted if p.kind == "dup_number"}
    assert expected and expected == flagged


def test_planted_overload_day_found(planted) -> None:
    corpus, _, truth, report = planted
    over = {p.copy for p in truth.planted if p.kind == "overload"}
    for check_id in (INSPECTOR_WORKLOAD, INSTRUMENT_WORKLOAD):
        flagged = {cf.finding.certificate for cf in report.findings
                   if cf.finding.check_id == check_id}
        assert flagged == over


def _cert(number: str, address: str, date: str, readings: list[tuple[str, str, str]],
          inspector: str = "Rosa Vane", serial: str = "ZX-5", ze: str = "0.30"):
    circuits = [{"circuit_ref": str(i + 1), "r1_r2": a, "zs": b, "rcd_time": c}
                for i, (a, b, c) in enumerate(readings)]
    cert = make_certificate(circuits, board={"ze": ze}, certificate={
        "cert_number": number, "address": address, "inspection_date": date,
        "inspector": inspector, "instrument_serial": serial,
        "contractor": "Northspur Testing (fictional)"})
    cert.sha256 = f"{number:0>64}"[-64:]
    cert.source = f"{number}.pdf"
    return cert


READINGS = [("0.41", "0.74", "23.1"), ("0.88", "1.19", "19.6"), ("0.23", "0.55", "27.9"),
            ("0.67", "0.99", "21.4"), ("1.02", "1.33", "18.2"), ("0.35", "0.68", "30.5")]
FRESH = [("0.44", "0.81", "17.3"), ("0.79", "1.12", "25.2"), ("0.27", "0.61", "22.6"),
         ("0.62", "0.95", "28.8"), ("1.10", "1.46", "16.4"), ("0.31", "0.70", "24.1")]

OTHER = [("0.52", "0.90", "20.8"), ("0.71", "1.04", "26.3"), ("0.19", "0.47", "18.9"),
         ("0.58", "0.93", "29.4"), ("1.21", "1.57", "21.7"), ("0.38", "0.77", "23.5")]


def test_repeat_of_previous_certificate_for_same_address(tmp_path: Path) -> None:
    with Corpus(tmp_path / "c.sqlite") as corpus:
        first = corpus.add(_cert("A1", "7 Vetch Lane, Lowmoor", "10/05/2019", READINGS), EMPTY)
        later = corpus.add(_cert("A2", "7, Vetch Ln, Lowmoor", "11/06/2024", READINGS), EMPTY)
        # 9 Vetch Lane retested: fresh readings, no finding
        corpus.add(_cert("B1", "9 Vetch Lane, Lowmoor", "10/05/2019", OTHER), EMPTY)
        corpus.add(_cert("B2", "9 Vetch Lane, Lowmoor", "01/07/2024", FRESH), EMPTY)
        report = scan(corpus)
    rep = sorted((cf for cf in report.findings if cf.finding.check_id == REPEATED),
                 key=lambda cf: cf.finding.certificate)
    # on both certificates, each naming the other; the 2019 one is the likely source
    assert [(cf.finding.certificate, cf.finding.related) for cf in rep] == [
        ("A1", ("A2",)), ("A2", ("A1",))]
    assert rep[1].match.cert_a == later and rep[1].match.cert_b == first
    assert rep[1].match.exact and rep[1].match.compared == 18
    source = "the earlier (2019-05-10): the likely source"
    assert f"this certificate is {source}" in rep[0].finding.message
    assert f"certificate A1 is {source}" in rep[1].finding.message
    assert not any(cf.finding.check_id == COPIED for cf in report.findings)


def test_copy_at_other_address_with_one_nudged_reading(tmp_path: Path) -> None:
    nudged = list(READINGS)
    nudged[2] = ("0.24", "0.55", "27.9")
    with Corpus(tmp_path / "c.sqlite") as corpus:
        corpus.add(_cert("C1", "1 Cinder Row, Brackwater", "02/03/2024", READINGS), EMPTY)
        query = _cert("C2", "5 Rookery Fold, Stennet", "09/03/2024", nudged)
        matches = corpus.similar(query)  # looked up before it is stored
    assert len(matches) == 1
    (m,) = matches
    assert (m.kind, m.equal, m.near, m.compared) == ("whole", 17, 1, 18)
    (near,) = [r for r in m.blocks[0].readings if r.relation == "near"]
    assert (near.circuit_a, near.field, near.raw_a, near.raw_b) == ("3", "r1_r2", "0.24", "0.23")


def test_duplicate_certificate_number(tmp_path: Path) -> None:
    with Corpus(tmp_path / "c.sqlite") as corpus:
        corpus.add(_cert("D-100", "2 Tanyard Close, Fernmouth", "02/03/2024", READINGS), EMPTY)
        corpus.add(_cert("d 100", "3 Tanyard Close, Fernmouth", "04/03/2024", FRESH), EMPTY)
        corpus.add(_cert("D-101", "4 Tanyard Close, Fernmouth", "05/03/2024", FRESH[:3]), EMPTY)
        report = scan(corpus)
    dup = sorted(cf.finding.certificate for cf in report.findings
                 if cf.finding.check_id == NUMBER_REUSED)
    assert dup == ["D-100", "d 100"]


def test_workload_limit_follows_the_options(tmp_path: Path) -> None:
    with Corpus(tmp_path / "c.sqlite") as corpus:
        for i in range(11):  # 11 certificates × 6 tested circuits = 66 on one day
            corpus.add(_cert(f"W{i}", f"{i} Saltings Way, Lowmoor", "14/03/2024", READINGS,
                             serial=f"ZX-{i}"), EMPTY)
        corpus.add(_cert("W99", "99 Saltings Way, Lowmoor", "15/03/2024", READINGS), EMPTY)
        default = workload(corpus)  # 10 min a circuit, 10 h a day: at most 60
        relaxed = workload(corpus, Profile(checks={
            INSPECTOR_WORKLOAD: CheckSettings(options={"minutes_per_circuit": 5.0})}))
    flagged = [cf.finding for cf in default]
    assert {f.check_id for f in flagged} == {INSPECTOR_WORKLOAD}
    assert sorted(f.certificate for f in flagged) == sorted(f"W{i}" for i in range(11))
    assert all(len(f.related) == 10 for f in flagged)
    assert relaxed == []


def test_party_statistics(tmp_path: Path) -> None:
    calculated = [(a, f"{0.30 + float(a):.2f}", c) for a, _, c in READINGS]
    with Corpus(tmp_path / "c.sqlite") as corpus:
        corpus.add(_cert("S1", "1 Juniper Walk, Stennet", "01/02/2024", calculated,
                         inspector="Declan Rusk"), EMPTY)
        corpus.add(_cert("S2", "2 Juniper Walk, Stennet", "02/02/2024", READINGS,
                         inspector="Priya Tallis"), EMPTY)
        stats = {s.party: s for s in party_stats(corpus, "inspector")}
        contractors = party_stats(corpus, "contractor")
    assert stats["Declan Rusk"].share_zs_exactly_calculated == 1.0
    assert stats["Priya Tallis"].share_zs_exactly_calculated < 0.5
    assert stats["Declan Rusk"].readings == 18
    assert sum(stats["Declan Rusk"].last_digit_counts) == 18
    assert [(c.party, c.certificates) for c in contractors] == [
        ("Northspur Testing (fictional)", 2)]


def test_nudged_value_shares_a_grid_cell() -> None:
    for m in range(0, 2000):
        a, b = Reading("zs", m, 2, ""), Reading("zs", m + 1, 2, "")
        assert any(quantise(a, o) == quantise(b, o) for o in (0, 1)), m
    assert GRID == 4


def test_relation_of_readings() -> None:
    def r(m: int, d: int) -> Reading:
        return Reading("zs", m, d, "")

    assert relation(r(5, 1), r(50, 2)) == "equal"  # 0.5 and 0.50
    assert relation(r(42, 2), r(43, 2)) == "near"
    assert relation(r(42, 2), r(44, 2)) == "different"
    assert relation(r(4, 1), r(41, 2)) == "different"


def test_stream_is_deterministic() -> None:
    a = CertificateStream(seed=9).take(60)
    b = CertificateStream(seed=9).take(60)
    c = CertificateStream(seed=10).take(60)
    key = [[cc.cells for bb in x.boards for cc in bb.circuits] for x in a]
    assert key == [[cc.cells for bb in x.boards for cc in bb.circuits] for x in b]
    assert key != [[cc.cells for bb in x.boards for cc in bb.circuits] for x in c]
