"""The pdfplumber and PDFium engines read every fixture the same way.

Covered: every PDF with a truth file under fixtures/demo and fixtures/forms_extra (pitfalls
included: Symbol-font Ω and Δ, ZapfDingbats ticks, vertical headers, a /Rotate 90 page whose
headers are turned 90°) and the readable hostile base forms.

* Words: identical text, vertical flag and reading direction, everywhere (no exception).
* Certificates: identical records (fields, kinds, values, raw text, problems) everywhere;
  cell boxes on the same page and within 1 pt.
* Word boxes within 0.01 pt, except one documented, strict xfail: PDFium lays out chars of
  an embedded font with glyph widths rounded to whole thousandths of an em, so on a font
  with fractional widths (the grid demo forms, DejaVu Sans Condensed through reportlab)
  x positions drift from pdfminer's by up to ~0.7 pt along a line. It fails loudly the day
  the engines start to agree to the hundredth.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from recordkit import assert_engines_agree, engine_pages, record_rows

from certvet.extractor.api import extract
from certvet.extractor.layout import load_layout

ROOT = Path(__file__).resolve().parents[1]
TRUTHED = sorted(
    p
    for folder in ("demo", "forms_extra")
    for p in (ROOT / "fixtures" / folder).glob("*.pdf")
    if p.with_suffix(".truth.json").is_file()
)
HOSTILE_OK = [ROOT / "fixtures" / "hostile" / n
              for n in ("valid-base.pdf", "html-and-script-in-cells.pdf", "decimal-commas.pdf")]
ALL = TRUTHED + HOSTILE_OK
FRACTIONAL_WIDTHS = "PDFium rounds embedded-font glyph widths to 1/1000 em (x drifts < 1 pt)"
BOX_TOLERANCE = 1.0  # points, for certificate cell boxes (see FRACTIONAL_WIDTHS)


def _ids(paths: list[Path]) -> list[str]:
    return [f"{p.parent.name}/{p.name}" for p in paths]


def _box_params(paths: list[Path]) -> list[object]:
    marks = {True: [pytest.mark.xfail(reason=FRACTIONAL_WIDTHS, strict=True)], False: []}
    return [
        pytest.param(p, id=i, marks=marks[p.name.startswith("grid-")])
        for p, i in zip(paths, _ids(paths), strict=True)
    ]


def test_fixture_set_is_complete() -> None:
    names = {p.name for p in TRUTHED}
    assert len([p for p in TRUTHED if p.parent.name == "demo"]) >= 6
    assert {"boxed-sample.pdf", "rotated-page-boxed.pdf", "odd-glyphs-ohm-ticks-ledger.pdf"} <= (
        names
    )


def _layout_for(pdf: Path):  # -> Layout
    truth = pdf.with_suffix(".truth.json")
    if truth.is_file():
        data = json.loads(truth.read_text(encoding="utf-8"))
        path = ROOT / data["layout"]
        assert path.is_file(), f"{pdf.name}: layout {data['layout']} missing"
        return load_layout(path)
    return load_layout(ROOT / "fixtures" / "hostile" / "layouts" / "hostile-grid.toml")


@pytest.mark.parametrize("pdf", ALL, ids=_ids(ALL))
def test_same_words(pdf: Path) -> None:
    assert_engines_agree(pdf, BOX_TOLERANCE)


@pytest.mark.parametrize("pdf", _box_params(ALL))
def test_same_word_boxes_to_the_hundredth(pdf: Path) -> None:
    for pa, pb in engine_pages(pdf):
        for wa, wb in zip(pa.words, pb.words, strict=True):
            for edge in ("x0", "top", "x1", "bottom"):
                assert getattr(wa, edge) == pytest.approx(getattr(wb, edge), abs=0.01), (
                    pa.number, wa, wb)


def test_symbol_and_rotated_text_read_as_printed() -> None:
    """The cases the engines used to disagree on, read right by both."""
    for pdf in ("boxed-sample.pdf", "rotated-page-boxed.pdf"):
        for pa, pb in engine_pages(ROOT / "fixtures" / "forms_extra" / pdf):
            if pa.number != 2:
                continue
            for page in (pa, pb):
                vertical = [w.text for w in page.words if w.vertical]
                assert "IΔn" in vertical and "Measured" in vertical, (pdf, vertical)
                assert "(Ω)" in vertical and "(MΩ)" in vertical
                assert not any("\u2206" in t or "\u2126" in t for t in vertical)
                assert page.words[0].text == "Schedule" and not page.words[0].vertical


@pytest.mark.parametrize("pdf", ALL, ids=_ids(ALL))
def test_same_certificate(pdf: Path) -> None:
    layout = _layout_for(pdf)
    a = extract(str(pdf), layout, engine="pdfplumber")
    b = extract(str(pdf), layout, engine="pdfium")
    assert a.page_count == b.page_count
    ra, rb = record_rows(a), record_rows(b)
    assert ra, "nothing extracted"
    assert [r[:-1] for r in ra] == [r[:-1] for r in rb]  # same cells, kinds, values, raw text
    for x, y in zip(ra, rb, strict=True):
        bx, by = x[-1], y[-1]
        assert (bx is None) == (by is None), (x, y)
        if bx is not None and by is not None:
            drift = max(abs(p - q) for p, q in zip(bx[1:], by[1:], strict=True))
            assert bx[0] == by[0] and drift < BOX_TOLERANCE, (x, y)
    assert [(p.message, p.raw) for p in a.problems] == [(p.message, p.raw) for p in b.problems]
