"""The corpus: every audited certificate, its readings and findings, in one SQLite file.

    with Corpus("portfolio.sqlite") as corpus:
        if not corpus.has(cert.sha256):
            corpus.add(cert, results)
        for row in corpus.certificates():
            ...

* Schema: ordered migrations (corpus/migrations.py), applied on open; a store newer
  than this certvet is refused. Documented in docs/corpus.md.
* WAL journal; every `add` is one transaction (inside `batch()`, one savepoint), so a failure
  part-way never leaves half a certificate behind.
* Any SQLite problem (not a database, locked, disk full) becomes a one-line `CorpusError`
  naming the file.
"""

from __future__ import annotations

import csv
import functools
import json
import re
import sqlite3
from collections.abc import Iterable, Iterator, Sequence
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import UTC, date, datetime
from importlib import metadata
from pathlib import Path
from typing import TYPE_CHECKING, Any

from certvet.checks.caution import CSV_CAUTION_ROW as CAUTION_ROW
from certvet.checks.caution import DATA_CAUTION, PARQUET_CAUTION_KEY
from certvet.checks.model import CheckRun, Finding, Outcome, Severity
from certvet.checks.profile import Profile
from certvet.checks.runner import CheckResults
from certvet.corpus.fingerprints import BoardReadings, certificate_readings
from certvet.corpus.migrations import LATEST, MIGRATIONS
from certvet.corpus.similarity import (
    IndexParams,
    Match,
    MatchOptions,
    build_signatures,
    find_similar,
    index_boards,
    stored_boards,
)
from certvet.extractor.fields import BOARD, CERTIFICATE, FIELDS, FieldSpec
from certvet.extractor.records import (
    Board,
    Box,
    Cell,
    Certificate,
    Circuit,
    DraftedLayoutNote,
    ExtractionProblem,
    Value,
    ValueKind,
)
from certvet.extractor.tokens import normalise_text, parse_value
from certvet.extractor.untrusted import spreadsheet_cell

if TYPE_CHECKING:
    import pandas as pd

_SQLITE_MAGIC = b"SQLite format 3\x00"
EXPORT_TABLES = ("files", "certificates", "boards", "circuits", "findings", "check_runs",
                 "problems")


# Exported with the certificate's stable key beside the store's row id: its content hash and
# number (a number alone can be reused).
_EXPORT_QUERIES = {
    "findings": "SELECT c.sha256 AS cert_sha256, c.cert_number AS cert_number, f.* "
                "FROM findings f JOIN certificates c ON c.id = f.cert_id ORDER BY f.id",
}


class CorpusError(Exception):
    """A store that cannot be used: the message is one line and names the file."""


STAGE_CERTIFICATE, STAGE_CORPUS = "certificate", "corpus"  # findings.stage


def severity_at_least(worst: Severity) -> str:
    """An SQL condition on a findings `severity` column: this severity or a worse one."""
    slugs = ", ".join(f"'{s.slug}'" for s in Severity if s >= worst)
    return f"severity IN ({slugs})"


def severity_in(severities: Iterable[Severity]) -> str:
    """An SQL condition on a findings `severity` column: one of these severities."""
    slugs = ", ".join(f"'{s.slug}'" for s in sorted(set(severities))) or "NULL"
    return f"severity IN ({slugs})"


# --- normalisation ----------------------------------------------------------------------------

_ABBREVIATIONS = {
    "RD": "ROAD", "ST": "STREET", "AVE": "AVENUE", "AV": "AVENUE", "CL": "CLOSE", "DR": "DRIVE",
    "LN": "LANE", "CRES": "CRESCENT", "TCE": "TERRACE", "TERR": "TERRACE", "GDNS": "GARDENS",
    "PL": "PLACE", "CT": "COURT", "SQ": "SQUARE",
}
_POSTCODE = re.compile(r"\b([A-Z]{1,2}\d[A-Z\d]?) ?(\d[A-Z]{2})\b")


def normalise_address(text: str) -> str:
    """Upper case, punctuation dropped, common street abbreviations spelt out, postcode unspaced."""
    s = normalise_text(text).upper()
    s = _POSTCODE.sub(lambda m: m.group(1) + m.group(2), s)
    words = re.sub(r"[^A-Z0-9 ]+", " ", s).split()
    return " ".join(_ABBREVIATIONS.get(w, w) for w in words)


def normalise_key(text: str) -> str:
    """Certificate numbers, names and serials: upper case, no spaces or punctuation."""
    return re.sub(r"[^A-Z0-9]+", "", normalise_text(text).upper())


_DATE_FORMATS = ("%d/%m/%Y", "%d/%m/%y", "%d.%m.%Y", "%d.%m.%y", "%d-%m-%Y", "%Y-%m-%d",
                 "%d %B %Y", "%d %b %Y")


def parse_date(text: str) -> date | None:
    """A printed date (UK day-first) as a date, or None."""
    s = normalise_text(text)
    for fmt in _DATE_FORMATS:
        try:
            return datetime.strptime(s, fmt).date()
        except ValueError:
            continue
    return None


# --- rows ---------------------------------------------------------------------------------------


@dataclass(frozen=True)
class CertificateRow:
    id: int
    sha256: str
    name: str
    cert_number: str | None
    address: str | None
    address_norm: str | None
    inspection_date: str | None  # ISO
    inspector: str | None
    contractor: str | None
    instrument_serial: str | None
    verdict: str | None  # reports/verdict.py's key; None when stored without one
    n_boards: int
    n_circuits: int
    n_tested: int


_CERT_ROW_COLUMNS = ("id", "sha256", "name", "cert_number", "address", "address_norm",
                     "inspection_date", "inspector", "contractor", "instrument_serial",
                     "verdict", "n_boards", "n_circuits", "n_tested")


@dataclass(frozen=True)
class FileRow:
    sha256: str
    path: str
    layout: str | None
    engine: str | None
    certvet_version: str
    audited_at: str
    status: str
    failure_reason: str | None


def _box(b: Box | None) -> list[float | int | None] | None:
    return [b.page, b.x0, b.top, b.x1, b.bottom] if b else None


class Corpus:
    """One SQLite store of audited certificates."""

    def __init__(
        self,
        path: str | Path,
        *,
        params: IndexParams | None = None,
        timeout: float = 5.0,
    ) -> None:
        self.path = Path(path)
        self.params = params or IndexParams()
        self._depth = 0
        if self.path.exists() and self.path.stat().st_size > 0:
            with self.path.open("rb") as fh:
                if fh.read(16) != _SQLITE_MAGIC:
                    raise CorpusError(f"{self.path}: not a certvet corpus (not an SQLite file)")
        try:
            self.path.parent.mkdir(parents=True, exist_ok=True)
        except OSError as e:
            why = "a file of that name is in the way" if isinstance(e, FileExistsError) else (
                e.strerror or e)
            raise CorpusError(f"{self.path}: cannot create its folder: {why}") from None
        try:
            self.conn = sqlite3.connect(self.path, timeout=timeout, isolation_level=None)
        except sqlite3.Error as e:
            raise CorpusError(f"{self.path}: cannot open the corpus: {e}") from None
        try:
            with self._guard("open"):
                self.conn.execute("PRAGMA journal_mode=WAL")
                self.conn.execute("PRAGMA synchronous=NORMAL")
                self.conn.execute("PRAGMA foreign_keys=ON")
                self.conn.execute("PRAGMA cache_size=-65536")  # 64 MiB of pages
                self.conn.execute("PRAGMA mmap_size=268435456")
                self._migrate()
                self._check_params()
                self._columns = {
                    t: [r[1] for r in self.conn.execute(f"PRAGMA table_info({t})")]
                    for t in ("certificates", "boards", "circuits")
                }
        except CorpusError:
            self.conn.close()
            raise

    # --- plumbing ---------------------------------------------------------------------------
    @contextmanager
    def _guard(self, action: str) -> Iterator[None]:
        try:
            yield
        except sqlite3.Error as e:
            msg = str(e)
            if "locked" in msg or "busy" in msg:
                msg += " (another process is writing to it; try again when it has finished)"
            raise CorpusError(f"{self.path}: {action}: {msg}") from None

    @contextmanager
    def transaction(self) -> Iterator[sqlite3.Connection]:
        """All or nothing: a transaction, or a savepoint inside `batch()`."""
        with self._guard("write"):
            if self._depth == 0:
                self.conn.execute("BEGIN IMMEDIATE")
            else:
                self.conn.execute("SAVEPOINT corpus_write")
            self._depth += 1
            try:
                yield self.conn
            except BaseException:
                self._depth -= 1
                if self._depth == 0:
                    self.conn.execute("ROLLBACK")
                else:
                    self.conn.execute("ROLLBACK TO corpus_write")
                    self.conn.execute("RELEASE corpus_write")
                raise
            self._depth -= 1
            if self._depth == 0:
                self.conn.execute("COMMIT")
            else:
                self.conn.execute("RELEASE corpus_write")

    @contextmanager
    def batch(self) -> Iterator[None]:
        """Group many adds in one transaction (faster); each add stays all-or-nothing."""
        with self.transaction():
            yield

    def _migrate(self) -> None:
        c = self.conn
        c.execute("CREATE TABLE IF NOT EXISTS schema_version (version INTEGER PRIMARY KEY, "
                  "description TEXT NOT NULL, applied_at TEXT NOT NULL)")
        current = c.execute("SELECT coalesce(max(version), 0) FROM schema_version").fetchone()[0]
        if current > LATEST:
            raise CorpusError(
                f"{self.path}: corpus schema version {current} is newer than this certvet "
                f"{_certvet_version()} understands ({LATEST}); upgrade certvet"
            )
        for version, description, sql in MIGRATIONS:
            if version <= current:
                continue
            c.execute("BEGIN IMMEDIATE")
            try:
                for stmt in _statements(sql):
                    c.execute(stmt)
                c.execute("INSERT INTO schema_version VALUES (?,?,?)",
                          (version, description, _now()))
                c.execute("COMMIT")
            except BaseException:
                c.execute("ROLLBACK")
                raise

    def _check_params(self) -> None:
        want = self.params.as_text()
        row = self.conn.execute("SELECT value FROM meta WHERE key='index_params'").fetchone()
        if row is None:
            self.conn.execute("INSERT INTO meta VALUES ('index_params', ?)", (want,))
        elif row[0] != want:
            raise CorpusError(
                f"{self.path}: similarity index built with '{row[0]}', asked for '{want}'"
            )

    @contextmanager
    def lock(self) -> Iterator[None]:
        """Hold the store for one writer (a batch run) for the whole block: a second writer
        gets a one-line CorpusError at once instead of interleaving with this one. The lock
        is an advisory lock on `<store>.lock`, released when this process ends, however it
        ends. Readers (portfolio, export) need no lock; two writers in one process are not
        told apart."""
        import fcntl
        import os

        lock_path = self.path.with_name(self.path.name + ".lock")
        try:
            fd = os.open(lock_path, os.O_RDWR | os.O_CREAT, 0o644)
        except OSError as e:
            raise CorpusError(f"{self.path}: cannot create its lock file {lock_path}: "
                              f"{e.strerror or e}") from None
        try:
            try:
                # a POSIX record lock belongs to this process alone: forked workers do not
                # inherit it, so a worker outliving a killed batch never holds the store
                fcntl.lockf(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
            except OSError:
                holder = os.pread(fd, 64, 0).decode("ascii", "replace").strip() or "unknown"
                raise CorpusError(
                    f"{self.path}: in use by another certvet batch (process {holder}); wait "
                    "for it to finish, or give this batch another --store") from None
            os.ftruncate(fd, 0)
            os.pwrite(fd, str(os.getpid()).encode("ascii"), 0)
            yield
        finally:
            os.close(fd)  # releases the lock

    def close(self) -> None:
        self.conn.close()

    def __enter__(self) -> Corpus:
        return self

    def __exit__(self, *exc: object) -> None:
        self.close()

    @property
    def schema_version(self) -> int:
        return int(self.conn.execute("SELECT max(version) FROM schema_version").fetchone()[0])

    # --- writing ----------------------------------------------------------------------------
    def has(self, sha256: str) -> bool:
        """Whether this file is in the store (audited or failed)."""
        with self._guard("read"):
            return self.conn.execute(
                "SELECT 1 FROM files WHERE sha256 = ?", (sha256,)).fetchone() is not None

    def add(
        self,
        cert: Certificate,
        results: CheckResults,
        *,
        status: str = "audited",
        audited_at: datetime | None = None,
        verdict: str | None = None,
    ) -> int:
        """Store one audited certificate with its findings; returns its id. `verdict` is the
        verdict key the caller decided (reports/verdict.py), None when it has none.

        A file already in the store is replaced (a re-audit), in the same transaction.
        """
        if status != "audited":
            raise ValueError("add() stores audited certificates; use add_failure() otherwise")
        boards = certificate_readings(cert)
        sigs = build_signatures(boards, self.params)
        when = (audited_at or datetime.now(UTC)).isoformat(timespec="seconds")
        with self.transaction() as c:
            self._delete(cert.sha256)
            c.execute(
                "INSERT INTO files (sha256, path, layout, engine, certvet_version, audited_at, "
                "status, failure_reason) VALUES (?,?,?,?,?,?,?,NULL)",
                (cert.sha256, cert.source, cert.layout, cert.engine, _certvet_version(), when,
                 status),
            )
            cert_id = self._insert_certificate(cert, results, boards, verdict)
            board_ids = self._insert_boards(cert, cert_id)
            self._insert_findings(cert_id, results)
            index_boards(c, cert_id, list(zip(board_ids, sigs, strict=True)))
        return cert_id

    def add_failure(
        self, sha256: str, path: str, reason: str, *, layout: str | None = None,
        engine: str | None = None,
    ) -> None:
        """Record a file that could not be audited (so a batch run does not retry it blindly)."""
        with self.transaction() as c:
            self._delete(sha256)
            c.execute(
                "INSERT INTO files (sha256, path, layout, engine, certvet_version, audited_at, "
                "status, failure_reason) VALUES (?,?,?,?,?,?,'failed',?)",
                (sha256, path, layout, engine, _certvet_version(), _now(), reason or "unknown"),
            )

    def _delete(self, sha256: str) -> None:
        c = self.conn
        row = c.execute("SELECT id FROM certificates WHERE sha256 = ?", (sha256,)).fetchone()
        if row:
            bids = [r[0] for r in c.execute("SELECT id FROM boards WHERE cert_id = ?", row)]
            for bid in bids:
                c.execute("DELETE FROM lsh_bands WHERE board_id = ?", (bid,))
                c.execute("DELETE FROM block_fingerprints WHERE board_id = ?", (bid,))
            c.execute("DELETE FROM board_readings WHERE cert_id = ?", row)
            for table in ("findings", "check_runs", "problems", "circuits", "boards"):
                c.execute(f"DELETE FROM {table} WHERE cert_id = ?", row)
            c.execute("DELETE FROM certificates WHERE id = ?", row)
        c.execute("DELETE FROM files WHERE sha256 = ?", (sha256,))

    def _wide(self, table: str, cells: dict[str, Cell]) -> dict[str, Any]:
        cols = self._columns[table]
        out: dict[str, Any] = {}
        boxes = {}
        for name, cell in cells.items():
            if f"{name}_raw" not in cols:
                continue  # a field newer than the schema: needs a migration
            v = cell.value
            out[f"{name}_raw"] = v.raw
            out[f"{name}_kind"] = v.kind.value
            out[f"{name}_num"] = v.number
            if cell.box:
                boxes[name] = _box(cell.box)
        out["boxes"] = json.dumps(boxes) if boxes else None
        return out

    def _insert(self, table: str, row: dict[str, Any]) -> int:
        cols = list(row)
        cur = self.conn.execute(
            f"INSERT INTO {table} ({','.join(cols)}) VALUES ({','.join('?' * len(cols))})",
            [row[k] for k in cols],
        )
        return int(cur.lastrowid or 0)

    def _insert_certificate(
        self, cert: Certificate, results: CheckResults, boards: list[BoardReadings],
        verdict: str | None,
    ) -> int:
        number = cert.text("cert_number")
        d = parse_date(cert.text("inspection_date"))
        row = {
            "sha256": cert.sha256, "name": cert.name,
            "cert_number": number or None, "cert_number_norm": normalise_key(number) or None,
            "address": cert.text("address") or None,
            "address_norm": normalise_address(cert.text("address")) or None,
            "inspection_date": d.isoformat() if d else None,
            "inspector": cert.text("inspector") or None,
            "inspector_norm": normalise_key(cert.text("inspector")) or None,
            "contractor": cert.text("contractor") or None,
            "instrument_serial": cert.text("instrument_serial") or None,
            "instrument_norm": normalise_key(cert.text("instrument_serial")) or None,
            "verdict": verdict,
            "n_boards": len(cert.boards),
            "n_circuits": sum(len(b.circuits) for b in cert.boards),
            "n_tested": sum(len(b.circuits) for b in boards),
            "page_count": cert.page_count,
            "profile_name": results.profile.name,
            "profile": json.dumps(results.profile.to_dict(), default=str),
            "drafted_layout": (json.dumps(cert.drafted.to_dict()) if cert.drafted is not None
                               else None),
            **self._wide("certificates", cert.cells),
        }
        cert_id = self._insert("certificates", row)
        self.conn.executemany(
            "INSERT INTO problems (cert_id, message, field, board, circuit, raw, page, x0, top, "
            "x1, bottom) VALUES (?,?,?,?,?,?,?,?,?,?,?)",
            [(cert_id, p.message, p.field, p.board, p.circuit, p.raw,
              *(_box(p.box) or [None] * 5)) for p in cert.problems],
        )
        return cert_id

    def _insert_boards(self, cert: Certificate, cert_id: int) -> list[int]:
        ids = []
        for pos, b in enumerate(cert.boards):
            bid = self._insert("boards", {"cert_id": cert_id, "position": pos, "ref": b.ref,
                                          "page": b.page, **self._wide("boards", b.cells)})
            ids.append(bid)
            for cpos, c in enumerate(b.circuits):
                self._insert("circuits", {"cert_id": cert_id, "board_id": bid,
                                          "position": cpos, "ref": c.ref, "page": c.page,
                                          **self._wide("circuits", c.cells)})
        return ids

    def _write_findings(self, stage: str,
                        found: Iterable[tuple[int, Finding, Sequence[str]]]) -> None:
        """(certificate id, finding, the other certificates' hashes) rows of one stage."""
        self.conn.executemany(
            "INSERT INTO findings (cert_id, stage, check_id, severity, certificate, message, "
            "reference, board, circuit, field, recorded, expected, tolerance, page, x0, top, x1, "
            "bottom, preview, related, related_sha256) "
            "VALUES (?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?,?)",
            [(cert_id, stage, f.check_id, f.severity.slug, f.certificate, f.message,
              f.reference, f.board, f.circuit, f.field, f.recorded, f.expected, f.tolerance,
              f.page, *((_box(f.box) or [None] * 5)[1:]), int(f.preview),
              json.dumps(list(f.related)), json.dumps(list(shas)))
             for cert_id, f, shas in found],
        )

    def _insert_findings(self, cert_id: int, results: CheckResults) -> None:
        self._write_findings(STAGE_CERTIFICATE, ((cert_id, f, ()) for f in results.findings))
        self.conn.executemany(
            "INSERT OR REPLACE INTO check_runs VALUES (?,?,?,?,?,?,?,?)",
            [(cert_id, r.check_id, r.title, r.outcome.value, r.applied_to, r.findings,
              json.dumps(r.options, default=str), r.reason) for r in results.runs],
        )

    # --- reading ----------------------------------------------------------------------------
    def files(self) -> list[FileRow]:
        with self._guard("read"):
            return [FileRow(*r) for r in self.conn.execute(
                "SELECT sha256, path, layout, engine, certvet_version, audited_at, status, "
                "failure_reason FROM files ORDER BY audited_at, path")]

    def certificates(self, where: str = "", args: tuple[Any, ...] = ()) -> list[CertificateRow]:
        """Every stored certificate (optionally filtered by an SQL condition on its columns)."""
        sql = f"SELECT {','.join(_CERT_ROW_COLUMNS)} FROM certificates"
        if where:
            sql += f" WHERE {where}"
        with self._guard("read"):
            return [CertificateRow(*r) for r in self.conn.execute(sql + " ORDER BY id", args)]

    def certificate_row(self, cert_id: int) -> CertificateRow:
        rows = self.certificates("id = ?", (cert_id,))
        if not rows:
            raise KeyError(cert_id)
        return rows[0]

    def find(self, sha256: str) -> int | None:
        with self._guard("read"):
            row = self.conn.execute(
                "SELECT id FROM certificates WHERE sha256 = ?", (sha256,)).fetchone()
        return row[0] if row else None

    def findings(self, cert_id: int | None = None, stage: str | None = STAGE_CERTIFICATE
                 ) -> list[Finding]:
        """Stored findings (of one certificate, of one stage: per certificate by default,
        `STAGE_CORPUS` for the cross-certificate ones, None for both), in the order stored."""
        sql = ("SELECT check_id, severity, certificate, message, reference, board, circuit, "
               "field, recorded, expected, tolerance, page, x0, top, x1, bottom, preview, "
               "related FROM findings WHERE 1")
        args: tuple[Any, ...] = ()
        if cert_id is not None:
            sql += " AND cert_id = ?"
            args = (cert_id,)
        if stage is not None:
            sql += " AND stage = ?"
            args = (*args, stage)
        out = []
        with self._guard("read"):
            for r in self.conn.execute(sql + " ORDER BY id", args):
                box = Box(r[11], *r[12:16]) if r[11] is not None and r[12] is not None else None
                out.append(Finding(
                    check_id=r[0], severity=Severity.parse(r[1]), certificate=r[2], message=r[3],
                    reference=r[4], board=r[5], circuit=r[6], field=r[7], recorded=r[8],
                    expected=r[9], tolerance=r[10], page=r[11], box=box, preview=bool(r[16]),
                    related=tuple(json.loads(r[17])),
                ))
        return out

    def rows(self, sql: str, args: tuple[Any, ...] = ()) -> list[tuple[Any, ...]]:
        """A read-only query's rows; any SQLite problem is a one-line CorpusError."""
        with self._guard("read"):
            return list(self.conn.execute(sql, args))

    def replace_cross_findings(
        self, cert_ids: Iterable[int], found: Iterable[tuple[int, Finding, Sequence[int]]]
    ) -> None:
        """The cross-certificate findings of these certificates, replacing the ones stored
        before, in one transaction: (certificate id, finding, the other certificates' ids)."""
        ids = sorted(set(cert_ids))
        rows = list(found)
        with self.transaction() as c:
            sha = dict(c.execute("SELECT id, sha256 FROM certificates").fetchall()) if rows else {}
            c.executemany("DELETE FROM findings WHERE cert_id = ? AND stage = ?",
                          [(i, STAGE_CORPUS) for i in ids])
            self._write_findings(STAGE_CORPUS, ((cid, f, [sha[o] for o in others if o in sha])
                                                for cid, f, others in rows))

    def set_verdicts(self, verdicts: dict[int, str]) -> None:
        """Record the verdict keys decided for these certificates (one transaction)."""
        with self.transaction() as c:
            c.executemany("UPDATE certificates SET verdict = ? WHERE id = ?",
                          [(v, cid) for cid, v in verdicts.items()])

    def certificate_keys(self) -> dict[int, tuple[str, str | None]]:
        """Each stored certificate's stable key by its id: (content hash, number as printed)."""
        return {cid: (sha, number) for cid, sha, number in self.rows(
            "SELECT id, sha256, cert_number FROM certificates")}

    def tested_per_day(self) -> list[tuple[str | None, str, int]]:
        """(inspector as printed, inspection date, tested circuits) per inspector and day,
        busiest first."""
        return [(who, day, int(n)) for who, day, n in self.rows(
            "SELECT inspector, inspection_date, sum(n_tested) FROM certificates "
            "WHERE inspection_date IS NOT NULL GROUP BY inspector_norm, inspection_date "
            "ORDER BY sum(n_tested) DESC, inspector, inspection_date")]

    def shas_with_findings(self, severities: Iterable[Severity]) -> set[str]:
        """Content hashes of the certificates with a counted (non-preview) finding, of any
        stage, at one of these severities."""
        return {r[0] for r in self.rows(
            "SELECT DISTINCT c.sha256 FROM certificates c JOIN findings f ON f.cert_id = c.id "
            f"WHERE f.{severity_in(severities)} AND f.preview = 0")}

    def profile(self, cert_id: int) -> Profile | None:
        """The rule profile the certificate was audited with; None when not recorded (stored
        before schema version 2)."""
        with self._guard("read"):
            row = self.conn.execute(
                "SELECT profile FROM certificates WHERE id = ?", (cert_id,)).fetchone()
        if row is None:
            raise KeyError(cert_id)
        return Profile.from_dict(json.loads(row[0])) if row[0] else None

    def check_runs(self, cert_id: int) -> list[CheckRun]:
        """The stored check runs of one certificate, in the order they ran."""
        with self._guard("read"):
            rows = self.conn.execute(
                "SELECT check_id, title, outcome, applied_to, findings, options, reason "
                "FROM check_runs WHERE cert_id = ?", (cert_id,)).fetchall()
        runs = {r[0]: CheckRun(r[0], r[1], Outcome(r[2]), r[3], r[4], json.loads(r[5]), r[6])
                for r in rows}
        from certvet.checks.registry import all_checks

        order = {cls.id: i for i, cls in enumerate(all_checks())}
        return sorted(runs.values(), key=lambda r: (order.get(r.check_id, len(order)), r.check_id))

    def certificate(self, cert_id: int) -> Certificate:
        """Rebuild the stored Certificate (cells, boxes, boards, circuits, problems)."""
        with self._guard("read"):
            c = self.conn
            c.row_factory = sqlite3.Row
            try:
                crow = c.execute("SELECT * FROM certificates WHERE id = ?", (cert_id,)).fetchone()
                if crow is None:
                    raise KeyError(cert_id)
                frow = c.execute("SELECT * FROM files WHERE sha256 = ?",
                                 (crow["sha256"],)).fetchone()
                drafted = crow["drafted_layout"]
                cert = Certificate(source=frow["path"], sha256=crow["sha256"],
                                   layout=frow["layout"], engine=frow["engine"],
                                   page_count=crow["page_count"] or 0,
                                   cells=_cells(crow, CERTIFICATE),
                                   drafted=DraftedLayoutNote.from_dict(json.loads(drafted))
                                   if drafted else None)
                for brow in c.execute("SELECT * FROM boards WHERE cert_id = ? ORDER BY position",
                                      (cert_id,)).fetchall():
                    board = Board(ref=brow["ref"], cells=_cells(brow, BOARD), page=brow["page"])
                    for crow2 in c.execute(
                        "SELECT * FROM circuits WHERE board_id = ? ORDER BY position",
                        (brow["id"],),
                    ).fetchall():
                        board.circuits.append(Circuit(board=board.ref, ref=crow2["ref"],
                                                      cells=_cells(crow2, FIELDS),
                                                      page=crow2["page"]))
                    cert.boards.append(board)
                for p in c.execute("SELECT * FROM problems WHERE cert_id = ?", (cert_id,)):
                    box = Box(p["page"], p["x0"], p["top"], p["x1"], p["bottom"]) \
                        if p["page"] is not None else None
                    cert.problems.append(ExtractionProblem(p["message"], p["field"], p["board"],
                                                           p["circuit"], p["raw"], box))
            finally:
                c.row_factory = None
        return cert

    # --- similarity ----------------------------------------------------------------------------
    def similar(self, cert: Certificate, options: MatchOptions | None = None) -> list[Match]:
        """Stored certificates whose readings match this certificate's (stored or not)."""
        sigs = build_signatures(certificate_readings(cert), self.params)
        exclude = self.find(cert.sha256)
        with self._guard("similarity lookup"):
            return find_similar(self.conn, sigs, self.params, options, exclude)

    def similar_to(self, cert_id: int, options: MatchOptions | None = None) -> list[Match]:
        """Like `similar`, for a stored certificate, from its stored readings."""
        with self._guard("similarity lookup"):
            sigs = build_signatures(stored_boards(self.conn, cert_id), self.params)
            found = find_similar(self.conn, sigs, self.params, options, cert_id)
        return [Match(cert_id, m.cert_b, m.kind, m.blocks) for m in found]

    def board_readings(self, cert_id: int) -> list[BoardReadings]:
        with self._guard("read"):
            return stored_boards(self.conn, cert_id)

    # --- export ---------------------------------------------------------------------------------
    def frames(self) -> Iterator[tuple[str, pd.DataFrame]]:
        """Each exported table as (name, DataFrame), in EXPORT_TABLES order."""
        import pandas as pd

        for table in EXPORT_TABLES:
            with self._guard(f"export {table}"):
                try:
                    df = pd.read_sql_query(
                        _EXPORT_QUERIES.get(table, f"SELECT * FROM {table}"), self.conn)
                except pd.errors.DatabaseError as e:  # pandas wraps sqlite3's errors
                    raise CorpusError(f"{self.path}: export {table}: "
                                      f"{e.__cause__ or e}".replace("\n", " ")) from None
            yield table, df

    def export(self, directory: str | Path, format: str = "csv") -> list[Path]:
        """Write each table to `directory` as CSV or Parquet; returns the files written.
        (A spreadsheet workbook of the same tables: certvet.export.export_store.)"""
        if format not in ("csv", "parquet"):
            raise ValueError(f"unknown export format {format!r} (use csv or parquet)")
        out_dir = Path(directory)
        out_dir.mkdir(parents=True, exist_ok=True)
        written = []
        for table, df in self.frames():
            target = out_dir / f"{table}.{format}"
            if format == "csv":  # text from PDFs: formula-like cells made spreadsheet-safe
                with target.open("w", encoding="utf-8", newline="") as fh:
                    csv.writer(fh).writerow(CAUTION_ROW)  # first row: the caution
                    df.map(spreadsheet_cell).to_csv(fh, index=False)
            else:
                _write_parquet(df, target)
            written.append(target)
        return written


def _write_parquet(df: pd.DataFrame, target: Path) -> None:
    """A Parquet file with the caution in its file metadata (key ``certvet.caution``)."""
    import pyarrow as pa
    import pyarrow.parquet as pq

    table = pa.Table.from_pandas(df, preserve_index=False)
    meta = dict(table.schema.metadata or {})
    meta[PARQUET_CAUTION_KEY.encode()] = DATA_CAUTION.encode("utf-8")
    pq.write_table(table.replace_schema_metadata(meta), target)


def _cells(row: sqlite3.Row, specs: dict[str, FieldSpec]) -> dict[str, Cell]:
    keys = row.keys()
    boxes = json.loads(row["boxes"]) if row["boxes"] else {}
    cells = {}
    for name, spec in specs.items():
        col = f"{name}_raw"
        if col not in keys or row[col] is None:
            continue
        raw, kind, num = row[col], ValueKind(row[f"{name}_kind"]), row[f"{name}_num"]
        v = parse_value(raw, spec.kind, spec.unit)
        if v.kind is not kind or v.number != num:  # parsed differently when stored: keep as stored
            v = Value(kind, raw, number=num, unit=spec.unit if num is not None else None)
        b = boxes.get(name)
        cells[name] = Cell(name, v, Box(*b) if b else None)
    return cells


def _statements(sql: str) -> list[str]:
    """Split a migration into statements (no semicolons inside our string literals)."""
    lines = [ln.split("--", 1)[0] for ln in sql.splitlines()]
    return [s.strip() for s in "\n".join(lines).split(";") if s.strip()]


@functools.cache
def _certvet_version() -> str:
    """The installed certvet's version (pyproject.toml), recorded with every stored file.

    Read from the package metadata because the corpus stage sits below the application package
    and may not import it."""
    try:
        return metadata.version("certvet")
    except metadata.PackageNotFoundError:
        return "unknown"


def _now() -> str:
    return datetime.now(UTC).isoformat(timespec="seconds")
