"""The per-certificate JSON report.

The document is one object whose first key is ``format_version``. Readers must check it.

Format history:

* 1 — first version: ``format_version``, ``certvet_version``, ``generated_at``, ``verdict``,
  ``counts`` (non-preview findings by severity slug), ``certificate`` (source, sha256, layout,
  engine, page_count, name, ``cells``), ``boards`` (each with ``cells`` and ``circuits``, each
  circuit with ``cells``), ``problems``, ``findings`` (``Finding.to_dict``), ``check_runs``,
  ``profile`` (name, description, path, per-check overrides). A cell is ``Value.to_dict()``
  (kind, raw and, when set, number, unit, text, problem) plus ``box`` (or null).
* 2 — adds ``related``: the findings of the comparison across certificates about this one
  (empty outside a batch run). Each entry has ``finding`` (``Finding.to_dict``), ``others``
  (name, address, date, inspector, report: the other certificates, ``report`` a relative link
  or null) and ``readings`` (board, circuit, field, here, there, relation — ``equal``, ``near``
  for ±1 in the last printed digit, or ``different`` — board_there, circuit_there). Version 1
  documents are still read by ``certificate_from_json``.
* 3 — the ``related`` findings count: ``verdict`` and ``counts`` include them, the verdict key
  ``readings_copied`` (reports/verdict.py) is new, and ``verdict.copies`` lists the messages
  of the readings-match findings (each naming the other certificate and the likely source).
  Versions 1 and 2 are still read.
* 4 — check outcomes say what was found: ``check_runs[].outcome`` is ``raised_nothing``,
  ``found``, ``did_not_apply`` or ``turned_off`` (were ``passed``, ``failed``,
  ``not_applicable``, ``disabled``), with ``outcome_label`` as printed ("found 3"); adds
  ``cautions`` (after ``verdict``): the cautions every report carries (a desk check cannot show
  an installation is safe…). Versions 1 to 3 are still read.
* 5 — adds ``certificate.drafted_layout``: null, or how the layout that read the certificate
  was drafted on the fly because no layout recognised the form (``sample``: the PDF it was
  drafted from, ``confidence``, ``trusted_at``: the trusted threshold, ``trusted``,
  ``saved_to``: the drafted layout file, or null). Versions 1 to 4 are still read.
* 6 — each ``check_runs`` entry adds ``reason``: why the check did not apply, when it
  says (null otherwise). Versions 1 to 5 are still read.

``certificate_from_json`` rebuilds the ``Certificate`` from a document, so checks can be
re-run on a saved report without the PDF.
"""

from __future__ import annotations

import json
from collections.abc import Sequence
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

from certvet.checks.model import Severity
from certvet.checks.profile import Profile
from certvet.checks.runner import CheckResults
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
from certvet.reports.model import CAUTIONS, RelatedFinding
from certvet.reports.verdict import decide

FORMAT_VERSION = 6
READABLE_VERSIONS = (1, 2, 3, 4, 5, 6)


def _box(box: Box | None) -> dict[str, Any] | None:
    return box.to_dict() if box is not None else None


def _cells(cells: dict[str, Cell]) -> dict[str, dict[str, Any]]:
    return {name: dict(cell.value.to_dict(), box=_box(cell.box)) for name, cell in cells.items()}


def report_dict(
    cert: Certificate,
    results: CheckResults,
    *,
    certvet_version: str,
    profile: Profile | None = None,
    generated_at: str | None = None,
    related: Sequence[RelatedFinding] = (),
) -> dict[str, Any]:
    profile = profile or results.profile
    counted = results.with_findings(rf.finding for rf in related)  # verdict and counts
    if generated_at is None:
        generated_at = datetime.now(UTC).isoformat(timespec="seconds")
    return {
        "format_version": FORMAT_VERSION,
        "certvet_version": certvet_version,
        "generated_at": generated_at,
        "verdict": decide(cert, counted).to_dict(),
        "cautions": list(CAUTIONS),
        "counts": {s.slug: counted.count(s) for s in sorted(Severity, reverse=True)},
        "certificate": {
            "name": cert.name,
            "source": cert.source,
            "sha256": cert.sha256,
            "layout": cert.layout,
            "engine": cert.engine,
            "page_count": cert.page_count,
            "cells": _cells(cert.cells),
            "drafted_layout": cert.drafted.to_dict() if cert.drafted is not None else None,
        },
        "boards": [
            {
                "ref": b.ref,
                "page": b.page,
                "cells": _cells(b.cells),
                "circuits": [
                    {"ref": c.ref, "page": c.page, "cells": _cells(c.cells)} for c in b.circuits
                ],
            }
            for b in cert.boards
        ],
        "problems": [
            {
                "message": p.message,
                "field": p.field,
                "board": p.board,
                "circuit": p.circuit,
                "raw": p.raw,
                "box": _box(p.box),
            }
            for p in cert.problems
        ],
        "findings": [f.to_dict() for f in results.findings],
        "related": [rf.to_dict() for rf in related],
        "check_runs": [
            {
                "check_id": r.check_id,
                "title": r.title,
                "outcome": r.outcome.value,
                "outcome_label": r.outcome.describe(r.findings),
                "applied_to": r.applied_to,
                "findings": r.findings,
                "options": r.options,
                "reason": r.reason,
            }
            for r in results.runs
        ],
        "profile": {
            "name": profile.name,
            "description": profile.description,
            "path": profile.path,
            "checks": {
                cid: {
                    "enabled": s.enabled,
                    "severity": s.severity.slug if s.severity is not None else None,
                    "options": s.options,
                }
                for cid, s in profile.checks.items()
            },
        },
    }


def write_json(
    cert: Certificate,
    results: CheckResults,
    path: str | Path,
    *,
    certvet_version: str,
    profile: Profile | None = None,
    generated_at: str | None = None,
    related: Sequence[RelatedFinding] = (),
) -> Path:
    """Write the JSON report for one certificate and return the path.

    UTF-8 and compact: json's C encoder is several times faster than an indented dump.
    """
    out = Path(path)
    out.parent.mkdir(parents=True, exist_ok=True)
    data = report_dict(
        cert, results, certvet_version=certvet_version, profile=profile,
        generated_at=generated_at, related=related,
    )
    out.write_text(
        json.dumps(data, ensure_ascii=False, separators=(",", ":")) + "\n", encoding="utf-8"
    )
    return out


# --- reading back -------------------------------------------------------------------------


def _box_from(d: dict[str, Any] | None) -> Box | None:
    if d is None:
        return None
    return Box(int(d["page"]), float(d["x0"]), float(d["top"]), float(d["x1"]), float(d["bottom"]))


def _cells_from(d: dict[str, dict[str, Any]]) -> dict[str, Cell]:
    cells: dict[str, Cell] = {}
    for name, c in d.items():
        value = Value(
            kind=ValueKind(c["kind"]),
            raw=c["raw"],
            number=c.get("number"),
            unit=c.get("unit"),
            text=c.get("text"),
            problem=c.get("problem"),
            flag=c.get("flag"),
        )
        cells[name] = Cell(name, value, _box_from(c.get("box")))
    return cells


def certificate_from_json(data: dict[str, Any]) -> Certificate:
    """Rebuild the Certificate recorded in a report document (boxes rounded to 0.01 pt)."""
    version = data.get("format_version")
    if version not in READABLE_VERSIONS:
        raise ValueError(
            f"unsupported report format_version {version!r} (this certvet reads "
            f"{', '.join(map(str, READABLE_VERSIONS))})"
        )
    c = data["certificate"]
    cert = Certificate(
        source=c["source"],
        sha256=c["sha256"],
        layout=c["layout"],
        engine=c["engine"],
        page_count=c["page_count"],
        cells=_cells_from(c["cells"]),
        drafted=DraftedLayoutNote.from_dict(c["drafted_layout"]) if c.get("drafted_layout")
        else None,
    )
    for b in data["boards"]:
        board = Board(ref=b["ref"], cells=_cells_from(b["cells"]), page=b["page"])
        for ci in b["circuits"]:
            board.circuits.append(
                Circuit(
                    board=board.ref, ref=ci["ref"], cells=_cells_from(ci["cells"]), page=ci["page"]
                )
            )
        cert.boards.append(board)
    for p in data["problems"]:
        cert.problems.append(
            ExtractionProblem(
                message=p["message"],
                field=p["field"],
                board=p["board"],
                circuit=p["circuit"],
                raw=p["raw"],
                box=_box_from(p["box"]),
            )
        )
    return cert
