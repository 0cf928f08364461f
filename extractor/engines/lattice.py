"""The lattice engine (layout `engine = "lattice"`): camelot-py's lattice mode for full grids.

camelot finds the ruled tables and reads each cell's text; this engine turns every camelot
cell into one `Word` with the cell's box (inset a little, so the shared assembler's centre
tests put it in the right column and row band) and the cell edges into `Rule`s. Text outside
the tables (board headings, certificate labels) and the header cells with vertical text come
from the pdfplumber engine's words, so the shared assembler sees a whole page.

Coordinates: camelot reports PDF user space (origin bottom-left); converted here to our
top-left convention (top = page height − y). Pages with /Rotate are not converted by camelot,
and on pages whose CropBox is not the whole MediaBox (or whose MediaBox does not start at 0)
camelot's coordinates are not the displayed page's: on those pages this engine keeps the
pdfplumber words.

Measured facts (camelot 2.0): `engine='vector'` with `layout_kwargs={'boxes_flow': None}` is
fast and reads ruled tables right; camelot returns an empty string for a tick drawn in the
ZapfDingbats base-14 font, so a cell camelot leaves empty while pdfplumber finds text in it
keeps pdfplumber's words (the tick mapped to ✓).
"""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

from certvet.extractor.engines.base import ZAPF_DINGBATS, PageContent, Rule, Word
from certvet.extractor.engines.plumber import PlumberEngine
from certvet.extractor.errors import InputError

INSET = 0.8  # points a cell word sits inside its cell's box


def _read_tables(path: str, password: str | None) -> dict[int, list[Any]]:
    import warnings

    import camelot

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            tables = camelot.read_pdf(
                path,
                pages="all",
                flavor="lattice",
                engine="vector",
                password=password,
                layout_kwargs={"boxes_flow": None},
                suppress_stdout=True,
            )
        except Exception as exc:  # noqa: BLE001 - camelot raises many types; one line out
            text = " ".join(str(exc).split())[:200] or type(exc).__name__
            raise InputError(path, f"camelot could not read the PDF: {text}") from None
    out: dict[int, list[Any]] = {}
    for t in tables:
        out.setdefault(int(t.page), []).append(t)
    return out


def _inside(w: Word, x0: float, top: float, x1: float, bottom: float) -> bool:
    cx, cy = (w.x0 + w.x1) / 2, (w.top + w.bottom) / 2
    return x0 <= cx <= x1 and top <= cy <= bottom


def convert_page(base: PageContent, tables: list[Any]) -> PageContent:
    """Replace the words inside camelot's cells by one word per cell; add the cell edges."""
    if base.rotation or not tables:
        return base
    h = base.height
    words = list(base.words)
    rules = list(base.rules)
    for t in tables:
        if t.shape[1] < 2:
            continue  # a framed one-column box (certificate details), not a table: keep its lines
        seen: set[tuple[float, float, float, float]] = set()
        for row in t.cells:
            for c in row:
                box = (float(c.x1), h - float(c.y2), float(c.x2), h - float(c.y1))
                if box in seen or box[2] - box[0] < 1 or box[3] - box[1] < 1:
                    continue
                if getattr(c, "hspan", False) or getattr(c, "vspan", False):
                    continue  # part of a spanning cell: camelot's box is not the text's
                seen.add(box)
                x0, top, x1, bottom = box
                rules += [
                    Rule(x0, top, x1, top),
                    Rule(x0, bottom, x1, bottom),
                    Rule(x0, top, x0, bottom),
                    Rule(x1, top, x1, bottom),
                ]
                inside = [w for w in words if _inside(w, *box)]
                text = " ".join(str(c.text or "").split())
                if not inside or any(w.vertical for w in inside):
                    continue  # header cells with turned text: keep pdfplumber's words
                if not text or text in ZAPF_DINGBATS:
                    continue  # a glyph camelot dropped or did not map: keep pdfplumber's
                size = max(w.size for w in inside)
                words = [w for w in words if not any(w is i for i in inside)]
                words.append(
                    Word(text, x0 + INSET, top + INSET, x1 - INSET, bottom - INSET, False, size)
                )
    words.sort(key=lambda w: (w.vertical, round(w.top, 1), w.x0))
    return PageContent(
        base.number,
        base.width,
        base.height,
        base.rotation,
        words,
        rules,
        base.char_count,
        base.unreadable_chars,
    )


class LatticeDocument:
    def __init__(self, path: str, base: Any, tables: dict[int, list[Any]]) -> None:
        self.path = path
        self._base = base
        self._tables = tables
        self.page_count = base.page_count

    def pages(self) -> Iterator[PageContent]:
        for page in self._base.pages():
            if not self._plain_frame(page.number):
                yield page  # camelot's coordinates are not the displayed page's: keep the words
                continue
            yield convert_page(page, self._tables.get(page.number, []))

    def _plain_frame(self, number: int) -> bool:
        """Whether page `number` shows its whole MediaBox, starting at (0, 0): only there do
        camelot's coordinates (MediaBox space) convert to ours by flipping y."""
        obj = self._base.page_obj(number)
        media = [float(v) for v in obj.mediabox]
        crop = [float(v) for v in (obj.cropbox or obj.mediabox)]
        return media[:2] == [0.0, 0.0] and all(abs(a - b) < 0.01 for a, b in zip(media, crop,
                                                                                 strict=True))

    def close(self) -> None:
        self._base.close()


class LatticeEngine:
    name = "lattice"

    def open(self, path: str, password: str | None = None) -> LatticeDocument:
        base = PlumberEngine().open(path, password)  # checks the file, gives clean errors
        try:
            tables = _read_tables(path, password)
        except InputError:
            base.close()
            raise
        return LatticeDocument(path, base, tables)
