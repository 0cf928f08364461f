"""Each certificate's own report shows what the comparison across certificates found.

A batch over the demo folder (grid-copied-07 carries grid-clean-01's readings at another
address) re-writes both certificates' HTML, JSON and findings CSV reports with a section
"Compared with other certificates", the verdict "readings copied" naming the other certificate
and the likely source, and a link to the other certificate's report.
grid-clean-01 is audited in a first run on its own and is *skipped* in the second run: its
reports are re-written all the same, from the store.
"""

from __future__ import annotations

import json
import random
import sqlite3
import sys
from pathlib import Path
from urllib.parse import unquote

import pytest
from test_reports import IMG, SCRIPT, certificate, parse, results

from certvet.api import DEMO_DIR, DEMO_LAYOUTS, load_layouts
from certvet.batch import Status, run_batch
from certvet.checks.model import Finding, Severity
from certvet.reports.html import render_html
from certvet.reports.jsonout import certificate_from_json, report_dict
from certvet.reports.model import OtherCertificate, PairedValue, RelatedFinding

REPO = Path(__file__).resolve().parents[1]
CLEAN, COPIED, FAULTY = "grid-clean-01", "grid-copied-07", "grid-faulty-03"
COPIED_CHECK = "schedule-copied-from-other-address"
READER_SUFFIXES = (".summary.html", ".queries.html")  # the two other readers' outputs


def _html(out: Path, stem: str) -> Path:
    (path,) = [p for p in (out / "certificates").glob(f"{stem}-*.html")
               if not p.name.endswith(READER_SUFFIXES)]
    return path


def _number(doc: dict) -> str:
    return doc["certificate"]["cells"]["cert_number"]["raw"]


@pytest.fixture(scope="module")
def runs(tmp_path_factory: pytest.TempPathFactory):
    work = tmp_path_factory.mktemp("related")
    layouts = load_layouts([DEMO_LAYOUTS])
    kw = dict(layouts=layouts, store=work / "corpus.sqlite", out_dir=work / "out", workers=2)
    first = run_batch([DEMO_DIR / f"{CLEAN}.pdf"], **kw)
    alone = {"html": _html(work / "out", CLEAN).read_text(encoding="utf-8"),
             "json": json.loads(_html(work / "out", CLEAN).with_suffix(".json").read_text())}
    second = run_batch([DEMO_DIR], **kw)
    return first, alone, second, work / "out"


def test_alone_no_section_then_skipped_certificate_gains_it(runs) -> None:
    first, alone, second, out = runs
    assert first.cross_findings == [] and first.related_reports == []
    dom = parse(alone["html"])
    assert not dom.find_all(id="related") and not dom.find_all(id="related-note")
    assert alone["json"]["related"] == []
    status = {o.path.stem: o.status for o in second.outcomes}
    assert status[CLEAN] is Status.SKIPPED and status[COPIED] is Status.AUDITED
    expected = [_html(out, s).name for s in (CLEAN, COPIED)] + [
        _html(out, s).with_suffix(".json").name for s in (CLEAN, COPIED)] + [
        _html(out, s).stem + ".findings.csv" for s in (CLEAN, COPIED)]
    assert sorted(p.name for p in second.related_reports) == sorted(expected)


def test_both_reports_show_the_other_certificate_with_a_working_link(runs) -> None:
    *_, out = runs
    number = {s: _number(json.loads(_html(out, s).with_suffix(".json").read_text()))
              for s in (CLEAN, COPIED)}
    assert number[CLEAN] != number[COPIED]
    for here, there in ((CLEAN, COPIED), (COPIED, CLEAN)):
        page = _html(out, here)
        dom = parse(page.read_text(encoding="utf-8"))
        section = dom.one("div", id="related-1")
        assert section.attrs["data-check"] == COPIED_CHECK
        assert dom.one("h2", id="related").text() == "Compared with other certificates"
        assert number[there] in section.text()
        (link,) = section.find_all("a")
        assert link.text() == number[there]
        target = (page.parent / unquote(link.attrs["href"])).resolve()
        assert "/" not in link.attrs["href"] and target == _html(out, there).resolve()
        assert f"certificate {number[there]}" in parse(target.read_text()).one("title").text()
        # the readings side by side: every aligned reading of the planted copy is equal
        cells = section.one("table", **{"class": "pairs"}).find_all("td")
        shaded = [c for c in cells if "rel-equal" in c.classes()]
        assert len(shaded) >= 40 and not [c for c in cells if "rel-different" in c.classes()]
        # the verdict says so on both, naming the other and the earlier one as the source
        assert dom.one("div", **{"class": "headline"}).attrs["data-verdict"] == "readings_copied"
        (copy_line,) = dom.one("ul", id="copies").find_all("li")
        assert number[there] in copy_line.text() and "likely source" in copy_line.text()
        source = ("this certificate is the earlier" if here == CLEAN
                  else f"certificate {number[CLEAN]} is the earlier")
        assert source in copy_line.text()
        assert "counted in the outcome" in dom.one("p", id="related-note").text()


def test_json_has_the_related_entries_and_reads_back(runs) -> None:
    _, alone, _, out = runs
    for here, there in ((CLEAN, COPIED), (COPIED, CLEAN)):
        doc = json.loads(_html(out, here).with_suffix(".json").read_text())
        other_doc = json.loads(_html(out, there).with_suffix(".json").read_text())
        assert doc["format_version"] == 6
        (rel,) = doc["related"]
        assert rel["finding"]["check_id"] == COPIED_CHECK
        assert rel["finding"]["related"] == [_number(other_doc)]
        (other,) = rel["others"]
        assert other["name"] == _number(other_doc)
        assert other["report"] == _html(out, there).name
        assert other["address"] == other_doc["certificate"]["cells"]["address"]["raw"]
        assert other["address"] != doc["certificate"]["cells"]["address"]["raw"]
        assert rel["readings"] and {r["relation"] for r in rel["readings"]} == {"equal"}
        assert {"board", "circuit", "field", "here", "there"} <= set(rel["readings"][0])
        assert certificate_from_json(doc).sha256 == doc["certificate"]["sha256"]
    # re-written from the store, the rest of the report is what the worker wrote
    again = json.loads(_html(out, CLEAN).with_suffix(".json").read_text())
    strip = ("related", "generated_at", "verdict", "counts")
    assert {k: v for k, v in again.items() if k not in strip} == {
        k: v for k, v in alone["json"].items() if k not in strip}


def test_certificate_without_cross_findings_has_no_section(runs) -> None:
    *_, out = runs
    page = _html(out, FAULTY).read_text(encoding="utf-8")
    dom = parse(page)
    assert not dom.find_all(id="related") and not dom.find_all(id="related-note")
    assert "Compared with other certificates" not in page
    assert json.loads(_html(out, FAULTY).with_suffix(".json").read_text())["related"] == []


def _hostile_related() -> RelatedFinding:
    finding = Finding(check_id=COPIED_CHECK, severity=Severity.QUERY, certificate="EIC-0042",
                      message=f"Readings match certificate {SCRIPT}", reference=IMG,
                      board="DB1", field="readings", related=(SCRIPT,))
    other = OtherCertificate(name=SCRIPT, address=IMG, date="<b>2026</b>", inspector=SCRIPT,
                             report="x%22onmouseover%3D.html")
    readings = (PairedValue("DB1", "1", "zs", "0.50", "0.50", "equal", "DB1", IMG),
                PairedValue("DB1", "1", "r1_r2", SCRIPT, IMG, "near", "DB1", IMG),
                PairedValue("DB1", "2", "zs", "0.61", "0.90", "different", "DB1", "2"))
    return RelatedFinding(finding, (other,), readings)


def test_hostile_text_of_the_other_certificate_is_escaped() -> None:
    rel = _hostile_related()
    html = render_html(certificate(), results(), certvet_version="t", generated_at="x",
                       related=[rel])
    dom = parse(html)
    section = dom.one("div", id="related-1")
    assert not dom.find_all("script") and not dom.find_all("img") and not section.find_all("b")
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html
    assert SCRIPT in section.text() and IMG in section.text() and "<b>2026</b>" in section.text()
    assert all(set(n.attrs) <= {"class", "id", "href", "title", "data-check"}
               for n in section.iter() if n.tag != "#root")
    (link,) = section.find_all("a")
    assert link.attrs["href"] == "x%22onmouseover%3D.html" and link.text() == SCRIPT
    rels = [c.attrs["class"] for c in section.one("table", **{"class": "pairs"}).find_all("td")
            if c.attrs.get("class", "").startswith("rel-")]
    assert sorted(rels) == ["rel-different", "rel-equal", "rel-near"]
    assert SCRIPT in dom.one("ul", id="copies").text()  # the verdict names it, escaped
    doc = report_dict(certificate(), results(), certvet_version="t", generated_at="x",
                      related=[rel])
    assert json.loads(json.dumps(doc))["related"] == [rel.to_dict()]
    assert doc["related"][0]["others"][0]["name"] == SCRIPT


def test_hostile_fields_of_a_copied_certificate_in_a_batch(tmp_path: Path) -> None:
    sys.path.insert(0, str(REPO / "fixtures"))
    try:
        from generator import DEFAULT_SEED, grid_form
        from generator.demo_set import grid_clean_01
        from generator.fonts import find_face
    finally:
        sys.path.remove(str(REPO / "fixtures"))
    inbox = tmp_path / "inbox"
    inbox.mkdir()
    copy = grid_clean_01("grid-hostile-09", random.Random(f"{DEFAULT_SEED}:grid-clean-01"))
    copy.details["address"] = "<script>alert(1)</script> Row, Wenbury"
    copy.details["inspector"] = '<img src=x onerror="alert(2)">'
    grid_form.write(copy, inbox / "grid-hostile-09.pdf", find_face())
    (inbox / f"{CLEAN}.pdf").write_bytes((DEMO_DIR / f"{CLEAN}.pdf").read_bytes())
    run_batch([inbox], layouts=load_layouts([DEMO_LAYOUTS]), store=tmp_path / "c.sqlite",
              out_dir=tmp_path / "out", workers=2)
    html = _html(tmp_path / "out", CLEAN).read_text(encoding="utf-8")
    dom = parse(html)
    section = dom.one("div", id="related-1")
    assert not dom.find_all("script") and not dom.find_all("img")
    assert "<script>alert(1)</script> Row" in section.text()
    assert "&lt;script&gt;alert(1)&lt;/script&gt; Row" in html
    assert 'onerror="alert(2)"' in section.one("tr", **{"class": "other"}).text()


def test_rewritten_report_keeps_the_profile_the_certificate_was_audited_with(
        tmp_path: Path) -> None:
    """Audited with the strict profile; a later run with the default profile adds a copy of
    grid-faulty-03 (same number: a new cross finding for the stored certificate), whose
    re-written reports still name the strict profile and its settings."""
    from certvet.checks.profile import load_profile

    faulty = "grid-faulty-03"
    demo = tmp_path / "demo"
    demo.mkdir()
    for pdf in DEMO_DIR.glob("*.pdf"):
        (demo / pdf.name).write_bytes(pdf.read_bytes())
    kw = dict(layouts=load_layouts([DEMO_LAYOUTS]), store=tmp_path / "c.sqlite",
              out_dir=tmp_path / "out", workers=2, portfolio=False)
    strict = load_profile(REPO / "fixtures" / "profiles" / "strict-desk-audit.toml")
    first = run_batch([demo], profile=strict, **kw)
    assert not any(cf.finding.certificate == "GL-2026-0433" for cf in first.cross_findings)
    extra = tmp_path / "extra"
    extra.mkdir()
    (extra / "copy-of-faulty.pdf").write_bytes(
        (demo / f"{faulty}.pdf").read_bytes() + b"\n% another copy\n")
    second = run_batch([demo, extra], **kw)  # the default profile
    status = {o.path.stem: o.status for o in second.outcomes}
    assert status[faulty] is Status.SKIPPED and status["copy-of-faulty"] is Status.AUDITED
    html = _html(tmp_path / "out", faulty)
    assert html in second.related_reports and html.with_suffix(".json") in second.related_reports
    doc = json.loads(html.with_suffix(".json").read_text(encoding="utf-8"))
    assert any(r["finding"]["check_id"] == "certificate-number-reused" for r in doc["related"])
    prof = doc["profile"]
    assert prof["name"] == "strict-desk-audit"
    assert prof["checks"]["ring-rn-matches-r1"]["options"] == {"tolerance_ohm": 0.03}
    assert prof["checks"]["ring-all-exact-quarter"]["options"] == {"min_rings": 2}
    assert prof["checks"]["zs-all-exactly-calculated"]["severity"] == "breach"
    assert prof["checks"]["ir-worth-investigating"]["enabled"] is False
    page = html.read_text(encoding="utf-8")
    assert "Rule profile <b>strict-desk-audit</b>" in page
    copy_doc = json.loads(_html(tmp_path / "out", "copy-of-faulty").with_suffix(".json")
                          .read_text(encoding="utf-8"))
    assert copy_doc["profile"]["name"] == "default"  # audited in the second run

    # a certificate stored before profiles were recorded: this run's profile, said so
    with sqlite3.connect(tmp_path / "c.sqlite") as conn:
        conn.execute("UPDATE certificates SET profile = NULL, profile_name = NULL "
                     "WHERE cert_number = 'GL-2026-0433' AND sha256 NOT IN "
                     "(SELECT sha256 FROM files WHERE path LIKE '%copy-of-faulty.pdf')")
    conn.close()
    run_batch([demo, extra], **kw)
    prof = json.loads(html.with_suffix(".json").read_text(encoding="utf-8"))["profile"]
    assert prof["name"] == "default" and prof["checks"] == {}
    assert "not recorded with this certificate" in prof["description"]
    assert "not recorded with this certificate" in html.read_text(encoding="utf-8")
