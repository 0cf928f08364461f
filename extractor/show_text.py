"""What the extractor sees: a page's text lines as label and recognise patterns are matched
against them (`certvet show-text`).

    for page in page_lines("cert.pdf", pages=[2]):
        for line in page.lines:
            print(f"{line.x0:.1f} {line.top:.1f} {line.text}")

Horizontal words are grouped into lines exactly as the assembler groups them for label
patterns and as `recognise` joins them (extractor.assemble.group_lines, the layouts' default
line tolerance); text turned 90° follows, one word run per line, left to right, as header
patterns see it. Coordinates: points, origin top-left of the displayed page.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

from certvet.extractor.assemble import group_lines
from certvet.extractor.errors import InputError
from certvet.extractor.layout import ScheduleSpec

LINE_TOLERANCE = ScheduleSpec().line_tolerance  # a layout's default


@dataclass(frozen=True)
class TextLine:
    text: str
    x0: float
    top: float
    x1: float
    bottom: float
    vertical: bool = False


@dataclass
class PageLines:
    number: int
    width: float
    height: float
    rotation: int
    lines: list[TextLine] = field(default_factory=list)


def page_lines(
    path: str,
    *,
    pages: Sequence[int] | None = None,
    engine: str = "pdfium",
    password: str | None = None,
    tolerance: float = LINE_TOLERANCE,
) -> list[PageLines]:
    """The text lines of the chosen pages (all when None), top to bottom; InputError (one line)
    for a page number the PDF does not have."""
    from certvet.extractor.api import open_document

    doc = open_document(path, engine, password)
    try:
        count = doc.page_count
        wanted = sorted(set(pages)) if pages else list(range(1, count + 1))
        bad = [n for n in wanted if not 1 <= n <= count]
        if bad:
            raise InputError(path, f"has no page {bad[0]} (pages 1-{count})")
        out: list[PageLines] = []
        for page in doc.pages():
            if page.number not in wanted:
                if page.number > wanted[-1]:
                    break
                continue
            shown = PageLines(page.number, page.width, page.height, page.rotation)
            for ln in group_lines(page.words, tolerance):
                shown.lines.append(TextLine(ln.text, min(w.x0 for w in ln.words), ln.top,
                                            max(w.x1 for w in ln.words), ln.bottom))
            for w in sorted((w for w in page.words if w.vertical), key=lambda w: (w.x0, w.top)):
                shown.lines.append(TextLine(w.text, w.x0, w.top, w.x1, w.bottom, vertical=True))
            out.append(shown)
        return out
    finally:
        doc.close()
