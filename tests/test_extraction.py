"""Extraction against ground truth: every cell of every demo fixture, plus PDFs drawn here.

Each certificate, board and circuit cell must read back as printed (after `normalise_text`),
with its provenance (page and a box inside the page). Failures report the cell accuracy.
"""

from __future__ import annotations

import json
import tomllib
from pathlib import Path
from typing import Any

import pytest
from pdfs_for_tests import build_grid, build_plain

from certvet.extractor.api import extract, open_document, page_text, recognise
from certvet.extractor.assemble import assemble
from certvet.extractor.engines.base import ZAPF_DINGBATS
from certvet.extractor.engines.words import Char, build_words, is_unreadable
from certvet.extractor.errors import InputError, NoLayoutMatches
from certvet.extractor.layout import load_layout, parse_layout
from certvet.extractor.records import Certificate, ValueKind
from certvet.extractor.tokens import normalise_text

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "fixtures" / "demo"
LAYOUTS = ROOT / "fixtures" / "layouts"
TRUTHS = sorted(DEMO.glob("*.truth.json"))


# --- comparing with truth -------------------------------------------------------------------


def _boards(truth: dict[str, Any]) -> list[dict[str, Any]]:
    """Boards as {"ref", "cells", "circuits": [{"ref", "cells"}]}; the demo truth files write
    {"board_ref", "fields", "circuits": [{field: text}]}."""
    out = []
    for tb in truth.get("boards", []):
        if "board_ref" in tb:
            tb = {
                "ref": tb["board_ref"],
                "cells": tb.get("fields", {}),
                "circuits": [{"ref": c["circuit_ref"], "cells": c} for c in tb.get("circuits", [])],
            }
        out.append(tb)
    return out


def compare(cert: Certificate, truth: dict[str, Any]) -> tuple[int, int, list[str]]:
    """(cells right, cells in truth, descriptions of the wrong ones)."""
    ok = total = 0
    wrong: list[str] = []

    def check(where: str, got: str | None, want: str) -> None:
        nonlocal ok, total
        total += 1
        if got is None and want == "":
            got = ""  # nothing printed, nothing read (e.g. no observation codes)
        if got is not None and normalise_text(got) == normalise_text(want):
            ok += 1
        else:
            wrong.append(f"{where}: got {got!r}, printed {want!r}")

    for name, want in truth.get("certificate", {}).items():
        cell = cert.cells.get(name)
        check(f"certificate.{name}", cell.value.raw if cell else None, want)
    boards = {b.ref: b for b in cert.boards}
    for tb in _boards(truth):
        board = boards.get(tb["ref"])
        for name, want in tb.get("cells", {}).items():
            cell = board.cells.get(name) if board else None
            check(f"{tb['ref']}.{name}", cell.value.raw if cell else None, want)
        circuits = {c.ref: c for c in board.circuits} if board else {}
        for tc in tb.get("circuits", []):
            circuit = circuits.get(tc["ref"])
            for name, want in tc["cells"].items():
                cell = circuit.cells.get(name) if circuit else None
                check(f"{tb['ref']}/{tc['ref']}.{name}", cell.value.raw if cell else None, want)
        extra = sorted(set(circuits) - {tc["ref"] for tc in tb.get("circuits", [])})
        if extra:
            wrong.append(f"{tb['ref']}: circuits not printed: {extra}")
    extra_boards = sorted(set(boards) - {tb["ref"] for tb in _boards(truth)})
    if extra_boards:
        wrong.append(f"boards not printed: {extra_boards}")
    return ok, total, wrong


def assert_matches(cert: Certificate, truth: dict[str, Any], name: str) -> None:
    ok, total, wrong = compare(cert, truth)
    assert total > 0, f"{name}: the truth holds no cells"
    assert not wrong, (
        f"{name}: cell accuracy {ok}/{total} ({100 * ok / total:.1f} %); first wrong:\n  "
        + "\n  ".join(wrong[:15])
    )


def assert_provenance(cert: Certificate, sizes: dict[int, tuple[float, float]]) -> None:
    cells = list(cert.cells.values())
    for board in cert.boards:
        cells += board.cells.values()
        for circuit in board.circuits:
            cells += circuit.cells.values()
    assert cells
    for cell in cells:
        box = cell.box
        assert box is not None, f"{cell.field} has no box"
        w, h = sizes[box.page]
        assert 0 <= box.x0 <= box.x1 <= w + 0.5, (cell.field, box, w)
        assert 0 <= box.top <= box.bottom <= h + 0.5, (cell.field, box, h)


def page_sizes(path: Path) -> dict[int, tuple[float, float]]:
    doc = open_document(str(path))
    try:
        return {p.number: (p.width, p.height) for p in doc.pages()}
    finally:
        doc.close()


# --- the demo fixtures ----------------------------------------------------------------------


def _layout_for(truth_path: Path, truth: dict[str, Any]):
    if truth.get("layout"):
        return load_layout(ROOT / truth["layout"])
    from certvet.extractor.layout import load_layouts

    found = recognise(str(_pdf_for(truth_path)), load_layouts([LAYOUTS]))
    assert found is not None, f"{truth_path.name}: no layout recognises it"
    return found


def _pdf_for(truth_path: Path) -> Path:
    return truth_path.with_name(truth_path.name.removesuffix(".truth.json") + ".pdf")


@pytest.mark.skipif(not TRUTHS, reason="no demo fixtures: run python fixtures/generate.py")
@pytest.mark.parametrize("truth_path", TRUTHS, ids=lambda p: p.name.removesuffix(".truth.json"))
def test_demo_fixture_cells(truth_path: Path) -> None:
    truth = json.loads(truth_path.read_text(encoding="utf-8"))
    pdf = _pdf_for(truth_path)
    cert = extract(str(pdf), _layout_for(truth_path, truth))
    assert_matches(cert, truth, pdf.name)
    assert_provenance(cert, page_sizes(pdf))


# --- PDFs drawn for these tests ------------------------------------------------------------


@pytest.fixture(scope="module")
def grid(tmp_path_factory: pytest.TempPathFactory):
    path, layout_text, truth = build_grid(tmp_path_factory.mktemp("grid"))
    return path, parse_layout(tomllib.loads(layout_text), "test-grid.toml"), truth


@pytest.fixture(scope="module")
def plain(tmp_path_factory: pytest.TempPathFactory):
    path, layout_text, truth = build_plain(tmp_path_factory.mktemp("plain"))
    return path, parse_layout(tomllib.loads(layout_text), "test-plain.toml"), truth


def test_ruled_grid_vertical_and_two_level_headers(grid) -> None:
    path, layout, truth = grid
    cert = extract(str(path), layout)
    assert_matches(cert, truth, path.name)
    assert_provenance(cert, page_sizes(path))
    assert [b.ref for b in cert.boards] == ["DB1", "DB2"]  # "DB1 (continued)" continues DB1
    assert len(cert.boards[0].circuits) == 9
    assert cert.boards[0].circuits[-1].page == 2
    c1 = cert.boards[0].circuits[0]
    assert c1.value("polarity").kind is ValueKind.CONFIRMED  # ZapfDingbats tick, not "3"
    assert c1.value("ir_live_live").kind is ValueKind.LOWER_BOUND
    assert cert.boards[0].circuits[1].number("zs") == pytest.approx(0.49)  # "0,49"
    assert cert.boards[0].circuits[2].value("rcd_time").kind is ValueKind.LIMITATION
    assert not cert.problems, cert.problems


def test_rotated_page_is_read_as_displayed(grid) -> None:
    path, _layout, _truth = grid
    doc = open_document(str(path))
    try:
        pages = list(doc.pages())
    finally:
        doc.close()
    assert pages[1].rotation == 90
    assert (pages[1].width, pages[1].height) == pytest.approx((842, 595))
    texts = {w.text for w in pages[1].words if not w.vertical}
    assert {"SCHEDULE", "DB2", "Garage"} <= texts
    assert "Circuit" in {w.text for w in pages[1].words if w.vertical}  # not "tiucriC"


def test_unruled_table_with_wrapped_descriptions(plain) -> None:
    path, layout, truth = plain
    cert = extract(str(path), layout)
    assert_matches(cert, truth, path.name)
    assert_provenance(cert, page_sizes(path))
    c4 = cert.boards[0].circuits[3]
    assert c4.value("zs").kind is ValueKind.DASH
    assert c4.box("description") is not None


def test_same_words_give_same_records(grid) -> None:
    path, layout, _truth = grid
    doc = open_document(str(path))
    try:
        pages = list(doc.pages())
    finally:
        doc.close()
    one = assemble(pages, layout, source="a", sha256="x", engine_name="e", page_count=2)
    two = assemble(
        list(reversed(pages))[::-1], layout, source="a", sha256="x", engine_name="e", page_count=2
    )
    assert one == two


def test_recognise_picks_the_right_layout(grid, plain) -> None:
    assert recognise(str(grid[0]), [plain[1], grid[1]]) is grid[1]
    assert recognise(str(plain[0]), [grid[1], plain[1]]) is plain[1]
    assert "Report R-5521" in page_text(str(plain[0]))[0]


def test_layout_finding_no_schedule_is_a_clear_error(grid, plain) -> None:
    with pytest.raises(NoLayoutMatches) as err:
        extract(str(plain[0]), grid[1])
    assert str(err.value).startswith(str(plain[0]) + ": ")
    assert "\n" not in str(err.value)


# --- words ---------------------------------------------------------------------------------


def _chars(text: str, x: float, y: float, size: float = 8.0, **kw: Any) -> list[Char]:
    out = []
    for k, ch in enumerate(text):
        out.append(Char(ch, x + k * size * 0.5, y, x + (k + 1) * size * 0.5, y + size, size, **kw))
    return out


def test_build_words_splits_on_spaces_and_gaps_and_is_order_free() -> None:
    chars = _chars("R1+R2 (Ω)", 10, 100) + _chars("0.42", 80, 100) + _chars("Cooker", 10, 120)
    words = build_words(chars)
    assert [w.text for w in words] == ["R1+R2", "(Ω)", "0.42", "Cooker"]
    assert build_words(list(reversed(chars))) == words


def test_build_words_reads_vertical_text_in_both_directions() -> None:
    up = [
        Char(ch, 200, 300 - 4 * (k + 1), 208, 300 - 4 * k, 8, upright=False, direction="btt")
        for k, ch in enumerate("Zs")
    ]
    down = [
        Char(ch, 300, 100 + 4 * k, 308, 100 + 4 * (k + 1), 8, upright=False, direction="ttb")
        for k, ch in enumerate("RCD")
    ]
    words = build_words(up + down)
    assert [(w.text, w.vertical) for w in words] == [("Zs", True), ("RCD", True)]


def test_dingbats_ticks_are_mapped_and_cid_is_unreadable() -> None:
    words = build_words(_chars("4", 10, 10, fontname="ABCDEF+ZapfDingbats"))
    assert words[0].text == ZAPF_DINGBATS["4"] == "✔"
    assert build_words(_chars("4", 10, 10, fontname="Helvetica"))[0].text == "4"
    assert is_unreadable("(cid:12)") and is_unreadable("0.4\ufffd") and not is_unreadable("0.42")


# --- bad input -----------------------------------------------------------------------------


def _one_line_error(path: Path, reason_part: str, password: str | None = None) -> None:
    with pytest.raises(InputError) as err:
        doc = open_document(str(path), password=password)
        try:
            list(doc.pages())
            page_text(str(path), password=password)
        finally:
            doc.close()
    msg = str(err.value)
    assert "\n" not in msg and msg.startswith(f"{path}: ")
    assert reason_part in msg, msg


def test_bad_inputs_are_one_line_errors(tmp_path: Path) -> None:
    from reportlab.lib.pdfencrypt import StandardEncryption
    from reportlab.pdfgen.canvas import Canvas

    empty = tmp_path / "empty.pdf"
    empty.write_bytes(b"")
    _one_line_error(empty, "empty file (0 bytes)")
    text = tmp_path / "notes.pdf"
    text.write_text("just some notes\n")
    _one_line_error(text, "not a PDF (no %PDF header)")
    _one_line_error(tmp_path / "missing.pdf", "file not found")

    good = tmp_path / "good.pdf"
    c = Canvas(str(good))
    c.drawString(100, 700, "hello")
    c.save()
    truncated = tmp_path / "truncated.pdf"
    truncated.write_bytes(good.read_bytes()[:300])
    _one_line_error(truncated, "damaged or truncated PDF")

    locked = tmp_path / "locked.pdf"
    c = Canvas(str(locked), encrypt=StandardEncryption("sesame", "owner-pw"))
    c.drawString(100, 700, "secret")
    c.save()
    _one_line_error(locked, "encrypted: give the password with --password")
    _one_line_error(locked, "wrong password", password="nope")
    assert "secret" in page_text(str(locked), password="sesame")[0]

    image_only = tmp_path / "scan.pdf"
    c = Canvas(str(image_only))
    c.rect(50, 50, 400, 600, fill=1)
    c.save()
    with pytest.raises(InputError, match="no text layer") as refused:
        page_text(str(image_only))
    # The refusal names the next step, since OCR is not built in.
    assert "OCR tool of your choice" in str(refused.value)
    assert "out of scope" not in str(refused.value)
