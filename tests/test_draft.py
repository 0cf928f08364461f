"""Drafting layouts from samples: measured against the fixtures' ground truth."""

from __future__ import annotations

import importlib.util
import io
import sys
from pathlib import Path

import pytest

from extractor.draft import DraftError, draft_layout
from extractor.header_terms import match_header
from extractor.layout import load_layout

ROOT = Path(__file__).resolve().parents[1]
_spec = importlib.util.spec_from_file_location(
    "layout_accuracy", ROOT / "scripts/layout_accuracy.py"
)
acc = importlib.util.module_from_spec(_spec)
sys.modules["layout_accuracy"] = acc
_spec.loader.exec_module(acc)  # type: ignore[union-attr]

DRAFT_GOAL = 0.95


@pytest.mark.parametrize("pdf", acc.SAMPLES[:4], ids=lambda p: Path(p).stem)
def test_draft_meets_goal_and_final_layout_reads_everything(pdf: str) -> None:
    r = acc.measure_form(pdf)
    assert r.matched >= DRAFT_GOAL, f"fields not matched: {r.unmatched}"
    assert r.draft.share >= DRAFT_GOAL, r.draft.wrong
    assert r.final.share == 1.0, r.final.wrong
    assert r.final.extra_rows == 0


def test_draft_is_a_loadable_layout_with_comments(tmp_path: Path) -> None:
    res = draft_layout(ROOT / "fixtures/forms_extra/ledger-sample.pdf", name="ledger-draft")
    path = tmp_path / "d.toml"
    path.write_text(res.toml, encoding="utf-8")
    lay = load_layout(path)
    assert lay.name == "ledger-draft"
    assert {"circuit_ref", "r1", "rn", "r2", "r1_r2", "zs", "live_csa", "cpc_csa"} <= set(
        lay.column_fields()
    )
    combined = next(c for c in lay.columns if len(c.fields) == 2)
    assert combined.split == "/"
    assert "# printed:" in res.toml and "confidence" in res.toml
    assert any(f == "device_type" and conf < 0.75 for f, _, conf, _ in res.table())
    assert "CHECK" in res.toml  # the low-confidence choice is marked
    assert {lab.field for lab in res.labels} >= {
        "cert_number",
        "address",
        "inspection_date",
        "inspector",
        "instrument_serial",
        "ze",
        "ipf",
    }


def test_draft_reads_two_level_and_vertical_headers() -> None:
    res = draft_layout(ROOT / "fixtures/forms_extra/boxed-sample.pdf")
    by_field = {c.fields[0]: c for c in res.columns if c.fields}
    assert by_field["r1"].group.startswith("Ring final circuit")
    assert by_field["ir_live_earth"].group == "Insulation resistance"
    assert res.ruled and res.schedule_pages == [2, 3]
    assert not res.unplaced


@pytest.mark.parametrize("pdf", acc.PITFALLS, ids=lambda p: Path(p).stem)
def test_pitfall_read_fully_by_its_final_layout(pdf: str) -> None:
    truth = acc.load_truth(ROOT / pdf)
    sc = acc.measure_layout(pdf, ROOT / truth["layout"])
    assert sc.share == 1.0, sc.wrong


def _pdf(draw) -> bytes:
    from reportlab.pdfgen import canvas

    buf = io.BytesIO()
    c = canvas.Canvas(buf, invariant=1)
    draw(c)
    c.showPage()
    c.save()
    return buf.getvalue()


def test_no_text_layer_says_what_was_looked_for(tmp_path: Path) -> None:
    p = tmp_path / "scan.pdf"
    p.write_bytes(_pdf(lambda c: c.rect(50, 50, 300, 300, fill=1)))
    with pytest.raises(DraftError, match="no text layer: looked for characters on all 1 page"):
        draft_layout(p)


def test_no_table_says_what_was_looked_for(tmp_path: Path) -> None:
    def draw(c) -> None:
        c.drawString(72, 700, "Dear client, please find our invoice attached.")
        c.drawString(72, 680, "Total due: 120.00")

    p = tmp_path / "letter.pdf"
    p.write_bytes(_pdf(draw))
    with pytest.raises(DraftError, match="no schedule table found: looked on 1 page"):
        draft_layout(p)


@pytest.mark.parametrize(
    ("text", "field"),
    [
        ("R1 + R2 (Ω)", "r1_r2"),
        ("R1+R2", "r1_r2"),
        ("r1 (line)", "r1"),
        ("rn", "rn"),
        ("Ring final circuit (Ω) | r2 (cpc)", "r2"),
        ("R2", "r2_only"),
        ("Maximum permitted Zs (Ω)", "max_zs"),
        ("Measured Zs", "zs"),
        ("IΔn (mA)", "rcd_idn"),
        ("Insulation (MΩ) | L-E", "ir_live_earth"),
        ("Live-Live (MΩ)", "ir_live_live"),
        ("Test button", "rcd_button"),
        ("BS (EN)", "device_standard"),
        ("Points served", "points"),
        ("Ω M easured Zs ()", "zs"),
        ("Cct No", "circuit_ref"),
        ("Breaking capacity (kA)", "breaking_capacity"),
    ],
)
def test_header_terms(text: str, field: str) -> None:
    assert match_header(text)[0].field == field
