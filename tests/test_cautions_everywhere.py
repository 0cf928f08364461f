"""Every file certvet writes carries the safety caution (a desk check cannot show that an
installation is safe), data files included, and the verdict words are the shared vocabulary
(reports/verdict.py; docs/corpus.md "One vocabulary" and "Cautions in data files").

The test walks every file a batch, an audit and the three exports write, so a new writer that
forgets the caution fails here without being listed.
"""

from __future__ import annotations

import csv
import json
from pathlib import Path

import pandas as pd
import pyarrow.parquet as pq
import pytest
from typer.testing import CliRunner

from certvet.checks.caution import DATA_CAUTION, DESK_CHECK_CAUTION, PARQUET_CAUTION_KEY
from certvet.cli import app
from certvet.reports.verdict import VerdictKey

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "fixtures" / "demo"
LAYOUTS = ROOT / "fixtures" / "layouts"
PDFS = [DEMO / "grid-faulty-03.pdf", DEMO / "plain-clean-04.pdf"]
runner = CliRunner()
KEYS = {k.value for k in VerdictKey}


@pytest.fixture(scope="module")
def written(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, str]:
    tmp = tmp_path_factory.mktemp("cautions")
    store = tmp / "s.sqlite"
    res = runner.invoke(app, ["batch", *map(str, PDFS), "-l", str(LAYOUTS), "-s", str(store),
                              "-o", str(tmp / "batch"), "-q"])
    assert res.exit_code in (0, 1), res.output
    res = runner.invoke(app, ["audit", str(PDFS[0]), "-l", str(LAYOUTS), "-o", str(tmp / "one")])
    assert res.exit_code in (0, 1), res.output
    for fmt in ("csv", "parquet", "xlsx"):
        res = runner.invoke(app, ["export", "-s", str(store), "-o", str(tmp / fmt), "-f", fmt])
        assert res.exit_code == 0, res.output
    res = runner.invoke(app, ["audit", str(PDFS[1]), "-l", str(LAYOUTS), "-o", str(tmp / "j"),
                              "--json"])
    assert res.exit_code in (0, 1), res.output
    return tmp, res.stdout


def _files(root: Path) -> list[Path]:
    return sorted(p for p in root.rglob("*") if p.is_file()
                  and p.suffix not in (".sqlite", ".lock"))  # the store and its lock


def test_every_written_file_carries_the_caution(written: tuple[Path, str]) -> None:
    from openpyxl import load_workbook

    root, _ = written
    seen: dict[str, int] = {}
    for path in _files(root):
        kind = path.suffix
        seen[kind] = seen.get(kind, 0) + 1
        if kind == ".csv":  # the first row is the caution, a single cell; the header follows
            with path.open(encoding="utf-8", newline="") as fh:
                first = next(csv.reader(fh))
            assert first == ["# " + DATA_CAUTION], path
        elif kind == ".parquet":
            meta = pq.read_schema(path).metadata or {}
            assert meta.get(PARQUET_CAUTION_KEY.encode(), b"").decode() == DATA_CAUTION, path
        elif kind == ".json":
            doc = json.loads(path.read_text(encoding="utf-8"))
            assert DESK_CHECK_CAUTION in doc.get("cautions", []) or any(
                "cannot show" in c for c in doc.get("cautions", [])), path
        elif kind == ".html":
            assert "cannot show" in path.read_text(encoding="utf-8"), path
        elif kind == ".xlsx":
            first = load_workbook(path, read_only=True).worksheets[0]
            text = " ".join(str(c) for row in first.iter_rows(values_only=True) for c in row if c)
            assert DESK_CHECK_CAUTION in text, path
        else:
            pytest.fail(f"{path}: a file of a kind this test does not know; add its caution check")
    # every kind of output was produced (the walk above really covered them)
    assert {".csv", ".parquet", ".json", ".html", ".xlsx"} <= set(seen), seen


def test_json_on_stdout_carries_the_caution(written: tuple[Path, str]) -> None:
    doc = json.loads(written[1])
    assert DESK_CHECK_CAUTION in doc["cautions"]


def test_data_files_stay_machine_readable_and_use_the_verdict_keys(
        written: tuple[Path, str]) -> None:
    root, _ = written
    csv_certs = pd.read_csv(root / "csv" / "certificates.csv", skiprows=1)
    pq_certs = pd.read_parquet(root / "parquet" / "certificates.parquet")
    assert len(csv_certs) == len(pq_certs) == len(PDFS)
    for frame in (csv_certs, pq_certs):
        assert set(frame["verdict"]) <= KEYS, set(frame["verdict"])
    for path in (root / "batch").rglob("*.json"):
        doc = json.loads(path.read_text(encoding="utf-8"))
        if isinstance(doc.get("verdict"), dict):
            assert doc["verdict"]["key"] in KEYS, path
    # the word 'clean' is no verdict anywhere in the data files (the file names may hold it)
    for path in _files(root):
        if path.suffix in (".csv", ".json"):
            body = path.read_text(encoding="utf-8").replace("plain-clean-04", "")
            assert '"clean"' not in body and ",clean," not in body, path
