"""The certificate and portfolio reports on paper and on a phone, in headless Chromium.

Paper: printed, every page is ISO 216 A4 (210 × 297 mm = 595.3 × 841.9 pt, either way round;
1 pt = 1/72 in, derived) and no page but the last is almost empty (its text at least a fifth of
the fullest page's: common practice, no source — a forced break or an unbreakable block leaves
such pages). Phone: at a 390 px wide viewport (a common phone width, common practice, no
source) the page itself does not scroll sideways (document scrollWidth ≤ 390); wide tables
scroll inside their own container. Screenshots and PDFs are kept in the test's tmp folder
(printed with -s). Skipped without Chromium except in CI.
"""

from __future__ import annotations

import re
from pathlib import Path

import pypdfium2 as pdfium
import pytest
from test_report_browser import _chromium, _run
from typer.testing import CliRunner

from certvet.cli import app

pytestmark = pytest.mark.browser

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "fixtures" / "demo"
LAYOUTS = ROOT / "fixtures" / "layouts"
A4 = (595.3, 841.9)


@pytest.fixture(scope="module")
def pages(tmp_path_factory: pytest.TempPathFactory) -> dict[str, Path]:
    out = tmp_path_factory.mktemp("paper") / "out"
    res = CliRunner().invoke(app, ["batch", str(DEMO), "-l", str(LAYOUTS),
                                   "-s", str(out.parent / "s.sqlite"), "-o", str(out), "-q"])
    assert res.exit_code in (0, 1), res.output
    (faulty,) = [p for p in (out / "certificates").glob("grid-faulty-03-*.html")
                 if p.name.count(".") == 1]  # the report, not its summary or query sheet
    return {"certificate": faulty, "portfolio": out / "portfolio.html"}


def _page_texts(pdf: Path) -> list[tuple[tuple[float, float], int]]:
    doc = pdfium.PdfDocument(str(pdf))
    try:
        return [(doc[i].get_size(), len(doc[i].get_textpage().get_text_range().split()))
                for i in range(len(doc))]
    finally:
        doc.close()


@pytest.mark.parametrize("which", ["certificate", "portfolio"])
def test_prints_on_a4_without_near_empty_pages(pages: dict[str, Path], tmp_path: Path,
                                               which: str) -> None:
    browser = _chromium()
    pdf = tmp_path / f"{which}.pdf"
    done = _run(browser, tmp_path / "profile", f"--print-to-pdf={pdf}",
                "--no-pdf-header-footer", pages[which].as_uri())
    assert done.returncode == 0, done.stderr[-2000:]
    per_page = _page_texts(pdf)
    print(f"{which}: {len(per_page)} A4 page(s), words per page {[n for _, n in per_page]}, "
          f"PDF {pdf}")
    assert per_page
    for i, ((w, h), _) in enumerate(per_page):
        assert sorted((round(w, 1), round(h, 1))) == sorted(A4) or (
            abs(min(w, h) - A4[0]) < 2 and abs(max(w, h) - A4[1]) < 2), (i, w, h)
    fullest = max(n for _, n in per_page)
    thin = [i + 1 for i, (_, n) in enumerate(per_page[:-1]) if n < fullest / 5]
    assert not thin, f"{which}: pages {thin} almost empty: {[n for _, n in per_page]}"


# A desktop browser window has a minimum width above 390 px, so the page is loaded in a 390 px
# wide frame of a harness page (the reports themselves have no scripts); the harness reads the
# frame's scroll width once it has loaded.
HARNESS = """<!DOCTYPE html><html><body style="margin:0">
<iframe id="f" src="{src}" style="width:390px;height:900px;border:0"></iframe>
<script>document.getElementById('f').onload = function () {{
  var d = this.contentDocument;
  document.body.setAttribute('data-sw', String(d.documentElement.scrollWidth));
  document.body.setAttribute('data-cw', String(d.documentElement.clientWidth));
  document.body.setAttribute('data-iw', String(this.contentWindow.innerWidth));
}};</script></body></html>"""


@pytest.mark.parametrize("which", ["certificate", "portfolio"])
def test_holds_at_390_px(pages: dict[str, Path], tmp_path: Path, which: str) -> None:
    browser = _chromium()
    harness = pages[which].with_name(f"harness-{which}.html")
    harness.write_text(HARNESS.format(src=pages[which].name), encoding="utf-8")
    done = _run(browser, tmp_path / "profile", "--allow-file-access-from-files",
                "--virtual-time-budget=5000", "--dump-dom", harness.as_uri())
    assert done.returncode == 0, done.stderr[-2000:]
    sw, cw = re.search(r'data-sw="(\d+)"', done.stdout), re.search(r'data-cw="(\d+)"',
                                                                     done.stdout)
    assert sw and cw, "the harness did not read the frame"
    iw = re.search(r'data-iw="(\d+)"', done.stdout)
    assert iw and int(iw.group(1)) == 390  # the page really was laid out 390 px wide
    shot = tmp_path / f"{which}-390.png"
    _run(browser, tmp_path / "profile2", "--allow-file-access-from-files",
         "--window-size=420,2400", f"--screenshot={shot}",
         harness.with_name(harness.name).as_uri())
    print(f"{which} at 390 px: scrollWidth {sw.group(1)} (client width {cw.group(1)}, "
          f"390 less the vertical scroll bar), screenshot {shot}")
    assert int(sw.group(1)) <= int(cw.group(1)) <= 390  # nothing scrolls the page sideways
