"""Typed records that flow from the extractor to the checks and reports.

Coordinates: PDF points, origin at the top-left of the page *as displayed* (after /Rotate),
y growing downwards, pages numbered from 1. Every engine converts to this convention.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from enum import StrEnum
from typing import Any


@dataclass(frozen=True)
class Box:
    """Where a value was found: page (1-based) and its bounding box in points (top-left origin)."""

    page: int
    x0: float
    top: float
    x1: float
    bottom: float

    def to_dict(self) -> dict[str, float | int]:
        return {
            "page": self.page,
            "x0": round(self.x0, 2),
            "top": round(self.top, 2),
            "x1": round(self.x1, 2),
            "bottom": round(self.bottom, 2),
        }


class ValueKind(StrEnum):
    """What a cell holds once its text is parsed."""

    NUMBER = "number"  # a plain reading, e.g. "0.42"
    LOWER_BOUND = "lower_bound"  # over-range, e.g. ">999" or "999+": the true value is above
    UPPER_BOUND = "upper_bound"  # under-range, e.g. "<0.01": the true value is below
    TEXT = "text"  # free text (descriptions, device types)
    CONFIRMED = "confirmed"  # tick, "OK", "Yes", "Pass"
    NOT_CONFIRMED = "not_confirmed"  # cross, "No", "Fail"
    NOT_APPLICABLE = "not_applicable"  # "N/A"
    LIMITATION = "limitation"  # "LIM": not tested, limitation recorded
    DASH = "dash"  # a dash written in the cell
    EMPTY = "empty"  # nothing written
    UNREADABLE = "unreadable"  # text that could not be parsed for this field
    DITTO = "ditto"  # a ditto mark ('"', "do"): "as above"; resolved against the row above


@dataclass(frozen=True)
class Value:
    kind: ValueKind
    raw: str
    number: float | None = None  # set for NUMBER, LOWER_BOUND and UPPER_BOUND
    unit: str | None = None  # canonical unit of `number`
    text: str | None = None  # normalised text for TEXT values
    problem: str | None = None  # why an UNREADABLE value could not be parsed
    flag: str | None = None  # how the reading was written, when it needs saying: a footnote
    # mark ("1.37*"), "(calc)", amperes in a mA column, "as above" (ditto), over-range "OL"

    @property
    def is_number(self) -> bool:
        """A plain reading (not a bound)."""
        return self.kind is ValueKind.NUMBER

    @property
    def is_bound(self) -> bool:
        return self.kind in (ValueKind.LOWER_BOUND, ValueKind.UPPER_BOUND)

    @property
    def is_missing(self) -> bool:
        return self.kind in (ValueKind.EMPTY, ValueKind.DASH)

    def display(self) -> str:
        return self.raw if self.raw else "(blank)"

    def to_dict(self) -> dict[str, Any]:
        d: dict[str, Any] = {"kind": self.kind.value, "raw": self.raw}
        if self.number is not None:
            d["number"] = self.number
        if self.unit:
            d["unit"] = self.unit
        if self.text is not None:
            d["text"] = self.text
        if self.problem:
            d["problem"] = self.problem
        if self.flag:
            d["flag"] = self.flag
        return d


EMPTY = Value(ValueKind.EMPTY, "")


@dataclass(frozen=True)
class Cell:
    """One value read from the PDF, with where it came from."""

    field: str
    value: Value
    box: Box | None = None


@dataclass
class Circuit:
    board: str
    ref: str
    cells: dict[str, Cell] = field(default_factory=dict)
    page: int | None = None

    def value(self, name: str) -> Value:
        cell = self.cells.get(name)
        return cell.value if cell else EMPTY

    def number(self, name: str) -> float | None:
        """The plain number of a field, or None when it is blank, a bound, N/A, text…"""
        v = self.value(name)
        return v.number if v.kind is ValueKind.NUMBER else None

    def text(self, name: str) -> str:
        v = self.value(name)
        if v.kind is ValueKind.TEXT and v.text is not None:
            return v.text
        return v.raw.strip()

    def box(self, name: str) -> Box | None:
        cell = self.cells.get(name)
        return cell.box if cell else None


@dataclass
class Board:
    ref: str
    cells: dict[str, Cell] = field(default_factory=dict)
    circuits: list[Circuit] = field(default_factory=list)
    page: int | None = None
    # the circuit count the form declares for the board, as printed, and where (layout key
    # `board.circuit_count`); used only to account for the rows read, not stored in the corpus
    declared_circuits: tuple[str, Box] | None = None

    def value(self, name: str) -> Value:
        cell = self.cells.get(name)
        return cell.value if cell else EMPTY

    def number(self, name: str) -> float | None:
        v = self.value(name)
        return v.number if v.kind is ValueKind.NUMBER else None

    def text(self, name: str) -> str:
        v = self.value(name)
        return (v.text if v.text is not None else v.raw).strip()


@dataclass(frozen=True)
class ExtractionProblem:
    """Something the extractor could not do cleanly; reported as a finding, never dropped."""

    message: str
    field: str | None = None
    board: str | None = None
    circuit: str | None = None
    raw: str | None = None
    box: Box | None = None


@dataclass(frozen=True)
class DraftedLayoutNote:
    """The certificate was read with a layout drafted on the fly, because no layout recognised
    its form (certvet/drafting.py). Nobody has checked that layout: the reports say so.

    Below `trusted_at` the certificate is never called "no concerns found" (reports/verdict.py).
    """

    sample: str  # the PDF the layout was drafted from (this file, or an earlier one of its form)
    confidence: float  # 0…1, see extractor.draft_reading.DraftQuality
    trusted_at: float  # the trusted threshold of the run that read it
    saved_to: str | None = None  # the drafted layout file written for review and reuse

    @property
    def trusted(self) -> bool:
        return self.confidence >= self.trusted_at

    def message(self, source: str | None = None) -> str:
        """One line for reports and the console."""
        from pathlib import Path

        if source is not None and Path(source).resolve() != Path(self.sample).resolve():
            origin = f"drafted from {Path(self.sample).name} (same form)"
        else:
            origin = "drafted from this file"
        text = (f"read with a layout {origin}, confidence {self.confidence:.2f}; "
                "check it before relying on the result")
        if self.saved_to:
            text += f" (layout saved as {self.saved_to})"
        return text

    def untrusted_reason(self) -> str:
        """Why the audit is incomplete when the draft is not trusted."""
        return (f"read with a layout drafted from the file, confidence {self.confidence:.2f}, "
                f"below the {self.trusted_at:.2f} needed to trust it: check the drafted "
                "layout, then audit again with it")

    def to_dict(self) -> dict[str, Any]:
        return {"sample": self.sample, "confidence": self.confidence,
                "trusted_at": self.trusted_at, "trusted": self.trusted,
                "saved_to": self.saved_to}

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> DraftedLayoutNote:
        return cls(str(d["sample"]), float(d["confidence"]), float(d["trusted_at"]),
                   None if d.get("saved_to") is None else str(d["saved_to"]))


@dataclass
class Certificate:
    source: str  # path of the PDF as given
    sha256: str
    layout: str  # layout name
    engine: str  # engine name
    page_count: int
    cells: dict[str, Cell] = field(default_factory=dict)
    boards: list[Board] = field(default_factory=list)
    problems: list[ExtractionProblem] = field(default_factory=list)
    drafted: DraftedLayoutNote | None = None  # set when read with a layout drafted on the fly

    @property
    def name(self) -> str:
        """Short name used in findings: the certificate number when read, else the file name."""
        v = self.value("cert_number")
        if v.kind is ValueKind.TEXT and v.text:
            return v.text
        from pathlib import Path

        return Path(self.source).name

    def value(self, name: str) -> Value:
        cell = self.cells.get(name)
        return cell.value if cell else EMPTY

    def number(self, name: str) -> float | None:
        v = self.value(name)
        return v.number if v.kind is ValueKind.NUMBER else None

    def text(self, name: str) -> str:
        v = self.value(name)
        return (v.text if v.text is not None else v.raw).strip()

    def circuits(self) -> list[tuple[Board, Circuit]]:
        return [(b, c) for b in self.boards for c in b.circuits]
