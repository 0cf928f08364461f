"""Small certificate PDFs drawn with reportlab for the extraction tests, with their truth.

Each builder returns (pdf path, layout TOML text, truth dict in the shape of the demo
`*.truth.json` files: certificate → cells, boards → cells and circuits → cells, all raw text).
Pitfalls reproduced: a ruled landscape grid with text turned 90° in the header, a two-level
header (a group label over sub-columns), two-line cells, ticks in ZapfDingbats, a page with
/Rotate 90, a board continuing on the next page and two boards on one page; an unruled table
with wrapped descriptions, labels on two lines, a footer and a notes line.
"""

from __future__ import annotations

from pathlib import Path
from typing import Any

Truth = dict[str, Any]

# (field, header label lines, width, vertical, group label)
GRID_COLUMNS = [
    ("circuit_ref", ["Circuit", "no."], 24, True, None),
    ("description", ["Description"], 120, False, None),
    ("device_type", ["Type"], 22, True, None),
    ("rating", ["Rating", "(A)"], 24, True, None),
    ("r1", ["r1"], 34, False, "Ring continuity (Ω)"),
    ("rn", ["rn"], 34, False, "Ring continuity (Ω)"),
    ("r2", ["r2"], 34, False, "Ring continuity (Ω)"),
    ("r1_r2", ["R1+R2", "(Ω)"], 34, True, None),
    ("ir_live_live", ["L-L"], 36, False, "Insulation (MΩ)"),
    ("ir_live_earth", ["L-E"], 36, False, "Insulation (MΩ)"),
    ("polarity", ["Polarity"], 26, True, None),
    ("zs", ["Max", "Zs (Ω)"], 30, True, None),
    ("rcd_time", ["RCD", "time (ms)"], 30, True, None),
    ("remarks", ["Remarks"], 90, False, None),
]

GRID_LAYOUT = r"""
[form]
name = "test-grid"
engine = "pdfplumber"
[recognise]
require = ["SCHEDULE OF TEST RESULTS", "Form TG-1"]
[schedule]
ignore = ['^Page \d+ of \d+']
[board]
start = 'Board:\s*(?P<value>DB\d+)'
[board.fields]
location = 'Location:\s*(?P<value>.+?)\s+Zdb:'
ze = 'Zdb:\s*(?P<value>[\d.,]+\s*Ω?)'
earthing = 'Earthing:\s*(?P<value>TN-C-S|TN-S|TT)'
[certificate.fields]
cert_number = 'Certificate no\.\s*(?P<value>\S+)'
observation_codes = { pattern = '\b(?P<value>C1|C2|C3|FI)\b', all = true }
[[columns]]
field = "circuit_ref"
header = '^Circuit'
[[columns]]
field = "description"
header = '^Description'
[[columns]]
field = "device_type"
header = '^Type'
[[columns]]
field = "rating"
header = '^Rating'
[[columns]]
field = "r1"
header = '^r1$'
[[columns]]
field = "rn"
header = '^rn$'
[[columns]]
field = "r2"
header = '^r2$'
[[columns]]
field = "r1_r2"
header = '^R1\+R2'
[[columns]]
field = "ir_live_live"
header = '^L-L$'
[[columns]]
field = "ir_live_earth"
header = '^L-E$'
[[columns]]
field = "polarity"
header = 'Polarity'
[[columns]]
field = "zs"
header = 'Zs'
[[columns]]
field = "rcd_time"
header = 'RCD'
"""

TICK = "\x00tick"  # drawn as "3" in ZapfDingbats, read as ✓


def _rows(board: str, n: int, start: int = 1) -> list[dict[str, str]]:
    rows = []
    descs = [
        "Sockets ring kitchen and utility room",
        "Lighting",
        "Cooker",
        "Immersion heater",
        "Smoke alarms",
        "Shower",
    ]
    for k in range(n):
        i = start + k
        ring = i % 3 == 1
        rows.append(
            {
                "circuit_ref": str(i),
                "description": descs[(i - 1) % len(descs)]
                + (" (upstairs)" if board == "DB2" else ""),
                "device_type": "B",
                "rating": "32" if ring else "6",
                "r1": f"0.{20 + i:02d}" if ring else "N/A",
                "rn": f"0.{21 + i:02d}" if ring else "N/A",
                "r2": f"0.{30 + i:02d}" if ring else "N/A",
                "r1_r2": f"0.{12 + i:02d}",
                "ir_live_live": ">999" if i % 2 else "200",
                "ir_live_earth": "999+" if i % 4 == 0 else "150",
                "polarity": TICK,
                "zs": f"0,{47 + i}" if i == 2 else f"0.{47 + i}",
                "rcd_time": "LIM" if i == 3 else ("—" if i == 4 else f"{18 + i}"),
                "remarks": "C2 see obs." if i == 5 else "",
            }
        )
    return rows


def _wrap(text: str, width: float, font: str, size: float) -> list[str]:
    from reportlab.pdfbase.pdfmetrics import stringWidth

    lines: list[str] = []
    for word in text.split():
        if lines and stringWidth(lines[-1] + " " + word, font, size) <= width:
            lines[-1] += " " + word
        else:
            lines.append(word)
    return lines or [""]


def _draw_grid_page(
    c: Any, rows_by_board: list[tuple[str, str, list[dict[str, str]]]], page_no: int, pages: int
) -> None:
    W, H = 842, 595  # displayed page (landscape)
    c.setFont("Helvetica-Bold", 11)
    c.drawString(30, H - 30, "SCHEDULE OF TEST RESULTS   Form TG-1")
    c.setFont("Helvetica", 8)
    c.drawString(600, H - 30, "Certificate no. TG-2024-017")
    y = H - 50
    x_left = 30
    for heading, extra, rows in rows_by_board:
        c.setFont("Helvetica-Bold", 9)
        c.drawString(x_left, y, heading)
        c.setFont("Helvetica", 8)
        c.drawString(x_left + 160, y, extra)
        y -= 8
        # header: two levels, 60 pt tall; group label band 14 pt
        top, mid, bot = y, y - 14, y - 62
        xs = [x_left]
        for col in GRID_COLUMNS:
            xs.append(xs[-1] + col[2])
        c.setLineWidth(0.5)
        c.line(xs[0], top, xs[-1], top)
        c.line(xs[0], bot, xs[-1], bot)
        groups: dict[str, list[int]] = {}
        for i, col in enumerate(GRID_COLUMNS):
            if col[4]:
                groups.setdefault(col[4], []).append(i)
        for label, idx in groups.items():
            gx0, gx1 = xs[idx[0]], xs[idx[-1] + 1]
            c.line(gx0, mid, gx1, mid)
            c.setFont("Helvetica", 7)
            c.drawCentredString((gx0 + gx1) / 2, mid + 4, label)
        for i, x in enumerate(xs):
            in_group = (
                0 < i < len(GRID_COLUMNS)
                and GRID_COLUMNS[i][4]
                and GRID_COLUMNS[i][4] == GRID_COLUMNS[i - 1][4]
            )
            c.line(x, mid if in_group else top, x, bot)
        for i, (_f, label, _w, vertical, _g) in enumerate(GRID_COLUMNS):
            cx = (xs[i] + xs[i + 1]) / 2
            c.setFont("Helvetica", 7)
            if vertical:
                for k, text in enumerate(label):
                    c.saveState()
                    c.translate(cx - 4 * (len(label) - 1) + 8 * k + 2.5, bot + 4)
                    c.rotate(90)
                    c.drawString(0, 0, text)
                    c.restoreState()
            else:
                for k, text in enumerate(label):
                    c.drawCentredString(
                        cx, (mid if _g else top) - 10 - 8 * k - (8 if not _g else 8), text
                    )
        y = bot
        for row in rows:
            desc = _wrap(row["description"], 116, "Helvetica", 7)
            rem = _wrap(row["remarks"], 86, "Helvetica", 7)
            h = 11 if max(len(desc), len(rem)) == 1 else 19
            for i, (f, _l, _w, _v, _g) in enumerate(GRID_COLUMNS):
                text = row[f]
                if text == TICK:
                    c.setFont("ZapfDingbats", 7)
                    c.drawCentredString((xs[i] + xs[i + 1]) / 2, y - 8, "✓")
                    continue
                c.setFont("Helvetica", 7)
                lines = desc if f == "description" else rem if f == "remarks" else [text]
                for k, ln in enumerate(lines):
                    if f in ("description", "remarks"):
                        c.drawString(xs[i] + 2, y - 8 - 8 * k, ln)
                    else:
                        c.drawCentredString((xs[i] + xs[i + 1]) / 2, y - 8, ln)
            y -= h
            c.line(xs[0], y, xs[-1], y)
            for x in xs:
                c.line(x, y + h, x, y)
        y -= 26
    c.setFont("Helvetica", 7)
    c.drawString(W / 2 - 20, 20, f"Page {page_no} of {pages}")


def build_grid(tmp: Path) -> tuple[Path, str, Truth]:
    from reportlab.pdfgen.canvas import Canvas

    path = tmp / "grid.pdf"
    db1 = _rows("DB1", 9)
    db1a, db1b = db1[:6], db1[6:]
    db2 = _rows("DB2", 4)
    c = Canvas(str(path), pagesize=(842, 595))
    _draw_grid_page(
        c, [("Board: DB1", "Location: Hall cupboard   Zdb: 0.35 Ω   Earthing: TN-C-S", db1a)], 1, 2
    )
    c.showPage()
    # page 2 is stored portrait and displayed landscape through /Rotate 90
    # (reportlab swaps the page size of a rotated page: MediaBox becomes 595 x 842)
    c.setPageRotation(90)
    c.transform(0, 1, -1, 0, 595, 0)
    _draw_grid_page(
        c,
        [
            ("Board: DB1 (continued)", "", db1b),
            ("Board: DB2", "Location: Garage   Zdb: 0.41   Earthing: TN-C-S", db2),
        ],
        2,
        2,
    )
    c.showPage()
    c.save()

    def circuits(rows: list[dict[str, str]]) -> list[dict[str, Any]]:
        out = []
        for r in rows:
            cells = {k: ("✓" if v == TICK else v) for k, v in r.items() if k != "remarks"}
            out.append({"ref": r["circuit_ref"], "cells": cells})
        return out

    truth: Truth = {
        "certificate": {"cert_number": "TG-2024-017", "observation_codes": "C2"},
        "boards": [
            {
                "ref": "DB1",
                "cells": {"location": "Hall cupboard", "ze": "0.35 Ω", "earthing": "TN-C-S"},
                "circuits": circuits(db1),
            },
            {
                "ref": "DB2",
                "cells": {"location": "Garage", "ze": "0.41", "earthing": "TN-C-S"},
                "circuits": circuits(db2),
            },
        ],
    }
    return path, GRID_LAYOUT, truth


PLAIN_LAYOUT = r"""
[form]
name = "test-plain"
[recognise]
require = ["Test results schedule"]
[schedule]
ignore = ['^Page \d+ of \d+']
end = ['^Notes']
[board]
start = '^Distribution board\s+(?P<value>\S+)'
[board.fields]
ze = 'Ze\s*=\s*(?P<value>\S+)'
[certificate.fields]
cert_number = 'Report\s+(?P<value>R-\d+)'
[[columns]]
field = "circuit_ref"
header = '^Cct$'
[[columns]]
field = "description"
header = '^Circuit description$'
[[columns]]
fields = ["live_csa", "cpc_csa"]
split = "/"
header = '^CSA'
[[columns]]
field = "r1_r2"
header = '^R1\+R2'
[[columns]]
field = "ir_live_earth"
header = '^IR L-E'
[[columns]]
field = "zs"
header = '^Zs'
"""


def build_plain(tmp: Path) -> tuple[Path, str, Truth]:
    from reportlab.pdfgen.canvas import Canvas

    path = tmp / "plain.pdf"
    c = Canvas(str(path), pagesize=(595, 842))
    c.setFont("Helvetica-Bold", 12)
    c.drawString(40, 800, "Test results schedule")
    c.setFont("Helvetica", 9)
    c.drawString(380, 800, "Report R-5521")
    c.drawString(40, 770, "Distribution board CU1")
    c.drawString(220, 770, "Ze = 0.28")
    cols = [
        ("Cct", None, 40),
        ("Circuit description", None, 80),
        ("CSA", "(mm²)", 250),
        ("R1+R2", "(Ω)", 320),
        ("IR L-E", "(MΩ)", 380),
        ("Zs", "(Ω)", 450),
    ]
    for label, unit, x in cols:
        c.drawString(x, 745, label)
        if unit:
            c.drawString(x, 735, unit)
    rows = [
        ("1", "Lighting ground floor", "1.5/1.0", "0.81", ">200", "1.09"),
        (
            "2",
            "Sockets ring main serving the kitchen, dining room and conservatory",
            "2.5/1.5",
            "0.29",
            ">200",
            "0.57",
        ),
        ("3", "Cooker", "6.0/2.5", "0.18", "N/A", "0.46"),
        ("4", "Shower in the main bathroom upstairs", "10/4.0", "0.21", "LIM", "—"),
        ("5A", "Spare", "N/A", "N/A", "N/A", "N/A"),
    ]
    y = 715
    for ref, desc, csa, r12, ir, zs in rows:
        lines = _wrap(desc, 160, "Helvetica", 9)
        c.drawString(40, y, ref)
        for k, ln in enumerate(lines):
            c.drawString(80, y - 11 * k, ln)
        c.drawString(250, y, csa)
        c.drawString(320, y, r12)
        c.drawString(380, y, ir)
        c.drawString(450, y, zs)
        y -= 11 * len(lines) + 6
    c.drawString(40, y - 10, "Notes: readings taken with instrument 1234")
    c.drawString(270, 30, "Page 1 of 1")
    c.showPage()
    c.save()
    circuits = []
    for ref, desc, csa, r12, ir, zs in rows:
        live, _, cpc = csa.partition("/") if csa != "N/A" else (csa, "", csa)
        cells = {
            "circuit_ref": ref,
            "description": desc,
            "live_csa": live,
            "cpc_csa": cpc or live,
            "r1_r2": r12,
            "ir_live_earth": ir,
            "zs": zs,
        }
        circuits.append({"ref": ref, "cells": cells})
    truth: Truth = {
        "certificate": {"cert_number": "R-5521"},
        "boards": [{"ref": "CU1", "cells": {"ze": "0.28"}, "circuits": circuits}],
    }
    return path, PLAIN_LAYOUT, truth
