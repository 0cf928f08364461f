"""Layout files: how to read one certificate form, as a validated, typed object.

A layout is a small human-edited TOML file (format documented in README.md, "Layout files").
`load_layout` parses and validates it once; every error names the file, the key and the
problem, e.g. ``layouts/a.toml: columns[3].x: left edge 410 is not less than right edge 400``.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from certvet.extractor.engines.names import ENGINE_NAMES
from certvet.extractor.fields import BOARD, CERTIFICATE, FIELDS
from certvet.extractor.patterns import UnsafePattern, compile_pattern
from certvet.extractor.tomlfile import TomlProblem, parse_toml

ENGINES = ENGINE_NAMES
DEFAULT_ROW_KEY_PATTERN = r"^(?:[A-Z]{0,3}\d{1,3}[A-Z]?(?:[/.-]?(?:L?[123]|[A-Z]))?)$"


class LayoutError(ValueError):
    """A layout file that cannot be used. str() is one line naming the file, key and problem."""


@dataclass(frozen=True)
class ColumnSpec:
    fields: tuple[str, ...]  # one canonical field, or several when `split` is set
    header: re.Pattern[str] | None = None  # matched (re.search) against the header cell text
    x: tuple[float, float] | None = None  # fixed x-range in points (top-left origin)
    split: str | None = None  # separator when one cell holds several fields, e.g. "2.5/1.5"

    @property
    def field(self) -> str:
        return self.fields[0]


@dataclass(frozen=True)
class LabelSpec:
    """A value found by a label pattern with a named group `value` on a line of text."""

    field: str
    pattern: re.Pattern[str]
    pages: tuple[int, ...] | None = None  # restrict to these pages (1-based)
    collect_all: bool = False  # join every match (e.g. observation codes) with ", "


@dataclass(frozen=True)
class Recognise:
    require: tuple[re.Pattern[str], ...]  # all must match the text of the first `pages` pages
    pages: int = 2


@dataclass(frozen=True)
class ScheduleSpec:
    pages: str | tuple[int, ...] = "*"  # "*", "2-", "2-4" or explicit page numbers
    page_pattern: re.Pattern[str] | None = None
    region: tuple[float, float, float, float] | None = None  # x0, top, x1, bottom
    row_key: str = "circuit_ref"
    row_key_pattern: re.Pattern[str] = field(
        default_factory=lambda: re.compile(DEFAULT_ROW_KEY_PATTERN)
    )
    ignore: tuple[re.Pattern[str], ...] = ()
    end: tuple[re.Pattern[str], ...] = ()
    line_tolerance: float = 3.0

    def page_selected(self, page: int, page_count: int) -> bool:
        if self.pages == "*":
            return True
        if isinstance(self.pages, tuple):
            return page in self.pages
        lo_s, _, hi_s = self.pages.partition("-")
        lo = int(lo_s)
        hi = int(hi_s) if hi_s else page_count
        return lo <= page <= hi


@dataclass(frozen=True)
class BoardSpec:
    start: re.Pattern[str]  # a line matching starts a new board; group `value` is its reference
    fields: tuple[LabelSpec, ...] = ()
    # the number of circuits the form declares for the board (group `value`): the rows read
    # are compared with it (extractor/accounting.py)
    circuit_count: re.Pattern[str] | None = None


@dataclass(frozen=True)
class CircuitSpec:
    """A form that records one circuit as label/value boxes rather than a table (a minor
    works certificate): each field by a label pattern, on one board."""

    fields: tuple[LabelSpec, ...]  # circuit fields, e.g. zs = "Zs \\(Ω\\): (?P<value>\\S+)"
    board: str = "1"  # the board reference when the form prints none
    board_pattern: re.Pattern[str] | None = None  # or a label pattern reading it


@dataclass(frozen=True)
class Layout:
    path: str
    name: str
    description: str
    engine: str
    recognise: Recognise
    schedule: ScheduleSpec
    board: BoardSpec
    certificate: tuple[LabelSpec, ...]
    columns: tuple[ColumnSpec, ...]
    circuit: CircuitSpec | None = None  # set for a one-circuit form read by labels

    def column_fields(self) -> list[str]:
        return [f for c in self.columns for f in c.fields]


# --- loading -----------------------------------------------------------------------------


class _Ctx:
    def __init__(self, path: str) -> None:
        self.path = path

    def fail(self, key: str, problem: str) -> LayoutError:
        return LayoutError(f"{self.path}: {key}: {problem}")

    def table(self, data: Any, key: str, allowed: set[str]) -> dict[str, Any]:
        if not isinstance(data, dict):
            raise self.fail(key, f"expected a table, got {type(data).__name__}")
        unknown = sorted(set(data) - allowed)
        if unknown:
            raise self.fail(
                f"{key}.{unknown[0]}" if key else unknown[0],
                f"unknown key (allowed: {', '.join(sorted(allowed))})",
            )
        return data

    def string(self, data: Any, key: str) -> str:
        if not isinstance(data, str):
            raise self.fail(key, f"expected a string, got {type(data).__name__}")
        return data

    def number(self, data: Any, key: str) -> float:
        if isinstance(data, bool) or not isinstance(data, (int, float)):
            raise self.fail(key, f"expected a number, got {type(data).__name__}")
        if not math.isfinite(data):  # TOML allows inf and nan
            raise self.fail(key, f"expected a finite number, got {data}")
        return float(data)

    def regex(self, data: Any, key: str, need_value: bool = False) -> re.Pattern[str]:
        text = self.string(data, key)
        try:
            pat = compile_pattern(text)
        except re.error as exc:
            raise self.fail(key, f"bad regular expression '{text}': {exc}") from None
        except UnsafePattern as exc:
            raise self.fail(key, f"pattern '{text}' {exc}") from None
        if need_value and "value" not in pat.groupindex:
            raise self.fail(key, f"pattern '{text}' needs a named group (?P<value>…)")
        return pat

    def regex_list(self, data: Any, key: str) -> tuple[re.Pattern[str], ...]:
        if isinstance(data, str):
            data = [data]
        if not isinstance(data, list):
            raise self.fail(key, "expected a list of patterns")
        return tuple(self.regex(d, f"{key}[{i}]") for i, d in enumerate(data))

    def floats(self, data: Any, key: str, n: int) -> tuple[float, ...]:
        if not isinstance(data, list) or len(data) != n:
            raise self.fail(key, f"expected a list of {n} numbers")
        return tuple(self.number(v, f"{key}[{i}]") for i, v in enumerate(data))


def _labels(ctx: _Ctx, data: Any, key: str, known: dict[str, Any]) -> tuple[LabelSpec, ...]:
    table = ctx.table(data, key, set(known))
    out = []
    for name, spec in table.items():
        k = f"{key}.{name}"
        if isinstance(spec, str):
            out.append(LabelSpec(name, ctx.regex(spec, k, need_value=True)))
            continue
        spec = ctx.table(spec, k, {"pattern", "pages", "all"})
        if "pattern" not in spec:
            raise ctx.fail(k, "missing key 'pattern'")
        pages = None
        if "pages" in spec:
            p = spec["pages"]
            if not isinstance(p, list) or not all(isinstance(i, int) and i >= 1 for i in p):
                raise ctx.fail(f"{k}.pages", "expected a list of page numbers from 1")
            pages = tuple(p)
        collect = spec.get("all", False)
        if not isinstance(collect, bool):
            raise ctx.fail(f"{k}.all", "expected true or false")
        out.append(
            LabelSpec(name, ctx.regex(spec["pattern"], f"{k}.pattern", True), pages, collect)
        )
    return tuple(out)


def _pages(ctx: _Ctx, data: Any, key: str) -> str | tuple[int, ...]:
    if isinstance(data, list):
        if not data or not all(
            isinstance(i, int) and not isinstance(i, bool) and i >= 1 for i in data
        ):
            raise ctx.fail(key, "expected page numbers from 1")
        return tuple(data)
    text = ctx.string(data, key)
    if text == "*" or re.fullmatch(r"\d+-(\d+)?", text):
        if text != "*":
            lo, _, hi = text.partition("-")
            if int(lo) < 1 or (hi and int(hi) < int(lo)):
                raise ctx.fail(key, f"bad page range {text!r}")
        return text
    raise ctx.fail(key, f'expected "*", a range like "2-" or "2-4", or a list; got {text!r}')


def _columns(ctx: _Ctx, data: Any) -> tuple[ColumnSpec, ...]:
    if not isinstance(data, list) or not data:
        raise ctx.fail("columns", "expected at least one [[columns]] table")
    cols: list[ColumnSpec] = []
    seen: dict[str, int] = {}
    for i, raw in enumerate(data):
        k = f"columns[{i}]"
        spec = ctx.table(raw, k, {"field", "fields", "header", "x", "split"})
        if ("field" in spec) == ("fields" in spec):
            raise ctx.fail(k, "give exactly one of 'field' or 'fields'")
        if "field" in spec:
            names: tuple[str, ...] = (ctx.string(spec["field"], f"{k}.field"),)
        else:
            fl = spec["fields"]
            if not isinstance(fl, list) or len(fl) < 2:
                raise ctx.fail(f"{k}.fields", "expected a list of two or more field names")
            names = tuple(ctx.string(f, f"{k}.fields") for f in fl)
            if "split" not in spec:
                raise ctx.fail(k, "'fields' needs 'split' (the separator between the values)")
        for n in names:
            if n not in FIELDS:
                raise ctx.fail(f"{k}.field", f"unknown field {n!r} (see `certvet fields`)")
            if n in seen:
                raise ctx.fail(f"{k}.field", f"field {n!r} is already read by columns[{seen[n]}]")
            seen[n] = i
        header = ctx.regex(spec["header"], f"{k}.header") if "header" in spec else None
        x = None
        if "x" in spec:
            x0, x1 = ctx.floats(spec["x"], f"{k}.x", 2)
            if not x0 < x1:
                raise ctx.fail(f"{k}.x", f"left edge {x0:g} is not less than right edge {x1:g}")
            x = (x0, x1)
        if header is None and x is None:
            raise ctx.fail(k, "give 'header' (a pattern) or 'x' (a range in points), or both")
        split = ctx.string(spec["split"], f"{k}.split") if "split" in spec else None
        cols.append(ColumnSpec(names, header, x, split))
    fixed = sorted((c.x, c.field) for c in cols if c.x is not None)
    for (a, fa), (b, fb) in zip(fixed, fixed[1:], strict=False):
        if b[0] < a[1] - 0.01:
            raise ctx.fail("columns", f"x-ranges of {fa!r} {list(a)} and {fb!r} {list(b)} overlap")
    return tuple(cols)


def parse_layout(data: dict[str, Any], path: str = "<layout>") -> Layout:
    ctx = _Ctx(path)
    top = ctx.table(data, "", {"form", "recognise", "schedule", "board", "certificate", "columns",
                               "circuit"})
    single = _circuit(ctx, top["circuit"]) if "circuit" in top else None
    for required in ("form", "recognise") if single else ("form", "recognise", "board",
                                                          "columns"):
        if required not in top:
            raise ctx.fail(required, "missing section")
    form = ctx.table(top["form"], "form", {"name", "description", "engine"})
    if "name" not in form:
        raise ctx.fail("form.name", "missing")
    name = ctx.string(form["name"], "form.name")
    if not re.fullmatch(r"[a-z0-9][a-z0-9_-]*", name):
        raise ctx.fail("form.name", f"{name!r}: use lower-case letters, digits, '-' and '_'")
    engine = ctx.string(form.get("engine", "pdfium"), "form.engine")
    if engine not in ENGINES:
        raise ctx.fail("form.engine", f"{engine!r} is not one of {', '.join(ENGINES)}")

    rec = ctx.table(top["recognise"], "recognise", {"require", "pages"})
    if "require" not in rec:
        raise ctx.fail(
            "recognise.require", "missing: give the text patterns that identify the form"
        )
    require = ctx.regex_list(rec["require"], "recognise.require")
    if not require:
        raise ctx.fail("recognise.require", "give at least one pattern")
    rpages = int(ctx.number(rec.get("pages", 2), "recognise.pages"))
    if rpages < 1:
        raise ctx.fail("recognise.pages", "must be 1 or more")

    sched_raw = ctx.table(
        top.get("schedule", {}),
        "schedule",
        {
            "pages",
            "page_pattern",
            "region",
            "row_key",
            "row_key_pattern",
            "ignore",
            "end",
            "line_tolerance",
        },
    )
    region = None
    if "region" in sched_raw:
        x0, t, x1, b = ctx.floats(sched_raw["region"], "schedule.region", 4)
        if not (x0 < x1 and t < b):
            raise ctx.fail(
                "schedule.region", "expected [left, top, right, bottom] with left<right, top<bottom"
            )
        region = (x0, t, x1, b)
    row_key = ctx.string(sched_raw.get("row_key", "circuit_ref"), "schedule.row_key")
    sched = ScheduleSpec(
        pages=_pages(ctx, sched_raw.get("pages", "*"), "schedule.pages"),
        page_pattern=ctx.regex(sched_raw["page_pattern"], "schedule.page_pattern")
        if "page_pattern" in sched_raw
        else None,
        region=region,
        row_key=row_key,
        row_key_pattern=ctx.regex(
            sched_raw.get("row_key_pattern", DEFAULT_ROW_KEY_PATTERN), "schedule.row_key_pattern"
        ),
        ignore=ctx.regex_list(sched_raw.get("ignore", []), "schedule.ignore"),
        end=ctx.regex_list(sched_raw.get("end", []), "schedule.end"),
        line_tolerance=ctx.number(sched_raw.get("line_tolerance", 3.0), "schedule.line_tolerance"),
    )
    if sched.line_tolerance <= 0:
        raise ctx.fail("schedule.line_tolerance", "must be above 0")

    board_raw = ctx.table(top.get("board", {"start": "(?P<value>(?!x)x)"}), "board",
                          {"start", "fields", "circuit_count"})
    if single and "start" not in board_raw:
        board_raw = dict(board_raw, start="(?P<value>(?!x)x)")  # one board, never started
    if "start" not in board_raw:
        raise ctx.fail(
            "board.start", "missing: a pattern with (?P<value>…) for the board reference"
        )
    board = BoardSpec(
        start=ctx.regex(board_raw["start"], "board.start", need_value=True),
        fields=_labels(ctx, board_raw.get("fields", {}), "board.fields", BOARD),
        circuit_count=ctx.regex(board_raw["circuit_count"], "board.circuit_count", need_value=True)
        if "circuit_count" in board_raw
        else None,
    )
    cert_raw = ctx.table(top.get("certificate", {}), "certificate", {"fields"})
    cert = _labels(ctx, cert_raw.get("fields", {}), "certificate.fields", CERTIFICATE)
    columns = _columns(ctx, top["columns"]) if "columns" in top or not single else ()
    if not single and row_key not in [f for c in columns for f in c.fields]:
        raise ctx.fail("schedule.row_key", f"no column reads the row key field {row_key!r}")
    return Layout(
        path=path,
        name=name,
        description=ctx.string(form.get("description", ""), "form.description"),
        engine=engine,
        recognise=Recognise(require, rpages),
        schedule=sched,
        board=board,
        certificate=cert,
        columns=columns,
        circuit=single,
    )


def _circuit(ctx: _Ctx, data: Any) -> CircuitSpec:
    raw = ctx.table(data, "circuit", {"fields", "board", "board_pattern"})
    fields = _labels(ctx, raw.get("fields", {}), "circuit.fields", FIELDS)
    if not fields:
        raise ctx.fail("circuit.fields", "give at least one circuit field's label pattern")
    return CircuitSpec(
        fields=fields,
        board=ctx.string(raw.get("board", "1"), "circuit.board"),
        board_pattern=ctx.regex(raw["board_pattern"], "circuit.board_pattern", need_value=True)
        if "board_pattern" in raw else None,
    )


def load_layout(path: str | Path) -> Layout:
    p = Path(path)
    try:
        text = p.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise LayoutError(f"{p}: layout file not found") from None
    except IsADirectoryError:
        raise LayoutError(f"{p}: is a folder, not a layout file") from None
    except (OSError, UnicodeDecodeError) as exc:
        why = exc.strerror if isinstance(exc, OSError) and exc.strerror else exc
        raise LayoutError(f"{p}: cannot read layout: {why}") from None
    try:
        data = parse_toml(text)
    except TomlProblem as exc:
        raise LayoutError(f"{p}: {exc}") from None
    return parse_layout(data, str(p))


def load_layouts(paths: str | Path | Iterable[str | Path]) -> list[Layout]:
    """Load every *.toml under the given files/folders (one path or several, str or Path),
    sorted by path: ``load_layouts("layouts/")``."""
    if isinstance(paths, (str, Path)):
        paths = [paths]
    files: list[Path] = []
    for p in map(Path, paths):
        found = sorted(p.rglob("*.toml")) if p.is_dir() else [p]
        if not found:
            raise LayoutError(f"{p}: no layout files (*.toml) in this folder")
        files.extend(found)
    return [load_layout(f) for f in files]
