"""`certvet show-text`: a page's text lines as the extractor reads them, printed literally."""

from __future__ import annotations

from pathlib import Path

from typer.testing import CliRunner

from certvet.cli import app
from certvet.extractor.api import page_text
from certvet.extractor.show_text import page_lines

ROOT = Path(__file__).resolve().parents[1]
GRID = ROOT / "fixtures/demo/grid-clean-01.pdf"
runner = CliRunner()


def test_lines_are_the_text_recognise_and_label_patterns_see() -> None:
    shown = page_lines(str(GRID))
    texts = page_text(str(GRID))
    assert [p.number for p in shown] == [1, 2, 3]
    for pg, text in zip(shown, texts, strict=True):
        assert "\n".join(ln.text for ln in pg.lines if not ln.vertical) == text


def test_cli_prints_one_page_with_positions() -> None:
    res = runner.invoke(app, ["show-text", str(GRID), "--page", "2", "--positions"])
    assert res.exit_code == 0, res.output
    lines = res.output.splitlines()
    assert lines[0].startswith("--- page 2 (842 x 595 pt")
    assert "--- page 1" not in res.output and "--- page 3" not in res.output
    board = next(ln for ln in lines if "Board: DB1" in ln)
    x0, top, x1, bottom = (float(v) for v in board.split()[:4])
    assert x0 < x1 and top < bottom  # points, top-left origin: the board line's box
    plain = runner.invoke(app, ["show-text", str(GRID), "-p", "2"])
    assert any(ln.startswith("Board: DB1 Location:") for ln in plain.output.splitlines())


def test_markup_in_the_pdf_is_printed_literally(tmp_path: Path) -> None:
    from reportlab.lib.pagesizes import A4
    from reportlab.pdfgen import canvas

    pdf = tmp_path / "markup.pdf"
    c = canvas.Canvas(str(pdf), pagesize=A4)
    c.drawString(50, 800, "Remarks: [red]see note[/red] [bold]x[/] [/red]")
    c.showPage()
    c.save()
    res = runner.invoke(app, ["show-text", str(pdf)])
    assert res.exit_code == 0, res.output
    assert "Remarks: [red]see note[/red] [bold]x[/] [/red]" in res.output


def test_a_page_the_pdf_lacks_is_one_line_naming_the_file() -> None:
    res = runner.invoke(app, ["show-text", str(GRID), "--page", "9"])
    assert res.exit_code == 3
    assert f"{GRID}: has no page 9 (pages 1-3)" in res.output
    bad = runner.invoke(app, ["show-text", str(ROOT / "fixtures/hostile/not-a-pdf.pdf")])
    assert bad.exit_code == 3 and "Traceback" not in bad.output
