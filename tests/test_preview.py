"""Preview (what the layout sees), try-layout and the layout CLI commands."""

from __future__ import annotations

import base64
import re
from pathlib import Path

from typer.testing import CliRunner

from certvet.cli_layouts import app
from certvet.extractor.layout import load_layout
from certvet.extractor.preview import preview, try_layout

ROOT = Path(__file__).resolve().parents[1]
LEDGER = ROOT / "fixtures/forms_extra/ledger-sample.pdf"
BOXED = ROOT / "fixtures/forms_extra/boxed-sample.pdf"
L_LEDGER = ROOT / "fixtures/forms_extra/layouts/ledger.toml"
L_BOXED = ROOT / "fixtures/forms_extra/layouts/boxed.toml"


def test_html_preview_is_self_contained(tmp_path: Path) -> None:
    out = tmp_path / "p.html"
    res = preview(LEDGER, load_layout(L_LEDGER), out, scale=1.0)
    text = out.read_text(encoding="utf-8")
    imgs = re.findall(r"data:image/png;base64,([A-Za-z0-9+/=]+)", text)
    assert len(imgs) == res.pages == 3
    assert base64.b64decode(imgs[1])[:8] == b"\x89PNG\r\n\x1a\n"
    assert "ledger" in text and "src='http" not in text
    assert res.cells > 300 and res.unreadable == 0 and res.message == ""


def test_png_preview_draws_over_the_page(tmp_path: Path) -> None:
    from PIL import Image

    out = tmp_path / "p.png"
    preview(BOXED, load_layout(L_BOXED), out, scale=1.0)
    img = Image.open(out).convert("RGB")
    assert img.height > 3 * 590
    # green value boxes are drawn on the schedule page
    greens = sum(1 for px in img.get_flattened_data() if px == (0, 150, 0))
    assert greens > 1000


def test_wrong_layout_still_previews_with_the_reason(tmp_path: Path) -> None:
    res = preview(BOXED, load_layout(L_LEDGER), tmp_path / "p.html", scale=0.5)
    assert "found no schedule" in res.message
    assert "found no schedule" in (tmp_path / "p.html").read_text(encoding="utf-8")


def test_try_layout_lists_cells_that_did_not_parse() -> None:
    res = try_layout(
        ROOT / "fixtures/forms_extra/odd-glyphs-ohm-ticks-ledger.pdf", load_layout(L_LEDGER)
    )
    assert res.certificate is not None
    assert [u for u in res.unparsed if u[1]] == []  # every circuit cell parsed (Ω sign, ticks)
    bad = try_layout(
        LEDGER,
        load_layout(L_LEDGER).__class__(
            **{
                **load_layout(L_LEDGER).__dict__,
                "columns": tuple(
                    c.__class__(("points",), c.header, c.x, None) if c.field == "description" else c
                    for c in load_layout(L_LEDGER).columns
                ),
            }
        ),
    )
    assert any(field == "points" for _, _, field, _, _ in bad.unparsed)


def test_cli_commands(tmp_path: Path) -> None:
    run = CliRunner()
    out = tmp_path / "d.toml"
    r = run.invoke(app, ["draft-layout", str(BOXED), "-o", str(out), "--name", "boxed-x"])
    assert r.exit_code == 0, r.output
    assert load_layout(out).name == "boxed-x"
    r = run.invoke(app, ["try-layout", str(BOXED), "--layout", str(out)])
    assert r.exit_code == 0 and "every cell parsed" in r.output
    r = run.invoke(app, ["preview", str(BOXED), "--layout", str(tmp_path / "missing.toml")])
    assert r.exit_code == 2
    blank = tmp_path / "blank.pdf"
    blank.write_bytes(b"not a pdf")
    r = run.invoke(app, ["draft-layout", str(blank)])
    assert r.exit_code == 3
