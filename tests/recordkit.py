"""Two readings of one PDF made comparable: a certificate's records as rows, and the pages of
both engines side by side. The tests that compare two readings (two engines, or an original and
its re-print) use these."""

from __future__ import annotations

from pathlib import Path

import pytest

from certvet.extractor.engines.base import PageContent
from certvet.extractor.engines.pdfium import PdfiumEngine
from certvet.extractor.engines.plumber import PlumberEngine
from certvet.extractor.records import Box, Certificate


def box_row(box: Box | None) -> tuple[float, ...] | None:
    if box is None:
        return None
    return (box.page, box.x0, box.top, box.x1, box.bottom)


def record_rows(cert: Certificate) -> list[tuple[object, ...]]:
    """One row per cell (certificate, board, circuit): where, the value, the box last."""
    rows: list[tuple[object, ...]] = []
    for name, cell in sorted(cert.cells.items()):
        rows.append(("cert", name, cell.value.to_dict(), box_row(cell.box)))
    for board in cert.boards:
        for name, cell in sorted(board.cells.items()):
            rows.append(("board", board.ref, name, cell.value.to_dict(), box_row(cell.box)))
        for circuit in board.circuits:
            for name, cell in sorted(circuit.cells.items()):
                rows.append((board.ref, circuit.ref, name, cell.value.to_dict(),
                             box_row(cell.box)))
    return rows


def engine_pages(pdf: Path) -> list[tuple[PageContent, PageContent]]:
    """Each page of a PDF as read by the pdfplumber engine and by the pdfium engine."""
    a, b = PlumberEngine().open(str(pdf)), PdfiumEngine().open(str(pdf))
    try:
        return list(zip(a.pages(), b.pages(), strict=True))
    finally:
        a.close()
        b.close()


def assert_engines_agree(pdf: Path, tolerance: float = 1.0) -> None:
    """Both engines read every page of `pdf` alike: page size and turn, words (text, vertical
    flag, reading direction) in the same order, each word's box within `tolerance` points."""
    for pa, pb in engine_pages(pdf):
        assert (pa.number, pa.rotation) == (pb.number, pb.rotation)
        assert (pa.width, pa.height) == pytest.approx((pb.width, pb.height), abs=0.01)
        ka = [(w.text, w.vertical, w.direction) for w in pa.words]
        kb = [(w.text, w.vertical, w.direction) for w in pb.words]
        assert ka == kb, (pdf.name, pa.number)
        for wa, wb in zip(pa.words, pb.words, strict=True):
            drift = max(abs(getattr(wa, e) - getattr(wb, e)) for e in ("x0", "top", "x1", "bottom"))
            assert drift < tolerance, (pdf.name, pa.number, wa, wb)
