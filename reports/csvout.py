"""CSV outputs for one certificate: ``<stem>.records.csv`` (one row per circuit, the columns of
``extractor.frame.circuits_frame``) and ``<stem>.findings.csv`` (the columns of
``checks.model.FINDING_COLUMNS``).

Cell text comes from untrusted PDFs and these files are opened in spreadsheets, so text that a
spreadsheet would run as a formula (starting with ``=``, ``+``, ``@``, a tab or carriage
return, or ``-`` followed by anything but a number) is written with a leading apostrophe.
Readings such as ``-`` and ``-0.01`` are left as printed.
"""

from __future__ import annotations

import csv
import re
from pathlib import Path
from typing import Any

from checks.model import FINDING_COLUMNS
from checks.runner import CheckResults
from extractor.frame import circuit_rows, frame_columns
from extractor.records import Box, Certificate

_PLAIN_NEGATIVE = re.compile(r"^-+\s*$|^-\s*\d+([.,]\d+)?\s*[a-zA-ZΩμ²/]*$")


def neutralise(text: str) -> str:
    """Make one text value safe to open in a spreadsheet."""
    if not text:
        return text
    first = text[0]
    if first in "=+@\t\r" or (first == "-" and not _PLAIN_NEGATIVE.match(text)):
        return "'" + text
    return text


def _box_text(box: Box | None) -> str:
    if box is None:
        return ""
    return f"{box.x0:.2f} {box.top:.2f} {box.x1:.2f} {box.bottom:.2f}"


def _stem(path: str | Path) -> Path:
    p = Path(path)
    return p.with_suffix("") if p.suffix.lower() in (".csv", ".pdf") else p


def write_records_csv(cert: Certificate, path: str | Path) -> Path:
    out = Path(path)
    out.parent.mkdir(parents=True, exist_ok=True)
    columns = frame_columns()
    with out.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(columns)
        for row in circuit_rows(cert):
            w.writerow([_csv_value(row.get(c)) for c in columns])
    return out


def _csv_value(v: Any) -> Any:
    """As pandas would write the typed frame: blanks for missing, text neutralised."""
    if v is None or (isinstance(v, float) and v != v):
        return ""
    if isinstance(v, str):
        return neutralise(v)
    return v


def write_findings_csv(results: CheckResults, path: str | Path) -> Path:
    out = Path(path)
    out.parent.mkdir(parents=True, exist_ok=True)
    with out.open("w", newline="", encoding="utf-8") as fh:
        w = csv.writer(fh)
        w.writerow(FINDING_COLUMNS)
        for f in results.findings:
            d: dict[str, Any] = f.to_dict()
            d["box"] = _box_text(f.box)
            w.writerow(
                [neutralise(v) if isinstance(v, str) else ("" if v is None else v)
                 for v in (d[c] for c in FINDING_COLUMNS)]
            )
    return out


def write_csv(cert: Certificate, results: CheckResults, stem: str | Path) -> tuple[Path, Path]:
    """Write ``<stem>.records.csv`` and ``<stem>.findings.csv``; return both paths."""
    base = _stem(stem)
    records = write_records_csv(cert, base.with_name(base.name + ".records.csv"))
    findings = write_findings_csv(results, base.with_name(base.name + ".findings.csv"))
    return records, findings
