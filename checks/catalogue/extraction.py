"""What the extractor could not read: every problem and unreadable cell becomes a finding."""

from __future__ import annotations

import dataclasses
from collections.abc import Iterable

from certvet.checks.base import CertificateCheck
from certvet.checks.model import Finding, Severity
from certvet.checks.registry import register
from certvet.extractor.fields import BOARD, CERTIFICATE, FIELDS
from certvet.extractor.records import Board, Certificate, Circuit, ValueKind


def _label(name: str | None) -> str:
    if name is None:
        return "a value"
    spec = FIELDS.get(name) or BOARD.get(name) or CERTIFICATE.get(name)
    return spec.label if spec else name


@register
class CellUnreadable(CertificateCheck):
    """A cell the extractor could not read, or any other extraction problem.

    What it checks:
    Every cell parsed as unreadable (text that fits nothing its field can hold, e.g. "0.4S"
    in a Zs column or "✓" in an insulation column), at certificate, board and circuit level,
    and every problem the extractor recorded on the certificate (a row it could not place,
    a column it could not find). Each becomes one finding naming the field and the raw text.
    An extractor problem about the same cell as an unreadable value is reported once.

    Why it matters:
    Nothing is silently dropped: a value the audit could not read is a value no other check
    has looked at, so the reader must see it and judge it by eye.

    Known false alarms:
    Legible but unusual ways of writing a value the token parser does not know yet; the
    layout or the parser should learn them.

    Failing example:
    Zs cell "0.4S" (a stray letter): unreadable, "not a number this field can hold".

    Passing example:
    Zs "0.45", IR ">999", polarity "✓", RCD time "N/A": all readable.

    Options:
    none.

    Reference:
    Common practice, no source (an audit must show what it could not read).
    """

    id = "cell-unreadable"
    title = "Cell could not be read"
    severity = Severity.QUERY
    reference = "common practice, no source"
    basis = "common practice"
    group = "extraction"

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        found: list[Finding] = []
        seen: set[tuple[str | None, str | None, str | None]] = set()

        for name, cell in cert.cells.items():
            if cell.value.kind is ValueKind.UNREADABLE:
                seen.add((None, None, name))
                found.append(self._unreadable(cert, name, cell.value.raw, cell.value.problem))
        for board in cert.boards:
            for name, cell in board.cells.items():
                if cell.value.kind is ValueKind.UNREADABLE:
                    seen.add((board.ref, None, name))
                    found.append(self._unreadable(cert, name, cell.value.raw,
                                                  cell.value.problem, board=board))
            for circuit in board.circuits:
                for name, cell in circuit.cells.items():
                    if cell.value.kind is ValueKind.UNREADABLE:
                        seen.add((board.ref, circuit.ref, name))
                        found.append(self._unreadable(cert, name, cell.value.raw,
                                                      cell.value.problem, board=board,
                                                      circuit=circuit))

        boards = {b.ref: b for b in cert.boards}
        for p in cert.problems:
            if p.field is not None and (p.board, p.circuit, p.field) in seen:
                continue
            pboard: Board | None = boards.get(p.board) if p.board else None
            pcircuit: Circuit | None = None
            if pboard is not None and p.circuit is not None:
                pcircuit = next((c for c in pboard.circuits if c.ref == p.circuit), None)
            raw = f" (text: {p.raw!r})" if p.raw else ""
            finding = self.make(
                cert,
                f"Extraction problem with {_label(p.field)}: {p.message}{raw}.",
                board=pboard,
                circuit=pcircuit,
                field=p.field,
                recorded=p.raw if p.raw is not None else "",
            )
            finding = dataclasses.replace(
                finding,
                board=p.board if pboard is None else finding.board,
                circuit=p.circuit if pcircuit is None else finding.circuit,
                box=p.box or finding.box,
                page=p.box.page if p.box else finding.page,
            )
            found.append(finding)
        return found

    def _unreadable(self, cert: Certificate, name: str, raw: str, problem: str | None, *,
                    board: Board | None = None, circuit: Circuit | None = None) -> Finding:
        return self.make(
            cert,
            f"{_label(name)} could not be read: {raw!r} ({problem or 'unreadable'}).",
            board=board,
            circuit=circuit,
            field=name,
            recorded=raw,
        )
