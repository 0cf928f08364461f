"""The base classes every check derives from.

A check is one small class in ``checks/catalogue/`` with its identity declared as data
(id, title, severity, reference, basis, group), typed options with sourced defaults, and a
docstring in fixed sections (see DEVELOPERS.md, "Adding a check"). The runner
(``checks.runner``) applies the rule profile and collects one CheckRun per check.
"""

from __future__ import annotations

import dataclasses
from collections.abc import Iterable, Iterator
from dataclasses import dataclass
from datetime import date
from typing import Any, ClassVar

from certvet.checks.model import Finding, Severity
from certvet.extractor.records import Board, Certificate, Circuit, Value

DOC_SECTIONS = (
    "What it checks",
    "Why it matters",
    "Known false alarms",
    "Failing example",
    "Passing example",
    "Options",
    "Reference",
)
BASES = ("published", "common practice", "from memory")


@dataclass(frozen=True)
class NoOptions:
    pass


def option(default: Any, source: str, help: str, *, above: float | None = None,
           below: float | None = None, names: str | None = None) -> Any:
    """An option field with its default's source and a one-line help.

    What a profile may set it to (checked by checks.profile before any file is read): a number
    is never negative, and stays strictly above `above` / below `below` when given (a voltage
    or a time that is divided by must be above 0); `names` ("circuit" or "certificate") makes a
    text option a comma-separated list of canonical field names of that level."""
    meta = {"source": source, "help": help, "above": above, "below": below, "names": names}
    return dataclasses.field(default=default, metadata=meta)


def fmt(x: float | None, unit: str = "", places: int = 2) -> str:
    """Format a number as the trade writes it: 0.47 Ω, 1.37 Ω, 30 mA."""
    if x is None:
        return "—"
    text = f"{x:.{places}f}"
    return f"{text} {unit}".strip()


class Check:
    id: ClassVar[str]
    title: ClassVar[str]
    severity: ClassVar[Severity]
    reference: ClassVar[str]
    basis: ClassVar[str] = "published"  # "published", "common practice" or "from memory"
    group: ClassVar[str] = "general"
    scope: ClassVar[str] = "circuit"  # "circuit", "board", "certificate" or "corpus"
    preview: ClassVar[bool] = False  # preview checks report but never fail a run
    Options: ClassVar[type] = NoOptions

    def __init__(self, options: Any | None = None, severity: Severity | None = None) -> None:
        self.options = options if options is not None else self.Options()
        self.effective_severity = severity or self.severity
        self.audit_date: date | None = None  # set by the runner; None: today
        self.not_applicable_reason: str | None = None  # why it did not apply, when it says

    def today(self) -> date:
        """The audit date: the one the run was given (tests, gold files), else today."""
        return self.audit_date or date.today()

    def not_applicable(self, reason: str) -> None:
        """Record why the check does not apply (shown with its "not applicable" outcome);
        the caller then returns None."""
        self.not_applicable_reason = reason

    # --- to implement: one of these -------------------------------------------------------
    def run(self, cert: Certificate) -> tuple[int, list[Finding]]:
        """Return (how many items the check applied to, findings)."""
        raise NotImplementedError

    # --- helpers for subclasses -----------------------------------------------------------
    def make(
        self,
        cert: Certificate,
        message: str,
        *,
        board: Board | None = None,
        circuit: Circuit | None = None,
        field: str | None = None,
        recorded: str | None = None,
        expected: str | None = None,
        tolerance: str | None = None,
        severity: Severity | None = None,
        related: tuple[str, ...] = (),
    ) -> Finding:
        box = None
        if field is not None:
            if circuit is not None:
                box = circuit.box(field)
            elif board is not None and field in board.cells:
                box = board.cells[field].box
            elif field in cert.cells:
                box = cert.cells[field].box
        if recorded is None and field is not None:
            holder: Circuit | Board | Certificate | None = circuit or board or cert
            v: Value = holder.value(field) if holder is not None else None  # type: ignore[assignment]
            recorded = v.display() if v is not None else None
        page = box.page if box else (circuit.page if circuit else (board.page if board else None))
        return Finding(
            check_id=self.id,
            severity=severity or self.effective_severity,
            certificate=cert.name,
            message=message,
            reference=self.reference,
            board=board.ref if board else (circuit.board if circuit else None),
            circuit=circuit.ref if circuit else None,
            field=field,
            recorded=recorded,
            expected=expected,
            tolerance=tolerance,
            page=page,
            box=box,
            preview=self.preview,
            related=related,
        )

    @classmethod
    def doc_sections(cls) -> dict[str, str]:
        """The docstring split into its fixed sections ("Heading:" lines)."""
        doc = (cls.__doc__ or "").strip("\n")
        lines = [ln.strip() for ln in doc.splitlines()]
        sections: dict[str, list[str]] = {}
        current = "summary"
        for ln in lines:
            head = ln.rstrip(":")
            if ln.endswith(":") and head in DOC_SECTIONS:
                current = head
                sections[current] = []
                continue
            sections.setdefault(current, []).append(ln)
        return {k: "\n".join(v).strip() for k, v in sections.items()}

    @classmethod
    def option_fields(cls) -> list[dataclasses.Field[Any]]:
        return list(dataclasses.fields(cls.Options))


class CircuitCheck(Check):
    """A check applied to each circuit in turn.

    ``check_circuit`` returns None when the check does not apply to that circuit, else an
    iterable (possibly empty) of findings.
    """

    scope = "circuit"

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        raise NotImplementedError

    def run(self, cert: Certificate) -> tuple[int, list[Finding]]:
        applied = 0
        found: list[Finding] = []
        for board, circuit in cert.circuits():
            result = self.check_circuit(cert, board, circuit)
            if result is None:
                continue
            applied += 1
            found.extend(result)
        return applied, found


class BoardCheck(Check):
    scope = "board"

    def check_board(self, cert: Certificate, board: Board) -> Iterable[Finding] | None:
        raise NotImplementedError

    def run(self, cert: Certificate) -> tuple[int, list[Finding]]:
        applied = 0
        found: list[Finding] = []
        for board in cert.boards:
            result = self.check_board(cert, board)
            if result is None:
                continue
            applied += 1
            found.extend(result)
        return applied, found


class CertificateCheck(Check):
    scope = "certificate"

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        raise NotImplementedError

    def run(self, cert: Certificate) -> tuple[int, list[Finding]]:
        result = self.check_certificate(cert)
        if result is None:
            return 0, []
        return 1, list(result)


class CorpusCheck(Check):
    """A check across certificates: declared here like every other check (identity, options,
    documentation, rule-profile settings), run by the corpus stage (``corpus/crosscheck.py``),
    the only stage that sees the other certificates. The runner of one certificate skips it.
    """

    scope = "corpus"
    group = "corpus"

    def run(self, cert: Certificate) -> tuple[int, list[Finding]]:
        return 0, []  # needs the other certificates: see corpus/crosscheck.py


def iter_findings(result: Iterable[Finding] | None) -> Iterator[Finding]:
    yield from result or ()
