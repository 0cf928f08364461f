"""See what a layout sees: draw the table region, the columns and every value read over the page.

`preview(pdf, layout, out)` renders each page (pypdfium2) and draws, from the Certificate's
cell provenance (every Cell keeps its Box):

* the table region of each page (the union of the circuit cells read there), dashed grey;
* each column's x-range as a tinted band with its field name at the top;
* each value read: a green box when it parsed, red when it did not (UNREADABLE), with the
  problem listed under the page; board and certificate values in blue.

The output is one self-contained HTML page (PNG images embedded as base64) or, when `out`
ends in ".png", one PNG with the pages stacked. `try_layout(pdf, layout)` returns the rows
as a rich table plus every cell that did not parse, for the terminal.
"""

from __future__ import annotations

import base64
import html
import io
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from certvet.extractor.errors import InputError
from certvet.extractor.layout import Layout
from certvet.extractor.records import Box, Certificate, ValueKind

SCALE = 2.0
PALETTE = [
    (31, 119, 180),
    (255, 127, 14),
    (44, 160, 44),
    (214, 39, 40),
    (148, 103, 189),
    (140, 86, 75),
    (227, 119, 194),
    (127, 127, 127),
    (188, 189, 34),
    (23, 190, 207),
]


@dataclass
class PreviewResult:
    out: Path
    pages: int
    cells: int
    unreadable: int
    message: str  # "" when the layout read circuits; else why not (the pages are still drawn)


def _extract(pdf: str, layout: Layout, engine: str | None) -> tuple[Certificate | None, str]:
    from certvet.extractor.api import extract
    from certvet.extractor.errors import NoLayoutMatches

    try:
        return extract(pdf, layout, engine=engine), ""
    except NoLayoutMatches as exc:
        return None, exc.reason


def _cell_boxes(cert: Certificate) -> list[tuple[str, str, Box, bool, str]]:
    """(level, field, box, parsed, text) for every value read."""
    out: list[tuple[str, str, Box, bool, str]] = []
    for name, cell in cert.cells.items():
        if cell.box:
            out.append(
                (
                    "certificate",
                    name,
                    cell.box,
                    cell.value.kind is not ValueKind.UNREADABLE,
                    cell.value.raw,
                )
            )
    for board in cert.boards:
        for name, cell in board.cells.items():
            if cell.box:
                out.append(
                    (
                        "board",
                        name,
                        cell.box,
                        cell.value.kind is not ValueKind.UNREADABLE,
                        cell.value.raw,
                    )
                )
        for c in board.circuits:
            for name, cell in c.cells.items():
                if cell.box:
                    out.append(
                        (
                            "circuit",
                            name,
                            cell.box,
                            cell.value.kind is not ValueKind.UNREADABLE,
                            cell.value.raw,
                        )
                    )
    return out


def _column_bands(cert: Certificate, page: int) -> dict[str, tuple[float, float]]:
    """Each field's x-range on a page: the median left and right edges of its cells."""
    spans: dict[str, list[tuple[float, float]]] = {}
    for _, c in cert.circuits():
        for name, cell in c.cells.items():
            if cell.box and cell.box.page == page and cell.value.raw.strip():
                spans.setdefault(name, []).append((cell.box.x0, cell.box.x1))
    out = {}
    for name, xs in spans.items():
        lefts = sorted(a for a, _ in xs)
        rights = sorted(b for _, b in xs)
        out[name] = (lefts[len(lefts) // 2], rights[len(rights) // 2])
    return out


def render_pages(pdf: str, cert: Certificate | None, scale: float = SCALE) -> list[Any]:
    """PIL images of every page with the layout's reading drawn on them."""
    import pypdfium2 as pdfium
    from PIL import ImageDraw

    boxes = _cell_boxes(cert) if cert else []
    doc = pdfium.PdfDocument(pdf)
    images = []
    try:
        for index in range(len(doc)):
            number = index + 1
            img = doc[index].render(scale=scale).to_pil().convert("RGB")
            draw = ImageDraw.Draw(img, "RGBA")
            circuit_boxes = [
                b for lvl, _, b, _, _ in boxes if lvl == "circuit" and b.page == number
            ]
            if circuit_boxes and cert is not None:  # boxes come from cert
                x0 = min(b.x0 for b in circuit_boxes) * scale
                y0 = min(b.top for b in circuit_boxes) * scale
                x1 = max(b.x1 for b in circuit_boxes) * scale
                y1 = max(b.bottom for b in circuit_boxes) * scale
                for k, (name, (left, right)) in enumerate(
                    sorted(_column_bands(cert, number).items(), key=lambda kv: kv[1][0])
                ):
                    r, g, bl = PALETTE[k % len(PALETTE)]
                    draw.rectangle([left * scale, y0, right * scale, y1], fill=(r, g, bl, 28))
                    draw.text(
                        (left * scale + 1, y0 - 12 - 10 * (k % 3)), name, fill=(r, g, bl, 255)
                    )
                _dashed(draw, (x0 - 3, y0 - 3, x1 + 3, y1 + 3))
            for lvl, _, b, ok, _ in boxes:
                if b.page != number:
                    continue
                colour = (0, 150, 0, 255) if ok else (220, 0, 0, 255)
                if lvl != "circuit":
                    colour = (0, 90, 220, 255) if ok else (220, 0, 0, 255)
                draw.rectangle(
                    [b.x0 * scale, b.top * scale, b.x1 * scale, b.bottom * scale],
                    outline=colour,
                    width=1 if ok else 2,
                )
            images.append(img)
    finally:
        doc.close()
    return images


def _dashed(draw: Any, box: tuple[float, float, float, float], dash: float = 6) -> None:
    x0, y0, x1, y1 = box
    x = x0
    while x < x1:
        draw.line([x, y0, min(x + dash, x1), y0], fill=(90, 90, 90, 255))
        draw.line([x, y1, min(x + dash, x1), y1], fill=(90, 90, 90, 255))
        x += 2 * dash
    y = y0
    while y < y1:
        draw.line([x0, y, x0, min(y + dash, y1)], fill=(90, 90, 90, 255))
        draw.line([x1, y, x1, min(y + dash, y1)], fill=(90, 90, 90, 255))
        y += 2 * dash


def preview(
    pdf: str | Path,
    layout: Layout,
    out: str | Path,
    *,
    engine: str | None = None,
    scale: float = SCALE,
) -> PreviewResult:
    """Write an HTML (or PNG) picture of what the layout reads from the PDF."""
    pdf = str(pdf)
    out = Path(out)
    cert, message = _extract(pdf, layout, engine)
    images = render_pages(pdf, cert, scale)
    boxes = _cell_boxes(cert) if cert else []
    try:
        if out.suffix.lower() == ".png":
            from PIL import Image

            width = max(i.width for i in images)
            sheet = Image.new("RGB", (width, sum(i.height for i in images)), "white")
            y = 0
            for i in images:
                sheet.paste(i, (0, y))
                y += i.height
            sheet.save(out)
        else:
            out.write_text(_html(pdf, layout, images, cert, message), encoding="utf-8")
    except OSError as exc:
        raise InputError(str(out), f"cannot write the preview: {exc.strerror or exc}") from None
    unreadable = sum(1 for _, _, _, ok, _ in boxes if not ok)
    return PreviewResult(out, len(images), len(boxes), unreadable, message)


def _html(
    pdf: str, layout: Layout, images: list[Any], cert: Certificate | None, message: str
) -> str:
    e = html.escape
    parts = [
        "<!doctype html><html><head><meta charset='utf-8'>",
        f"<title>preview: {e(Path(pdf).name)} with {e(layout.name)}</title>",
        "<style>body{font-family:sans-serif;margin:1em}img{max-width:100%;border:1px solid #ccc}"
        "table{border-collapse:collapse;font-size:12px}td,th{border:1px solid #ccc;padding:2px 4px}"
        ".bad{color:#c00}"
        ".key span{display:inline-block;width:1em;height:.8em;margin:0 .3em}</style>",
        "</head><body>",
        f"<h1>{e(Path(pdf).name)} read with layout <code>{e(layout.name)}</code></h1>",
        "<p class='key'><span style='border:2px solid green'></span>value read"
        "<span style='border:2px solid red'></span>did not parse"
        "<span style='border:2px solid blue'></span>board / certificate value"
        "<span style='border:1px dashed grey'></span>table region; tinted bands: columns</p>",
    ]
    if message:
        parts.append(f"<p class='bad'><b>The layout read no circuits:</b> {e(message)}</p>")
    if cert:
        n = sum(len(b.circuits) for b in cert.boards)
        parts.append(
            f"<p>{len(cert.boards)} board(s), {n} circuit(s), {len(cert.problems)} problem(s).</p>"
        )
    for k, img in enumerate(images, start=1):
        buf = io.BytesIO()
        img.save(buf, format="PNG")
        data = base64.b64encode(buf.getvalue()).decode("ascii")
        parts.append(f"<h2>Page {k}</h2><img alt='page {k}' src='data:image/png;base64,{data}'>")
        if cert:
            probs = [p for p in cert.problems if p.box is not None and p.box.page == k]
            if probs:
                parts.append(
                    "<table><tr><th>board</th><th>circuit</th><th>field</th><th>text</th>"
                    "<th>problem</th></tr>"
                )
                for p in probs:
                    parts.append(
                        f"<tr class='bad'><td>{e(p.board or '')}</td><td>{e(p.circuit or '')}"
                        f"</td><td>{e(p.field or '')}</td><td>{e(p.raw or '')}</td>"
                        f"<td>{e(p.message)}</td></tr>"
                    )
                parts.append("</table>")
    parts.append("</body></html>")
    return "\n".join(parts)


@dataclass
class TryResult:
    certificate: Certificate | None
    message: str
    unparsed: list[tuple[str, str, str, str, str]]  # board, circuit, field, text, problem


def try_layout(pdf: str | Path, layout: Layout, *, engine: str | None = None) -> TryResult:
    cert, message = _extract(str(pdf), layout, engine)
    unparsed = []
    if cert:
        for p in cert.problems:
            unparsed.append((p.board or "", p.circuit or "", p.field or "", p.raw or "", p.message))
    return TryResult(cert, message, unparsed)


def rich_tables(result: TryResult, layout: Layout) -> list[Any]:
    """The rows read (one rich Table per board) and a table of every cell that did not parse.
    PDF text goes in as `Text`, never as markup: "[/red]" in a cell prints as written."""
    from rich.table import Table
    from rich.text import Text

    out: list[Any] = []
    cert = result.certificate
    if cert is None:
        return out
    fields = layout.column_fields()
    for b in cert.boards:
        t = Table(
            title=Text(f"board {b.ref or '(unnamed)'}: {len(b.circuits)} circuit(s)"),
            show_lines=False,
        )
        for f in fields:
            t.add_column(f, overflow="fold")
        for c in b.circuits:
            row = []
            for f in fields:
                v = c.value(f)
                text = v.raw
                row.append(Text(text, style="red" if v.kind is ValueKind.UNREADABLE else ""))
            t.add_row(*row)
        out.append(t)
    if result.unparsed:
        t = Table(title=f"{len(result.unparsed)} cell(s) that did not parse")
        for h in ("board", "circuit", "field", "text", "problem"):
            t.add_column(h)
        for problem in result.unparsed:
            t.add_row(*(Text(str(p)) for p in problem))
        out.append(t)
    return out
