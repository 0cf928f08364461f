"""Audits with no layout: a file no layout recognises is read with a layout drafted from it.

Measured against the fixtures' ground truth (scripts/layout_accuracy.py, "with no layout at
all"); the thresholds are certvet's own (extractor/draft_reading.py, common practice, no source).
"""

from __future__ import annotations

import importlib.util
import json
import re
import sys
from pathlib import Path

import pytest
from typer.testing import CliRunner

from certvet.api import NotRecognised, audit_file, audit_many
from certvet.batch import Status, run_batch
from certvet.cli import app
from certvet.drafting import DraftedForms, DraftOptions, SharedDraft
from certvet.extractor.errors import InputError
from certvet.extractor.layout import load_layout
from certvet.extractor.records import DraftedLayoutNote
from certvet.reports.verdict import VerdictKey

ROOT = Path(__file__).resolve().parents[1]
_spec = importlib.util.spec_from_file_location("layout_accuracy",
                                               ROOT / "scripts/layout_accuracy.py")
acc = importlib.util.module_from_spec(_spec)  # type: ignore[arg-type]
sys.modules.setdefault("layout_accuracy", acc)
_spec.loader.exec_module(acc)  # type: ignore[union-attr]

DEMO = ROOT / "fixtures/demo"
EXTRA = ROOT / "fixtures/forms_extra"
NEW = ROOT / "fixtures/forms_new"
runner = CliRunner()

# One certificate of each fixture form, and the cell accuracy it is read with when no layout is
# given, alone (lower bounds, measured: scripts/layout_accuracy.py, part 2 "no layout").
SAMPLE_BOUNDS: dict[str, float] = {
    "fixtures/demo/grid-clean-01.pdf": 1.0,
    "fixtures/demo/plain-clean-04.pdf": 1.0,
    "fixtures/forms_extra/ledger-sample.pdf": 1.0,
    "fixtures/forms_extra/boxed-sample.pdf": 1.0,
    "fixtures/forms_new/twolevel-html-01.pdf": 1.0,
    "fixtures/forms_new/rotated-sheet-01.pdf": 1.0,
    "fixtures/forms_new/stacked-canvas-01.pdf": 1.0,
}
assert set(SAMPLE_BOUNDS) == set(acc.SAMPLES)  # one certificate of every fixture form


@pytest.mark.parametrize("pdf", sorted(SAMPLE_BOUNDS), ids=lambda p: Path(p).stem)
def test_a_certificate_of_each_form_is_read_with_no_layout_at_all(pdf: str,
                                                                  tmp_path: Path) -> None:
    res = audit_file(ROOT / pdf, layouts=[], out_dir=tmp_path)
    note = res.certificate.drafted
    assert note is not None and note.confidence >= 0.60
    assert Path(note.sample) == ROOT / pdf
    saved = Path(note.saved_to or "")
    assert saved.parent == tmp_path / "drafted-layouts"
    assert load_layout(saved).name == res.layout  # saved for review and reuse, loadable
    score = acc.cell_accuracy(res.certificate, acc.load_truth(ROOT / pdf))
    assert score.share >= SAMPLE_BOUNDS[pdf], score.wrong
    assert score.row_recall == 1.0
    report = json.loads((tmp_path / f"{Path(pdf).stem}.json").read_text(encoding="utf-8"))
    assert report["certificate"]["drafted_layout"] == note.to_dict()
    html = (tmp_path / f"{Path(pdf).stem}.html").read_text(encoding="utf-8")
    assert "Read with a layout drafted from this file, confidence" in html


@pytest.fixture(scope="module")
def no_layout_figures() -> dict[str, object]:
    return {r.form: r for r in acc.measure_without_layout()}


# Per form, all certificates in one run: (certificates read, layouts drafted, row recall at
# least, cell accuracy at least), from scripts/layout_accuracy.py --no-layout, part 3 (derived).
# One draft per form: the later certificates are recognised by the layout drafted from the
# first (sorted by path).
FORM_BOUNDS: dict[str, tuple[int, int, float, float]] = {
    "boxed": (6, 1, 1.0, 1.0),
    "grid-landscape": (4, 1, 1.0, 1.0),
    "ledger": (5, 1, 1.0, 1.0),
    "plain-columns": (3, 1, 1.0, 1.0),
    "twolevel-html": (4, 1, 1.0, 1.0),
    "rotated-sheet": (4, 1, 1.0, 1.0),
    "stacked-canvas": (4, 1, 1.0, 1.0),
}


@pytest.mark.parametrize("form", sorted(FORM_BOUNDS))
def test_no_layout_figures_per_form(form: str, no_layout_figures: dict[str, object]) -> None:
    r = no_layout_figures[form]
    read, drafts, rows, cells = FORM_BOUNDS[form]
    assert r.read == r.certificates == read, r.refused  # type: ignore[attr-defined]
    assert len(r.drafted) == drafts  # type: ignore[attr-defined]
    assert r.cells.row_recall >= rows  # type: ignore[attr-defined]
    assert r.cells.share >= cells, r.cells.wrong  # type: ignore[attr-defined]
    assert r.read_by_other_form == 0  # type: ignore[attr-defined]


def test_every_fixture_form_is_measured(no_layout_figures: dict[str, object]) -> None:
    assert set(no_layout_figures) == set(FORM_BOUNDS)


def test_files_of_one_form_share_the_layout_drafted_earlier_in_the_run(tmp_path: Path) -> None:
    # the sharing itself, with a layout known to recognise the grid form standing in for
    # one drafted from grid-clean-01.pdf earlier in the run
    grid = load_layout(ROOT / "fixtures/layouts/grid-landscape.toml")
    note = DraftedLayoutNote(str(DEMO / "grid-clean-01.pdf"), 0.9, 0.85, None)
    drafts = DraftedForms(DraftOptions(), [SharedDraft(grid, note, True)])
    files = [DEMO / "grid-faulty-03.pdf", DEMO / "grid-copied-07.pdf"]
    done = [audit_file(f, layouts=[], drafts=drafts) for f in files]
    assert [r.layout for r in done] == [grid.name, grid.name]
    assert all(r.certificate.drafted == note for r in done)
    assert len(drafts.forms) == 1  # nothing drafted anew
    msg = note.message(str(files[0]))
    assert "drafted from grid-clean-01.pdf (same form)" in msg
    # a worker's frozen copy reads with the same layouts but never drafts
    frozen = drafts.frozen()
    assert frozen.forms == drafts.forms and not frozen.options.enabled
    with pytest.raises(NotRecognised):
        audit_file(EXTRA / "boxed-sample.pdf", layouts=[], drafts=frozen)


def test_a_batch_of_one_unknown_form_drafts_once(tmp_path: Path) -> None:
    files = [DEMO / "grid-clean-01.pdf", DEMO / "grid-faulty-03.pdf", DEMO / "grid-copied-07.pdf"]
    report = run_batch(files, layouts=[], store=tmp_path / "c.sqlite", out_dir=tmp_path / "o",
                       workers=2, portfolio=False)
    assert report.totals["audited"] == 3
    assert [p.name for p in (tmp_path / "o/drafted-layouts").iterdir()] == [
        "drafted-grid-clean-01.toml"]
    assert {o.layout for o in report.outcomes} == {"drafted-grid-clean-01"}
    later = next(o for o in report.outcomes if o.path == files[2])
    assert "drafted from grid-clean-01.pdf (same form)" in (later.drafted or "")
    # the saved layout is reusable: given back, it recognises the form (no drafting)
    again = audit_file(files[1], layouts=[load_layout(
        tmp_path / "o/drafted-layouts/drafted-grid-clean-01.toml")])
    assert again.layout == "drafted-grid-clean-01" and again.certificate.drafted is None


def test_batch_drafts_in_input_order_whatever_the_workers(tmp_path: Path) -> None:
    # a read threshold above the ledger drafts' confidence (0.79, below 0.80): both ledger
    # certificates are refused, each after drafting alone (a refused draft is never shared);
    # the grid form is drafted once from its first file, the plain form from its only one
    files = [EXTRA / "footer-inside-table-ledger.pdf", EXTRA / "ledger-sample.pdf",
             DEMO / "grid-clean-01.pdf", DEMO / "grid-faulty-03.pdf", DEMO / "plain-clean-04.pdf"]
    seen = []
    for n, workers in enumerate((1, 2)):
        out = tmp_path / f"o{n}"
        report = run_batch(files, layouts=[], store=tmp_path / f"c{n}.sqlite", out_dir=out,
                           workers=workers, portfolio=False,
                           drafting=DraftOptions(read_threshold=0.80))
        by_path = {o.path: o for o in report.outcomes}
        for refused in files[:2]:
            assert by_path[refused].status is Status.FAILED
            assert f"`certvet draft-layout {refused} -o form.toml`" in (
                by_path[refused].reason or "")
        assert all(by_path[f].status is Status.AUDITED for f in files[2:])
        assert by_path[files[3]].layout == "drafted-grid-clean-01"
        seen.append(sorted(p.name for p in (out / "drafted-layouts").iterdir()))
    assert seen[0] == seen[1] == ["drafted-grid-clean-01.toml", "drafted-plain-clean-04.toml"]


def test_low_confidence_draft_is_refused_with_the_command_to_draft_one(tmp_path: Path) -> None:
    pdf = EXTRA / "ledger-sample.pdf"  # its draft: 0.79 (a heading not found on one page)
    with pytest.raises(InputError) as err:
        audit_file(pdf, layouts=[], out_dir=tmp_path, drafting=DraftOptions(read_threshold=0.8))
    msg = str(err.value)
    assert msg.startswith(f"{pdf}: ") and "\n" not in msg
    assert re.search(r"confidence 0\.[0-7]\d .*below the 0\.80 needed", msg), msg
    assert f"`certvet draft-layout {pdf} -o form.toml`" in msg
    assert not (tmp_path / "drafted-layouts").exists()  # nothing saved for a refused draft
    # the default threshold reads it, and its verdict cannot be "no concerns found"
    res = audit_file(pdf, layouts=[])
    assert res.certificate.drafted is not None and not res.certificate.drafted.trusted
    assert res.verdict.key is not VerdictKey.NO_CONCERNS


def test_untrusted_draft_never_gives_no_concerns_found() -> None:
    pdf = DEMO / "grid-clean-01.pdf"  # a clean certificate: read with its draft (0.88)
    trusted = audit_file(pdf, layouts=[])
    assert trusted.verdict.key is VerdictKey.NO_CONCERNS
    strict = audit_file(pdf, layouts=[], drafting=DraftOptions(trusted_threshold=0.95))
    assert strict.verdict.key is VerdictKey.INCOMPLETE
    assert any("below the 0.95 needed to trust it" in r
               for r in strict.verdict.incomplete_reasons)


def _statement_pdf(path: Path) -> Path:
    """A bank statement: numbered rows under headings, one of them a trade term."""
    from reportlab.lib.pagesizes import A4
    from reportlab.pdfgen import canvas

    c = canvas.Canvas(str(path), pagesize=A4)
    c.setFont("Helvetica-Bold", 14)
    c.drawString(50, 800, "Quarterly statement (fictional) Kestrel Mutual Bank")
    c.setFont("Helvetica", 9)
    for x, head in zip((50, 80, 150, 400, 480), ("No", "Date", "Description", "Amount",
                                                  "Balance"), strict=True):
        c.drawString(x, 760, head)
    for k in range(1, 13):
        y = 760 - 16 * k
        for x, text in zip((50, 80, 150, 400, 480),
                           (str(k), f"{k:02d}/03/2026", f"Card payment {k}", f"{k * 3.15:.2f}",
                            f"{1000 - k * 3.15:.2f}"), strict=True):
            c.drawString(x, y, text)
    c.showPage()
    c.save()
    return path


def _letter_pdf(path: Path) -> Path:
    from reportlab.lib.pagesizes import A4
    from reportlab.pdfgen import canvas

    c = canvas.Canvas(str(path), pagesize=A4)
    c.setFont("Helvetica", 11)
    for k, line in enumerate(("Harrowmere Electrical (fictional)", "QX4 7TB", "",
                              "Dear Ms Example,", "Thank you for your enquiry about a periodic",
                              "inspection. We can visit next week.", "Yours sincerely")):
        c.drawString(60, 780 - 16 * k, line)
    c.showPage()
    c.save()
    return path


@pytest.mark.parametrize("make", [_statement_pdf, _letter_pdf, *acc.NOT_CERTIFICATES],
                         ids=lambda m: Path(m).stem if isinstance(m, str) else m.__name__)
def test_a_document_that_is_no_certificate_is_refused(make: object, tmp_path: Path) -> None:
    pdf = ROOT / make if isinstance(make, str) else make(tmp_path / "doc.pdf")  # type: ignore
    with pytest.raises(InputError) as err:
        audit_file(pdf, layouts=[], out_dir=tmp_path / "o")
    msg = str(err.value)
    assert msg.startswith(f"{pdf}: no layout recognises this form, and none could be drafted")
    assert "\n" not in msg
    assert not (tmp_path / "o" / "drafted-layouts").exists()


def test_turned_off_restores_the_unrecognised_error(tmp_path: Path) -> None:
    pdf = DEMO / "grid-clean-01.pdf"
    with pytest.raises(NotRecognised, match=r"no layout given .*certvet draft-layout"):
        audit_file(pdf, layouts=[], drafting=DraftOptions(enabled=False))
    other = load_layout(EXTRA / "layouts/ledger.toml")
    summary = audit_many([pdf], layouts=[other], drafting=DraftOptions(enabled=False))
    assert "no layout recognises this form (tried: " in summary.failed[0].reason
    assert f"`certvet draft-layout {pdf} -o form.toml`" in summary.failed[0].reason


def test_cli_audit_with_no_layout_says_so(tmp_path: Path) -> None:
    pdf = EXTRA / "boxed-sample.pdf"
    res = runner.invoke(app, ["audit", str(pdf), "-o", str(tmp_path)])
    assert res.exit_code in (0, 1), res.output
    assert "read with a layout drafted from this file, confidence 0.91; check it before " \
           "relying on the result" in res.output
    assert (tmp_path / "drafted-layouts" / "drafted-boxed-sample.toml").exists()
    doc = runner.invoke(app, ["audit", str(pdf), "-o", str(tmp_path / "j"), "--json"])
    entry = json.loads(doc.stdout)["files"][0]
    assert entry["drafted_layout"]["confidence"] == 0.91
    assert entry["drafted_layout"]["message"].startswith("read with a layout drafted from this")
    off = runner.invoke(app, ["audit", str(pdf), "-o", str(tmp_path / "off"),
                              "--no-draft-unknown-forms"])
    assert off.exit_code == 3
    assert "certvet draft-layout" in off.output


def test_cli_batch_with_no_layout(tmp_path: Path) -> None:
    from certvet.cli_batch import batch  # noqa: F401  (mounted on the app)

    res = runner.invoke(app, ["batch", str(EXTRA / "boxed-sample.pdf"), "-s",
                              str(tmp_path / "c.sqlite"), "-o", str(tmp_path / "o"),
                              "--trusted-draft-confidence", "0.99"])
    assert res.exit_code in (0, 1), res.output
    assert "read with a layout drafted from this file" in res.output
    doc = next((tmp_path / "o/certificates").glob("*.json"))
    data = json.loads(doc.read_text(encoding="utf-8"))
    assert data["certificate"]["drafted_layout"]["trusted"] is False
    assert data["verdict"]["key"] != "no_concerns"


def test_the_store_keeps_the_drafted_layout_note(tmp_path: Path) -> None:
    # a verdict decided again from the store (cross-certificate phase) must still see it
    from certvet.batch import decide_again
    from certvet.corpus.store import Corpus

    res = audit_file(DEMO / "grid-clean-01.pdf", layouts=[],
                     drafting=DraftOptions(trusted_threshold=0.95))
    assert res.verdict.key is VerdictKey.INCOMPLETE
    with Corpus(tmp_path / "c.sqlite") as corpus:
        cid = corpus.add(res.certificate, res.results, verdict=res.verdict.key.value)
        assert corpus.certificate(cid).drafted == res.certificate.drafted
        assert decide_again(corpus, [cid], {})[cid].key is VerdictKey.INCOMPLETE
