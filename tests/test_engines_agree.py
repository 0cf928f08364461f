"""The pdfplumber and PDFium engines read every demo fixture the same way.

Words: same text, boxes within 0.01 pt. Certificates: same cells, values and boxes (0.1 pt).
Known difference (documented in extractor/engines/pdfium.py): PDFium rounds glyph widths of
embedded fonts to whole thousandths of an em, so on a font with fractional widths (the grid
demo forms, DejaVu Sans Condensed through reportlab) x positions drift by up to ~0.1 pt along
a line. Those comparisons are strict xfails: they fail loudly the day they start to agree.
"""

from __future__ import annotations

import json
import unicodedata
from pathlib import Path

import pytest

from extractor.api import extract
from extractor.engines.pdfium import PdfiumEngine
from extractor.engines.plumber import PlumberEngine
from extractor.layout import load_layout
from extractor.records import Box, Certificate

ROOT = Path(__file__).resolve().parents[1]
DEMO = sorted((ROOT / "fixtures" / "demo").glob("*.pdf"))
HOSTILE_OK = [ROOT / "fixtures" / "hostile" / n
              for n in ("valid-base.pdf", "html-and-script-in-cells.pdf", "decimal-commas.pdf")]
FRACTIONAL_WIDTHS = "PDFium rounds embedded-font glyph widths to 1/1000 em (x drifts < 0.1 pt)"


def _mark(path: Path) -> list[pytest.MarkDecorator]:
    if path.name.startswith("grid-"):
        return [pytest.mark.xfail(reason=FRACTIONAL_WIDTHS, strict=True)]
    return []


def _params(paths: list[Path]) -> list[object]:
    return [pytest.param(p, id=p.name, marks=_mark(p)) for p in paths]


def _layout_for(pdf: Path):  # -> Layout
    truth = pdf.with_suffix(".truth.json")
    if truth.is_file():
        data = json.loads(truth.read_text(encoding="utf-8"))
        name = data.get("layout") or data.get("form")
        for cand in (ROOT / "fixtures" / "layouts").glob("*.toml"):
            lay = load_layout(cand)
            if name in (lay.name, cand.stem, cand.name, str(cand.relative_to(ROOT))):
                return lay
        from extractor.api import recognise

        layouts = [load_layout(p) for p in (ROOT / "fixtures" / "layouts").glob("*.toml")]
        found = recognise(str(pdf), layouts)
        assert found is not None, f"no layout for {pdf.name}"
        return found
    return load_layout(ROOT / "fixtures" / "hostile" / "layouts" / "hostile-grid.toml")


def _nfkc(text: str) -> str:
    # PDFium expands ligature glyphs (ﬁ → fi) where pdfplumber keeps them: same text after NFKC
    return unicodedata.normalize("NFKC", text)


@pytest.mark.parametrize("pdf", _params(DEMO + HOSTILE_OK))
def test_same_words(pdf: Path) -> None:
    a, b = PlumberEngine().open(str(pdf)), PdfiumEngine().open(str(pdf))
    try:
        for pa, pb in zip(a.pages(), b.pages(), strict=True):
            assert (pa.number, pa.rotation) == (pb.number, pb.rotation)
            assert pa.width == pytest.approx(pb.width, abs=0.01)
            assert pa.height == pytest.approx(pb.height, abs=0.01)
            assert [_nfkc(w.text) for w in pa.words] == [_nfkc(w.text) for w in pb.words]
            for wa, wb in zip(pa.words, pb.words, strict=True):
                for edge in ("x0", "top", "x1", "bottom"):
                    assert getattr(wa, edge) == pytest.approx(getattr(wb, edge), abs=0.01), (
                        pa.number, wa, wb)
                assert wa.vertical == wb.vertical
    finally:
        a.close()
        b.close()


def _box(box: Box | None) -> tuple[float, ...] | None:
    if box is None:
        return None
    return (box.page, box.x0, box.top, box.x1, box.bottom)


def _records(cert: Certificate) -> list[tuple[object, ...]]:
    rows: list[tuple[object, ...]] = []
    for name, cell in sorted(cert.cells.items()):
        rows.append(("cert", name, cell.value.to_dict(), _box(cell.box)))
    for board in cert.boards:
        for name, cell in sorted(board.cells.items()):
            rows.append(("board", board.ref, name, cell.value.to_dict(), _box(cell.box)))
        for circuit in board.circuits:
            for name, cell in sorted(circuit.cells.items()):
                value = cell.value.to_dict()
                value["raw"] = _nfkc(value["raw"])
                rows.append((board.ref, circuit.ref, name, value, _box(cell.box)))
    return rows


@pytest.mark.parametrize("pdf", _params(DEMO + HOSTILE_OK))
def test_same_certificate(pdf: Path) -> None:
    layout = _layout_for(pdf)
    a = extract(str(pdf), layout, engine="pdfplumber")
    b = extract(str(pdf), layout, engine="pdfium")
    assert a.page_count == b.page_count
    ra, rb = _records(a), _records(b)
    assert [r[:-1] for r in ra] == [r[:-1] for r in rb]  # same cells and values
    for x, y in zip(ra, rb, strict=True):  # same boxes to 0.1 pt (compared, not rounded:
        bx, by = x[-1], y[-1]              # rounding splits 119.5499 and 119.5501)
        assert (bx is None) == (by is None), (x, y)
        if bx is not None and by is not None:
            drift = max(abs(p - q) for p, q in zip(bx[1:], by[1:], strict=True))
            assert bx[0] == by[0] and drift < 0.05, (x, y)
    assert [p.message for p in a.problems] == [p.message for p in b.problems]
