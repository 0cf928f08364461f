"""The pypdfium2 engine (name "pdfium"): PDFium's text page → the shared word splitter.

PDFium reports char positions in the *unrotated* page space with the origin bottom-left; this
module turns them into our convention (points, top-left of the displayed page, /Rotate
applied) and gives every char the same box pdfplumber (pdfminer.six) gives it, so that both
engines feed `build_words` the same chars and get the same words:

* x extent: the char's origin plus its advance (PDFium's "loose" char box along the text
  direction);
* y extent: from the font's descent to descent + font size, across the text direction,
  with pdfminer's descent (the AFM value for the 14 standard fonts, else the font's own).

Ruling lines come from the page's path objects, classified as pdfminer classifies them (a
single segment is a line, a closed axis-aligned four-sided subpath a rectangle), so rules
match the pdfplumber engine's too.

Text is mapped by `build_words` (Symbol/ZapfDingbats codes, U+2126/U+2206 → Ω/Δ), and a char's
reading direction is decided on the displayed page with a tolerance (`words.char_direction`),
so text turned 90° on a /Rotate 90 page reads vertical, as in the pdfplumber engine.

Known difference: PDFium lays out chars of embedded fonts with glyph widths rounded to whole
thousandths of an em, so on fonts with fractional widths a char's x can drift from
pdfplumber's along a run of text (up to ~0.7 pt measured on the grid demo forms); words and
records are the same. The 14 standard fonts have whole widths: no drift.

Only raw PDFium calls are used per char (ctypes), the text is read in one call per page, and
everything that is the same for all chars of one text object (matrix, size, font) is read
once per text object: this keeps the engine close to the speed of bare char extraction.
"""

from __future__ import annotations

import ctypes
import math
from collections.abc import Iterator
from typing import Any

from certvet.extractor.engines.base import PageContent, Rule
from certvet.extractor.engines.plumber import SAME, axis_rectangle, check_pdf_file, rect_rules
from certvet.extractor.engines.words import (
    CONTROL_CHARS,
    UNREADABLE,
    Char,
    build_words,
    char_direction,
)
from certvet.extractor.errors import InputError

# Descent (thousandths of an em) pdfminer uses for the 14 standard fonts and their common
# aliases (from the fonts' AFM files); Symbol and ZapfDingbats have none (0).
_STANDARD_DESCENT = {
    "Courier": -194.0,
    "Helvetica": -207.0,
    "Arial": -207.0,
    "Times": -217.0,
    "TimesNewRoman": -217.0,
    "CourierNew": -194.0,
    "Symbol": 0.0,
    "ZapfDingbats": 0.0,
}

_UNREADABLE = UNREADABLE
# no text: control chars (a broken text map gives them, e.g. MuPDF's for a Symbol-font Δ),
# U+FFFF, and PDFium's own mark for a char without a map
_BAD_TEXT = frozenset((*CONTROL_CHARS, "\uffff", _UNREADABLE))
# PDFium reports a hyphen drawn at the end of a line as U+FFFE in the page's text: the glyph
# drawn is a hyphen, which is what pdfminer reports.
_HYPHEN_AT_BREAK = frozenset(("\ufffe",))
_SPECIAL_TEXT = _BAD_TEXT | _HYPHEN_AT_BREAK


def _standard_descent(name: str) -> float | None:
    """pdfminer's descent for a standard (non-embedded) font name, or None."""
    base = name.split("+", 1)[-1]
    for sep in ("-", ","):
        base = base.split(sep, 1)[0]
    value = _STANDARD_DESCENT.get(base.replace(" ", ""))
    return None if value is None else value / 1000.0


def _open_error(path: str, exc: Exception, password: str | None) -> InputError:
    import pypdfium2.raw as raw

    code = getattr(exc, "err_code", None)
    if code == raw.FPDF_ERR_PASSWORD:
        if password:
            return InputError(path, "wrong password")
        return InputError(path, "encrypted: give the password with --password")
    if code == raw.FPDF_ERR_SECURITY:
        return InputError(path, "encrypted with an unsupported security handler")
    if code == raw.FPDF_ERR_FILE:
        return InputError(path, "cannot read file")
    if code == raw.FPDF_ERR_PAGE:
        return InputError(path, "damaged or truncated PDF: page not found or content error")
    return InputError(path, "damaged or truncated PDF: cannot parse the file structure")


class _PageTransform:
    """Unrotated PDF user space (y up) → displayed page, top-left origin (y down)."""

    def __init__(self, mediabox: tuple[float, float, float, float], rotation: int) -> None:
        x0, y0, x1, y1 = mediabox
        self.x0, self.y0 = x0, y0
        self.w, self.h = x1 - x0, y1 - y0
        self.rotation = rotation % 360
        if self.rotation in (90, 270):
            self.width, self.height = self.h, self.w
        else:
            self.width, self.height = self.w, self.h

    def point(self, x: float, y: float) -> tuple[float, float]:
        x -= self.x0
        y -= self.y0
        r = self.rotation
        if r == 0:
            return x, self.h - y
        if r == 90:
            return y, x
        if r == 180:
            return self.w - x, y
        return self.h - y, self.w - x

    def box(self, xs: list[float], ys: list[float]) -> tuple[float, float, float, float]:
        """Axis-aligned box (x0, top, x1, bottom) of user-space points, displayed."""
        pts = [self.point(x, y) for x, y in zip(xs, ys, strict=True)]
        dx = [p[0] for p in pts]
        dy = [p[1] for p in pts]
        return min(dx), min(dy), max(dx), max(dy)


class _Handle(ctypes.c_void_p):
    """A pointer result kept as a ctypes object (a c_void_p subclass is not turned into an
    int), so it can be passed on to a `_bare` function as a pointer."""


def _bare(func: Any, restype: Any = ctypes.c_int) -> Any:
    """The C function behind a pypdfium2 binding, with `restype` and no argument types."""
    bare: Any = ctypes.cast(func, ctypes.CFUNCTYPE(restype))
    bare.argtypes = None
    return bare


_DIRECTIONS: dict[tuple[float, float, float, float, int], str] = {}  # text matrices repeat


class _ObjInfo:
    """What all chars of one text object share."""

    __slots__ = ("a", "b", "c", "d", "size", "fontname", "descent", "direction", "font",
                 "font_handle")

    def __init__(self, a: float, b: float, c: float, d: float, size: float, fontname: str,
                 descent: float, font: int | None, font_handle: Any, rotation: int) -> None:
        self.a, self.b, self.c, self.d = a, b, c, d
        self.size = size
        self.fontname = fontname
        self.descent = descent
        self.font = font  # the font's address: a cache key
        self.font_handle = font_handle
        dkey = (a, b, c, d, rotation)
        direction = _DIRECTIONS.get(dkey)
        if direction is None:
            if len(_DIRECTIONS) > 4096:
                _DIRECTIONS.clear()
            direction = _DIRECTIONS[dkey] = _displayed_direction(a, b, c, d, rotation)
        self.direction = direction


class _Reader:
    """Per-document reusable ctypes buffers and caches."""

    def __init__(self) -> None:
        import pypdfium2.raw as raw

        self.raw = raw
        self.ox = ctypes.c_double()
        self.oy = ctypes.c_double()
        self.rect = raw.FS_RECTF()
        self.matrix = raw.FS_MATRIX()
        self.fbuf = ctypes.create_string_buffer(256)
        self.fflags = ctypes.c_int()
        self.fdesc = ctypes.c_float()
        self.font_descent: dict[int | None, tuple[str, float]] = {}
        self.widths: dict[int | None, dict[str, float]] = {}  # font → char → advance in em
        self.fwidth = ctypes.c_float()
        # The per-char and per-segment calls without ctypes argument conversion (about half
        # the cost of a call through the bindings' argtypes): every pointer argument is passed
        # as a ctypes pointer object (never a bare int), every int as a Python int.
        self.f_origin = _bare(raw.FPDFText_GetCharOrigin)
        self.f_map_error = _bare(raw.FPDFText_HasUnicodeMapError)
        # FPDFText_GetTextObject returning the object's address as an int (None for chars
        # PDFium generated): a cheap per-char key, no pointer object to cast
        self.f_obj_address = _bare(raw.FPDFText_GetTextObject, ctypes.c_void_p)
        self.f_get_object = _bare(raw.FPDFPage_GetObject, _Handle)
        self.f_obj_type = _bare(raw.FPDFPageObj_GetType)
        self.f_segment = _bare(raw.FPDFPath_GetPathSegment, _Handle)
        self.f_segment_type = _bare(raw.FPDFPathSegment_GetType)
        self.f_segment_point = _bare(raw.FPDFPathSegment_GetPoint)
        self.f_segment_close = _bare(raw.FPDFPathSegment_GetClose)
        self.f_count_segments = _bare(raw.FPDFPath_CountSegments)
        self.f_obj_matrix = _bare(raw.FPDFPageObj_GetMatrix)
        self.f_obj_font = _bare(raw.FPDFTextObj_GetFont, ctypes.c_void_p)
        self.f_char_matrix = _bare(raw.FPDFText_GetMatrix)
        self.f_font_size = _bare(raw.FPDFText_GetFontSize, ctypes.c_double)
        self.font_handles: dict[int | None, Any] = {}
        self.f_form_count = _bare(raw.FPDFFormObj_CountObjects)
        self.f_form_object = _bare(raw.FPDFFormObj_GetObject, _Handle)
        self.f_draw_mode = _bare(raw.FPDFPath_GetDrawMode)
        self.matrix_ref = ctypes.byref(self.matrix)
        self.fill = ctypes.c_int()
        self.stroke = ctypes.c_int()
        self.fill_ref = ctypes.byref(self.fill)
        self.stroke_ref = ctypes.byref(self.stroke)
        self.px = ctypes.c_float()
        self.py = ctypes.c_float()
        self.px_ref = ctypes.byref(self.px)
        self.py_ref = ctypes.byref(self.py)

    # --- chars -------------------------------------------------------------------------

    def _text(self, tp: Any, n: int) -> str | None:
        """The page's text, one str char per PDFium char, or None (surrogate pairs present)."""
        raw = self.raw
        buf = ctypes.create_string_buffer((n + 1) * 2)
        got = raw.FPDFText_GetText(tp, 0, n, ctypes.cast(buf, ctypes.POINTER(ctypes.c_ushort)))
        text = buf.raw[: max(got - 1, 0) * 2].decode("utf-16-le", errors="replace")
        return text if len(text) == n else None

    def _font(self, tp: Any, i: int, obj: int) -> tuple[str, float, int | None, Any]:
        """(name, pdfminer's descent in em, cache key, handle) of the font of char i, whose
        text object is at address `obj`."""
        raw = self.raw
        key = self.f_obj_font(ctypes.c_void_p(obj))
        hit = self.font_descent.get(key)
        if hit is not None:
            return hit[0], hit[1], key, self.font_handles[key]
        font = ctypes.cast(key, raw.FPDF_FONT)
        self.font_handles[key] = font
        raw.FPDFText_GetFontInfo(tp, i, self.fbuf, 256, self.fflags)
        name = self.fbuf.value.decode("utf-8", errors="replace")
        descent = _standard_descent(name) if not raw.FPDFFont_GetIsEmbedded(font) else None
        if descent is None:
            descent = self.fdesc.value if raw.FPDFFont_GetDescent(font, 1.0, self.fdesc) else 0.0
            if descent > 0:
                descent = -descent
        self.font_descent[key] = (name, descent)
        return name, descent, key, font

    def _width(self, tp: Any, i: int, info: _ObjInfo, ch: str, rect_ref: Any) -> float:
        """Advance width of a char in em (text space), from the font; else the loose box."""
        raw = self.raw
        handle = info.font_handle
        if len(ch) == 1 and ch != _UNREADABLE and handle is not None and raw.FPDFFont_GetGlyphWidth(
            handle, ord(ch), 1.0, self.fwidth
        ):
            return float(self.fwidth.value)
        raw.FPDFText_GetLooseCharBox(tp, i, rect_ref)
        rect = self.rect
        a, b = info.a, info.b
        scale = (math.hypot(a, b) or 1.0) * (info.size or 1.0)
        if abs(a) >= abs(b):
            span = abs(rect.right - rect.left)
        else:
            span = abs(rect.top - rect.bottom)
        return float(span / scale)

    def chars(self, tp: Any, tf: _PageTransform) -> tuple[list[Char], int]:
        """(chars, unreadable count) of a text page."""
        raw = self.raw
        n = raw.FPDFText_CountChars(tp)
        if n <= 0:
            return [], 0
        text = self._text(tp, n)
        if text is None:
            text = "".join(chr(raw.FPDFText_GetUnicode(tp, i)) for i in range(n))
        char_matrix, font_size, matrix_ref = self.f_char_matrix, self.f_font_size, self.matrix_ref
        get_loose = raw.FPDFText_GetLooseCharBox
        ox, oy, rect, m = self.ox, self.oy, self.rect, self.matrix
        ox_ref, oy_ref = ctypes.byref(ox), ctypes.byref(oy)
        rect_ref = ctypes.byref(rect)
        tp_address = ctypes.cast(tp, ctypes.c_void_p)
        obj_address = self.f_obj_address
        get_origin = self.f_origin
        map_error = self.f_map_error
        new_char = tuple.__new__  # Char(...) without the namedtuple's Python-level __new__
        point = tf.point
        fast = tf.rotation == 0
        ox0, oy1 = tf.x0, tf.y0 + tf.h
        out: list[Char] = []
        append = out.append
        unreadable = 0
        last_key: int | None = -1
        info: _ObjInfo | None = None
        widths: dict[str, float] = {}
        last_x = last_y = math.nan
        # per text object: upright text on an unrotated page (nearly every char) needs no
        # corner transform
        upright = False
        pending: tuple[int, float, float, int] | None = None  # an unreadable char: index,
        # origin, text object
        a = b = c = d = fs = descent = 0.0
        fontname = direction = ""
        for i in range(n):
            key = obj_address(tp_address, i)
            if key is None:  # a char PDFium generated (line break, implied space)
                pending = None
                continue
            ch = text[i]
            if ch in _SPECIAL_TEXT:
                if ch in _HYPHEN_AT_BREAK and not map_error(tp_address, i):
                    ch = "-"
                else:  # (U+FFFE with a map error: a glyph with no text, not a hyphen)
                    ch = _UNREADABLE
                    unreadable += 1
            elif map_error(tp_address, i):
                ch = _UNREADABLE
                unreadable += 1
            get_origin(tp_address, i, ox_ref, oy_ref)
            x, y = ox.value, oy.value
            if key != last_key:
                char_matrix(tp_address, i, matrix_ref)
                size = font_size(tp_address, i)
                name, desc, fkey, font = self._font(tp, i, key)
                info = _ObjInfo(m.a, m.b, m.c, m.d, size, name, desc, fkey, font, tf.rotation)
                a, b, c, d, fs, descent = info.a, info.b, info.c, info.d, info.size, info.descent
                fontname, direction = info.fontname, info.direction
                widths = self.widths.setdefault(fkey, {})
                upright = fast and b == 0.0 and c == 0.0 and a > 0.0 and d > 0.0
                last_key = key
            elif x == last_x and y == last_y and out and not ch.isspace() \
                    and not out[-1].text.isspace():
                # PDFium expands a ligature glyph (ﬃ) into several chars at one origin: keep
                # one char, as pdfplumber does, spanning the glyph's loose box
                prev = out[-1]
                get_loose(tp, i, rect_ref)
                lx0, ltop, lx1, lbottom = tf.box([rect.left, rect.right], [rect.bottom, rect.top])
                if prev.direction in ("btt", "ttb"):  # widen along the reading direction only
                    merged = Char(prev.text + ch, prev.x0, min(prev.top, ltop), prev.x1,
                                  max(prev.bottom, lbottom), prev.size, prev.fontname,
                                  prev.upright, prev.direction)
                else:
                    merged = Char(prev.text + ch, min(prev.x0, lx0), prev.top, max(prev.x1, lx1),
                                  prev.bottom, prev.size, prev.fontname, prev.upright,
                                  prev.direction)
                out[-1] = merged
                pending = None
                continue
            last_x, last_y = x, y
            if pending is not None:
                # the char just before (next in the text, same text object) had no text, so
                # its advance could not be looked up by text: it is the way from its origin to
                # this one's, as the PDF's /Widths put it (PDFium's loose box may use the
                # embedded font's own advance); a line break in between leaves the loose box
                k, px, py, pkey = pending
                pending = None
                if pkey == key:
                    adv = ((x - px) * a + (y - py) * b) / ((a * a + b * b) * fs or 1.0)
                    if 0.0 < adv < 2.0:
                        prev = out[k]
                        bx0, btop, bx1, bbottom = _turned_box(point, px, py, adv, a, b, c, d,
                                                              fs, descent)
                        out[k] = Char(prev.text, bx0, btop, bx1, bbottom, bbottom - btop,
                                      prev.fontname, prev.upright, prev.direction)
            assert info is not None
            if ch == _UNREADABLE:  # glyphs without text share the mark: never cached
                pending = (len(out), x, y, key)
                width = self._width(tp, i, info, ch, rect_ref)
            else:
                # the advance (em fraction) from the font's width table, per font and char
                known = widths.get(ch)
                if known is None:
                    known = widths[ch] = self._width(tp, i, info, ch, rect_ref)
                width = known
            if upright:
                by = y + d * fs * descent
                x0 = x - ox0
                top = oy1 - (by + d * fs)
                bottom = oy1 - by
                append(new_char(Char, (ch, x0, top, x0 + a * width * fs, bottom, bottom - top,
                                       fontname, True, direction)))
                continue
            x0, top, x1, bottom = _turned_box(point, x, y, width, a, b, c, d, fs, descent)
            # as pdfplumber: upright text reads "ltr"; size is the extent along y
            append(Char(ch, x0, top, x1, bottom, bottom - top, fontname, direction == "ltr",
                        direction))
        return out, unreadable

    # --- rules -------------------------------------------------------------------------

    def rules(self, page: Any, tf: _PageTransform) -> list[Rule]:
        rules: list[Rule] = []
        n = self.raw.FPDFPage_CountObjects(page)
        get_object = self.f_get_object
        for i in range(n):
            self._object_rules(get_object(page, i), None, tf, rules, 0)
        return rules

    def _object_rules(self, obj: Any, parent: tuple[float, ...] | None, tf: _PageTransform,
                      rules: list[Rule], depth: int) -> None:
        raw = self.raw
        kind = self.f_obj_type(obj)
        if kind != raw.FPDF_PAGEOBJ_PATH and kind != raw.FPDF_PAGEOBJ_FORM:
            return
        m = self.matrix
        self.f_obj_matrix(obj, self.matrix_ref)
        mat: tuple[float, ...] = (m.a, m.b, m.c, m.d, m.e, m.f)
        if parent is not None:
            mat = _multiply(mat, parent)
        if kind == raw.FPDF_PAGEOBJ_FORM:
            if depth >= 15:
                return
            get_child = self.f_form_object
            for k in range(self.f_form_count(obj)):
                self._object_rules(get_child(obj, k), mat, tf, rules, depth + 1)
            return
        fill, stroke = self.fill, self.stroke
        self.f_draw_mode(obj, self.fill_ref, self.stroke_ref)
        if not fill.value and not stroke.value:
            return  # a clipping path or an invisible one: not drawn
        for ops, pts in self._subpaths(obj, mat):
            _classify(ops, pts, bool(stroke.value), tf, rules)

    def _subpaths(self, obj: Any, mat: tuple[float, ...]) -> list[Subpath]:
        """Each subpath of a path object as (pdfminer-style shape string, page-space points)."""
        raw = self.raw
        a, b, c, d, e, f = mat
        x, y, x_ref, y_ref = self.px, self.py, self.px_ref, self.py_ref
        get_segment, get_type = self.f_segment, self.f_segment_type
        get_point, get_close = self.f_segment_point, self.f_segment_close
        moveto, bezierto = raw.FPDF_SEGMENT_MOVETO, raw.FPDF_SEGMENT_BEZIERTO
        out: list[Subpath] = []
        ops: list[str] = []
        pts: list[tuple[float, float]] = []
        for k in range(self.f_count_segments(obj)):
            seg = get_segment(obj, k)
            kind = get_type(seg)
            get_point(seg, x_ref, y_ref)
            px, py = x.value, y.value
            pt = (a * px + c * py + e, b * px + d * py + f)
            if kind == moveto:
                if ops:
                    out.append(("".join(ops), pts))
                ops, pts = ["m"], [pt]
                continue
            if not ops:
                ops, pts = ["m"], [pt]
                continue
            ops.append("c" if kind == bezierto else "l")
            pts.append(pt)
            if get_close(seg):
                ops.append("h")
        if ops:
            out.append(("".join(ops), pts))
        return out


def _turned_box(point: Any, x: float, y: float, width: float, a: float, b: float, c: float,
                d: float, fs: float, descent: float) -> tuple[float, float, float, float]:
    """Displayed box (x0, top, x1, bottom) of a char at origin (x, y), `width` em wide, in a
    text space with matrix (a, b, c, d) and font size `fs`: from the descent to descent + size
    across the text direction, as pdfminer boxes chars."""
    ux, uy = a * width * fs, b * width * fs
    vx, vy = c * fs, d * fs
    bx, by = x + vx * descent, y + vy * descent
    p0 = point(bx, by)
    p1 = point(bx + ux, by + uy)
    p2 = point(bx + vx, by + vy)
    p3 = point(bx + ux + vx, by + uy + vy)
    return (min(p0[0], p1[0], p2[0], p3[0]), min(p0[1], p1[1], p2[1], p3[1]),
            max(p0[0], p1[0], p2[0], p3[0]), max(p0[1], p1[1], p2[1], p3[1]))


def _displayed_direction(a: float, b: float, c: float, d: float, rotation: int) -> str:
    """Reading direction on the displayed page, decided as the pdfplumber engine decides it.

    (a, b, c, d) is the char matrix in unrotated PDF space; the page is shown turned
    clockwise by `rotation`. pdfminer calls a char upright when a·d > 0 and b·c <= 0 in
    displayed space; the pdfplumber engine reads upright chars "ltr" (text turned 180° too).
    """
    for _ in range(rotation // 90):  # turn both vectors 90° clockwise (y up)
        a, b, c, d = b, -a, d, -c
    return char_direction(a, b, c, d)


def _multiply(m: tuple[float, ...], n: tuple[float, ...]) -> tuple[float, ...]:
    """m then n (PDF row-vector convention)."""
    a, b, c, d, e, f = m
    a2, b2, c2, d2, e2, f2 = n
    return (a * a2 + b * c2, a * b2 + b * d2, c * a2 + d * c2, c * b2 + d * d2,
            e * a2 + f * c2 + e2, e * b2 + f * d2 + f2)


Subpath = tuple[str, list[tuple[float, float]]]


def _classify(ops: str, pts: list[tuple[float, float]], stroke: bool, tf: _PageTransform,
              rules: list[Rule]) -> None:
    """Turn one subpath into rules as the pdfplumber engine does with pdfminer's objects."""
    if "c" in ops:
        return  # a curve: pdfplumber's engine draws no rules from curves either
    base = ops.replace("h", "")
    if base == "ml":
        (xa, ya), (xb, yb) = pts[0], pts[1]
        x0, top, x1, bottom = tf.box([xa, xb], [ya, yb])
        rules.append(Rule(x0, top, x1, bottom))
        return
    if base == "mlll" and "h" in ops:
        pass
    elif not (base == "mllll" and abs(pts[0][0] - pts[4][0]) <= SAME
              and abs(pts[0][1] - pts[4][1]) <= SAME):
        return
    corners = axis_rectangle(pts)
    if corners is None:
        return
    x0, y0, x2, y2 = corners
    rules.extend(rect_rules(*tf.box([x0, x2], [y0, y2]), stroke))


class PdfiumDocument:
    def __init__(self, path: str, pdf: Any) -> None:
        self.path = path
        self._pdf = pdf
        self.page_count = len(pdf)
        self._reader = _Reader()

    def page_content(self, index: int) -> PageContent:
        """One page (0-based index) as PageContent; the page is closed before returning."""
        raw = self._reader.raw
        page = self._pdf[index]
        try:
            rotation = int(page.get_rotation() or 0) % 360
            tf = _PageTransform(tuple(page.get_bbox()), rotation)
            tp = raw.FPDFText_LoadPage(page.raw)
            if not tp:
                raise InputError(self.path, f"damaged PDF: page {index + 1}: text cannot be read")
            try:
                chars, unreadable = self._reader.chars(tp, tf)
            finally:
                raw.FPDFText_ClosePage(tp)
            rules = self._reader.rules(page.raw, tf)
        finally:
            page.close()
        return PageContent(
            number=index + 1,
            width=tf.width,
            height=tf.height,
            rotation=rotation,
            words=build_words(chars),
            rules=rules,
            char_count=len(chars),
            unreadable_chars=unreadable,
        )

    def pages(self) -> Iterator[PageContent]:
        for index in range(self.page_count):
            try:
                content = self.page_content(index)
            except InputError:
                raise
            except Exception as exc:  # noqa: BLE001 - any PDFium failure is a damaged page
                detail = " ".join(str(exc).split())[:200] or type(exc).__name__
                raise InputError(
                    self.path, f"damaged or truncated PDF: page {index + 1}: {detail}"
                ) from None
            yield content

    def close(self) -> None:
        self._pdf.close()


class PdfiumEngine:
    name = "pdfium"

    def open(self, path: str, password: str | None = None) -> PdfiumDocument:
        check_pdf_file(path)
        import pypdfium2 as pdfium

        try:
            pdf = pdfium.PdfDocument(path, password=password or None)
        except pdfium.PdfiumError as exc:
            raise _open_error(path, exc, password) from None
        except OSError as exc:
            raise InputError(path, f"cannot read file: {exc.strerror or exc}") from None
        try:
            count = len(pdf)
        except Exception:  # noqa: BLE001
            pdf.close()
            raise InputError(path, "damaged or truncated PDF: cannot count pages") from None
        if count < 1:
            pdf.close()
            raise InputError(path, "damaged or truncated PDF: no pages")
        return PdfiumDocument(path, pdf)
