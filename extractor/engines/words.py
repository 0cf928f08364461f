"""Characters to words: the one word splitter every engine shares.

An engine turns its library's characters into `Char`s (points, top-left origin of the
displayed page) and calls `build_words`. Given the same chars, every engine gets the same
words, so table assembly sees the same input whatever library read the PDF.

Rules:
* Horizontal text (`direction` "ltr", or "rtl" for text turned 180°): chars whose bottoms lie
  within a fraction of the font size form one line; along the line, a whitespace char or a
  gap wider than `GAP_FACTOR` × font size ends the word.
* Vertical text: chars stacked on the same x (their baseline edge: right edge for text
  turned 90° anticlockwise, read bottom-to-top "btt"; left edge for text turned clockwise,
  read top-to-bottom "ttb") form one line, read in that order, split the same way.
* Chars in a font whose name says dingbats (`DINGBAT_FONT_NAMES`) are mapped through
  `ZAPF_DINGBATS` (ticks drawn as "3", "4"…), and chars in a "Symbol" font through `SYMBOL`
  ("W" → "Ω"). A tick whose font lost its name (a re-printed PDF embeds a renamed subset,
  e.g. "ABCDEF+F3", with a text map that says "4") is recognised by its shape: see
  `_shaped_ticks`.
* Ligature code points (U+FB00–FB06) are decomposed (NFKC: "ﬁ" → "fi"), and a hyphen at a
  line break (soft hyphen U+00AD, PDFium's U+FFFE) reads "-", in every font.
* A char drawn twice at (nearly) the same place — the same text, boxes offset by less than
  `DUPLICATE_FACTOR` × the char's width along the line — is read once (a common fake bold
  draws each glyph two or three times, a fraction of a point apart). PDFium's text page
  already drops most of them; pdfminer keeps them all.

Engines should give `top`/`bottom` from the font's ascent/descent (as pdfplumber does), not
the tight glyph outline, so that chars on one line share their bottom edge.
"""

from __future__ import annotations

import unicodedata
from collections.abc import Iterable
from operator import itemgetter
from typing import NamedTuple

from certvet.extractor.engines.base import ZAPF_DINGBATS, Word

# A gap wider than this × font size between chars ends a word, whether or not a space char
# is there. Word spaces are 0.2–0.33 em in text fonts (Times 0.25, Helvetica 0.278, a
# condensed sans about 0.2; "from memory", the fonts' AFM/hmtx tables); gaps inside a word,
# kerning and rounding included, stayed under 0.03 em on every fixture (re-printed ones too,
# measured). 0.15 breaks at every real space and never inside a word.
GAP_FACTOR = 0.15
DUPLICATE_FACTOR = 0.3  # the same char again within this × its width along the line: a copy
LINE_FACTOR = 0.3  # chars whose baseline edges differ by less than this × size share a line
DIRECTIONS = ("ltr", "rtl", "btt", "ttb")

# The Symbol base-14 font draws Greek letters and maths signs at Latin code points (reportlab
# uses it for "Ω" in the standard fonts); libraries that ignore its encoding report "W".
_SYMBOL_LETTERS = (
    "ΑΒΧΔΕΦΓΗΙϑΚΛΜΝΟΠΘΡΣΤΥςΩΞΨΖ",  # A…Z in the Symbol font's own encoding
    "αβχδεφγηιϕκλμνοπθρστυϖωξψζ",  # a…z
)
SYMBOL = {
    **dict(zip("ABCDEFGHIJKLMNOPQRSTUVWXYZ", _SYMBOL_LETTERS[0], strict=True)),
    **dict(zip("abcdefghijklmnopqrstuvwxyz", _SYMBOL_LETTERS[1], strict=True)),
    "³": "≥",
    "£": "≤",
    "´": "×",
    "±": "±",
    "°": "°",
    "¢": "′",
    "²": "″",
    "-": "−",
}

# One character for each sign PDF libraries decode differently: PDFium reports the Symbol
# font's Omega and Delta as U+2126 OHM SIGN and U+2206 INCREMENT (their Adobe glyph names),
# pdfminer as Greek letters. NFKC folds U+2126 and U+00B5 but leaves U+2206 alone, so words
# carry the Greek letters (the layouts' header patterns are written with them too).
CANONICAL = {"\u2126": "\u03a9", "\u2206": "\u0394", "\u00b5": "\u03bc"}

# Ligature glyphs as the letters they join (pdfminer reports "ﬁ" when the font's text map says
# U+FB01; PDFium already expands them), and the marks of a hyphen at a line break as the
# hyphen drawn there (U+00AD soft hyphen from a text map; U+FFFE is PDFium's).
LIGATURES = {chr(c): unicodedata.normalize("NFKC", chr(c)) for c in range(0xFB00, 0xFB07)}
BREAK_HYPHENS = {"\u00ad": "-", "\ufffe": "-"}
# Ghostscript's pdfwrite (10.0, measured on our re-prints of LibreOffice and weasyprint output)
# writes the text map of a ligature glyph with its UTF-16 bytes swapped: "fi" becomes U+6600
# U+6900 ("昀椀"). Read those spellings as the letters.
SWAPPED_LIGATURES = {"".join(chr(ord(ch) << 8) for ch in letters): letters
                     for letters in ("ff", "fi", "fl", "ffi", "ffl", "ft", "st")}
_TEXT_TABLE = {**CANONICAL, **LIGATURES, **BREAK_HYPHENS, **SWAPPED_LIGATURES}

# Names of fonts that draw ZapfDingbats' glyphs at its codes: the base-14 name and the
# metric-compatible substitutes a re-printing program embeds in its place (URW's D050000L, as
# Ghostscript and cairo ship it; "Dingbats", its older name). Matched on the name without a
# subset prefix, lower case, spaces and hyphens removed.
DINGBAT_FONT_NAMES = ("dingbats", "d050000l")

# ZapfDingbats advance widths (thousandths of an em, the font's AFM file) of the codes that
# draw ticks and crosses. A glyph's advance survives every re-print (the widths are part of the
# font dictionary), and no text font draws a digit as wide as the tick and cross glyphs of
# codes 3–6 (text fonts' digits are 0.5–0.67 em; "from memory", common fonts' metrics).
# Codes 7 and 8 (571, 677) are as wide as some fonts' digits, so they are taken as crosses by
# shape only in a font that also draws a wide tick or cross on the page.
DINGBAT_WIDTHS = {"3": 755, "4": 846, "5": 762, "6": 761, "7": 571, "8": 677}
_WIDE_DINGBATS = frozenset("3456")
SHAPE_TOLERANCE = 0.02  # a glyph's advance within 2 % of the AFM width: the same glyph

class Char(NamedTuple):
    """One char (a tuple: engines make tens of thousands per document, cheaply)."""

    text: str
    x0: float
    top: float
    x1: float
    bottom: float
    size: float
    fontname: str = ""
    upright: bool = True
    direction: str = "ltr"  # "ltr", "rtl" (turned 180°), "btt" (turned 90° anticlockwise), "ttb"

    @property
    def vertical(self) -> bool:
        return self.direction in ("btt", "ttb")


def char_direction(a: float, b: float, c: float, d: float) -> str:
    """Reading direction of a char from its matrix in *displayed* space (y upwards).

    Upright chars (a·d > 0 and b·c <= 0, pdfminer's test) read "ltr", or "rtl" when turned
    180° (a page with /Rotate 180 shows its text upside down: read from the right, it reads as
    written); the others as `direction_from_matrix` says. Components within 1e-6 of zero count
    as zero: a page turned by /Rotate leaves cos 90° = 6e-17 in the matrix, which would make
    text turned 90° look upright (pdfminer's own `upright` flag has that fault).
    """
    a, b, c, d = (0.0 if -1e-6 < v < 1e-6 else v for v in (a, b, c, d))
    if a * d > 0 and b * c <= 0:
        return "ltr" if a > 0 else "rtl"
    return direction_from_matrix(a, b, c, d)


def direction_from_matrix(a: float, b: float, c: float, d: float) -> str:
    """Reading direction of a char from its text matrix in PDF space (y upwards).

    (a, b) is the direction the text advances: rightwards "ltr", upwards on the page "btt"
    (turned 90° anticlockwise), downwards "ttb", leftwards "rtl".
    """
    if abs(a) >= abs(b):
        return "ltr" if a >= 0 else "rtl"
    return "btt" if b > 0 else "ttb"


UNREADABLE = "\ufffd"  # how every engine writes a glyph that has no text
# control chars other than whitespace: never text, only a broken text map gives them
CONTROL_CHARS = frozenset(chr(c) for c in range(32) if not chr(c).isspace())


def is_unreadable(text: str) -> bool:
    """Text a PDF library could not decode: "(cid:NN)" glyph ids or U+FFFD."""
    return "(cid:" in text or "\ufffd" in text


_SYMBOL_TABLE = {**_TEXT_TABLE, **SYMBOL}  # SYMBOL's values are canonical already
_TABLES: dict[str, dict[str, str]] = {}


def _table(fontname: str) -> dict[str, str]:
    """The text mapping for chars of a font (cached by font name)."""
    table = _TABLES.get(fontname)
    if table is None:
        low = fontname.split("+", 1)[-1].lower().replace(" ", "").replace("-", "")
        if any(n in low for n in DINGBAT_FONT_NAMES):
            table = ZAPF_DINGBATS
        elif "symbol" in low:
            table = _SYMBOL_TABLE
        else:
            table = _TEXT_TABLE
        _TABLES[fontname] = table
    return table


def _map_char(ch: Char) -> str:
    return _table(ch.fontname).get(ch.text, ch.text)


# Per direction: the char box (x0, top, x1, bottom) → (line key: the coordinate shared by
# chars on one line, the baseline side of the box; start and end along the reading
# direction, increasing as one reads; em: the font size measured across the line — the
# box's extent across the reading direction, as engines give boxes from descent to
# descent + font size; `Char.size` of a vertical char is its advance, pdfminer's
# convention, far too small to judge gaps).
def _geom_ltr(x0: float, top: float, x1: float, bottom: float) -> tuple[float, ...]:
    return bottom, x0, x1, bottom - top


def _geom_rtl(x0: float, top: float, x1: float, bottom: float) -> tuple[float, ...]:
    return -top, -x1, -x0, bottom - top


def _geom_btt(x0: float, top: float, x1: float, bottom: float) -> tuple[float, ...]:
    return x1, -bottom, -top, x1 - x0


def _geom_ttb(x0: float, top: float, x1: float, bottom: float) -> tuple[float, ...]:
    return -x0, top, bottom, x1 - x0


_GEOM = {"ltr": _geom_ltr, "rtl": _geom_rtl, "btt": _geom_btt, "ttb": _geom_ttb}

# An item is (rounded line key, rounded start, top, x0, text, line key, start, end, em,
# mapped text, char): sorted on its first five fields, as a sort key tuple would be.
_LINE_ORDER = itemgetter(slice(0, 5))
_WORD_ORDER = itemgetter(1, 2, 3, 4)


_NO_FONT = object()  # no font seen yet


def _items(chars: list[Char], direction: str) -> list[tuple]:  # type: ignore[type-arg]
    geom = _GEOM.get(direction, _geom_ltr)
    out: list[tuple] = []  # type: ignore[type-arg]
    append = out.append
    tables = _TABLES
    table: dict[str, str] = {}
    last_font: object = _NO_FONT
    if geom is _geom_ltr:  # nearly every char: `_geom_ltr` inlined
        rounded: dict[float, float] = {}  # the chars of a line share their bottom: round once
        for ch in chars:
            text, x0, top, x1, bottom, _size, fontname = ch[:7]
            if fontname is not last_font:
                table = tables.get(fontname) or _table(fontname)
                last_font = fontname
            rb = rounded.get(bottom)
            if rb is None:
                rb = rounded[bottom] = round(bottom, 3)
            append((rb, x0, top, x0, text, bottom, x0, x1, bottom - top,
                    table.get(text, text), ch))
    else:
        for ch in chars:
            text, x0, top, x1, bottom, _size, fontname = ch[:7]
            key, start, end, em = geom(x0, top, x1, bottom)
            table = tables.get(fontname) or _table(fontname)
            append((round(key, 3), round(start, 3), top, x0, text, key, start, end, em,
                    table.get(text, text), ch))
    out.sort(key=_LINE_ORDER)
    return out


def _lines(items: list[tuple]) -> list[list[tuple]]:  # type: ignore[type-arg]
    """Group one direction's sorted items into lines (deterministic: sorted, then chained)."""
    lines: list[list[tuple]] = []  # type: ignore[type-arg]
    ref = 0.0
    for it in items:
        key = it[5]
        tol = LINE_FACTOR * it[8]
        if lines and abs(key - ref) <= (tol if tol > 0.5 else 0.5):
            lines[-1].append(it)
        else:
            lines.append([it])
            ref = key
    return lines


def _emit(run: list[tuple], texts: list[str], words: list[Word],  # type: ignore[type-arg]
          shaped: list[tuple[int, tuple]]) -> None:  # type: ignore[type-arg]
    """Append the word of a run of items; a lone dingbat code also goes to `shaped` (its
    index in `words` and its item), to be judged by `_shaped_ticks`."""
    first = run[0][10]
    if len(run) == 1:
        text = texts[0]
        if text in DINGBAT_WIDTHS:
            shaped.append((len(words), run[0]))
        words.append(Word(text, first.x0, first.top, first.x1, first.bottom,
                          first.direction in ("btt", "ttb"), first.size, first.direction))
        return
    # the chars' fields as columns: (text, x0, top, x1, bottom, size, ...)
    cols = tuple(zip(*[it[10] for it in run], strict=True))
    words.append(Word(
        "".join(texts),
        min(cols[1]),
        min(cols[2]),
        max(cols[3]),
        max(cols[4]),
        first.direction in ("btt", "ttb"),
        max(cols[5]),
        first.direction,
    ))


def _words_of_line(line: list[tuple], words: list[Word],  # type: ignore[type-arg]
                   shaped: list[tuple[int, tuple]]) -> None:  # type: ignore[type-arg]
    """Append the words of one line (lone dingbat codes noted in `shaped`, see `_emit`)."""
    if len(line) > 1:
        line.sort(key=_WORD_ORDER)
    run: list[tuple] = []  # type: ignore[type-arg]
    texts: list[str] = []
    end = 0.0
    run_em = 0.0
    for it in line:
        text = it[9]
        if not text or text.isspace():
            if run:
                _emit(run, texts, words, shaped)
                run, texts = [], []
            continue
        start, stop, em = it[6], it[7], it[8]
        if run:
            if text == texts[-1]:
                last = run[-1]
                if abs(start - last[6]) <= DUPLICATE_FACTOR * (last[7] - last[6]):
                    continue  # the same glyph drawn again over itself (fake bold): read once
            if start - end > GAP_FACTOR * (em if em > run_em else run_em):
                _emit(run, texts, words, shaped)
                run, texts = [], []
        run.append(it)
        texts.append(text)
        run_em = em
        if len(run) == 1 or stop > end:
            end = stop
    if run:
        _emit(run, texts, words, shaped)


def _tick_shape(it: tuple) -> bool:  # type: ignore[type-arg]
    """Whether a char drawn as a dingbat code has the advance of ZapfDingbats' glyph there."""
    em = it[8]
    if em <= 0:
        return False
    want = DINGBAT_WIDTHS[it[9]]
    advance: float = (it[7] - it[6]) / em * 1000.0
    return abs(advance - want) <= SHAPE_TOLERANCE * want


def _shaped_ticks(words: list[Word], shaped: list[tuple[int, tuple]]) -> None:  # type: ignore[type-arg]
    """Read as ticks and crosses the lone dingbat codes whose glyphs have ZapfDingbats' shape.

    A re-printed PDF embeds the tick font as a renamed subset whose text map says "4": the
    font's name is lost, its glyphs' advances are not. A lone "3"–"6" whose advance is the
    ZapfDingbats glyph's (within `SHAPE_TOLERANCE`) is that glyph; a lone "7" or "8" too,
    when the same font draws such a wide one on the page.
    """
    matched = [(i, it) for i, it in shaped if _tick_shape(it)]
    fonts = {it[10].fontname for _, it in matched if it[9] in _WIDE_DINGBATS}
    for i, it in matched:
        if it[10].fontname in fonts:
            w = words[i]
            words[i] = Word(ZAPF_DINGBATS[it[9]], w.x0, w.top, w.x1, w.bottom, w.vertical,
                            w.size, w.direction)


def _horizontal_order(w: Word) -> tuple[float, float, str]:
    return (round(w.top, 1), w.x0, w.text)


def _vertical_order(w: Word) -> tuple[float, float, str]:
    return (round(w.x0, 1), w.top, w.text)


def build_words(chars: Iterable[Char]) -> list[Word]:
    """Group chars into words. Output order: horizontal words top-to-bottom, left-to-right,
    then vertical words left-to-right, top-to-bottom."""
    by_dir: dict[str, list[Char]] = {d: [] for d in DIRECTIONS}
    for ch in chars:
        lst = by_dir.get(ch[8])
        if lst is None:
            lst = by_dir[ch[8]] = []
        lst.append(ch)
    words: list[Word] = []
    shaped: list[tuple[int, tuple]] = []  # type: ignore[type-arg]
    for direction in sorted(by_dir, key=lambda d: DIRECTIONS.index(d) if d in DIRECTIONS else 99):
        if by_dir[direction]:
            for line in _lines(_items(by_dir[direction], direction)):
                _words_of_line(line, words, shaped)
    if shaped:
        _shaped_ticks(words, shaped)
    horiz = [w for w in words if not w.vertical]
    vert = [w for w in words if w.vertical]
    horiz.sort(key=_horizontal_order)
    vert.sort(key=_vertical_order)
    return horiz + vert
