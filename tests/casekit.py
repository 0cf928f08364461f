"""Build Certificates from small dicts of printed cell text, for check cases and unit tests.

Cells go through the real token parser (extractor.tokens.parse_value), so a case reads exactly
as the same text printed on a form would.
"""

from __future__ import annotations

import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from certvet.extractor.fields import BOARD, CERTIFICATE, FIELDS
from certvet.extractor.records import Board, Cell, Certificate, Circuit, ExtractionProblem
from certvet.extractor.tokens import parse_value, resolve_row_marks

CASES_DIR = Path(__file__).parent / "cases"


def _cell(name: str, text: str, specs: dict[str, Any]) -> Cell:
    spec = specs[name]
    return Cell(name, parse_value(str(text), spec.kind, spec.unit))


def make_certificate(
    circuits: list[dict[str, Any]],
    board: dict[str, Any] | None = None,
    certificate: dict[str, Any] | None = None,
    boards: list[dict[str, Any]] | None = None,
    problems: list[dict[str, Any]] | None = None,
) -> Certificate:
    """One certificate; `boards` (each with a 'circuits' list) overrides the single board."""
    cert = Certificate(source="case.pdf", sha256="0" * 64, layout="case", engine="case",
                       page_count=1)
    for name, text in (certificate or {}).items():
        cert.cells[name] = _cell(name, text, CERTIFICATE)
    board_list = boards if boards is not None else [dict(board or {}, circuits=circuits)]
    for i, braw in enumerate(board_list):
        braw = dict(braw)
        bcircuits = braw.pop("circuits", [])
        ref = str(braw.pop("board_ref", f"DB{i + 1}"))
        b = Board(ref=ref, page=1)
        b.cells["board_ref"] = _cell("board_ref", ref, BOARD)
        for name, text in braw.items():
            b.cells[name] = _cell(name, text, BOARD)
        for j, craw in enumerate(bcircuits):
            craw = dict(craw)
            cref = str(craw.get("circuit_ref", j + 1))
            craw["circuit_ref"] = cref
            c = Circuit(board=ref, ref=cref, page=1)
            for name, text in craw.items():
                c.cells[name] = _cell(name, text, FIELDS)
            b.circuits.append(c)
        for c, name, why in resolve_row_marks(b.circuits):
            cert.problems.append(ExtractionProblem(f"cannot read {name}: {why}", field=name,
                                                   board=ref, circuit=c.ref))
        cert.boards.append(b)
    for p in problems or []:
        cert.problems.append(ExtractionProblem(**p))
    return cert


@dataclass
class Case:
    check_id: str
    name: str
    expect: int
    source: str
    circuits: list[dict[str, Any]] = field(default_factory=list)
    board: dict[str, Any] = field(default_factory=dict)
    boards: list[dict[str, Any]] | None = None
    certificate: dict[str, Any] = field(default_factory=dict)
    options: dict[str, Any] = field(default_factory=dict)
    severity: str | None = None  # expected severity of the findings, when given
    problems: list[dict[str, Any]] = field(default_factory=list)  # extraction problems
    # where the findings must be: [{ circuit = "2", field = "zs" }, …] (board optional)
    at: list[dict[str, str]] | None = None
    audit_date: str | None = None  # YYYY-MM-DD: the date the audit speaks for (date checks)

    def build(self) -> Certificate:
        return make_certificate(self.circuits, self.board, self.certificate, self.boards,
                                self.problems)


def load_cases() -> list[Case]:
    cases: list[Case] = []
    for path in sorted(CASES_DIR.glob("*.toml")):
        data = tomllib.loads(path.read_text(encoding="utf-8"))
        for raw in data.get("case", []):
            unknown = set(raw) - {"name", "expect", "source", "circuits", "board", "boards",
                                  "certificate", "options", "severity", "problems", "at",
                                  "audit_date"}
            if unknown:
                raise ValueError(f"{path}: case {raw.get('name')!r}: unknown keys {unknown}")
            cases.append(Case(check_id=path.stem, **raw))
    return cases
