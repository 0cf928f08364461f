"""The landlord's summary and the contractor's query sheet in headless Chromium: they render,
their text is on the page, and printed they come out on A4 (595 × 842 pt, ISO 216 A4 is
210 × 297 mm; 1 pt = 1/72 in, derived). Skipped without Chromium except in CI."""

from __future__ import annotations

from datetime import date
from pathlib import Path

import pypdfium2 as pdfium
import pytest
from test_reader_outputs import _faulty
from test_report_browser import _chromium, _run

from certvet.checks.runner import run_checks
from certvet.reports.readers import write_query_sheet, write_summary

pytestmark = pytest.mark.browser


@pytest.fixture
def outputs(tmp_path: Path) -> tuple[Path, Path]:
    cert = _faulty()
    res = run_checks(cert, audit_date=date(2026, 12, 1))
    return (write_summary(cert, res, tmp_path / "s.html", certvet_version="t",
                          generated_at="fixed"),
            write_query_sheet(cert, res, tmp_path / "q.html", certvet_version="t",
                              generated_at="fixed"))


def test_both_render_with_their_content(outputs: tuple[Path, Path], tmp_path: Path) -> None:
    browser = _chromium()
    summary, queries = outputs
    dom = _run(browser, tmp_path / "p1", "--dump-dom", summary.as_uri())
    assert dom.returncode == 0, dom.stderr[-2000:]
    assert 'id="headline"' in dom.stdout and "fails requirements" in dom.stdout
    assert "cannot show that an installation is safe" in dom.stdout
    dom = _run(browser, tmp_path / "p2", "--dump-dom", queries.as_uri())
    assert dom.returncode == 0, dom.stderr[-2000:]
    assert dom.stdout.count("<tr data-n=") >= 3  # one row per question


@pytest.mark.parametrize("which", [0, 1], ids=["summary", "queries"])
def test_prints_on_a4(outputs: tuple[Path, Path], tmp_path: Path, which: int) -> None:
    browser = _chromium()
    pdf = tmp_path / "printed.pdf"
    done = _run(browser, tmp_path / "profile", f"--print-to-pdf={pdf}",
                "--no-pdf-header-footer", outputs[which].as_uri())
    assert done.returncode == 0, done.stderr[-2000:]
    doc = pdfium.PdfDocument(str(pdf))
    try:
        assert len(doc) >= 1
        for i in range(len(doc)):
            w, h = doc[i].get_size()
            assert abs(w - 595.3) < 2 and abs(h - 841.9) < 2, (i, w, h)
        text = doc[0].get_textpage().get_text_range()
        assert "EICR-9" in text
    finally:
        doc.close()
