"""CSV outputs for one certificate: ``<stem>.records.csv`` (one row per circuit, the columns of
``extractor.frame.circuits_frame``) and ``<stem>.findings.csv`` (the columns of
``checks.model.FINDING_COLUMNS``).

Cell text comes from untrusted PDFs and these files are opened in spreadsheets: every cell
goes through `extractor.untrusted.spreadsheet_cell` (formula-like text gets a leading
apostrophe), the one rule every CSV writer of certvet uses (`write_table`).

Every CSV file certvet writes starts with one caution row (a single cell, ``# certvet caution:
...``: a desk check cannot show an installation is safe), then the header row. A spreadsheet
shows the caution first; a program skips one line (`read_table`, or
``pandas.read_csv(path, skiprows=1)``). docs/corpus.md, "Cautions in data files".
"""

from __future__ import annotations

import csv
from collections.abc import Iterable, Sequence
from pathlib import Path
from typing import Any

from certvet.checks.caution import CSV_CAUTION_MARK, CSV_CAUTION_ROW
from certvet.checks.model import FINDING_COLUMNS
from certvet.checks.runner import CheckResults
from certvet.extractor.frame import circuit_rows, frame_columns
from certvet.extractor.records import Box, Certificate
from certvet.extractor.untrusted import spreadsheet_cell
from certvet.extractor.untrusted import spreadsheet_safe as neutralise
from certvet.reports.files import replaced_atomically

__all__ = ["CAUTION_ROW", "neutralise", "read_table", "write_csv", "write_findings_csv",
           "write_records_csv", "write_table"]


CAUTION_ROW = CSV_CAUTION_ROW


def read_table(path: str | Path) -> list[dict[str, str]]:
    """The rows of a CSV file certvet wrote, as dicts (the caution row skipped)."""
    with Path(path).open(encoding="utf-8", newline="") as fh:
        first = fh.readline()
        if not first.lstrip('"').startswith(CSV_CAUTION_MARK):
            raise ValueError(f"{path}: not a certvet CSV file (no caution row first)")
        return list(csv.DictReader(fh))


def write_table(path: str | Path, columns: Sequence[str], rows: Iterable[Sequence[Any]]) -> Path:
    """A CSV file: the caution row, a header row, then each row with every cell made
    spreadsheet-safe."""
    out = Path(path)
    with replaced_atomically(out, newline="") as fh:  # never a truncated file (disk full)
        w = csv.writer(fh)
        w.writerow(CAUTION_ROW)
        w.writerow(columns)
        for row in rows:
            w.writerow([spreadsheet_cell(v) for v in row])
    return out


def _box_text(box: Box | None) -> str:
    if box is None:
        return ""
    return f"{box.x0:.2f} {box.top:.2f} {box.x1:.2f} {box.bottom:.2f}"


def _stem(path: str | Path) -> Path:
    p = Path(path)
    return p.with_suffix("") if p.suffix.lower() in (".csv", ".pdf") else p


def write_records_csv(cert: Certificate, path: str | Path) -> Path:
    columns = frame_columns()
    return write_table(path, columns, ([row.get(c) for c in columns] for row in circuit_rows(cert)))


def _finding_row(d: dict[str, Any], box: Box | None) -> list[Any]:
    d["box"] = _box_text(box)
    return [d[c] for c in FINDING_COLUMNS]


def write_findings_csv(results: CheckResults, path: str | Path) -> Path:
    rows = (_finding_row(f.to_dict(), f.box) for f in results.findings)
    return write_table(path, FINDING_COLUMNS, rows)


def write_csv(cert: Certificate, results: CheckResults, stem: str | Path) -> tuple[Path, Path]:
    """Write ``<stem>.records.csv`` and ``<stem>.findings.csv``; return both paths."""
    base = _stem(stem)
    records = write_records_csv(cert, base.with_name(base.name + ".records.csv"))
    findings = write_findings_csv(results, base.with_name(base.name + ".findings.csv"))
    return records, findings
