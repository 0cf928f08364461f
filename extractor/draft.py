"""Draft a layout file from one sample PDF of an unfamiliar form.

`draft_layout(pdf)` finds the schedule table, reads its header cells, matches them to the
canonical fields (extractor.header_terms), proposes label patterns for board and certificate
values and the text that recognises the form, then checks its own draft by running the real
assembler (extractor.assemble) on the sample. The result is TOML that
`extractor.layout.load_layout` accepts, with comments on every low-confidence choice, plus a
table of what was matched, what could not be placed and what was ambiguous.

How the table is found (one coordinate convention: points, top-left origin):

1. Data rows are lines whose left-most word looks like a circuit reference ("1", "12", "L3"),
   in runs of at least three at one x position.
2. Columns: the cells of the ruled grid in the first data row when the page has ruling lines;
   otherwise the gaps in the data rows' text (x-projection) plus header labels that sit over
   no data (columns empty on this sample).
3. Header: the grid cells (or text phrases, stacks and vertical labels, exactly the candidates
   the assembler matches patterns against) above the first data row. A label spanning several
   columns is a group header; each column is matched on "group | own label".
"""

from __future__ import annotations

import re
from collections.abc import Sequence
from dataclasses import dataclass, field
from pathlib import Path

from certvet.extractor.assemble import (
    Cand,
    Grid,
    Line,
    grid_candidates,
    group_lines,
    text_candidates,
)
from certvet.extractor.column_profile import Fit, fit
from certvet.extractor.engines.base import PageContent, Word
from certvet.extractor.errors import InputError
from certvet.extractor.fields import CERTIFICATE, FIELDS, FieldKind
from certvet.extractor.header_terms import (
    BOARD_LABELS,
    CERTIFICATE_LABELS,
    EARTHING_VALUES,
    match_header,
    normalise_header,
)
from certvet.extractor.layout import DEFAULT_ROW_KEY_PATTERN, parse_layout

ROW_KEY = re.compile(DEFAULT_ROW_KEY_PATTERN)
LOW = 0.75  # below this confidence a choice is marked for checking
MIN_ROWS = 3
PAGE_OF = r"(?i)\bpage\s+\d+\s+of\s+\d+\b"
# test readings: a table with fewer than two of these (confirmed by their values) is no schedule
READINGS = frozenset(
    {
        "r1",
        "rn",
        "r2",
        "r1_r2",
        "r1_rn",
        "r2_only",
        "zs",
        "max_zs",
        "ir_live_live",
        "ir_live_earth",
        "ir_neutral_earth",
        "rcd_time",
        "rcd_time_5x",
    }
)


class DraftError(InputError):
    """The sample cannot give a draft (no text layer, no table); the message says what was
    looked for."""


@dataclass
class ColumnGuess:
    index: int
    x0: float
    x1: float
    header: str  # own label text as printed ("" when none)
    group: str  # group label over it ("" when none)
    fields: tuple[str, ...] = ()
    confidence: float = 0.0
    term: str = ""
    split: str | None = None
    pattern: str | None = None  # header pattern written to the layout
    use_x: bool = False  # x range written as well (duplicate label, or no label)
    samples: list[str] = field(default_factory=list)
    note: str = ""

    @property
    def label(self) -> str:
        return f"{self.group} | {self.header}" if self.group else self.header


@dataclass
class LabelGuess:
    level: str  # "board" or "certificate"
    field: str
    pattern: str
    example: str
    confidence: float


@dataclass
class DraftResult:
    source: str
    engine: str
    toml: str
    columns: list[ColumnGuess]
    labels: list[LabelGuess]
    unplaced: list[str]  # header labels that matched no field
    ambiguities: list[str]
    schedule_pages: list[int]
    ruled: bool
    rows_seen: int
    notes: list[str] = field(default_factory=list)

    @property
    def matched_fields(self) -> list[str]:
        return [f for c in self.columns for f in c.fields]

    def table(self) -> list[tuple[str, str, float, str]]:
        """(field, header as printed, confidence, note) for every matched column."""
        return [
            (", ".join(c.fields), c.label, round(c.confidence, 2), c.note)
            for c in self.columns
            if c.fields
        ]


def is_heading_line(text: str) -> bool:
    """A board heading line ("Distribution board DB2 …", "Zdb 0.16 Ω Ipf 1.44 kA …"): a board
    reference label, or a board label followed by a reading or an earthing system. Such lines
    are never part of a column header, however close above it they are printed."""
    for rx in _BOARD_REF:
        if rx.search(text):
            return True
    for rx in _BOARD_VALUE:
        m = rx.search(text)
        if m and re.match(r"\s*[<>]?\d|\s*(?:" + EARTHING_VALUES + r")\b", text[m.end() :]):
            return True
    return False


_BOARD_REF = [re.compile(p) for p in BOARD_LABELS["board_ref"]]
_BOARD_VALUE = [re.compile(p) for f in ("ze", "ipf", "earthing") for p in BOARD_LABELS[f]]


# --- geometry helpers -------------------------------------------------------------------------


def _cx(w: Word | Cand) -> float:
    return (w.x0 + w.x1) / 2


def _overlap(a0: float, a1: float, b0: float, b1: float) -> float:
    return max(0.0, min(a1, b1) - max(a0, b0))


@dataclass
class _Table:
    page: int
    rows: list[Line]  # data lines anchored on a row key
    key_x0: float
    slots: list[tuple[float, float]]  # column x-ranges
    ruled: bool
    header_top: float
    header_bottom: float
    cands: list[Cand]
    hwords: list[Word] = field(default_factory=list)


def _runs(lines: list[Line]) -> list[list[Line]]:
    """Runs of row-key lines at one x, split where the gap is much wider than the pitch."""
    keyed = [
        ln for ln in lines if ln.words and ROW_KEY.match(ln.words[0].text) and len(ln.words) >= 3
    ]
    by_x: dict[int, list[Line]] = {}
    for ln in keyed:
        by_x.setdefault(round(ln.words[0].x0 / 3), []).append(ln)
    groups = sorted(by_x.values(), key=len, reverse=True)
    if not groups:
        return []
    best = sorted(
        groups[0]
        + [
            ln for g in groups[1:] for ln in g if abs(ln.words[0].x0 - groups[0][0].words[0].x0) < 4
        ],
        key=lambda ln: ln.top,
    )
    best = list({id(ln): ln for ln in best}.values())
    pitches = sorted(b.top - a.top for a, b in zip(best, best[1:], strict=False))
    pitch = pitches[len(pitches) // 2] if pitches else 12.0
    runs: list[list[Line]] = [[best[0]]]
    for a, b in zip(best, best[1:], strict=False):
        if b.top - a.top > 2.2 * pitch:
            runs.append([b])
        else:
            runs[-1].append(b)
    return [r for r in runs if len(r) >= MIN_ROWS or len(best) < MIN_ROWS * 2 and len(r) >= 2]


def _gap_slots(words: Sequence[Word], min_gap: float = 2.5) -> list[tuple[float, float]]:
    spans = sorted((w.x0, w.x1) for w in words)
    out: list[list[float]] = []
    for a, b in spans:
        if out and a <= out[-1][1] + min_gap:
            out[-1][1] = max(out[-1][1], b)
        else:
            out.append([a, b])
    return [(a, b) for a, b in out]


def _find_table(page: PageContent, lines: list[Line], run: list[Line]) -> _Table:
    first = run[0]
    words = page.words
    grid = Grid.from_rules(page.rules) if page.rules else None
    cells = grid.cells() if grid else []
    y = (first.top + first.bottom) / 2
    row_cells = sorted((c for c in cells if c[1] <= y <= c[3]), key=lambda c: c[0])
    ruled = len(row_cells) >= 3
    if ruled:
        slots = [(c[0], c[2]) for c in row_cells]
        # header cells: the grid cells stacked directly above the first data row
        top_of_row = min(c[1] for c in row_cells)
        head_cells: list[tuple[float, float, float, float]] = []
        frontier = [top_of_row]
        seen: set[tuple[float, ...]] = set()
        while frontier:
            edge = frontier.pop()
            for c in cells:
                if (
                    abs(c[3] - edge) <= 2.0
                    and c not in seen
                    and c[0] >= slots[0][0] - 2
                    and c[2] <= slots[-1][1] + 2
                    and edge - c[1] < 200
                ):
                    seen.add(c)
                    head_cells.append(c)
                    frontier.append(c[1])
        header_top = min((c[1] for c in head_cells), default=top_of_row)
        cands = grid_candidates(words, head_cells, 3.0)
        header_bottom = top_of_row
    else:
        data_words = [w for ln in run for w in ln.words]
        slots = _gap_slots(data_words)
        # header top: the highest full-width rule in a chain just above the first row
        left, right = slots[0][0], slots[-1][1]
        width = right - left
        hrules = sorted(
            {
                round((r.top + r.bottom) / 2, 1)
                for r in page.rules
                if r.horizontal
                and r.x1 - r.x0 >= 0.7 * width
                and r.top < first.top
                and r.x0 <= left + 0.3 * width
            }
        )
        top = first.top
        for ry in reversed(hrules):
            if top - ry <= 40:
                top = ry
        if top == first.top:  # no rules: lines upwards until a gap or a label line
            above = [ln for ln in lines if ln.bottom <= first.top + 0.5]
            prev = first
            for ln in reversed(above):
                gap = prev.top - ln.bottom > 2.2 * (first.bottom - first.top)
                if gap or ":" in ln.text or is_heading_line(ln.text):
                    break
                top = ln.top
                prev = ln
                if first.top - top > 60:
                    break
        header_top = top - 0.5
        header_bottom = first.top - 0.5
        hlines = [ln for ln in lines if header_top <= ln.top and ln.bottom <= header_bottom + 1]
        hwords = [w for ln in hlines for w in ln.words] + [
            w
            for w in words
            if w.vertical and w.top >= header_top - 2 and w.bottom <= header_bottom + 2
        ]
        cands = text_candidates(hlines, hwords)
        # header labels over no data: columns that are empty on this sample
        extra = [
            c
            for c in cands
            if not any(_overlap(c.x0, c.x1, a, b) > 0 for a, b in slots)
            and (
                # a label right of every column of data: an empty last column ("Remarks"),
                # even when printed close to its neighbour's label ("Points Remarks")
                (c.x0 > max(b for _, b in slots) + 2 and c.nwords == 1)
                or (
                    c.bottom >= header_bottom - 12
                    and not any(
                        o.nwords > c.nwords
                        and o.x0 <= c.x0 + 0.5
                        and o.x1 >= c.x1 - 0.5
                        and abs(o.top - c.top) < 1
                        for o in cands
                    )
                )
            )
        ]
        for cand in extra:
            if not any(abs(_cx(cand) - (a + b) / 2) < 3 for a, b in slots):
                slots.append((cand.x0, cand.x1))
        slots.sort()
        return _Table(
            page.number,
            run,
            first.words[0].x0,
            slots,
            ruled,
            header_top,
            header_bottom,
            cands,
            hwords,
        )
    return _Table(
        page.number, run, first.words[0].x0, slots, ruled, header_top, header_bottom, cands
    )


def _assign_header(table: _Table) -> list[ColumnGuess]:
    slots = table.slots
    bounds = []  # slot "territory": midway between data extents
    for i, (a, b) in enumerate(slots):
        lo = a if table.ruled or i == 0 else (slots[i - 1][1] + a) / 2
        hi = b if table.ruled or i == len(slots) - 1 else (b + slots[i + 1][0]) / 2
        if not table.ruled and i == 0:
            lo = a - 10
        if not table.ruled and i == len(slots) - 1:
            hi = b + 30
        bounds.append((lo, hi))
    cols = [ColumnGuess(i, lo, hi, "", "") for i, (lo, hi) in enumerate(bounds)]
    cands = [c for c in table.cands if c.text.strip()]
    own: dict[int, list[Cand]] = {}
    groups: dict[int, list[Cand]] = {}
    group_boxes: list[Cand] = []
    single: list[Cand] = []
    for c in cands:
        hits = [
            i
            for i, (lo, hi) in enumerate(bounds)
            if _overlap(c.x0, c.x1, lo, hi) >= min(0.35 * (hi - lo), 8.0)
        ]
        if len(hits) >= 2:
            below = any(
                o.top >= c.bottom - 1 and _overlap(o.x0, o.x1, c.x0, c.x1) > 0
                for o in cands
                if o is not c
            )
            if below and not c.ruled:
                # labels of neighbouring columns printed close together read as one phrase;
                # each starts where its column's data starts, which a group label does not
                ws = [
                    w
                    for w in table.hwords
                    if not w.vertical
                    and w.x0 >= c.x0 - 0.5
                    and w.x1 <= c.x1 + 0.5
                    and w.top >= c.top - 0.5
                    and w.bottom <= c.bottom + 0.5
                ]
                # (left-aligned with its data, or centred over it)
                aligned = {
                    i
                    for w in ws
                    for i, (a, b) in enumerate(slots)
                    if abs(w.x0 - a) <= 2.5 or abs(_cx(w) - (a + b) / 2) <= 2.0
                }
                below = len(aligned) < 2
            if below:
                group_boxes.append(c)
                for i in hits:
                    groups.setdefault(i, []).append(c)
        else:
            single.append(c)

    def inside(c: Cand, g: Cand) -> bool:
        return (
            c.x0 >= g.x0 - 0.5
            and c.x1 <= g.x1 + 0.5
            and c.top >= g.top - 0.5
            and c.bottom <= g.bottom + 0.5
        )

    def slot_of(c: Cand) -> int | None:
        cx = _cx(c)
        for i, (a, b) in enumerate(slots):
            if a - 0.5 <= cx <= b + 0.5:
                return i
        for i, (a, b) in enumerate(slots):
            if a - 0.5 <= c.x0 <= b + 0.5:
                return i
        for i, (lo, hi) in enumerate(bounds):
            if lo <= c.x0 <= hi:
                return i
        return None

    for c in single:
        if any(inside(c, g) for g in group_boxes):
            continue
        slot = slot_of(c)
        if slot is not None:
            own.setdefault(slot, []).append(c)
    for col in cols:
        mine = own.get(col.index, [])
        if mine:
            # the most complete label: the candidates holding the most words (a stack of
            # lines or a whole cell) that do not overlap each other, read top to bottom
            picked: list[Cand] = []
            for c in sorted(mine, key=lambda c: (-c.nwords, -c.bottom, c.x0)):
                if not any(
                    _overlap(c.x0, c.x1, o.x0, o.x1) > 0.5
                    and _overlap(c.top, c.bottom, o.top, o.bottom) > 0.5
                    for o in picked
                ):
                    picked.append(c)
            col.header = normalise_header(
                " ".join(c.text for c in sorted(picked, key=lambda c: (c.top, c.x0)))
            )
            col._cand = picked[0]  # type: ignore[attr-defined]
            if len(picked) > 1:
                col.use_x = True
                col.note = "label printed in parts: x range added"
        grp = [
            g
            for g in groups.get(col.index, [])
            if not mine or g.bottom <= max(m.top for m in mine) + 1
        ]
        if grp:
            g = max(grp, key=lambda c: (c.nwords, c.bottom))
            col.group = normalise_header(g.text)
    return cols


def _sample_values(table: _Table, col: ColumnGuess) -> list[str]:
    out = []
    for ln in table.rows:
        ws = [w for w in ln.words if col.x0 <= _cx(w) <= col.x1]
        out.append(" ".join(w.text for w in ws))
    return out


def _match_fields(cols: list[ColumnGuess], table: _Table, ambiguities: list[str]) -> None:
    options: list[tuple[float, int, str, str]] = []
    for col in cols:
        col.samples = _sample_values(table, col)
        if not col.header and not col.group:
            continue
        texts = [col.label, col.header] if col.group else [col.header]
        seen: dict[str, tuple[float, str]] = {}
        for k, t in enumerate(texts):
            for m in match_header(t):
                s = m.score - 0.02 * k
                if m.field not in seen or s > seen[m.field][0]:
                    seen[m.field] = (s, m.term)
        for f, (s, term) in seen.items():
            share = _value_fit(f, col.samples).share
            options.append((s * (0.5 + 0.5 * share), col.index, f, term))
    # the row-key column is the one holding the anchors
    key_col = next((c for c in cols if c.x0 - 1 <= table.key_x0 <= c.x1), cols[0])
    options.sort(key=lambda t: (-t[0], t[1]))
    by_col: dict[int, list[tuple[float, str]]] = {}
    for s, i, f, _ in options:
        by_col.setdefault(i, []).append((s, f))
    taken: dict[str, int] = {}
    for s, i, f, term in options:
        col = cols[i]
        if f in taken:
            if s >= 0.5 and f not in col.fields and not col.fields:
                ambiguities.append(
                    f"column {col.label!r} also looks like {f} (score {s:.2f}); kept "
                    f"{cols[taken[f]].label!r} for {f}"
                )
            continue
        if col.fields:
            # a second field for a combined cell ("2.5/1.5" under "Live/cpc mm²")
            sep = _combined_sep(col.samples)
            if sep and s >= 0.6 and len(col.fields) == 1:
                col.fields = (*col.fields, f)
                col.split = sep
                taken[f] = i
            continue
        if f == "circuit_ref" and col is not key_col:
            continue
        col.fields = (f,)
        col.confidence = s
        col.term = term
        taken[f] = i
        agree = _value_fit(f, col.samples)
        if agree.telling >= 2 and agree.share < 0.6:
            # heading and contents disagree: keep the heading's choice, but flag it
            col.confidence = min(col.confidence, 0.5)
            col.note = (col.note + "; " if col.note else "") + agree.reason
            ambiguities.append(f"column {col.label!r} is headed like {f} but its {agree.reason}")
        # a close second is no rival when another column has it as its own best match at
        # least as strongly ("RCD | BS (EN)" next to "Overcurrent device | BS (EN)")
        rivals = [
            (s2, f2)
            for s2, f2 in by_col.get(i, [])
            if f2 != f
            and s - s2 < 0.1
            and not any(
                j != i and opts[0][1] == f2 and opts[0][0] >= s2 for j, opts in by_col.items()
            )
        ]
        if rivals and not _combined_sep(col.samples):
            col.confidence = min(col.confidence, 0.6)
            ambiguities.append(
                f"column {col.label!r}: {f} ({s:.2f}) or {rivals[0][1]} ({rivals[0][0]:.2f}); "
                f"chose {f}"
            )
    if "circuit_ref" not in taken:
        key_col.fields = ("circuit_ref",)
        key_col.confidence = 0.5
        key_col.note = "no header term matched; the column holding the row numbers"
        taken["circuit_ref"] = key_col.index
    for col in cols:
        if col.split:
            col.fields = tuple(sorted(col.fields, key=lambda f: (f != "live_csa", f)))


def _combined_sep(samples: Sequence[str]) -> str | None:
    filled = [s for s in samples if s.strip()]
    for sep in ("/", ";"):
        if filled and sum(
            1 for s in filled if re.fullmatch(r"[\d.,]+\s*" + re.escape(sep) + r"\s*[\d.,]+", s)
        ) >= 0.6 * len(filled):
            return sep
    return None


def _value_fit(field_name: str, samples: Sequence[str]) -> Fit:
    """How well the sample values fit the field (extractor.column_profile); a combined cell
    ("2.5/1.5") is judged by the better of its parts."""
    sep = _combined_sep(samples)
    if not sep:
        return fit(field_name, samples)
    parts = [[s.split(sep)[k] if sep in s else "" for s in samples] for k in (0, 1)]
    return max((fit(field_name, p) for p in parts), key=lambda f: f.share)


# --- patterns ---------------------------------------------------------------------------------


def _literal(text: str) -> str:
    """A pattern for printed text: escaped, any run of spaces matches any spacing; a character
    outside ASCII (Ω, ², Δ — engines and fonts decode them differently) matches any one."""
    parts = ["".join(re.escape(ch) if ch.isascii() else "." for ch in p) for p in text.split()]
    return r"\s*".join(parts) if len(parts) <= 1 else r"\s+".join(parts)


def _header_patterns(cols: list[ColumnGuess], cands: Sequence[Cand]) -> None:
    for col in cols:
        if not col.fields:
            continue
        cand: Cand | None = getattr(col, "_cand", None)
        if cand is None:
            col.use_x = True
            col.note = (col.note + "; " if col.note else "") + "no header label: read by x range"
            continue
        text = " ".join(cand.text.split())
        pat = "^" + _literal(text) + "$"
        rx = re.compile(pat)
        clashes = [
            c
            for c in cands
            if c is not cand and rx.search(c.text) and _overlap(c.x0, c.x1, cand.x0, cand.x1) <= 0
        ]
        col.pattern = pat
        if clashes:
            col.use_x = True
            col.note = (
                col.note + "; " if col.note else ""
            ) + f"label {text!r} is printed {len(clashes) + 1} times: x range added"


def _label_patterns(
    lines: Sequence[Line], table: dict[str, list[str]], level: str, all_labels: dict[str, list[str]]
) -> list[LabelGuess]:
    out: list[LabelGuess] = []
    done: set[str] = set()
    every = [(f, re.compile(p)) for f, ps in all_labels.items() for p in ps]
    every += [
        (f, re.compile(p)) for f, ps in table.items() for p in ps if p not in all_labels.get(f, [])
    ]
    for ln in lines:
        text = ln.text
        found: list[tuple[int, int, str]] = []
        for f, rx in every:
            for m in rx.finditer(text):
                if m.end() > m.start() and (m.start() == 0 or not text[m.start() - 1].isalnum()):
                    found.append((m.start(), m.end(), f))
        # keep the longest match at each start, drop matches inside another
        found.sort(key=lambda t: (t[0], -(t[1] - t[0])))
        kept: list[tuple[int, int, str]] = []
        for a, b, f in found:
            if kept and a < kept[-1][1]:
                continue
            kept.append((a, b, f))
        for k, (a, b, f) in enumerate(kept):
            if f not in table or f in done:
                continue
            nxt = kept[k + 1][0] if k + 1 < len(kept) else len(text)
            sep = re.match(r"\s*[—–-]\s", text[b:nxt])  # "Premises — 7 Sallowfield Road"
            if sep:
                b += sep.end() - 1
            value = re.sub(r"\s*[—–-]$", "", text[b:nxt].strip())
            if not value:
                continue
            label = text[a:b].strip()
            spec = FIELDS.get(f) or CERTIFICATE.get(f)
            lab = _literal(label)
            if f == "earthing":
                vpat = f"(?P<value>{EARTHING_VALUES})"
            elif f in ("ze", "ipf") or (spec is not None and spec.kind is FieldKind.NUMBER):
                vpat = r"(?P<value>[<>]?\d+(?:[.,]\d+)?)"
            elif k + 1 < len(kept):
                nlabel = _literal(text[kept[k + 1][0] : kept[k + 1][1]].strip())
                vpat = rf"(?P<value>.+?)\s*[—–-]?\s*(?={nlabel})"
            else:
                vpat = r"(?P<value>.+?)\s*$"
            pattern = rf"{lab}\s*{vpat}"
            if not re.search(pattern, text):
                continue
            conf = 0.9 if k + 1 < len(kept) or f in ("earthing", "ze", "ipf") else 0.8
            out.append(LabelGuess(level, f, pattern, value, conf))
            done.add(f)
    return out


_ALL_LABELS = [
    re.compile(p)
    for table in (CERTIFICATE_LABELS, BOARD_LABELS)
    for ps in table.values()
    for p in ps
]


def _has_label(text: str) -> bool:
    """A "label value" line ("Site address 7 Sallowfield Road"): a label with text after it."""
    for rx in _ALL_LABELS:
        m = rx.search(text)
        if m and m.end() > m.start() and text[m.end() :].strip():
            return True
    return False


def _is_data(text: str, data: set[str]) -> bool:
    return any(d in text for d in data)


def _recognise(
    page_lines: Sequence[Sequence[Line]], header: Sequence[Line], data: set[str]
) -> list[str]:
    """What every certificate of this form prints and no other form does: the form's title
    (the largest line of page 1 without digits, label or value) and the start of its column
    header line. Never the sample's data: a line holding a value read by a label pattern, or
    any "label value" line, is skipped. Each pattern is checked against the sample's text as
    `extractor.api.recognise` searches it (lines of its first two pages)."""
    texts = "\n".join(ln.text for lines in page_lines[:2] for ln in lines)
    scored = []
    for ln in page_lines[0] if page_lines else []:
        t = ln.text.strip()
        if len(t) < 8 or re.search(r"\d", t) or ":" in t or not re.search(r"[A-Za-z]{3}", t):
            continue
        if _is_data(t, data) or _has_label(t) or is_heading_line(t):
            continue
        size = max(w.size for w in ln.words)
        scored.append((size, ln.top, t))
    scored.sort(key=lambda s: (-s[0], s[1]))
    keep = [s for s in scored[:2] if s[0] >= 0.8 * scored[0][0]] if scored else []
    out = ["(?m)^" + _literal(t) + "$" for _, _, t in keep]
    heads = [ln for ln in header if not _is_data(ln.text, data) and not is_heading_line(ln.text)]
    if heads:
        best = max(heads, key=lambda ln: (len(ln.words), -ln.top))
        if len(best.words) >= 3:
            out.append(_literal(" ".join(w.text for w in best.words[:6])))
    return [p for p in out if re.search(p, texts)]


# --- TOML writing -----------------------------------------------------------------------------


def _q(s: str) -> str:
    """A TOML literal string when possible (no escapes to think about), else a basic one."""
    if "'" not in s and "\n" not in s:
        return f"'{s}'"
    return '"' + s.replace("\\", "\\\\").replace('"', '\\"') + '"'


def _toml(
    name: str,
    source: str,
    engine: str,
    recognise: list[str],
    pages: str,
    ignore: list[str],
    end: list[str],
    board_start: str | None,
    labels: list[LabelGuess],
    cols: list[ColumnGuess],
    unplaced: list[str],
    ambiguities: list[str],
) -> str:
    out = [
        f"# Draft layout from {Path(source).name}, written by `certvet draft-layout`.",
        "# Check every line marked CHECK, then run `certvet preview` and `certvet try-layout`.",
        "",
        "[form]",
        f"name = {_q(name)}",
        f"description = {_q('drafted from ' + Path(source).name)}",
        f"engine = {_q(engine)}",
        "",
        "[recognise]",
    ]
    if not recognise:
        out.append("# CHECK: no distinctive title found on page 1; this pattern matches any form")
        recognise = [r"(?s)."]
    out.append("require = [" + ", ".join(_q(r) for r in recognise) + "]")
    out += ["", "[schedule]", f"pages = {_q(pages)}"]
    if ignore:
        out.append("ignore = [" + ", ".join(_q(r) for r in ignore) + "]")
    if end:
        out.append("# the first line below the table on the sample ends it")
        out.append("end = [" + ", ".join(_q(r) for r in end) + "]")
    out += ["", "[board]"]
    if board_start:
        out.append(f"start = {_q(board_start)}")
    else:
        out.append("# CHECK: no board heading found; every circuit goes to one unnamed board")
        out.append("start = '^(?P<value>\\b\\B)'")
    out.append("")
    out.append("[board.fields]")
    for lab in labels:
        if lab.level == "board" and lab.field != "board_ref":
            mark = "" if lab.confidence >= LOW else "  # CHECK"
            out.append(f"{lab.field} = {_q(lab.pattern)}  # sample: {lab.example!r}{mark}")
    out += ["", "[certificate.fields]"]
    for lab in labels:
        if lab.level == "certificate":
            mark = "" if lab.confidence >= LOW else "  # CHECK"
            out.append(f"{lab.field} = {_q(lab.pattern)}  # sample: {lab.example!r}{mark}")
    for col in cols:
        if not col.fields:
            continue
        out.append("")
        check = col.confidence < LOW
        out.append(
            f"# printed: {col.label!r}; confidence {col.confidence:.2f}"
            + (f"; {col.note}" if col.note else "")
            + ("  CHECK" if check else "")
        )
        out.append("[[columns]]")
        if len(col.fields) == 1:
            out.append(f"field = {_q(col.fields[0])}")
        else:
            out.append("fields = [" + ", ".join(_q(f) for f in col.fields) + "]")
            out.append(f"split = {_q(col.split or '/')}")
        if col.pattern:
            out.append(f"header = {_q(col.pattern)}")
        if col.use_x or not col.pattern:
            out.append(f"x = [{col.x0:.1f}, {col.x1:.1f}]")
    if unplaced:
        out += ["", "# Header labels that matched no field (not read):"]
        out += [f"#   {u!r}" for u in unplaced]
    if ambiguities:
        out += ["", "# Ambiguities (the draft chose; check them):"]
        out += [f"#   {a}" for a in ambiguities]
    return "\n".join(out) + "\n"


# --- the entry point --------------------------------------------------------------------------


def _slug(path: str) -> str:
    s = re.sub(r"[^a-z0-9]+", "-", Path(path).stem.lower()).strip("-")
    return s if s and s[0].isalnum() else "drafted-" + s


def read_pages(pdf: str, engine: str = "pdfium", password: str | None = None) -> list[PageContent]:
    from certvet.extractor.api import open_document

    doc = open_document(str(pdf), engine, password)
    try:
        return list(doc.pages())
    finally:
        doc.close()


def draft_layout(
    pdf: str | Path, engine: str = "pdfium", *, name: str | None = None, password: str | None = None
) -> DraftResult:
    """Draft a layout from one sample; DraftError says what was looked for when it cannot."""
    src = str(pdf)
    pages = read_pages(src, engine, password)
    if not pages:
        raise DraftError(src, "the PDF has no pages")
    if sum(p.char_count for p in pages) == 0:
        raise DraftError(
            src,
            f"no text layer: looked for characters on all {len(pages)} page(s) and found "
            "none (a scanned image?); "
            "OCR is not built in: make a text layer with an OCR tool of your choice "
            "and run certvet on the OCR'd PDF",
        )
    tables: list[_Table] = []
    page_lines: dict[int, list[Line]] = {}
    for page in pages:
        lines = group_lines(page.words, 3.0)
        page_lines[page.number] = lines
        for run in _runs(lines):
            tables.append(_find_table(page, lines, run))
    if not tables:
        raise DraftError(
            src,
            f"no schedule table found: looked on {len(pages)} page(s) for at least "
            f"{MIN_ROWS} lines starting with a circuit number (1, 2, 3… or L1, 2A) at one x "
            "position, under a row of column headers",
        )
    # the main table: the one whose header matches most fields
    scored = []
    for t in tables:
        cols = _assign_header(t)
        n = sum(1 for c in cols if c.header and match_header(c.label or c.header))
        scored.append((n, len(t.rows), -t.page, t, cols))
    scored.sort(key=lambda s: (-s[0], -s[1], -s[2]))
    n_matched, _, _, main, cols = scored[0]
    if n_matched < 3:
        raise DraftError(
            src,
            f"found rows numbered like circuits on page {main.page} but only {n_matched} "
            "column header(s) matched a known term (looked for Circuit, Description, r1, R1+R2, "
            "Zs, Insulation…); the table may have no header or use words not in "
            "extractor/header_terms.py",
        )
    ambiguities: list[str] = []
    _match_fields(cols, main, ambiguities)
    readings = [
        c
        for c in cols
        if set(c.fields) & READINGS and _value_fit(c.fields[0], c.samples).share >= 0.6
    ]
    if len(readings) < 2:
        heads = ", ".join(repr(c.label) for c in cols if c.header or c.group)[:160]
        raise DraftError(
            src,
            f"the table on page {main.page} has no test readings: a schedule of test results "
            "has at least two columns of readings such as R1+R2, Zs or insulation resistance "
            f"with values that fit them (headers found: {heads or 'none'})",
        )
    _header_patterns(cols, main.cands)
    unplaced = [c.label for c in cols if not c.fields and (c.header or c.group)]
    unplaced += [
        f"column at x {c.x0:.0f}-{c.x1:.0f} with no header (samples: "
        f"{', '.join(s for s in c.samples[:3] if s)})"
        for c in cols
        if not c.fields and not c.header and not c.group
    ]
    sched_pages = sorted({t.page for t in tables if _same_form(t, main)})
    first = sched_pages[0]
    pages_spec = "*" if first == 1 else f"{first}-"

    # board heading and board values: lines above each table header on schedule pages
    board_lines: list[Line] = []
    for t in tables:
        if t.page in sched_pages:
            above = [
                ln
                for ln in page_lines[t.page]
                if ln.bottom <= t.header_top + 1 and ln.top >= t.header_top - 80
            ]
            board_lines += above
    board_labels = _label_patterns(
        board_lines, BOARD_LABELS, "board", {**BOARD_LABELS, **CERTIFICATE_LABELS}
    )
    board_start = next((b.pattern for b in board_labels if b.field == "board_ref"), None)
    if board_start:
        board_start = board_start.replace(r"(?P<value>.+?)", r"(?P<value>\S+)", 1)
        board_start = re.sub(r"(?:\\s\*\[—–-\]\?)?\\s\*\(\?=.*\)$", "", board_start)
    table_lines = {id(ln) for t in tables for ln in t.rows}
    cert_lines = [ln for p in pages[:2] for ln in page_lines[p.number] if id(ln) not in table_lines]
    cert_labels = _label_patterns(
        cert_lines,
        {k: v for k, v in CERTIFICATE_LABELS.items() if k not in ("ze", "ipf", "earthing")},
        "certificate",
        {**CERTIFICATE_LABELS, **BOARD_LABELS},
    )
    data = {lab.example for lab in board_labels + cert_labels if len(lab.example) >= 4}
    header_lines = (
        [
            ln
            for ln in page_lines[main.page]
            if ln.top >= main.header_top - 0.5 and ln.bottom <= main.header_bottom + 1
        ]
        if main.page <= 2
        else []
    )
    recognise = _recognise([page_lines[p.number] for p in pages[:2]], header_lines, data)

    # lines the table may hold that are no rows: "Page n of m" anywhere, and footers printed
    # on every page (the same words, digits aside, at the same height on two pages or more)
    table_ids = {id(ln) for t in tables for ln in t.rows}
    heights = {p.number: p.height for p in pages}
    ignore = [PAGE_OF] + _footers(page_lines, heights, table_ids, data)
    # what ends a table: the first line well below the last row, when nothing else bounds it
    end: list[str] = []
    for t in tables:
        if t.page not in sched_pages or t.ruled:
            continue
        last = t.rows[-1]
        pitch = (t.rows[-1].top - t.rows[0].top) / max(1, len(t.rows) - 1) or 12.0
        below = [
            ln
            for ln in page_lines[t.page]
            if ln.top > last.bottom + 0.8 * pitch and not any(re.search(p, ln.text) for p in ignore)
        ]
        if not below:
            continue
        nxt = below[0]
        if (board_start and re.search(board_start, nxt.text)) or is_heading_line(nxt.text):
            continue  # the next board's block: the table goes on there
        if any(
            o is not t and o.page == t.page and o.rows[0].top > nxt.top and _same_form(o, main)
            for o in tables
        ):
            continue  # more rows of the form follow on this page (a repeated header, a board)
        pat = _line_start(nxt.text, data)
        if pat and pat not in end:
            end.append(pat)
    labels = board_labels + cert_labels
    result_name = name or _slug(src)
    toml = _toml(
        result_name,
        src,
        engine,
        recognise,
        pages_spec,
        ignore,
        end,
        board_start,
        labels,
        cols,
        unplaced,
        ambiguities,
    )
    result = DraftResult(
        src,
        engine,
        toml,
        cols,
        labels,
        unplaced,
        ambiguities,
        sched_pages,
        main.ruled,
        sum(len(t.rows) for t in tables if t.page in sched_pages),
    )
    _self_check(result, pages, main)
    return result


def _words_pattern(words: Sequence[str]) -> str:
    return "^" + r"\s+".join(re.sub(r"(?:\\?\d)+", r"\\d+", re.escape(w)) for w in words)


def _line_start(text: str, data: set[str]) -> str | None:
    """A pattern for the fixed start of a line: its first words up to a label's colon (or four
    words), digits generalised; None when those words hold the sample's data."""
    words = text.split()
    cut = next((k + 1 for k, w in enumerate(words[:6]) if w.endswith(":")), min(4, len(words)))
    head = words[:cut]
    if not head or _is_data(" ".join(head), data) or not re.search(r"[A-Za-z]{2}", head[0]):
        return None
    return _words_pattern(head)


def _footers(
    page_lines: dict[int, list[Line]],
    heights: dict[int, float],
    table_ids: set[int],
    data: set[str],
) -> list[str]:
    """Lines printed in the bottom margin of two pages or more at the same height (digits
    aside): page footers. Their fixed start becomes an `ignore` pattern, so a footer printed
    inside a table is never read as a continuation line."""
    seen: dict[str, list[tuple[int, float]]] = {}
    for number, lines in page_lines.items():
        for ln in lines:
            if id(ln) in table_ids or len(ln.text) < 8 or ln.top < 0.85 * heights[number]:
                continue
            key = re.sub(r"\d+", "#", ln.text)
            seen.setdefault(key, []).append((number, ln.top))
    out: list[str] = []
    for key, where in seen.items():
        pages = {p for p, _ in where}
        if len(pages) < 2 or max(t for _, t in where) - min(t for _, t in where) > 6:
            continue
        text = next(
            ln.text
            for lines in page_lines.values()
            for ln in lines
            if re.sub(r"\d+", "#", ln.text) == key
        )
        words = text.split()[:6]
        if _is_data(" ".join(words), data) or is_heading_line(text):
            continue
        pat = _words_pattern(words)
        if pat not in out:
            out.append(pat)
    return out


def _same_form(t: _Table, main: _Table) -> bool:
    """A table continuing the main one: most of its rows keep inside the main columns."""
    if t is main:
        return True
    if abs(t.key_x0 - main.key_x0) > 6:
        return False
    edges = [a for a, _ in main.slots[1:]]
    crossing = 0
    total = 0
    for ln in t.rows:
        for w in ln.words:
            total += 1
            crossing += any(w.x0 < e - 1 < w.x1 - 2 for e in edges)
    return total > 0 and crossing / total < 0.15


def _self_check(result: DraftResult, pages: list[PageContent], main: _Table) -> None:
    """Run the assembler with the draft on the sample and compare what it reads in the main
    table with the text under each column; a column read wrongly (or whose header the
    assembler does not find) gets its x range written as well. Two rounds at most."""
    import tomllib

    from certvet.extractor.assemble import assemble

    for _ in range(3):
        layout = parse_layout(tomllib.loads(result.toml), "<draft>")
        cert = assemble(
            iter(pages),
            layout,
            source=result.source,
            sha256="",
            engine_name=result.engine,
            page_count=len(pages),
        )
        missing = {p.field for p in cert.problems if p.message.startswith("column header for")}
        circuits = [c for b in cert.boards for c in b.circuits if c.page == main.page]
        by_ref = {c.ref: c for c in circuits}
        wrong: set[int] = set()
        for col in result.columns:
            if not col.fields or col.use_x:
                continue
            if col.fields[0] in missing:
                wrong.add(col.index)
                continue
            key = next(c for c in result.columns if "circuit_ref" in c.fields)
            for k in range(len(main.rows)):
                ref = key.samples[k].strip() if k < len(key.samples) else ""
                got = by_ref.get(ref)
                want = " ".join(col.samples[k].split())
                if got is None:
                    continue
                if col.split:
                    text = col.split.join(got.value(f).raw for f in col.fields if got.value(f).raw)
                else:
                    text = got.value(col.fields[0]).raw
                text = " ".join(text.split())
                if not text.startswith(want) or (not want and text):
                    wrong.add(col.index)
                    break
        rows = len(circuits)
        if not wrong:
            if rows < len(main.rows):
                result.notes.append(
                    f"the draft reads {rows} rows on page {main.page}; "
                    f"the sample shows {len(main.rows)}"
                )
            return
        for col in result.columns:
            if col.index in wrong:
                col.use_x = True
                col.note = (
                    (col.note + "; " if col.note else "")
                    + (
                        "header pattern not found by the assembler"
                        if col.fields[0] in missing
                        else "values misread with the header alone"
                    )
                    + ": x range added"
                )
        result.toml = _rewrite_columns(result)
    result.notes.append("some columns still read differently from the sample after adding x ranges")


def _rewrite_columns(result: DraftResult) -> str:
    head, sep, _ = result.toml.partition("\n# printed: ")
    from io import StringIO

    buf = StringIO()
    buf.write(head)
    body = _toml(
        "x",
        result.source,
        result.engine,
        [],
        "*",
        [],
        [],
        None,
        [],
        result.columns,
        result.unplaced,
        result.ambiguities,
    )
    tail = body[body.index("\n# printed: ") :] if "\n# printed: " in body else ""
    buf.write(tail)
    return buf.getvalue()
