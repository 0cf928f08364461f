"""`certvet export --format xlsx`: one workbook as a person expects it — cautions and verdicts on
the first sheet, certificates / circuits / findings sheets, frozen bold headers, sensible
widths, and formula text from a PDF never run as a formula."""

from __future__ import annotations

from pathlib import Path

import pytest
from typer.testing import CliRunner

from certvet.cli import app
from certvet.reports.model import CAUTIONS

ROOT = Path(__file__).resolve().parents[1]
HOSTILE = ROOT / "fixtures" / "hostile"
DEMO = ROOT / "fixtures" / "demo"
runner = CliRunner()


@pytest.fixture(scope="module")
def workbook(tmp_path_factory: pytest.TempPathFactory) -> Path:
    tmp = tmp_path_factory.mktemp("xlsx")
    store = tmp / "s.sqlite"
    pdfs = [DEMO / "grid-faulty-03.pdf", DEMO / "plain-clean-04.pdf",
            HOSTILE / "formula-text-in-cells.pdf"]
    for pdf, layouts in ((pdfs[:2], ROOT / "fixtures" / "layouts"),
                         (pdfs[2:], HOSTILE / "layouts" / "hostile-grid.toml")):
        res = runner.invoke(app, ["batch", *map(str, pdf), "-l", str(layouts), "-s", str(store),
                                  "-o", str(tmp / "b"), "-q"])
        assert res.exit_code in (0, 1), res.output
    res = runner.invoke(app, ["export", "-s", str(store), "-o", str(tmp / "e"), "-f", "xlsx"])
    assert res.exit_code == 0, res.output
    path = tmp / "e" / "corpus.xlsx"
    assert res.output.strip() == str(path)
    return path


def test_first_sheet_has_cautions_and_verdicts(workbook: Path) -> None:
    from openpyxl import load_workbook

    wb = load_workbook(workbook)
    assert wb.sheetnames[:4] == ["Read first", "certificates", "circuits", "findings"]
    front = [[c for c in row if c is not None] for row in wb["Read first"].iter_rows(
        values_only=True)]
    text = [v for row in front for v in row]
    for caution in CAUTIONS:
        assert caution in text
    verdicts = {row[0]: row[1] for row in front if len(row) == 2 and isinstance(row[1], int)}
    # the demo's faulty grid certificate fails requirements; the plain clean one has none
    assert verdicts.get("fails requirements") == 1 and verdicts.get("no concerns found") == 1
    assert sum(verdicts.values()) == 3


def test_sheets_have_frozen_bold_headers_widths_and_the_verdict_words(workbook: Path) -> None:
    from openpyxl import load_workbook

    wb = load_workbook(workbook)
    for name in ("certificates", "circuits", "findings"):
        ws = wb[name]
        assert ws.freeze_panes == "A2", name
        assert all(c.font.bold for c in ws[1] if c.value is not None), name
        assert ws.auto_filter.ref and ws.auto_filter.ref.startswith("A1:")
        widths = [d.width for d in ws.column_dimensions.values()]
        assert widths and all(6 <= w <= 60 for w in widths), name
    header = [c.value for c in wb["certificates"][1]]
    words = {r[header.index("verdict_words")] for r in wb["certificates"].iter_rows(
        min_row=2, values_only=True)}
    assert "fails requirements" in words
    assert wb["circuits"].max_row > 30  # every circuit of the three certificates


def test_formula_text_from_a_pdf_is_text_not_a_formula(workbook: Path) -> None:
    from openpyxl import load_workbook

    wb = load_workbook(workbook)
    cells = [c for ws in wb.worksheets for row in ws.iter_rows() for c in row
             if isinstance(c.value, str)]
    assert not [c.coordinate for c in cells if c.data_type == "f"]
    assert not [c.value for c in cells if c.value[:1] in ("=", "+", "@")]
    assert any(c.value.startswith("'=") for c in cells)  # the hostile text got there, defused
