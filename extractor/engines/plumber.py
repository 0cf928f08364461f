"""The pdfplumber engine (layout `engine = "pdfplumber"`): chars → shared words, lines → rules.

pdfplumber (through pdfminer.six) already reports coordinates with the page's /Rotate applied
and the origin at the top-left, which is our convention, and each char's matrix in displayed
space. pdfplumber is imported lazily so that `import extractor` stays cheap.

Page boxes: pdfplumber's coordinates start at the top-left of the displayed *MediaBox*, shifted
by where pdfplumber places that box (not 0 when the MediaBox does not start at 0); the
displayed page is the CropBox (PDFium's and every viewer's page). `_PageFrame` moves chars and
rules to the top-left of the displayed CropBox, for every /Rotate (pdfplumber's own `cropbox`
is off for /Rotate 180 and 270, so it is computed here from the raw boxes).

Two pdfminer faults are corrected so that this engine reads what the PDFium engine reads:

* Its `upright` flag is computed without tolerance: on a /Rotate 90 page, text turned 90°
  has cos 90° = 6e-17 in its matrix and passes as upright. The direction is decided from the
  matrix by `words.char_direction` instead.
* pdfminer gives a ligature glyph of a base-14 font zero width when the font's text map
  calls it by its letters ("fi"), and a hyphen the text map calls a soft hyphen:
  `_fix_base14_widths` adds those spellings too.
* For the base-14 Symbol font (reportlab draws Ω and Δ with it) pdfminer looks widths up
  under the Unicode names of the glyphs while it reports the chars by their Latin codes
  ("W", "D"): every Greek letter gets zero width, and the chars after it in the same text
  run are drawn that much too far left (its ZapfDingbats table is off by 32 codes, so ticks
  get a wrong width). `_fix_base14_widths` adds the AFM widths under the codes the fonts
  actually use, so pdfminer places every char where PDFium does.
"""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

from certvet.extractor.engines.base import PageContent, Rule
from certvet.extractor.engines.words import (
    CANONICAL,
    CONTROL_CHARS,
    LIGATURES,
    SYMBOL,
    UNREADABLE,
    Char,
    build_words,
    char_direction,
    is_unreadable,
)
from certvet.extractor.errors import InputError

THIN = 2.0  # a filled rectangle thinner than this (points) is a ruling line
SAME = 1e-3  # coordinates closer than this (points) are equal: a /Rotate or a turned content
# stream leaves cos 90° = 6e-17 in every point, enough for an exact test to miss a rectangle


def axis_rectangle(pts: list[tuple[float, float]]) -> tuple[float, float, float, float] | None:
    """(x0, y0, x1, y1) when four corners (a closed four-sided path) form an axis-aligned
    rectangle, else None; pdfminer's test for a rectangle, with a tolerance of `SAME`."""
    (xa, ya), (xb, yb), (xc, yc), (xd, yd) = pts[:4]

    def eq(u: float, v: float) -> bool:
        return abs(u - v) <= SAME

    if (eq(xa, xb) and eq(yb, yc) and eq(xc, xd) and eq(yd, ya)) or (
        eq(ya, yb) and eq(xb, xc) and eq(yc, yd) and eq(xd, xa)
    ):
        return min(xa, xc), min(ya, yc), max(xa, xc), max(ya, yc)
    return None


def rect_rules(x0: float, top: float, x1: float, bottom: float, stroke: bool) -> list[Rule]:
    """Rules of a rectangle: a thin one is one line, a stroked one its four edges."""
    w, h = x1 - x0, bottom - top
    if h <= THIN and w > h:
        mid = (top + bottom) / 2
        return [Rule(x0, mid, x1, mid)]
    if w <= THIN and h > w:
        mid = (x0 + x1) / 2
        return [Rule(mid, top, mid, bottom)]
    if stroke:
        return [
            Rule(x0, top, x1, top),
            Rule(x0, bottom, x1, bottom),
            Rule(x0, top, x0, bottom),
            Rule(x1, top, x1, bottom),
        ]
    return []


def check_pdf_file(path: str) -> None:
    """Cheap checks before any PDF library sees the file: exists, not empty, has a %PDF header."""
    try:
        with open(path, "rb") as fh:
            head = fh.read(1024)
    except FileNotFoundError:
        raise InputError(path, "file not found") from None
    except IsADirectoryError:
        raise InputError(path, "is a folder, not a PDF file") from None
    except OSError as exc:
        raise InputError(path, f"cannot read file: {exc.strerror or exc}") from None
    if not head:
        raise InputError(path, "empty file (0 bytes)")
    if b"%PDF" not in head:
        raise InputError(path, "not a PDF (no %PDF header)")


def _one_line(exc: BaseException) -> str:
    inner = exc.args[0] if exc.args and isinstance(exc.args[0], BaseException) else exc
    text = " ".join(str(inner).split()) or type(inner).__name__
    return text[:200]


def _is_password_error(exc: BaseException) -> bool:
    inner = exc.args[0] if exc.args and isinstance(exc.args[0], BaseException) else exc
    return type(inner).__name__ in ("PDFPasswordIncorrect", "PDFEncryptionError")


# ZapfDingbats widths (thousandths of an em, from the font's AFM file) of the codes that draw
# ticks and crosses (`base.ZAPF_DINGBATS`); pdfminer's own table for this font is keyed
# 32 codes off, so a tick "3" (a19, 755) gets the width of another glyph (768).
_DINGBAT_WIDTHS = {"3": 755, "4": 846, "5": 762, "6": 761, "7": 571, "8": 677}
_WIDTHS_FIXED = False


def _fix_base14_widths() -> None:
    """Give pdfminer the right widths for the Symbol and ZapfDingbats codes we decode.

    pdfminer looks a width up first by char code (int), then by decoded text. Its Symbol
    table is keyed by Unicode (Omega as U+2126) while Symbol chars decode to their Latin
    codes ("W"), so every Greek letter gets zero width and the chars after it in the same
    text run are placed too far left. Adding entries under the int codes (which pdfminer's
    tables never use) fixes the advance, so pdfminer places every char where PDFium does.
    """
    global _WIDTHS_FIXED
    if _WIDTHS_FIXED:
        return
    from pdfminer.fontmetrics import FONT_METRICS

    symbol = FONT_METRICS["Symbol"][1]
    afm_name = {v: k for k, v in CANONICAL.items()}  # Ω → U+2126 as the AFM file names it
    for code, char in SYMBOL.items():
        width = symbol.get(char, symbol.get(afm_name.get(char, char)))
        if width is not None:
            symbol.setdefault(ord(code), width)  # type: ignore[arg-type]  # pdfminer keys codes
    # A ligature glyph whose text map gives its letters ("fi") is looked up by those letters;
    # the tables know it only by its own code point ("ﬁ"): it would get zero width.
    # The same for a hyphen that the text map calls a soft hyphen (U+00AD).
    for _descriptor, widths in FONT_METRICS.values():
        for lig, letters in LIGATURES.items():
            if lig in widths:
                widths.setdefault(letters, widths[lig])
        if "-" in widths:
            widths.setdefault("\u00ad", widths["-"])
    dingbats = FONT_METRICS["ZapfDingbats"][1]
    for code, width in _DINGBAT_WIDTHS.items():
        dingbats.setdefault(ord(code), width)  # type: ignore[arg-type]  # pdfminer keys codes
    _WIDTHS_FIXED = True


class _PageFrame:
    """pdfplumber's page coordinates → ours: (dx, dy) to subtract, the displayed size."""

    def __init__(self, page: Any) -> None:
        rotation = int(getattr(page, "rotation", 0) or 0) % 360
        obj = page.page_obj
        mx0, my0, mx1, my1 = _normal(obj.mediabox)
        cx0, cy0, cx1, cy1 = _normal(obj.cropbox or obj.mediabox)
        # the displayed page is the part of the CropBox inside the MediaBox
        cx0, cy0, cx1, cy1 = max(cx0, mx0), max(cy0, my0), min(cx1, mx1), min(cy1, my1)
        if cx1 <= cx0 or cy1 <= cy0:
            cx0, cy0, cx1, cy1 = mx0, my0, mx1, my1
        # the CropBox's top-left corner in displayed-MediaBox coordinates (y down)
        if rotation == 90:
            ox, oy = cy0 - my0, cx0 - mx0
        elif rotation == 180:
            ox, oy = mx1 - cx1, cy0 - my0
        elif rotation == 270:
            ox, oy = my1 - cy1, mx1 - cx1
        else:
            ox, oy = cx0 - mx0, my1 - cy1
        self.dx = float(page.mediabox[0]) + ox
        self.dy = float(page.mediabox[1]) + oy
        w, h = cx1 - cx0, cy1 - cy0
        self.width, self.height = (h, w) if rotation in (90, 270) else (w, h)
        self.rotation = rotation

    def box(self, obj: dict[str, Any]) -> tuple[float, float, float, float]:
        dx, dy = self.dx, self.dy
        return (float(obj["x0"]) - dx, float(obj["top"]) - dy, float(obj["x1"]) - dx,
                float(obj["bottom"]) - dy)


def _normal(box: Any) -> tuple[float, float, float, float]:
    x0, y0, x1, y1 = (float(v) for v in box)
    return min(x0, x1), min(y0, y1), max(x0, x1), max(y0, y1)


def _rules(page: Any, frame: _PageFrame) -> list[Rule]:
    rules: list[Rule] = []
    for ln in page.lines:
        rules.append(Rule(*frame.box(ln)))
    for r in page.rects:
        rules.extend(rect_rules(*frame.box(r), bool(r.get("stroke"))))
    for c in page.curves:
        # pdfminer keeps a rectangle whose corners differ by float noise as a "curve"
        path = c.get("path") or []
        ops = "".join(str(seg[0]) for seg in path)
        pts = [(float(x) - frame.dx, float(y) - frame.dy) for x, y in c.get("pts") or []]
        if ops == "mlllh" or (ops == "mllll" and len(pts) == 5
                              and abs(pts[0][0] - pts[4][0]) <= SAME
                              and abs(pts[0][1] - pts[4][1]) <= SAME):
            box = axis_rectangle(pts)
            if box is not None:
                rules.extend(rect_rules(*box, bool(c.get("stroke"))))
    return rules


def _chars(page: Any, frame: _PageFrame) -> list[Char]:
    out: list[Char] = []
    dx, dy = frame.dx, frame.dy
    for c in page.chars:
        m = c.get("matrix") or (1, 0, 0, 1, 0, 0)
        direction = char_direction(*m[:4])
        text = c["text"]
        if text.startswith("(cid:") or text in CONTROL_CHARS:
            text = UNREADABLE  # a glyph with no text: the same mark as the PDFium engine's
        out.append(
            Char(
                text=text,
                x0=float(c["x0"]) - dx,
                top=float(c["top"]) - dy,
                x1=float(c["x1"]) - dx,
                bottom=float(c["bottom"]) - dy,
                size=float(c.get("size") or 0.0),
                fontname=str(c.get("fontname") or ""),
                upright=direction == "ltr",
                direction=direction,
            )
        )
    return out


def page_content(page: Any) -> PageContent:
    frame = _PageFrame(page)
    chars = _chars(page, frame)
    return PageContent(
        number=int(page.page_number),
        width=frame.width,
        height=frame.height,
        rotation=frame.rotation,
        words=build_words(chars),
        rules=_rules(page, frame),
        char_count=len(chars),
        unreadable_chars=sum(1 for c in chars if is_unreadable(c.text)),
    )


class PlumberDocument:
    def __init__(self, path: str, pdf: Any) -> None:
        self.path = path
        self._pdf = pdf
        try:
            self.page_count = len(pdf.pages)
        except Exception as exc:  # noqa: BLE001 - any pdfminer failure is a damaged file
            self.close()
            raise InputError(path, f"damaged or truncated PDF: {_one_line(exc)}") from None

    def pages(self) -> Iterator[PageContent]:
        for page in self._pdf.pages:
            try:
                content = page_content(page)
            except Exception as exc:  # noqa: BLE001
                raise InputError(
                    self.path,
                    f"damaged or truncated PDF: page {page.page_number}: {_one_line(exc)}",
                ) from None
            finally:
                page.close()
            yield content

    def page_obj(self, number: int) -> Any:
        """pdfminer's page object of page `number` (1-based): its raw boxes."""
        return self._pdf.pages[number - 1].page_obj

    def close(self) -> None:
        try:
            self._pdf.close()
        except Exception:  # noqa: BLE001 - closing walks a damaged page tree again: close the file
            stream = getattr(self._pdf, "stream", None)
            if stream is not None:
                stream.close()


class PlumberEngine:
    name = "pdfplumber"

    def open(self, path: str, password: str | None = None) -> PlumberDocument:
        check_pdf_file(path)
        import pdfplumber

        _fix_base14_widths()
        try:
            pdf = pdfplumber.open(path, password=password or "")
        except Exception as exc:  # noqa: BLE001 - pdfminer raises many types; all become one line
            if _is_password_error(exc):
                if password:
                    raise InputError(path, "wrong password") from None
                raise InputError(path, "encrypted: give the password with --password") from None
            raise InputError(path, f"damaged or truncated PDF: {_one_line(exc)}") from None
        return PlumberDocument(path, pdf)
