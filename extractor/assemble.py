"""Apply a layout to page contents: header, columns, rows, boards, certificate values.

Shared by every engine: engines that read the same words and rules produce the same
`Certificate`. Everything here is plain geometry over `Word`s and `Rule`s in points with the
origin at the top-left of the displayed page.

Per schedule page:
1. Words outside the layout's `region` and lines matching `ignore` are dropped.
2. Header candidates are built: the cells of the ruled grid when the page has ruling lines,
   and text blocks otherwise (phrases on a line, stacks of phrases in one x-band, clusters of
   vertical words). Each column's `header` pattern is searched in the candidates' text.
3. Every place where the row-key column's header is found with enough other headers around it
   is one table header ("header instance"); its data runs down to the next header, the next
   board heading, a line matching `end`, or the page/region bottom.
4. Rows: the bands between horizontal rules (ruled tables), or lines anchored on a row key
   with continuation lines joined to the row above (unruled tables).
"""

from __future__ import annotations

import functools
import math
import re
from bisect import bisect_left, bisect_right
from collections.abc import Iterable, Sequence
from dataclasses import dataclass, field, replace
from operator import attrgetter

from certvet.extractor.accounting import account_boards, page_problem
from certvet.extractor.engines.base import PageContent, Rule, Word
from certvet.extractor.engines.words import is_unreadable
from certvet.extractor.fields import BOARD, CERTIFICATE, FIELDS
from certvet.extractor.layout import ColumnSpec, LabelSpec, Layout
from certvet.extractor.patterns import compile_pattern
from certvet.extractor.records import (
    Board,
    Box,
    Cell,
    Certificate,
    Circuit,
    ExtractionProblem,
    Value,
    ValueKind,
)
from certvet.extractor.tokens import parse_value, resolve_row_marks

SNAP = 1.5  # rule positions closer than this (points) are the same grid line
HEADER_SHARE = 0.4  # share of header columns that must be found around a row-key header


# --- text lines -----------------------------------------------------------------------------


@dataclass
class Line:
    words: list[Word]
    top: float
    bottom: float
    text: str
    spans: list[tuple[int, int]]  # character span of each word in `text`

    def words_in_span(self, start: int, end: int) -> list[Word]:
        return [
            w for w, (a, b) in zip(self.words, self.spans, strict=True) if a < end and b > start
        ]


def _centre_y(w: Word) -> float:
    return (w.top + w.bottom) / 2


def _centre_x(w: Word) -> float:
    return (w.x0 + w.x1) / 2


_X_ORDER = attrgetter("x0", "top", "text")  # a line's words left to right


def make_line(words: Sequence[Word]) -> Line:
    ws = sorted(words, key=_X_ORDER)
    parts: list[str] = []
    spans: list[tuple[int, int]] = []
    pos = 0
    for w in ws:
        if parts:
            pos += 1
        n = len(w.text)
        spans.append((pos, pos + n))
        parts.append(w.text)
        pos += n
    return Line(ws, min([w.top for w in ws]), max([w.bottom for w in ws]), " ".join(parts), spans)


def _line_groups(words: Iterable[Word], tolerance: float) -> list[list[Word]]:
    """Horizontal words grouped into lines by vertical centre (within `tolerance` points), top
    to bottom; each group in the order of (centre y, x0, text)."""
    # decorate once (the index keeps the sort stable on equal keys, as a key function would)
    keyed = sorted(
        [((w.top + w.bottom) / 2, w.x0, w.text, k, w)
         for k, w in enumerate(words) if not w.vertical]
    )
    groups: list[list[Word]] = []
    mean = 0.0
    group: list[Word] = []
    for c, _, _, _, w in keyed:
        if group and abs(c - mean) <= tolerance:
            group.append(w)
            mean += (c - mean) / len(group)
        else:
            group = [w]
            groups.append(group)
            mean = c
    return groups


def group_lines(words: Iterable[Word], tolerance: float) -> list[Line]:
    """Horizontal words grouped into lines by vertical centre (within `tolerance` points)."""
    return [make_line(g) for g in _line_groups(words, tolerance)]


def _vertical_lines(words: Sequence[Word]) -> list[list[Word]]:
    """Vertical words grouped into lines of text (same x), in reading order."""
    vs = sorted((w for w in words if w.vertical), key=lambda w: (_centre_x(w), w.top))
    groups: list[list[Word]] = []
    for w in vs:
        if groups and abs(_centre_x(w) - _centre_x(groups[-1][0])) <= max(w.size * 0.4, 1.0):
            groups[-1].append(w)
        else:
            groups.append([w])
    for g in groups:
        g.sort(key=lambda w: -w.bottom if w.direction != "ttb" else w.top)
    if groups and all(g[0].direction == "ttb" for g in groups):
        groups.reverse()  # text turned clockwise: its first line is the right-most
    return groups


def text_of(words: Sequence[Word], tolerance: float = 3.0) -> str:
    """Text of a block of words: horizontal lines top to bottom, then vertical lines."""
    if len(words) == 1:  # most data cells: one word, nothing to order
        return words[0].text
    # the text of `group_lines`, without building Line objects
    parts = [" ".join([w.text for w in sorted(g, key=_X_ORDER)])
             for g in _line_groups(words, tolerance)]
    if any(w.vertical for w in words):
        parts += [" ".join(w.text for w in g) for g in _vertical_lines(words)]
    return " ".join(parts)


def union_box(page: int, words: Sequence[Word]) -> Box:
    return Box(
        page,
        min([w.x0 for w in words]),
        min([w.top for w in words]),
        max([w.x1 for w in words]),
        max([w.bottom for w in words]),
    )


# --- ruling lines and grid cells ------------------------------------------------------------


def _merge_segments(
    segs: list[tuple[float, float, float]],
) -> dict[float, list[tuple[float, float]]]:
    """(position, start, end) segments → position → merged [start, end] intervals."""
    out: dict[float, list[tuple[float, float]]] = {}
    keys: list[float] = []
    # While positions come in ascending order (always, unless one is NaN), keys are more than
    # SNAP apart and at most the newest one can be within SNAP of `pos`: test it alone.
    ascending = True
    prev = -math.inf
    for pos, a, b in sorted(segs):
        if ascending and pos >= prev:
            prev = pos
            key = keys[-1] if keys and abs(keys[-1] - pos) <= SNAP else None
        else:
            ascending = False
            key = next((k for k in keys if abs(k - pos) <= SNAP), None)
        if key is None:
            key = pos
            keys.append(key)
        out.setdefault(key, []).append((min(a, b), max(a, b)))
    for key, ivs in out.items():
        ivs.sort()
        merged: list[tuple[float, float]] = []
        for a, b in ivs:
            if merged and a <= merged[-1][1] + SNAP:
                merged[-1] = (merged[-1][0], max(merged[-1][1], b))
            else:
                merged.append((a, b))
        out[key] = merged
    return out


def _covers(ivs: list[tuple[float, float]] | None, a: float, b: float) -> bool:
    if not ivs:
        return False
    lo, hi = a + SNAP, b - SNAP
    for s, e in ivs:
        if s <= lo and e >= hi:
            return True
    return False


@dataclass
class Grid:
    hs: dict[float, list[tuple[float, float]]]  # y → x-intervals
    vs: dict[float, list[tuple[float, float]]]  # x → y-intervals

    @classmethod
    def from_rules(cls, rules: Sequence[Rule]) -> Grid:
        h = []
        v = []
        for r in rules:
            x0, top, x1, bottom = r.x0, r.top, r.x1, r.bottom
            if abs(bottom - top) <= abs(x1 - x0):  # Rule.horizontal
                h.append(((top + bottom) / 2, x0, x1))
            else:
                v.append(((x0 + x1) / 2, top, bottom))
        return cls(_merge_segments(h), _merge_segments(v))

    def cells(self) -> list[tuple[float, float, float, float]]:
        """Smallest rectangles closed by rules on all four sides."""
        ys = sorted(self.hs)
        xs = sorted(self.vs)
        out = []
        for j, y0 in enumerate(ys):
            for i, x0 in enumerate(xs):
                if not _covers(self.hs[y0], x0, x0 + 2 * SNAP):
                    continue
                if not _covers(self.vs[x0], y0, y0 + 2 * SNAP):
                    continue
                for x1 in xs[i + 1 :]:
                    if not _covers(self.hs[y0], x0, x1):
                        x1 = -1.0
                        break
                    if _covers(self.vs[x1], y0, y0 + 2 * SNAP):
                        break
                else:
                    x1 = -1.0
                if x1 < 0:
                    continue
                for y1 in ys[j + 1 :]:
                    if not (_covers(self.vs[x0], y0, y1) and _covers(self.vs[x1], y0, y1)):
                        break
                    if _covers(self.hs[y1], x0, x1):
                        out.append((x0, y0, x1, y1))
                        break
        return out

    def closed(self, xs: tuple[float, float], top: float, bottom: float) -> bool:
        """Do the vertical rules at the edges xs (where there are any) run from top to bottom?"""
        for x in xs:
            key = next((k for k in self.vs if abs(k - x) <= SNAP), None)
            if key is not None and not _covers(self.vs[key], top, bottom):
                return False
        return True

    def row_rules(self, x: float, top: float, bottom: float) -> list[float]:
        """y of horizontal rules crossing x between top and bottom (inclusive, snapped)."""
        return [
            y
            for y in sorted(self.hs)
            if top - SNAP <= y <= bottom + SNAP and _covers(self.hs[y], x, x)
        ]


# --- header candidates ----------------------------------------------------------------------


@dataclass(frozen=True, init=False)
class Cand:
    text: str
    x0: float
    top: float
    x1: float
    bottom: float
    nwords: int
    ruled: bool

    def __init__(self, text: str, x0: float, top: float, x1: float, bottom: float, nwords: int,
                 ruled: bool) -> None:
        # one dict update, not seven object.__setattr__ calls (pages make hundreds)
        self.__dict__.update(text=text, x0=x0, top=top, x1=x1, bottom=bottom, nwords=nwords,
                             ruled=ruled)

    @property
    def cx(self) -> float:
        return (self.x0 + self.x1) / 2


def _cand(
    words: Sequence[Word],
    ruled: bool,
    box: tuple[float, float, float, float] | None = None,
    tolerance: float = 3.0,
) -> Cand:
    b = box or (
        min([w.x0 for w in words]),
        min([w.top for w in words]),
        max([w.x1 for w in words]),
        max([w.bottom for w in words]),
    )
    return Cand(text_of(words, tolerance), *b, len(words), ruled)


def _inside(w: Word, box: tuple[float, float, float, float]) -> bool:
    cx, cy = _centre_x(w), _centre_y(w)
    return box[0] <= cx <= box[2] and box[1] <= cy <= box[3]


def grid_candidates(
    words: Sequence[Word], cells: Sequence[tuple[float, float, float, float]], tolerance: float
) -> list[Cand]:
    # words sorted once by centre x: each cell takes its x-range by bisection, then its
    # y-range (same test as `_inside`), keeping the words' own order
    order = sorted(range(len(words)), key=lambda i: _centre_x(words[i]))
    cxs = [_centre_x(words[i]) for i in order]
    cys = [_centre_y(w) for w in words]
    out = []
    for box in cells:
        x0, top, x1, bottom = box
        hit = [i for i in order[bisect_left(cxs, x0) : bisect_right(cxs, x1)]
               if top <= cys[i] <= bottom]
        if hit:
            hit.sort()
            out.append(_cand([words[i] for i in hit], True, box, tolerance))
    return out


def text_candidates(lines: Sequence[Line], words: Sequence[Word]) -> list[Cand]:
    """Runs of up to four words of a phrase, pairs of such runs stacked in one x-band on
    consecutive lines ("R1+R2" over "(Ω)"), and clusters of vertical words."""
    runs: list[list[tuple[Cand, list[Word]]]] = []  # per line
    out: list[Cand] = []
    for ln in lines:
        phrases: list[list[Word]] = []
        for w in ln.words:
            if phrases and w.x0 - phrases[-1][-1].x1 <= max(w.size, 4.0):
                phrases[-1].append(w)
            else:
                phrases.append([w])
        row = []
        for p in phrases:
            cys = [(w.top + w.bottom) / 2 for w in p]
            for i in range(len(p)):
                # runs p[i:j] grown one word at a time: box and text kept as they grow
                first = p[i]
                x0, top, x1, bottom = first.x0, first.top, first.x1, first.bottom
                lo = hi = cys[i]
                text = first.text
                for j in range(i + 1, min(i + 4, len(p)) + 1):
                    if j > i + 1:
                        w = p[j - 1]
                        x0 = min(x0, w.x0)
                        top = min(top, w.top)
                        x1 = max(x1, w.x1)
                        bottom = max(bottom, w.bottom)
                        cy = cys[j - 1]
                        lo = min(lo, cy)
                        hi = max(hi, cy)
                        text = text + " " + w.text
                    ws = p[i:j]
                    if hi - lo <= 3.0:
                        # one text line (centres within the tolerance of `_cand`), its words
                        # already in the line's left-to-right order: the text of `text_of`
                        row.append((Cand(text, x0, top, x1, bottom, j - i, False), ws))
                    else:
                        row.append((_cand(ws, False), ws))
        runs.append(row)
        out.extend(c for c, _ in row)

    def mutual(a: Cand, b: Cand) -> bool:
        # centred over each other, or left-aligned in one column ("Zs max" over "(Ω)")
        if a.x0 <= b.cx <= a.x1 and b.x0 <= a.cx <= b.x1:
            return True
        return abs(a.x0 - b.x0) <= 1.0 and (a.x0 <= b.cx <= a.x1 or b.x0 <= a.cx <= b.x1)

    for i in range(len(runs) - 1):
        size = max((w.size for w in lines[i].words), default=8.0)
        if lines[i + 1].top - lines[i].bottom > size:
            continue
        lower_row = runs[i + 1]
        # the lower runs by centre and by left edge: each upper run bisects for the lower runs
        # that can pass `mutual` (centre inside it, or left edge within 1 pt), then tests
        # those alone, in the lower row's own order
        by_cx = sorted(range(len(lower_row)), key=lambda k: lower_row[k][0].cx)
        cxs = [lower_row[k][0].cx for k in by_cx]
        by_x0 = sorted(range(len(lower_row)), key=lambda k: lower_row[k][0].x0)
        x0s = [lower_row[k][0].x0 for k in by_x0]
        for upper, uw in runs[i]:
            near = set(by_cx[bisect_left(cxs, upper.x0) : bisect_right(cxs, upper.x1)])
            near.update(by_x0[bisect_left(x0s, upper.x0 - 1.001) :
                              bisect_right(x0s, upper.x0 + 1.001)])
            for k in sorted(near):
                lower, lw = lower_row[k]
                if mutual(upper, lower):
                    out.append(_cand(uw + lw, False))

    verts = [w for w in words if w.vertical]
    clusters: list[list[Word]] = []
    for w in sorted(verts, key=lambda w: (w.x0, w.top)):
        joined = None
        for c in clusters:
            if any(
                w.x0 - o.x1 <= 0.6 * max(w.size, 1.0)
                and o.x0 - w.x1 <= 0.6 * max(w.size, 1.0)
                and w.top - o.bottom <= w.size
                and o.top - w.bottom <= w.size
                for o in c
            ):
                joined = c
                break
        if joined is None:
            clusters.append([w])
        else:
            joined.append(w)
    out.extend(_cand(c, False) for c in clusters)
    return out


# --- header instances -----------------------------------------------------------------------


@dataclass
class Header:
    top: float
    bottom: float
    ruled: bool
    found: dict[int, Cand]  # column index → its header candidate
    missing: list[int]


def _pref(c: Cand) -> tuple[float, ...]:
    # Prefer the smallest block (a sub-label over its group label), then the top-most.
    return (c.nwords, c.x1 - c.x0 if c.ruled else 0.0, c.top, c.x0)


def find_headers(
    columns: Sequence[ColumnSpec], cands: Sequence[Cand], anchor: int, slack: float
) -> list[Header]:
    hdr_cols = [i for i, c in enumerate(columns) if c.header is not None]
    by_text: dict[str, list[int]] = {}  # many cells repeat ("N/A", "500"): match each once
    for k, c in enumerate(cands):
        by_text.setdefault(c.text, []).append(k)
    texts = set(by_text)
    matches = {}
    for i in hdr_cols:
        pattern = columns[i].header
        assert pattern is not None
        hits = _matching(pattern, texts)
        if len(hits) == 1:
            (t,) = hits
            at = by_text[t]
        else:
            at = sorted(k for t in hits for k in by_text[t])  # the candidates' own order
        matches[i] = sorted([cands[k] for k in at], key=_pref)
    need = max(1, min(2, len(hdr_cols)), int(HEADER_SHARE * len(hdr_cols) + 0.999))
    headers: list[Header] = []
    for a in sorted(matches[anchor], key=lambda c: (c.top, c.x0)):
        if headers and a.top < headers[-1].bottom:
            continue
        lo, hi = a.top - slack, a.bottom + slack
        options = {
            i: [c for c in matches[i] if c.bottom >= lo and c.top <= hi and c.ruled == a.ruled]
            for i in hdr_cols
            if i != anchor
        }
        chosen: dict[int, Cand] = {anchor: a}
        # Unclaimed options per column, narrowed as cells are claimed (a word cannot head two
        # columns).
        free = {
            k: [c for c in opts if c is not a and not _overlaps_any(c, (a,))]
            for k, opts in options.items()
        }
        while free:
            # columns with fewest unclaimed options choose first (a specific pattern
            # keeps its only cell from a looser pattern)
            i = min(free, key=lambda k: (len(free[k]) or 1_000_000, k))
            opts = free.pop(i)
            if opts:
                got = opts[0]
                chosen[i] = got
                for k, rest in free.items():
                    free[k] = [c for c in rest if c is not got and not _overlaps_any(c, (got,))]
        if len(chosen) < need:
            continue
        top = min(c.top for c in chosen.values())
        bottom = max(c.bottom for c in chosen.values())
        headers.append(
            Header(top, bottom, a.ruled, chosen, [i for i in hdr_cols if i not in chosen])
        )
    return headers


# per pattern: the texts searched so far and those it was found in. Pages repeat their texts
# ("N/A", "0.42", column labels): each is searched once, the rest is set arithmetic.
_MATCHES: dict[tuple[str, int], tuple[set[str], set[str]]] = {}
_MATCHES_MAX = 100_000  # texts remembered per pattern before its sets start afresh


def _matching(pattern: re.Pattern[str], texts: set[str]) -> set[str]:
    """The texts in which `pattern` is found."""
    key = (pattern.pattern, pattern.flags)
    got = _MATCHES.get(key)
    if got is None or len(got[0]) > _MATCHES_MAX:
        got = _MATCHES[key] = (set(), set())
    seen, found = got
    new = texts - seen
    if new:
        search = pattern.search
        found.update(t for t in new if search(t))
        seen.update(new)
    return texts & found


def _overlaps_any(c: Cand, others: Iterable[Cand]) -> bool:
    """True when c shares area with a chosen candidate (a word cannot head two columns)."""
    for o in others:
        # min(c.x1, o.x1) - max(c.x0, o.x0), and the same across
        ox = (o.x1 if o.x1 < c.x1 else c.x1) - (o.x0 if o.x0 > c.x0 else c.x0)
        if ox > 0.5:
            oy = (o.bottom if o.bottom < c.bottom else c.bottom) - (
                o.top if o.top > c.top else c.top
            )
            if oy > 0.5 and not (c.ruled and o.ruled):
                return True
    return False


# --- columns --------------------------------------------------------------------------------


def column_extents(
    columns: Sequence[ColumnSpec], header: Header, cands: Sequence[Cand], left: float, right: float
) -> dict[int, tuple[float, float]]:
    ext: dict[int, tuple[float, float]] = {}
    if header.ruled:
        for i, c in header.found.items():
            ext[i] = (c.x0, c.x1)
    else:
        # Boundaries midway between neighbouring header labels; labels no column claims
        # (columns the layout does not read) keep their own share of the width.
        anchors: list[tuple[Cand, int | None]] = [(c, i) for i, c in header.found.items()]
        chosen = list(header.found.values())
        for c in cands:
            if c.ruled or c.nwords != 1 and any(c.x0 < o.cx < c.x1 for o in chosen):
                continue
            if c.bottom < header.top or c.top > header.bottom:
                continue
            if any(min(c.x1, o.x1) - max(c.x0, o.x0) > 0 for o in chosen):
                continue
            if any(min(c.x1, o.x1) - max(c.x0, o.x0) > 0 for o, _ in anchors):
                continue
            anchors.append((c, None))
        anchors.sort(key=lambda t: (t[0].cx, t[0].x0))
        for k, (c, ci) in enumerate(anchors):
            if ci is None:
                continue
            lo = left if k == 0 else _boundary(anchors[k - 1][0], c)
            hi = right if k == len(anchors) - 1 else _boundary(c, anchors[k + 1][0])
            ext[ci] = (lo, hi)
    for i, col in enumerate(columns):
        if col.x is not None:
            ext[i] = col.x
    return ext


def _boundary(a: Cand, b: Cand) -> float:
    """Edge between neighbouring unruled columns: the middle of the gap between their labels
    (right for left-aligned and centred labels alike), or midway between centres when the
    labels overlap."""
    if a.x1 <= b.x0:
        return (a.x1 + b.x0) / 2
    return (a.cx + b.cx) / 2


# --- building records -----------------------------------------------------------------------


@dataclass
class _Row:
    page: int
    top: float
    bottom: float
    words: dict[int, list[Word]] = field(default_factory=dict)


def _words_to_columns(
    words: Iterable[Word], ext: dict[int, tuple[float, float]]
) -> dict[int, list[Word]]:
    out: dict[int, list[Word]] = {}
    fixed_first = sorted(ext.items(), key=lambda kv: (kv[1][1] - kv[1][0], kv[0]))
    for w in words:
        cx = _centre_x(w)
        for i, (a, b) in fixed_first:
            if a <= cx <= b:
                out.setdefault(i, []).append(w)
                break
    return out


def _phrases_to_columns(
    words: Sequence[Word], ext: dict[int, tuple[float, float]]
) -> dict[int, list[Word]]:
    """Unruled rows: words closer than half an em form a phrase, and a phrase goes whole to the
    column it overlaps most (a description wider than its label stays in its column)."""
    phrases: list[list[Word]] = []
    for w in sorted(words, key=lambda w: (w.x0, w.top)):
        if phrases and w.x0 - phrases[-1][-1].x1 <= 0.5 * max(w.size, 1.0):
            phrases[-1].append(w)
        else:
            phrases.append([w])
    out: dict[int, list[Word]] = {}
    cols = list(ext.items())
    for p in phrases:
        x0, x1 = p[0].x0, max([w.x1 for w in p])
        cx = (x0 + x1) / 2
        # the column of largest (overlap, centre inside, -index); only a positive overlap
        # counts, so columns that do not overlap the phrase are skipped
        best = -1
        best_key: tuple[float, bool, int] | None = None
        for i, (a, b) in cols:
            ov = (b if b < x1 else x1) - (a if a > x0 else x0)  # min(x1, b) - max(x0, a)
            if ov > 0:
                key = (ov, a <= cx <= b, -i)
                if best_key is None or key > best_key:
                    best, best_key = i, key
        if best_key is not None:
            out.setdefault(best, []).extend(p)
    return out


def _split(text: str, sep: str, n: int) -> list[str]:
    if not text.strip():
        return [""] * n
    v = parse_value(text, FIELDS["circuit_ref"].kind)  # TEXT kind: only classifies the tokens
    if v.kind in (ValueKind.NOT_APPLICABLE, ValueKind.LIMITATION, ValueKind.DASH):
        return [text] * n  # one "N/A" (or LIM, dash) for the whole cell holds for every part
    if sep not in text:
        return [text] + [""] * (n - 1)
    parts = [p.strip() for p in text.split(sep, n - 1)]
    return parts + [""] * (n - len(parts))


_VALUES: dict[tuple[str, str], Value] = {}  # (text, field) → parsed Value (frozen: shared)
_VALUES_MAX = 20_000  # forms repeat their cell texts ("N/A", "0.42", "✔"): parse each once


def _value(text: str, field_name: str) -> Value:
    got = _VALUES.get((text, field_name))
    if got is not None:
        return got
    spec = FIELDS.get(field_name) or BOARD.get(field_name) or CERTIFICATE[field_name]
    if text and is_unreadable(text):
        value = Value(ValueKind.UNREADABLE, text, problem="characters the PDF does not map to text")
    else:
        value = parse_value(text, spec.kind, spec.unit)
    if len(_VALUES) >= _VALUES_MAX:
        _VALUES.clear()
    _VALUES[(text, field_name)] = value
    return value


class _Builder:
    def __init__(self, layout: Layout, cert: Certificate) -> None:
        self.layout = layout
        self.cert = cert
        self.boards: dict[str, Board] = {}
        self.current: Board | None = None
        # the column extents and ruling of the last table read: a continuation page that
        # repeats no header reads with them
        self.columns: tuple[dict[int, tuple[float, float]], bool, int] | None = None

    def board(self, ref: str, page: int) -> Board:
        b = self.boards.get(ref)
        if b is None:
            b = Board(ref=ref, page=page)
            self.boards[ref] = b
            self.cert.boards.append(b)
        self.current = b
        return b

    def page_problem(self, page: PageContent, reason: str) -> None:
        self.cert.problems.append(page_problem(page.number, reason, page.width, page.height))

    def problem(self, message: str, **kw: object) -> None:
        self.cert.problems.append(ExtractionProblem(message, **kw))  # type: ignore[arg-type]

    def cell(
        self, field_name: str, text: str, box: Box, board: str | None, circuit: str | None
    ) -> Cell:
        v = _value(text, field_name)
        if v.kind is ValueKind.UNREADABLE:
            self.problem(
                f"cannot read {field_name}: {v.problem}",
                field=field_name,
                board=board,
                circuit=circuit,
                raw=text,
                box=box,
            )
        return Cell(field_name, v, box)

    def add_row(self, row: _Row, ext: dict[int, tuple[float, float]], board: Board) -> None:
        cols = self.layout.columns
        key_col = next(i for i, c in enumerate(cols) if self.layout.schedule.row_key in c.fields)
        texts = {i: text_of(row.words.get(i, []), self.layout.schedule.line_tolerance) for i in ext}
        if not any(t.strip() for t in texts.values()):
            return
        ref = " ".join(texts.get(key_col, "").split())
        if not ref:
            ws = [w for ws in row.words.values() for w in ws]
            self.problem(
                "row without a circuit reference skipped",
                board=board.ref,
                raw=" | ".join(t for t in texts.values() if t),
                box=union_box(row.page, ws),
            )
            return
        circuit = Circuit(board=board.ref, ref=ref, page=row.page)
        for i, (x0, x1) in sorted(ext.items()):
            col = cols[i]
            ws = row.words.get(i, [])
            box = union_box(row.page, ws) if ws else Box(row.page, x0, row.top, x1, row.bottom)
            text = texts[i]
            parts = _split(text, col.split, len(col.fields)) if col.split else [text]
            for name, part in zip(col.fields, parts, strict=True):
                circuit.cells[name] = self.cell(name, part, box, board.ref, ref)
        board.circuits.append(circuit)


def _label_matches(spec: LabelSpec, lines: Sequence[Line]) -> Iterable[tuple[str, list[Word]]]:
    for ln in lines:
        for m in spec.pattern.finditer(ln.text):
            value = m.group("value")
            if value is None:
                continue
            a, b = m.span("value")
            ws = ln.words_in_span(a, b) or ln.words
            yield " ".join(value.split()), ws
            if not spec.collect_all:
                break


def assemble(
    pages: Iterable[PageContent],
    layout: Layout,
    *,
    source: str,
    sha256: str,
    engine_name: str,
    page_count: int,
) -> Certificate:
    cert = Certificate(source, sha256, layout.name, engine_name, page_count)
    b = _Builder(layout, cert)
    collected: dict[str, tuple[list[str], list[Box]]] = {}
    sched = layout.schedule
    for page in pages:
        lines_all = group_lines(page.words, sched.line_tolerance)
        for spec in layout.certificate:
            if spec.pages is not None and page.number not in spec.pages:
                continue
            if not spec.collect_all and spec.field in cert.cells:
                continue
            for value, ws in _label_matches(spec, lines_all):
                box = union_box(page.number, ws)
                if spec.collect_all:
                    collected.setdefault(spec.field, ([], []))[0].append(value)
                    collected[spec.field][1].append(box)
                else:
                    cert.cells[spec.field] = b.cell(spec.field, value, box, None, None)
                    break
        if layout.circuit is not None:
            if sched.page_selected(page.number, page_count):
                _circuit_page(page.number, lines_all, layout, b)
            continue
        selected = sched.page_selected(page.number, page_count)
        if selected and not page.words:  # before page_pattern: an empty page matches none
            b.page_problem(page, "has no text layer: not read")
            continue
        if selected and sched.page_pattern:
            selected = bool(sched.page_pattern.search("\n".join(ln.text for ln in lines_all)))
            if not selected and any(w.vertical for w in page.words):  # a page turned sideways
                turned = "\n".join(" ".join(w.text for w in g) for g in _vertical_lines(page.words))
                selected = bool(sched.page_pattern.search(turned))
        if selected:
            _schedule_page(page, layout, b)
        elif page.words and _holds_schedule(page, layout, cert):
            b.page_problem(
                page, "is left out by the layout's schedule selection but holds a table with "
                "its column headers: not read"
            )
    for name, (values, boxes) in collected.items():
        box = boxes[0]
        cert.cells[name] = b.cell(name, ", ".join(values), box, None, None)
    for board in cert.boards:  # ditto marks ("as above") and "2.5+1.5" sizes, row by row
        for circuit, field_name, why in resolve_row_marks(board.circuits):
            b.problem(f"cannot read {field_name}: {why}", field=field_name, board=board.ref,
                      circuit=circuit.ref, raw=circuit.value(field_name).raw,
                      box=circuit.box(field_name))
    cert.problems.extend(account_boards(cert))
    return cert


def _holds_schedule(page: PageContent, layout: Layout, cert: Certificate) -> bool:
    """Would this page give circuit rows if it were a schedule page? (Read into a scratch
    certificate: a page the selection leaves out must not hide rows unseen.)"""
    scratch = Certificate(cert.source, cert.sha256, cert.layout, cert.engine, cert.page_count)
    _schedule_page(page, layout, _Builder(layout, scratch))
    return any(bd.circuits for bd in scratch.boards)


def _circuit_page(number: int, lines: Sequence[Line], layout: Layout, b: _Builder) -> None:
    """A one-circuit form (minor works): its board and circuit values found by label patterns
    on the page's lines; the first page that shows a value wins."""
    spec = layout.circuit
    assert spec is not None
    ref = spec.board
    if spec.board_pattern is not None:
        for ln in lines:
            if m := spec.board_pattern.search(ln.text):
                ref = " ".join(m.group("value").split())
                break
    board = b.boards.get(ref) or b.board(ref, number)
    for label in layout.board.fields:
        if label.field not in board.cells:
            for value, ws in _label_matches(label, lines):
                board.cells[label.field] = b.cell(label.field, value, union_box(number, ws),
                                                  board.ref, None)
                break
    found: dict[str, Cell] = {}
    for label in spec.fields:
        for value, ws in _label_matches(label, lines):
            found[label.field] = b.cell(label.field, value, union_box(number, ws), board.ref,
                                        None)
            break
    if not found:
        return
    if not board.circuits:
        board.circuits.append(Circuit(board=board.ref, ref="1", page=number))
    circuit = board.circuits[0]
    for name, cell in found.items():
        circuit.cells.setdefault(name, cell)
    if "circuit_ref" in circuit.cells:
        circuit.ref = circuit.cells["circuit_ref"].value.raw.strip() or circuit.ref


@functools.lru_cache(maxsize=32)
def _ignoring_case(columns: tuple[ColumnSpec, ...]) -> tuple[ColumnSpec, ...]:
    """The columns with their header patterns matched regardless of letter case."""
    return tuple(
        replace(c, header=compile_pattern(c.header.pattern, c.header.flags | re.IGNORECASE))
        if c.header is not None
        else c
        for c in columns
    )


def _schedule_page(page: PageContent, layout: Layout, b: _Builder) -> None:
    sched = layout.schedule
    region = sched.region or (0.0, 0.0, page.width, page.height)
    words = [w for w in page.words if _inside(w, region)]
    lines = group_lines(words, sched.line_tolerance)
    dropped = {
        id(w) for ln in lines if any(p.search(ln.text) for p in sched.ignore) for w in ln.words
    }
    words = [w for w in words if id(w) not in dropped]
    lines = [ln for ln in lines if not any(id(w) in dropped for w in ln.words)]
    rules = [r for r in page.rules if _rule_in(r, region)]
    grid = Grid.from_rules(rules)
    cells = grid.cells() if rules else []
    cols = layout.columns
    key_col = next(i for i, c in enumerate(cols) if sched.row_key in c.fields)
    hdr_cols = [i for i, c in enumerate(cols) if c.header is not None]
    if not hdr_cols:
        return
    anchor = key_col if cols[key_col].header is not None else hdr_cols[0]
    sizes = sorted(w.size for w in words if w.size > 0)
    size = sizes[len(sizes) // 2] if sizes else 8.0
    headers: list[Header] = []
    grid_cands = grid_candidates(words, cells, sched.line_tolerance) if cells else []
    if grid_cands:
        headers = find_headers(cols, grid_cands, anchor, 3 * size)
    cands: list[Cand] = []
    if not headers:
        # board heading lines (the board start and its label lines) are never column labels,
        # however close above the header they are printed
        heading = {id(ln) for ln in lines if _is_board_heading(ln.text, layout)}
        cands = text_candidates([ln for ln in lines if id(ln) not in heading], words)
        headers = find_headers(cols, cands, anchor, 3 * size)
    if not headers:  # a header printed in other letter case: read it, but say so
        ci = _ignoring_case(cols)
        headers = (find_headers(ci, grid_cands, anchor, 3 * size) if grid_cands else []) or (
            find_headers(ci, cands, anchor, 3 * size)
        )
        if headers:
            b.page_problem(
                page, "has column headers that match the layout only when letter case is "
                "ignored: read with them"
            )

    starts = []
    for ln in lines:
        m = layout.board.start.search(ln.text)
        if m and m.group("value"):
            starts.append((ln, " ".join(m.group("value").split())))
    first_top = headers[0].bottom if headers else region[1]
    end_y = region[3]
    for ln in lines:
        if ln.top > first_top and any(p.search(ln.text) for p in sched.end):
            end_y = ln.top
            break

    carried = b.current  # the board running on from the previous page, if any
    reused = None
    if not headers and b.columns is not None and (carried is not None or starts):
        # a continuation page repeating no header: the previous table's columns, below the
        # last board heading printed above the rows (if any)
        ext0, ruled0, from_page = b.columns
        top = max([ln.bottom for ln, _ in starts if ln.top < end_y] + [region[1]])
        reused = (ext0, from_page)
        headers = [Header(top, top, ruled0 and bool(cells), {}, [])]
        b.page_problem(page, f"has no column header: read with the columns of page {from_page}")
    elif not headers:
        b.page_problem(page, "has no column header the layout recognises: not read")
    rows_before = sum(len(bd.circuits) for bd in b.cert.boards)
    # board headings and their fields
    for k, (ln, ref) in enumerate(starts):
        if ln.top >= end_y:
            break
        board = b.board(ref, page.number)
        stop = min([h.top for h in headers if h.top > ln.top] + [end_y])
        if k + 1 < len(starts):
            stop = min(stop, starts[k + 1][0].top)
        block = [x for x in lines if ln.top - 0.5 <= x.top < stop]
        if "board_ref" not in board.cells:
            board.cells["board_ref"] = Cell(
                "board_ref", _value(ref, "board_ref"), union_box(page.number, ln.words)
            )
        for spec in layout.board.fields:
            if spec.field in board.cells:
                continue
            for value, ws in _label_matches(spec, block):
                board.cells[spec.field] = b.cell(
                    spec.field, value, union_box(page.number, ws), ref, None
                )
                break
        count = layout.board.circuit_count
        if count is not None and board.declared_circuits is None:
            for value, ws in _label_matches(LabelSpec("circuit_count", count), block):
                board.declared_circuits = (value, union_box(page.number, ws))
                break

    for k, h in enumerate(headers):
        before = [ref for ln, ref in starts if ln.top < h.top]
        if before:
            board = b.board(before[-1], page.number)
        elif carried is not None:
            board = carried
        else:
            board = b.board("", page.number)
        bottom = min(
            [end_y]
            + [x.top for x in headers[k + 1 :]]
            + [ln.top for ln, _ in starts if ln.top > h.bottom]
        )
        for i in h.missing:
            b.problem(
                f"column header for {cols[i].field} not found on page {page.number}",
                field=cols[i].field,
                board=board.ref,
            )
        if reused is not None:
            ext = reused[0]
        else:
            ext = column_extents(cols, h, cands, region[0], region[2])
            b.columns = (ext, h.ruled, page.number)
        data = [w for w in words if h.bottom < _centre_y(w) < bottom]
        key_x = (ext[key_col][0] + ext[key_col][1]) / 2
        ys = grid.row_rules(key_x, h.bottom, bottom) if h.ruled else []
        if h.ruled and len(ys) >= 2:
            started = reused is None
            for y0, y1 in zip(ys, ys[1:], strict=False):
                if not grid.closed(ext[key_col], y0, y1):
                    if not started:
                        continue  # reused columns: boxes above the table
                    break  # the table's rules stop: what follows is another box
                band = [w for w in data if y0 < _centre_y(w) < y1]
                assigned = _words_to_columns(band, ext)
                if not started:  # reused columns: the table starts at its first row key
                    key_text = " ".join(w.text for w in assigned.get(key_col, []))
                    if not sched.row_key_pattern.search(key_text):
                        continue
                    started = True
                b.add_row(_Row(page.number, y0, y1, assigned), ext, board)
            continue
        rows: list[_Row] = []
        for ln in group_lines(data, layout.schedule.line_tolerance):
            assigned = _phrases_to_columns(ln.words, ext)
            key_text = " ".join(w.text for w in assigned.get(key_col, []))
            if key_text and sched.row_key_pattern.search(key_text):
                rows.append(_Row(page.number, ln.top, ln.bottom, assigned))
            elif rows:
                row = rows[-1]
                row.bottom = ln.bottom
                for i, ws in assigned.items():
                    row.words.setdefault(i, []).extend(ws)
        for row in rows:
            b.add_row(row, ext, board)
    if headers and sum(len(bd.circuits) for bd in b.cert.boards) == rows_before:
        b.page_problem(page, "has no circuit rows")
    last = [ref for ln, ref in starts if ln.top < end_y]
    b.current = b.boards[last[-1]] if last else carried or b.current


def _is_board_heading(text: str, layout: Layout) -> bool:
    if layout.board.start.search(text):
        return True
    return any(spec.pattern.search(text) for spec in layout.board.fields)


def _rule_in(r: Rule, region: tuple[float, float, float, float]) -> bool:
    return (
        r.x1 >= region[0] - SNAP
        and r.x0 <= region[2] + SNAP
        and r.bottom >= region[1] - SNAP
        and r.top <= region[3] + SNAP
    )
