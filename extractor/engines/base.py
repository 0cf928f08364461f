"""What every engine produces for a page."""

from __future__ import annotations

from collections.abc import Iterator
from dataclasses import dataclass, field
from typing import Protocol

# ZapfDingbats (a PDF base-14 font) draws ticks and crosses at ASCII code points; libraries
# that ignore the font's encoding report them as digits. Engines map them back.
ZAPF_DINGBATS = {"3": "✓", "4": "✔", "5": "✗", "6": "✗", "7": "✗", "8": "✘"}


@dataclass(frozen=True, init=False)
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

    # The generated __init__ of a frozen dataclass sets each field through
    # object.__setattr__; engines make thousands of words per page, so fill the instance
    # dict in one step (the same fields and defaults; still frozen afterwards).
    def __init__(self, text: str, x0: float, top: float, x1: float, bottom: float,
                 vertical: bool = False, size: float = 0.0, direction: str = "ltr") -> None:
        self.__dict__.update(text=text, x0=x0, top=top, x1=x1, bottom=bottom,
                             vertical=vertical, size=size, direction=direction)


@dataclass(frozen=True, init=False)
class Rule:
    """A ruling line segment (or a thin filled rectangle edge)."""

    x0: float
    top: float
    x1: float
    bottom: float

    def __init__(self, x0: float, top: float, x1: float, bottom: float) -> None:
        # as Word: one dict update instead of four object.__setattr__ calls
        d = self.__dict__
        d["x0"], d["top"], d["x1"], d["bottom"] = x0, top, x1, bottom

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
