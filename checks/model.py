"""Findings and check outcomes: what the checks stage hands to the reports stage."""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import IntEnum, StrEnum
from typing import Any

from certvet.extractor.records import Box


class Severity(IntEnum):
    """Our own four-step scale, most serious first when sorted descending.

    Not the certificate's classification codes (C1/C2/C3/FI): reports show each severity as a
    labelled badge with its own mark (``mark``), and a legend that says so.
    """

    NOTE = 1  # worth knowing; no action needed by itself
    QUERY = 2  # ask the contractor: a result that does not add up or is incomplete
    BREACH = 3  # a recorded result fails a requirement of BS 7671
    IMPOSSIBLE = 4  # physically or arithmetically impossible as recorded

    @property
    def label(self) -> str:
        return _SEVERITY_WORDS[self][0]

    @property
    def mark(self) -> str:
        """The shape printed before the label, so a badge never relies on colour alone."""
        return _SEVERITY_WORDS[self][1]

    @property
    def meaning(self) -> str:
        """One sentence for the legend."""
        return _SEVERITY_WORDS[self][2]

    @property
    def slug(self) -> str:
        return self.name.lower()

    @classmethod
    def parse(cls, text: str) -> Severity:
        key = text.strip().lower().replace(" ", "_")
        aliases = {"impossible_or_unsafe": "impossible", "impossible_as_recorded": "impossible"}
        key = aliases.get(key, key)
        for s in cls:
            if s.slug == key:
                return s
        raise ValueError(f"unknown severity {text!r} (use note, query, breach or impossible)")


# label, mark, meaning: the one definition of the severity words (README, legend, badges)
_SEVERITY_WORDS: dict[Severity, tuple[str, str, str]] = {
    Severity.IMPOSSIBLE: (
        "impossible as recorded", "\u2298",  # ⊘
        "the recorded figures cannot all be right (e.g. R1+R2 larger than the measured Zs): "
        "an error in the record, not by itself a danger",
    ),
    Severity.BREACH: (
        "breach", "\u25b2",  # ▲
        "the recorded result fails a requirement of BS 7671 (e.g. measured Zs above the "
        "maximum for the device)",
    ),
    Severity.QUERY: (
        "query", "\u25c6",  # ◆
        "ask the contractor: the results do not add up, are incomplete, or look written down "
        "rather than measured",
    ),
    Severity.NOTE: ("note", "\u25cf", "worth knowing; no action by itself"),  # ●
}


class Outcome(StrEnum):
    """How one check ended on one certificate, in words that say what was found.

    The one vocabulary of check outcomes: the HTML, JSON, CSV and console outputs all print
    ``label``/``describe``; the values are the JSON/CSV/store keys. (Before JSON format 3 the
    values were passed / failed / not_applicable / disabled; ``Outcome("failed")`` still reads
    an old stored value.) "failed" is never a check outcome: a check that questions something
    has *found* it, and the console keeps "not audited" for a file that could not be read.
    """

    RAISED_NOTHING = "raised_nothing"  # applied to at least one item and found nothing
    FOUND = "found"  # at least one finding
    DID_NOT_APPLY = "did_not_apply"  # nothing on the certificate it applies to
    TURNED_OFF = "turned_off"  # turned off by the rule profile

    @classmethod
    def _missing_(cls, value: object) -> Outcome | None:
        return _OUTCOME_BEFORE_V3.get(str(value))

    @property
    def label(self) -> str:
        """The outcome as words: "raised nothing", "found", "did not apply", "turned off"."""
        return self.value.replace("_", " ")

    def describe(self, findings: int) -> str:
        """The outcome of one run as printed: "found 3", "raised nothing"…"""
        return f"found {findings}" if self is Outcome.FOUND else self.label


_OUTCOME_BEFORE_V3 = {
    "passed": Outcome.RAISED_NOTHING,
    "failed": Outcome.FOUND,
    "not_applicable": Outcome.DID_NOT_APPLY,
    "disabled": Outcome.TURNED_OFF,
}


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
