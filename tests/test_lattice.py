"""The lattice (camelot) engine gives the same circuit records as the default engine."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from certvet.extractor.api import extract, open_document
from certvet.extractor.layout import load_layout

ROOT = Path(__file__).resolve().parents[1]
RULED = [
    ("fixtures/forms_extra/boxed-sample.pdf", "fixtures/forms_extra/layouts/boxed.toml"),
    ("fixtures/forms_extra/blank-rows-boxed.pdf", "fixtures/forms_extra/layouts/boxed.toml"),
    ("fixtures/demo/grid-clean-01.pdf", "fixtures/layouts/grid-landscape.toml"),
]


def _values(cert) -> dict[tuple[str, str, str], str]:
    return {
        (b.ref, c.ref, f): cell.value.raw for b, c in cert.circuits() for f, cell in c.cells.items()
    }


@pytest.mark.parametrize(("pdf", "layout"), RULED, ids=lambda p: Path(p).stem)
def test_lattice_records_equal_default_engine(pdf: str, layout: str) -> None:
    lay = load_layout(ROOT / layout)
    a = extract(str(ROOT / pdf), lay, engine="pdfplumber")
    b = extract(str(ROOT / pdf), lay, engine="lattice")
    assert b.engine == "lattice"
    assert _values(a) == _values(b)
    assert all(cell.box is not None for _, c in b.circuits() for cell in c.cells.values())


def test_lattice_words_are_camelot_cells() -> None:
    """A two-line description is one word with its cell's box (camelot's reading)."""
    pdf = ROOT / "fixtures/forms_extra/boxed-sample.pdf"
    truth = json.loads(pdf.with_name("boxed-sample.truth.json").read_text(encoding="utf-8"))
    two_line = next(
        c["description"] for c in truth["boards"][0]["circuits"] if len(c["description"]) > 22
    )
    doc = open_document(str(pdf), "lattice")
    try:
        page = list(doc.pages())[1]
    finally:
        doc.close()
    words = [w for w in page.words if w.text == two_line]
    assert words, "the cell text should be one word"
    assert words[0].bottom - words[0].top > 20  # the whole two-line cell


def test_lattice_rejects_a_non_pdf(tmp_path: Path) -> None:
    from certvet.extractor.errors import InputError

    p = tmp_path / "x.pdf"
    p.write_text("hello")
    with pytest.raises(InputError, match="not a PDF"):
        open_document(str(p), "lattice")


def test_lattice_reads_certificate_details_in_a_framed_box() -> None:
    """A one-column framed box of labels (page 1 details) keeps its lines, so the anchored
    label patterns (`^Inspector: ...$`) read the same as with the other engines."""
    lay = load_layout(ROOT / "fixtures/layouts/grid-landscape.toml")
    pdf = str(ROOT / "fixtures/demo/grid-faulty-03.pdf")
    a = extract(pdf, lay, engine="pdfplumber")
    b = extract(pdf, lay, engine="lattice")
    assert b.cells["inspector"].value.raw == "Callum Ostrowe"
    assert {k: c.value.raw for k, c in b.cells.items()} == {
        k: c.value.raw for k, c in a.cells.items()
    }
