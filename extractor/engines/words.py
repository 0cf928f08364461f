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
* Chars in a font whose name contains "Dingbats" are mapped through `ZAPF_DINGBATS`
  (ticks drawn as "3", "4"…), and chars in a "Symbol" font through `SYMBOL` ("W" → "Ω").

Engines should give `top`/`bottom` from the font's ascent/descent (as pdfplumber does), not
the tight glyph outline, so that chars on one line share their bottom edge.
"""

from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

from extractor.engines.base import ZAPF_DINGBATS, Word

GAP_FACTOR = 0.25  # a gap wider than this × font size between chars ends a word
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


@dataclass(frozen=True)
class Char:
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

    Upright chars (a·d > 0 and b·c <= 0, pdfminer's test) read "ltr", text turned 180° too;
    the others as `direction_from_matrix` says. Components within 1e-6 of zero count as zero:
    a page turned by /Rotate leaves cos 90° = 6e-17 in the matrix, which would make text
    turned 90° look upright (pdfminer's own `upright` flag has that fault).
    """
    a, b, c, d = (0.0 if -1e-6 < v < 1e-6 else v for v in (a, b, c, d))
    if a * d > 0 and b * c <= 0:
        return "ltr"
    return direction_from_matrix(a, b, c, d)


def direction_from_matrix(a: float, b: float, c: float, d: float) -> str:
    """Reading direction of a char from its text matrix in PDF space (y upwards).

    (a, b) is the direction the text advances: rightwards "ltr", upwards on the page "btt"
    (turned 90° anticlockwise), downwards "ttb", leftwards "rtl".
    """
    if abs(a) >= abs(b):
        return "ltr" if a >= 0 else "rtl"
    return "btt" if b > 0 else "ttb"


def is_unreadable(text: str) -> bool:
    """Text a PDF library could not decode: "(cid:NN)" glyph ids or U+FFFD."""
    return "(cid:" in text or "\ufffd" in text


def _map_char(ch: Char) -> str:
    if "dingbats" in ch.fontname.lower():
        return ZAPF_DINGBATS.get(ch.text, ch.text)
    text = ch.text
    if "symbol" in ch.fontname.lower():
        text = SYMBOL.get(text, text)
    return CANONICAL.get(text, text)


def _line_key(ch: Char) -> float:
    """The coordinate shared by chars on one line (the baseline side of the box)."""
    if ch.direction == "btt":
        return ch.x1
    if ch.direction == "ttb":
        return -ch.x0
    if ch.direction == "rtl":
        return -ch.top
    return ch.bottom


def _along(ch: Char) -> tuple[float, float]:
    """(start, end) of a char along its reading direction, increasing as one reads."""
    if ch.direction == "btt":
        return (-ch.bottom, -ch.top)
    if ch.direction == "ttb":
        return (ch.top, ch.bottom)
    if ch.direction == "rtl":
        return (-ch.x1, -ch.x0)
    return (ch.x0, ch.x1)


def _sort_key(ch: Char) -> tuple[float, float, float, float, str]:
    return (round(_line_key(ch), 3), round(_along(ch)[0], 3), ch.top, ch.x0, ch.text)


def _lines(chars: list[Char]) -> list[list[Char]]:
    """Group chars of one direction into lines (deterministic: sorted, then chained)."""
    chars = sorted(chars, key=_sort_key)
    lines: list[list[Char]] = []
    ref = 0.0
    for ch in chars:
        key = _line_key(ch)
        tol = max(LINE_FACTOR * ch.size, 0.5)
        if lines and abs(key - ref) <= tol:
            lines[-1].append(ch)
        else:
            lines.append([ch])
            ref = key
    return lines


def _words_of_line(line: list[Char]) -> list[Word]:
    line = sorted(line, key=lambda c: (round(_along(c)[0], 3), c.top, c.x0, c.text))
    words: list[Word] = []
    run: list[Char] = []
    texts: list[str] = []
    end = 0.0

    def flush() -> None:
        if run:
            words.append(
                Word(
                    text="".join(texts),
                    x0=min(c.x0 for c in run),
                    top=min(c.top for c in run),
                    x1=max(c.x1 for c in run),
                    bottom=max(c.bottom for c in run),
                    vertical=run[0].vertical,
                    size=max(c.size for c in run),
                    direction=run[0].direction,
                )
            )
            run.clear()
            texts.clear()

    for ch in line:
        text = _map_char(ch)
        start, stop = _along(ch)
        if not text or text.isspace():
            flush()
            continue
        if run and start - end > GAP_FACTOR * max(ch.size, run[-1].size):
            flush()
        run.append(ch)
        texts.append(text)
        end = stop if len(run) == 1 else max(end, stop)
    flush()
    return words


def build_words(chars: Iterable[Char]) -> list[Word]:
    """Group chars into words. Output order: horizontal words top-to-bottom, left-to-right,
    then vertical words left-to-right, top-to-bottom."""
    by_dir: dict[str, list[Char]] = {d: [] for d in DIRECTIONS}
    for ch in chars:
        by_dir.setdefault(ch.direction, []).append(ch)
    words: list[Word] = []
    for direction in sorted(by_dir, key=lambda d: DIRECTIONS.index(d) if d in DIRECTIONS else 99):
        for line in _lines(by_dir[direction]):
            words.extend(_words_of_line(line))
    horiz = sorted(
        (w for w in words if not w.vertical), key=lambda w: (round(w.top, 1), w.x0, w.text)
    )
    vert = sorted((w for w in words if w.vertical), key=lambda w: (round(w.x0, 1), w.top, w.text))
    return horiz + vert
