"""What every engine produces for a page."""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Protocol

# ZapfDingbats (a PDF base-14 font) draws ticks and crosses at ASCII code points; libraries
# that ignore the font's encoding report them as digits. Engines map them back.
ZAPF_DINGBATS = {"3": "✓", "4": "✔", "5": "✗", "6": "✗", "7": "✗", "8": "✘"}


@dataclass(frozen=True)
class Word:
    """A run of characters on one line, with its box (points, top-left origin)."""

    text: str
    x0: float
    top: float
    x1: float
    bottom: float
    vertical: bool = False  # text turned 90° (read bottom-to-top or top-to-bottom)
    size: float = 0.0  # font size in points
    direction: str = "ltr"  # "ltr", "rtl", "btt" (turned 90° anticlockwise), "ttb"


@dataclass(frozen=True)
class Rule:
    """A ruling line segment (or a thin filled rectangle edge)."""

    x0: float
    top: float
    x1: float
    bottom: float

    @property
    def horizontal(self) -> bool:
        return abs(self.bottom - self.top) <= abs(self.x1 - self.x0)


@dataclass
class PageContent:
    number: int  # 1-based
    width: float
    height: float
    rotation: int  # /Rotate of the page, already applied to the coordinates
    words: list[Word] = field(default_factory=list)
    rules: list[Rule] = field(default_factory=list)
    char_count: int = 0
    unreadable_chars: int = 0  # chars that decoded to (cid:NN) or U+FFFD


class OpenDocument(Protocol):
    page_count: int

    def pages(self) -> Iterator[PageContent]: ...

    def close(self) -> None: ...


class Engine(Protocol):
    name: str

    def open(self, path: str, password: str | None = None) -> OpenDocument:
        """Open a PDF; raise extractor.errors.InputError with a one-line reason on failure."""
        ...
