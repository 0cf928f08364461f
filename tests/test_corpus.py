"""The corpus store: schema and migrations, round trip, transactions, errors, export."""

from __future__ import annotations

import sqlite3
from pathlib import Path

import pandas as pd
import pytest
from casekit import make_certificate

import certvet.corpus.store as store_mod
from certvet.checks.profile import DEFAULT_PROFILE
from certvet.checks.runner import CheckResults, run_checks
from certvet.corpus import Corpus, CorpusError
from certvet.corpus.fingerprints import LshParams
from certvet.corpus.migrations import LATEST
from certvet.corpus.similarity import IndexParams
from certvet.corpus.store import normalise_address, parse_date
from certvet.corpus.synthetic import generate
from certvet.extractor.fields import BOARD_FIELDS, CERTIFICATE_FIELDS, CIRCUIT_FIELDS
from certvet.extractor.records import Box, Cell

TABLES = ("files", "certificates", "boards", "circuits", "findings", "check_runs",
          "board_readings", "block_fingerprints", "lsh_bands")


def _counts(path: Path) -> dict[str, int]:
    conn = sqlite3.connect(path)
    try:
        return {t: conn.execute(f"SELECT count(*) FROM {t}").fetchone()[0] for t in TABLES}
    finally:
        conn.close()


def _boxed_certificate():
    cert = make_certificate(
        [{"circuit_ref": "1", "description": "Lighting", "device_type": "B", "rating": "6",
          "r1_r2": "0.84", "zs": "1.25", "ir_live_earth": ">999", "polarity": "✓"},
         {"circuit_ref": "2", "description": "Ring", "device_type": "B", "rating": "32",
          "r1": "0.31", "rn": "0.30", "r2": "0.52", "r1_r2": "0.21", "zs": "0.6",
          "rcd_time": "23.4", "ir_live_live": "x7"}],
        board={"ze": "0.35", "earthing": "TN-C-S"},
        certificate={"cert_number": "RT-0001", "address": "4 Pellow Street, Stennet, SZ3 1AB",
                     "inspection_date": "03/02/2024", "inspector": "Mei Quill",
                     "contractor": "Keystone Wiring Co (fictional)", "instrument_serial": "ZX-1"},
    )
    cert.sha256 = "a" * 64
    c = cert.boards[0].circuits[0]
    c.cells["zs"] = Cell("zs", c.cells["zs"].value, Box(2, 10.5, 20.25, 30.0, 28.0))
    return cert


def test_round_trip_keeps_cells_boxes_and_findings(tmp_path: Path) -> None:
    cert = _boxed_certificate()
    results = run_checks(cert)
    with Corpus(tmp_path / "c.sqlite") as corpus:
        cid = corpus.add(cert, results, verdict="queries")
        back = corpus.certificate(cid)
        assert back.cells == cert.cells
        assert [b.cells for b in back.boards] == [b.cells for b in cert.boards]
        assert [[c.cells for c in b.circuits] for b in back.boards] == \
            [[c.cells for c in b.circuits] for b in cert.boards]
        assert back.boards[0].circuits[0].box("zs") == Box(2, 10.5, 20.25, 30.0, 28.0)
        assert corpus.findings(cid) == results.findings
        row = corpus.certificate_row(cid)
        assert row.inspection_date == "2024-02-03"
        assert row.n_circuits == 2 and row.n_tested == 2
        assert row.verdict == "queries"  # the caller's verdict key, stored as given
        (f,) = corpus.files()
        assert f.status == "audited" and f.failure_reason is None


def test_synthetic_round_trip(tmp_path: Path) -> None:
    certs, _ = generate(30, seed=11)
    with Corpus(tmp_path / "c.sqlite") as corpus:
        ids = [corpus.add(c, CheckResults(DEFAULT_PROFILE)) for c in certs]
        for cid, cert in zip(ids, certs, strict=True):
            back = corpus.certificate(cid)
            assert back.name == cert.name
            assert [[c.cells for c in b.circuits] for b in back.boards] == \
                [[c.cells for c in b.circuits] for b in cert.boards]


def test_migrations_apply_to_an_empty_file(tmp_path: Path) -> None:
    path = tmp_path / "empty.sqlite"
    path.write_bytes(b"")
    with Corpus(path) as corpus:
        assert corpus.schema_version == LATEST
        mode = corpus.conn.execute("PRAGMA journal_mode").fetchone()[0]
        assert mode == "wal"
    assert _counts(path) == dict.fromkeys(TABLES, 0)
    with Corpus(path) as corpus:  # reopening applies nothing twice
        assert corpus.conn.execute("SELECT count(*) FROM schema_version").fetchone()[0] == LATEST


def test_every_canonical_field_has_columns(tmp_path: Path) -> None:
    with Corpus(tmp_path / "c.sqlite") as corpus:
        for table, fields in (("circuits", CIRCUIT_FIELDS), ("boards", BOARD_FIELDS),
                              ("certificates", CERTIFICATE_FIELDS)):
            cols = {r[1] for r in corpus.conn.execute(f"PRAGMA table_info({table})")}
            missing = [f.name for f in fields if f"{f.name}_raw" not in cols]
            assert not missing, f"add a migration for {table} fields {missing}"


def test_newer_store_is_refused(tmp_path: Path) -> None:
    path = tmp_path / "c.sqlite"
    Corpus(path).close()
    conn = sqlite3.connect(path)
    conn.execute("INSERT INTO schema_version VALUES (?, 'from the future', 'x')", (LATEST + 1,))
    conn.commit()
    conn.close()
    with pytest.raises(CorpusError, match=r"c\.sqlite.*newer"):
        Corpus(path)


def test_other_index_parameters_are_refused(tmp_path: Path) -> None:
    path = tmp_path / "c.sqlite"
    Corpus(path).close()
    with pytest.raises(CorpusError, match="similarity index built with"):
        Corpus(path, params=IndexParams(lsh=LshParams(num_perm=64, bands=16, rows=4)))


@pytest.mark.parametrize("content", [b"this is not a database at all" * 40,
                                     b"SQLite format 3\x00" + b"\x07" * 2000])
def test_corrupt_file_is_a_one_line_error(tmp_path: Path, content: bytes) -> None:
    path = tmp_path / "broken.sqlite"
    path.write_bytes(content)
    with pytest.raises(CorpusError) as err:
        Corpus(path)
    assert str(path) in str(err.value) and "\n" not in str(err.value)


def test_locked_store_is_a_clear_error(tmp_path: Path) -> None:
    path = tmp_path / "c.sqlite"
    Corpus(path).close()
    other = sqlite3.connect(path, isolation_level=None)
    other.execute("BEGIN EXCLUSIVE")
    try:
        corpus = Corpus(path, timeout=0.05)
    except CorpusError as e:  # locked already while opening
        assert "locked" in str(e) and str(path) in str(e)
    else:
        with pytest.raises(CorpusError, match="locked"):
            corpus.add(_boxed_certificate(), CheckResults(DEFAULT_PROFILE))
        corpus.close()
    finally:
        other.execute("ROLLBACK")
        other.close()


def test_failure_mid_add_writes_nothing(tmp_path: Path, monkeypatch: pytest.MonkeyPatch) -> None:
    path = tmp_path / "c.sqlite"
    certs, _ = generate(2, seed=3)

    def boom(*args: object, **kwargs: object) -> None:
        raise RuntimeError("disk pulled out")

    with Corpus(path) as corpus:
        with pytest.raises(RuntimeError):
            with monkeypatch.context() as m:
                m.setattr(store_mod, "index_boards", boom)
                corpus.add(certs[0], CheckResults(DEFAULT_PROFILE))
        assert not corpus.has(certs[0].sha256)
    assert _counts(path) == dict.fromkeys(TABLES, 0)

    with Corpus(path) as corpus:  # inside a batch the earlier add survives a later failure
        with corpus.batch():
            corpus.add(certs[0], CheckResults(DEFAULT_PROFILE))
            with pytest.raises(RuntimeError), monkeypatch.context() as m:
                m.setattr(store_mod, "index_boards", boom)
                corpus.add(certs[1], CheckResults(DEFAULT_PROFILE))
        assert corpus.has(certs[0].sha256) and not corpus.has(certs[1].sha256)
    assert _counts(path)["certificates"] == 1


def test_failures_and_re_audits_replace_the_file(tmp_path: Path) -> None:
    cert = _boxed_certificate()
    with Corpus(tmp_path / "c.sqlite") as corpus:
        corpus.add_failure(cert.sha256, "broken.pdf", "no layout matches")
        assert corpus.has(cert.sha256)
        (f,) = corpus.files()
        assert (f.status, f.failure_reason) == ("failed", "no layout matches")
        corpus.add(cert, CheckResults(DEFAULT_PROFILE))
        corpus.add(cert, CheckResults(DEFAULT_PROFILE))
        assert [f.status for f in corpus.files()] == ["audited"]
        assert len(corpus.certificates()) == 1
    assert _counts(tmp_path / "c.sqlite")["board_readings"] == 1


@pytest.mark.parametrize("fmt", ["csv", "parquet"])
def test_export_is_readable_by_pandas(tmp_path: Path, fmt: str) -> None:
    certs, _ = generate(5, seed=2)
    with Corpus(tmp_path / "c.sqlite") as corpus:
        for c in certs:
            corpus.add(c, run_checks(c))
        paths = corpus.export(tmp_path / "out", fmt)
    read = (lambda p: pd.read_csv(p, skiprows=1)) if fmt == "csv" else pd.read_parquet
    frames = {p.stem: read(p) for p in paths}
    assert len(frames["certificates"]) == 5
    assert len(frames["circuits"]) == sum(len(b.circuits) for c in certs for b in c.boards)
    assert set(frames["certificates"]["cert_number"]) == {c.name for c in certs}
    assert "zs_num" in frames["circuits"].columns


def test_normalisation() -> None:
    assert normalise_address("12, Oakhythe Rd.,  Fernmouth FN3 2AB") == \
        normalise_address("12 OAKHYTHE ROAD FERNMOUTH FN32AB")
    assert normalise_address("12 Oakhythe Road") != normalise_address("14 Oakhythe Road")
    assert parse_date("03/02/2024").isoformat() == "2024-02-03"
    assert parse_date("2024-02-03").isoformat() == "2024-02-03"
    assert parse_date("soon") is None


def test_version_1_store_gains_the_profile_columns(tmp_path: Path) -> None:
    from certvet.corpus.migrations import MIGRATIONS
    from certvet.corpus.store import _statements

    path = tmp_path / "v1.sqlite"
    conn = sqlite3.connect(path)
    conn.execute("CREATE TABLE schema_version (version INTEGER PRIMARY KEY, "
                 "description TEXT NOT NULL, applied_at TEXT NOT NULL)")
    for stmt in _statements(MIGRATIONS[0][2]):
        conn.execute(stmt)
    conn.execute("INSERT INTO schema_version VALUES (1, 'v1', 'x')")
    conn.commit()
    conn.close()
    with Corpus(path) as corpus:
        assert corpus.schema_version == LATEST >= 2
        cols = {r[1] for r in corpus.conn.execute("PRAGMA table_info(certificates)")}
        assert {"profile_name", "profile"} <= cols
