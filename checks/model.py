"""Findings and check outcomes: what the checks stage hands to the reports stage."""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import IntEnum, StrEnum
from typing import Any

from extractor.records import Box


class Severity(IntEnum):
    """Our own four-step scale, most serious first when sorted descending."""

    NOTE = 1  # worth knowing; no action needed by itself
    QUERY = 2  # ask the contractor: a result that does not add up or is incomplete
    BREACH = 3  # a recorded result fails a requirement of BS 7671
    IMPOSSIBLE = 4  # physically impossible or immediately unsafe as recorded

    @property
    def label(self) -> str:
        return {
            Severity.NOTE: "note",
            Severity.QUERY: "query",
            Severity.BREACH: "breach",
            Severity.IMPOSSIBLE: "impossible or unsafe",
        }[self]

    @property
    def slug(self) -> str:
        return self.name.lower()

    @classmethod
    def parse(cls, text: str) -> Severity:
        key = text.strip().lower().replace(" ", "_")
        aliases = {"impossible_or_unsafe": "impossible"}
        key = aliases.get(key, key)
        for s in cls:
            if s.slug == key:
                return s
        raise ValueError(f"unknown severity {text!r} (use note, query, breach or impossible)")


class Outcome(StrEnum):
    PASSED = "passed"  # applied to at least one item and found nothing
    FAILED = "failed"  # at least one finding
    NOT_APPLICABLE = "not_applicable"  # nothing on the certificate it applies to
    DISABLED = "disabled"  # turned off by the rule profile


@dataclass(frozen=True)
class Finding:
    check_id: str
    severity: Severity
    certificate: str
    message: str  # one sentence in trade language
    reference: str  # document, table/regulation, edition — or "common practice, no source"
    board: str | None = None
    circuit: str | None = None
    field: str | None = None
    recorded: str | None = None
    expected: str | None = None
    tolerance: str | None = None
    page: int | None = None
    box: Box | None = None
    preview: bool = False  # from a preview check: reported, never fails a run
    related: tuple[str, ...] = ()  # other certificates involved (cross-certificate checks)

    def to_dict(self) -> dict[str, Any]:
        return {
            "check_id": self.check_id,
            "severity": self.severity.slug,
            "certificate": self.certificate,
            "board": self.board,
            "circuit": self.circuit,
            "field": self.field,
            "recorded": self.recorded,
            "expected": self.expected,
            "tolerance": self.tolerance,
            "message": self.message,
            "reference": self.reference,
            "page": self.page,
            "box": self.box.to_dict() if self.box else None,
            "preview": self.preview,
            "related": list(self.related),
        }


@dataclass(frozen=True)
class CheckRun:
    """The outcome of one check on one certificate."""

    check_id: str
    title: str
    outcome: Outcome
    applied_to: int  # how many circuits/boards/certificates it looked at
    findings: int
    options: dict[str, Any] = field(default_factory=dict)
    reason: str | None = None  # why a check did not apply, when it says


FINDING_COLUMNS = (
    "check_id", "severity", "certificate", "board", "circuit", "field", "recorded", "expected",
    "tolerance", "message", "reference", "page", "box",
)
