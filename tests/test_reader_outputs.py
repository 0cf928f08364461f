"""The landlord's summary and the contractor's query sheet, built from the findings."""

from __future__ import annotations

from datetime import date
from pathlib import Path

from casekit import make_certificate

from certvet.checks.runner import run_checks
from certvet.extractor.records import Certificate
from certvet.reports.readers import (
    build_query_sheet,
    build_summary,
    write_query_sheet,
    write_summary,
)

AUDIT = date(2026, 12, 1)


def _faulty() -> Certificate:
    # BS 7671:2018+A2:2022 Table 41.3: B32 max Zs 1.37 Ω, so 2.10 Ω fails; SI 2020/312
    # reg 3(1)(b): a rented home's report at most 5 years old (2019 → 2026 is 7.4, derived)
    return make_certificate(
        [], certificate={"cert_number": "EICR-9", "report_type": "EICR",
                         "address": "4 Quay Row, QX4 7TB", "contractor": "Harrowmere "
                         "Electrical (fictional)", "premises_type": "Domestic (rented)",
                         "inspection_date": "01/07/2019", "next_inspection": "01/07/2024",
                         "overall_outcome": "Satisfactory"},
        boards=[{"board_ref": "DB1", "ze": "0.30", "earthing": "TN-C-S", "circuits": [
            {"circuit_ref": "4", "description": "Kitchen sockets", "device_standard": "60898",
             "device_type": "B", "rating": "32", "zs": "2.10", "rcd_idn": "30",
             "rcd_time": "24", "r1_r2": "1.80", "ir_live_earth": ">200", "polarity": "✓"},
        ]}])


def test_summary_says_what_it_means_and_what_to_do() -> None:
    cert = _faulty()
    view = build_summary(cert, run_checks(cert, audit_date=AUDIT), certvet_version="t",
                         generated_at="fixed")
    assert view.headline == "fails requirements"
    assert "Electrical Installation Condition Report" in view.what_it_is
    assert any("do not support it" in p for p in view.points)  # satisfactory over a failure
    assert any("years old" in p for p in view.points)  # certificate-out-of-date
    assert any("new inspection" in a for a in view.actions)
    assert any("remedial work" in a for a in view.actions)
    assert any("cannot show that an installation is safe" in c for c in view.cautions)
    assert len(view.points) + len(view.actions) <= 8  # a few sentences, not the report


def test_query_sheet_rows_come_from_the_findings() -> None:
    cert = _faulty()
    res = run_checks(cert, audit_date=AUDIT)
    sheet = build_query_sheet(cert, res, certvet_version="t", generated_at="fixed")
    asked = [f for f in res.findings if not f.preview and f.severity.slug != "note"]
    assert len(sheet.queries) == len(asked) > 0
    zs = next(q for q in sheet.queries if "Measured Zs" in q.where)
    assert zs.where.startswith("Board DB1, circuit 4")
    assert zs.recorded == "2.10" and "1.37" in zs.expected
    assert zs.reference.startswith("BS 7671:2018+A2:2022 Tables 41.2, 41.3")
    assert all(q.question.endswith("or correct the record.") for q in sheet.queries)


def test_clean_certificate_has_no_queries(tmp_path: Path) -> None:
    cert = make_certificate([], certificate={
        "cert_number": "EIC-1", "report_type": "EIC", "address": "4 Quay Row, QX4 7TB",
        "inspector": "A. Vale", "inspection_date": "01/11/2026",
        "next_inspection": "01/11/2031"}, boards=[{"board_ref": "DB1", "circuits": []}])
    res = run_checks(cert, audit_date=AUDIT)
    assert [f for f in res.findings if f.severity.slug != "note"] == []
    html = write_query_sheet(cert, res, tmp_path / "q.html", certvet_version="t",
                             generated_at="fixed").read_text(encoding="utf-8")
    assert 'id="no-queries"' in html and "<table" not in html


def test_outputs_escape_hostile_text_and_print_on_a4(tmp_path: Path) -> None:
    cert = make_certificate([], certificate={"cert_number": "X", "address": "<b>x</b>"},
                            boards=[{"board_ref": "DB1", "circuits": []}])
    res = run_checks(cert, audit_date=AUDIT)
    for writer in (write_summary, write_query_sheet):
        html = writer(cert, res, tmp_path / f"{writer.__name__}.html", certvet_version="t",
                      generated_at="fixed").read_text(encoding="utf-8")
        assert "&lt;b&gt;x&lt;/b&gt;" in html and "<b>x</b>" not in html
        assert "size: A4" in html and "<script" not in html


def test_audit_writes_both_outputs_beside_the_report(tmp_path: Path) -> None:
    from certvet.api import DEMO_DIR, audit_file, demo_inputs

    result = audit_file(DEMO_DIR / "plain-faulty-05.pdf", layouts=demo_inputs()[1],
                        out_dir=tmp_path, audit_date=AUDIT)
    summary, queries = result.outputs["summary"], result.outputs["queries"]
    assert summary.name == "plain-faulty-05.summary.html"
    assert queries.name == "plain-faulty-05.queries.html"
    asked = [f for f in result.results.findings if not f.preview and f.severity.slug != "note"]
    assert queries.read_text(encoding="utf-8").count("<tr data-n=") == len(asked) > 0
    assert "What to do" in summary.read_text(encoding="utf-8")
