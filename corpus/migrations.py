"""The corpus schema as an ordered list of migrations. Never edit a released migration: append.

Each migration is (version, description, SQL). `Corpus` applies the missing ones, in order and
each in its own transaction, when it opens a store, and refuses a store whose version is newer
than the last one listed here. The schema is documented in docs/corpus.md.

Wide tables: boards and circuits hold three columns per canonical field — `<field>_raw` (text
as printed), `<field>_kind` (ValueKind) and `<field>_num` (number in the field's canonical
unit) — plus a `boxes` JSON column mapping field → [page, x0, top, x1, bottom]. The field lists
below are a frozen copy taken when the migration was written: a field added to
extractor/fields.py later needs a new migration adding its columns (tests/test_corpus.py fails
until one exists).
"""

from __future__ import annotations

CIRCUIT_FIELDS_V1 = (
    "circuit_ref", "description", "wiring_type", "ref_method", "points", "live_csa", "cpc_csa",
    "max_disconnection_time", "device_standard", "device_type", "rating", "breaking_capacity",
    "rcd_type", "rcd_idn", "max_zs", "r1", "rn", "r2", "r1_r2", "r1_rn", "r2_only",
    "ir_test_voltage", "ir_live_live", "ir_live_earth", "polarity", "zs", "rcd_time",
    "rcd_time_5x", "rcd_button", "afdd_button", "remarks",
)
BOARD_FIELDS_V1 = ("board_ref", "location", "supplied_from", "ze", "ipf", "earthing",
                   "board_polarity")
CERTIFICATE_FIELDS_V1 = (
    "cert_number", "report_type", "address", "client", "contractor", "inspection_date",
    "next_inspection", "inspector", "instrument_serial", "earthing", "ze", "ipf",
    "overall_outcome", "observation_codes", "limitations",
)


def _wide(fields: tuple[str, ...]) -> str:
    return ",\n    ".join(f"{f}_raw TEXT, {f}_kind TEXT, {f}_num REAL" for f in fields)


_V1 = f"""
CREATE TABLE files (
    sha256          TEXT PRIMARY KEY,
    path            TEXT NOT NULL,
    layout          TEXT,
    engine          TEXT,
    certvet_version TEXT NOT NULL,
    audited_at      TEXT NOT NULL,            -- ISO 8601, UTC
    status          TEXT NOT NULL CHECK (status IN ('audited', 'failed')),
    failure_reason  TEXT,
    CHECK ((status = 'failed') = (failure_reason IS NOT NULL))
);

CREATE TABLE certificates (
    id                INTEGER PRIMARY KEY,
    sha256            TEXT NOT NULL UNIQUE REFERENCES files(sha256),
    name              TEXT NOT NULL,          -- certificate number when read, else file name
    cert_number       TEXT,                   -- as printed
    cert_number_norm  TEXT,                   -- upper case, no spaces: for duplicate search
    address           TEXT,
    address_norm      TEXT,
    inspection_date   TEXT,                   -- ISO date when the printed date could be read
    inspector         TEXT,
    inspector_norm    TEXT,
    contractor        TEXT,
    instrument_serial TEXT,
    instrument_norm   TEXT,
    verdict           TEXT NOT NULL,          -- worst severity slug, or 'clean'
    n_boards          INTEGER NOT NULL,
    n_circuits        INTEGER NOT NULL,       -- circuit rows on the schedule
    n_tested          INTEGER NOT NULL,       -- circuits with at least one measured reading
    page_count        INTEGER,
    {_wide(CERTIFICATE_FIELDS_V1)},
    boxes             TEXT                    -- JSON: field -> [page, x0, top, x1, bottom]
);
CREATE INDEX certificates_number ON certificates(cert_number_norm);
CREATE INDEX certificates_address ON certificates(address_norm, inspection_date);
CREATE INDEX certificates_inspector ON certificates(inspector_norm, inspection_date);
CREATE INDEX certificates_instrument ON certificates(instrument_norm, inspection_date);

CREATE TABLE boards (
    id        INTEGER PRIMARY KEY,
    cert_id   INTEGER NOT NULL REFERENCES certificates(id) ON DELETE CASCADE,
    position  INTEGER NOT NULL,               -- 0-based order on the certificate
    ref       TEXT NOT NULL,
    page      INTEGER,
    {_wide(BOARD_FIELDS_V1)},
    boxes     TEXT,
    UNIQUE (cert_id, position)
);

CREATE TABLE circuits (
    id        INTEGER PRIMARY KEY,
    cert_id   INTEGER NOT NULL REFERENCES certificates(id) ON DELETE CASCADE,
    board_id  INTEGER NOT NULL REFERENCES boards(id) ON DELETE CASCADE,
    position  INTEGER NOT NULL,               -- 0-based order on the board
    ref       TEXT NOT NULL,
    page      INTEGER,
    {_wide(CIRCUIT_FIELDS_V1)},
    boxes     TEXT
);
CREATE INDEX circuits_cert ON circuits(cert_id);
CREATE INDEX circuits_board ON circuits(board_id, position);

CREATE TABLE problems (
    cert_id   INTEGER NOT NULL REFERENCES certificates(id) ON DELETE CASCADE,
    message   TEXT NOT NULL,
    field     TEXT, board TEXT, circuit TEXT, raw TEXT,
    page      INTEGER, x0 REAL, top REAL, x1 REAL, bottom REAL
);
CREATE INDEX problems_cert ON problems(cert_id);

CREATE TABLE findings (
    id          INTEGER PRIMARY KEY,
    cert_id     INTEGER NOT NULL REFERENCES certificates(id) ON DELETE CASCADE,
    check_id    TEXT NOT NULL,
    severity    INTEGER NOT NULL,             -- checks.model.Severity value (1 note … 4 impossible)
    certificate TEXT NOT NULL,
    message     TEXT NOT NULL,
    reference   TEXT NOT NULL,
    board TEXT, circuit TEXT, field TEXT, recorded TEXT, expected TEXT, tolerance TEXT,
    page INTEGER, x0 REAL, top REAL, x1 REAL, bottom REAL,
    preview     INTEGER NOT NULL,
    related     TEXT NOT NULL                 -- JSON list of certificate names
);
CREATE INDEX findings_cert ON findings(cert_id);
CREATE INDEX findings_check ON findings(check_id);

CREATE TABLE check_runs (
    cert_id    INTEGER NOT NULL REFERENCES certificates(id) ON DELETE CASCADE,
    check_id   TEXT NOT NULL,
    title      TEXT NOT NULL,
    outcome    TEXT NOT NULL,
    applied_to INTEGER NOT NULL,
    findings   INTEGER NOT NULL,
    options    TEXT NOT NULL,                 -- JSON
    PRIMARY KEY (cert_id, check_id)
) WITHOUT ROWID;

-- similarity index (see corpus/fingerprints.py) -----------------------------------
CREATE TABLE board_readings (
    board_id   INTEGER PRIMARY KEY REFERENCES boards(id) ON DELETE CASCADE,
    cert_id    INTEGER NOT NULL,
    n_readings INTEGER NOT NULL,
    readings   TEXT NOT NULL  -- JSON [[circuit ref, [[field, mantissa, decimals, raw]…]]…]
);
CREATE INDEX board_readings_cert ON board_readings(cert_id);

CREATE TABLE block_fingerprints (
    hash     INTEGER NOT NULL,                -- 64-bit hash of the block's readings
    board_id INTEGER NOT NULL,
    start    INTEGER NOT NULL,                -- index into board_readings' circuit list
    length   INTEGER NOT NULL,
    kind     TEXT NOT NULL CHECK (kind IN ('board', 'run')),
    PRIMARY KEY (hash, board_id, start)
) WITHOUT ROWID;
CREATE INDEX block_fingerprints_board ON block_fingerprints(board_id);

CREATE TABLE lsh_bands (
    band_hash INTEGER NOT NULL,               -- 64-bit hash of (band number, band's MinHash values)
    board_id  INTEGER NOT NULL,
    PRIMARY KEY (band_hash, board_id)
) WITHOUT ROWID;
CREATE INDEX lsh_bands_board ON lsh_bands(board_id);

CREATE TABLE meta (
    key   TEXT PRIMARY KEY,
    value TEXT NOT NULL
);
"""

# the rule profile each certificate was audited with, so reports re-written later (cross-
# certificate findings) show it rather than the later run's; NULL for certificates stored
# before this migration
_V2 = """
ALTER TABLE certificates ADD COLUMN profile_name TEXT;
ALTER TABLE certificates ADD COLUMN profile TEXT  -- JSON: checks.profile.Profile.to_dict()
"""

# circuit fields of the A2:2022 model schedule added to extractor/fields.py: the RCD's own
# standard and rating, insulation neutral-earth, SPD type and status indicator
CIRCUIT_FIELDS_V3 = ("rcd_standard", "rcd_rating", "ir_neutral_earth", "spd_type", "spd_indicator")
_V3 = "\n".join(
    f"ALTER TABLE circuits ADD COLUMN {f}_{part} {kind};"
    for f in CIRCUIT_FIELDS_V3
    for part, kind in (("raw", "TEXT"), ("kind", "TEXT"), ("num", "REAL"))
)

# a board-level RCD (RCD main switch, or the RCD of a split-load board) and the ways it protects
BOARD_FIELDS_V4 = ("board_rcd_idn", "board_rcd_ways")
_V4 = "\n".join(
    f"ALTER TABLE boards ADD COLUMN {f}_{part} {kind};"
    for f in BOARD_FIELDS_V4
    for part, kind in (("raw", "TEXT"), ("kind", "TEXT"), ("num", "REAL"))
)

# One findings table for every finding: per certificate (stage 'certificate', stored with the
# certificate) and across certificates (stage 'corpus', replaced by each cross-certificate
# phase), with severities as checks.model.Severity slugs and the other certificates by content
# hash; verdicts as reports/verdict.py's keys (the word 'clean' goes). Certificates stored
# before this migration keep a verdict mapped from their worst finding ('clean' and 'note'
# become 'incomplete' when the schedule had no circuits or a problem was recorded, else
# 'no_concerns'); the next batch over them decides it again with the cross-certificate checks.
_V5 = """
CREATE TABLE findings_v5 (
    id             INTEGER PRIMARY KEY,
    cert_id        INTEGER NOT NULL REFERENCES certificates(id) ON DELETE CASCADE,
    stage          TEXT NOT NULL CHECK (stage IN ('certificate', 'corpus')),
    check_id       TEXT NOT NULL,
    severity       TEXT NOT NULL CHECK (severity IN ('note', 'query', 'breach', 'impossible')),
    certificate    TEXT NOT NULL,
    message        TEXT NOT NULL,
    reference      TEXT NOT NULL,
    board TEXT, circuit TEXT, field TEXT, recorded TEXT, expected TEXT, tolerance TEXT,
    page INTEGER, x0 REAL, top REAL, x1 REAL, bottom REAL,
    preview        INTEGER NOT NULL,
    related        TEXT NOT NULL,             -- JSON list of the other certificates' names
    related_sha256 TEXT NOT NULL DEFAULT '[]' -- JSON list of their content hashes
);
INSERT INTO findings_v5 (id, cert_id, stage, check_id, severity, certificate, message, reference,
    board, circuit, field, recorded, expected, tolerance, page, x0, top, x1, bottom, preview,
    related)
SELECT id, cert_id, 'certificate', check_id,
    CASE severity WHEN 1 THEN 'note' WHEN 2 THEN 'query' WHEN 3 THEN 'breach'
                  WHEN 4 THEN 'impossible' END,
    certificate, message, reference, board, circuit, field, recorded, expected, tolerance,
    page, x0, top, x1, bottom, preview, related
FROM findings;
DROP TABLE findings;
ALTER TABLE findings_v5 RENAME TO findings;
CREATE INDEX findings_cert ON findings(cert_id, stage);
CREATE INDEX findings_check ON findings(check_id);

ALTER TABLE certificates ADD COLUMN verdict_v5 TEXT;
UPDATE certificates SET verdict_v5 = CASE verdict
    WHEN 'impossible' THEN 'not_credible'
    WHEN 'breach' THEN 'fails_requirements'
    WHEN 'query' THEN 'queries'
    ELSE CASE WHEN n_circuits = 0
                   OR EXISTS (SELECT 1 FROM problems p WHERE p.cert_id = certificates.id)
              THEN 'incomplete' ELSE 'no_concerns' END
END;
ALTER TABLE certificates DROP COLUMN verdict;
ALTER TABLE certificates RENAME COLUMN verdict_v5 TO verdict
"""

# a certificate read with a layout drafted on the fly (certvet/drafting.py): the note its
# reports carry, kept so a verdict decided again from the store still knows it
_V6 = """
ALTER TABLE certificates ADD COLUMN drafted_layout TEXT  -- JSON: DraftedLayoutNote.to_dict()
"""

# the certificate as a whole: dates of issue, edition, premises, age, signatures, observation
# counts, supply and bonding sizes (extractor/fields.py, added with the whole-certificate checks)
CERTIFICATE_FIELDS_V7 = (
    "issue_date", "bs7671_edition", "premises_type", "installation_age",
    "instrument_calibration", "designer_signature", "constructor_signature",
    "inspector_signature", "observations", "c1_count", "c2_count", "c3_count", "fi_count",
    "supply_csa", "main_earthing_csa", "main_bonding_csa", "electrode_ra", "spd_fitted",
)
_V7 = "\n".join(
    f"ALTER TABLE certificates ADD COLUMN {f}_{suffix} {kind};"
    for f in CERTIFICATE_FIELDS_V7
    for suffix, kind in (("raw", "TEXT"), ("kind", "TEXT"), ("num", "REAL"))
) + "\nALTER TABLE check_runs ADD COLUMN reason TEXT;  -- why a check did not apply, or NULL"

MIGRATIONS: tuple[tuple[int, str, str], ...] = (
    (1, "files, certificates, boards, circuits, findings, similarity index", _V1),
    (2, "certificates: rule profile used (profile_name, profile JSON)", _V2),
    (3, "circuits: RCD standard and rating, IR neutral-earth, SPD type and indicator", _V3),
    (4, "boards: board RCD IΔn and the ways it protects (split-load boards)", _V4),
    (5, "one findings table (stage, severity slugs, related hashes); verdict keys", _V5),
    (6, "certificates: the drafted-layout note of a certificate read with a drafted layout", _V6),
    (7, "certificates: whole-certificate fields; check_runs.reason", _V7),
)

LATEST = MIGRATIONS[-1][0]
