"""Per-certificate reports: verdict, HTML (parsed, escaping), JSON round trip, CSV, frame."""

from __future__ import annotations

import csv
import json
import math
import re
from dataclasses import dataclass, field, replace
from html.parser import HTMLParser
from pathlib import Path

import pytest
from casekit import make_certificate

from certvet.checks.model import FINDING_COLUMNS, Finding, Outcome, Severity
from certvet.checks.profile import CheckSettings, Profile
from certvet.checks.runner import CheckResults, run_checks
from certvet.extractor.frame import circuits_frame, frame_columns
from certvet.extractor.records import Box, Cell, Certificate, ExtractionProblem
from certvet.reports.csvout import neutralise, read_table, write_csv
from certvet.reports.html import render_html, write_html
from certvet.reports.jsonout import FORMAT_VERSION, certificate_from_json, report_dict, write_json
from certvet.reports.model import CAUTIONS
from certvet.reports.verdict import WORDING, VerdictKey, decide

SCRIPT = "<script>alert(1)</script>"
IMG = '<img src=x onerror="alert(2)">'


# --- a tiny DOM from the stdlib parser ------------------------------------------------------

VOID = {"meta", "br", "img", "col", "input", "link", "hr"}


@dataclass
class Node:
    tag: str
    attrs: dict[str, str]
    children: list[Node | str] = field(default_factory=list)

    def text(self) -> str:
        return "".join(c if isinstance(c, str) else c.text() for c in self.children)

    def classes(self) -> set[str]:
        return set(self.attrs.get("class", "").split())

    def iter(self):
        yield self
        for c in self.children:
            if isinstance(c, Node):
                yield from c.iter()

    def find_all(self, tag: str | None = None, **attrs: str) -> list[Node]:
        return [
            n for n in self.iter()
            if (tag is None or n.tag == tag)
            and all(n.attrs.get(k.replace("_", "-")) == v for k, v in attrs.items())
        ]

    def one(self, tag: str | None = None, **attrs: str) -> Node:
        found = self.find_all(tag, **attrs)
        assert len(found) == 1, (tag, attrs, len(found))
        return found[0]


class _Builder(HTMLParser):
    def __init__(self) -> None:
        super().__init__(convert_charrefs=True)
        self.root = Node("#root", {})
        self.stack = [self.root]

    def handle_starttag(self, tag, attrs):
        node = Node(tag, {k: v or "" for k, v in attrs})
        self.stack[-1].children.append(node)
        if tag not in VOID:
            self.stack.append(node)

    def handle_endtag(self, tag):
        for i in range(len(self.stack) - 1, 0, -1):
            if self.stack[i].tag == tag:
                del self.stack[i:]
                break

    def handle_data(self, data):
        self.stack[-1].children.append(data)


def parse(html: str) -> Node:
    b = _Builder()
    b.feed(html)
    b.close()
    return b.root


# --- fixtures -------------------------------------------------------------------------------


def certificate() -> Certificate:
    return make_certificate(
        [],
        certificate={
            "cert_number": "EIC-0042",
            "address": "4 Quarry Row",
            "client": SCRIPT,
            "contractor": "Volt & Sons (fictional)",
            "ze": "0.21",
        },
        boards=[{
            "board_ref": "DB1", "ze": "0.21", "earthing": "TN-C-S",
            "circuits": [
                {"description": SCRIPT, "device_type": "B", "rating": "32",
                 "r1": "0.52", "rn": "0.61", "r2": "0.86", "zs": "0.56",
                 "polarity": "✓", "ir_live_earth": ">999"},
                {"description": IMG, "device_type": "B", "rating": "6", "zs": "1.10",
                 "ir_live_earth": "200"},
                {"description": "Cooker", "device_type": "B", "rating": "40", "zs": "1.45",
                 "remarks": "=HYPERLINK(\"http://x\")"},
            ],
        }],
    )


def finding(sev: Severity, circuit: str | None = "3", fld: str | None = "zs", **kw) -> Finding:
    base = dict(
        check_id="zs-test-check", severity=sev, certificate="EIC-0042",
        message=f"Measured Zs is too high ({sev.slug}).", reference="Test Table 1",
        board="DB1" if circuit else None, circuit=circuit, field=fld, recorded="1.45",
        expected="≤ 1.10 Ω", tolerance=None, page=1,
    )
    base.update(kw)
    return Finding(**base)


def results(*findings: Finding, profile: Profile | None = None) -> CheckResults:
    return CheckResults(profile or Profile(), [], list(findings))


def render(cert: Certificate, res: CheckResults) -> tuple[str, Node]:
    html = render_html(cert, res, certvet_version="9.9.9", generated_at="fixed")
    return html, parse(html)


# --- verdict ----------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("severities", "key"),
    [
        ([Severity.IMPOSSIBLE, Severity.QUERY], VerdictKey.NOT_CREDIBLE),
        ([Severity.BREACH, Severity.NOTE], VerdictKey.FAILS_REQUIREMENTS),
        ([Severity.QUERY], VerdictKey.QUERIES),
        ([Severity.NOTE], VerdictKey.NO_CONCERNS),
        ([], VerdictKey.NO_CONCERNS),
    ],
)
def test_verdict_from_worst_finding(severities: list[Severity], key: VerdictKey) -> None:
    v = decide(certificate(), results(*(finding(s) for s in severities)))
    assert v.key is key
    assert v.headline == WORDING[key].headline
    assert v.complete


def test_preview_findings_never_decide_the_verdict() -> None:
    v = decide(certificate(), results(replace(finding(Severity.IMPOSSIBLE), preview=True)))
    assert v.key is VerdictKey.NO_CONCERNS


def test_incomplete_extraction_is_never_no_concerns() -> None:
    cert = certificate()
    cert.problems.append(ExtractionProblem("row 4 could not be split", board="DB1"))
    v = decide(cert, results(finding(Severity.NOTE)))
    assert v.key is VerdictKey.INCOMPLETE and not v.complete
    # a worse finding still leads, but the reasons stay attached
    v = decide(cert, results(finding(Severity.BREACH)))
    assert v.key is VerdictKey.FAILS_REQUIREMENTS
    assert any("extraction problem" in r for r in v.incomplete_reasons)


def test_no_circuits_or_unreadable_cells_make_the_audit_incomplete() -> None:
    empty = make_certificate([])
    assert decide(empty, results()).key is VerdictKey.INCOMPLETE
    unreadable = make_certificate([{"zs": "1.1x"}])
    v = decide(unreadable, results())
    assert v.key is VerdictKey.INCOMPLETE
    assert "could not be parsed" in v.incomplete_reasons[0]


# --- HTML -------------------------------------------------------------------------------


def test_html_shows_verdict_and_counts() -> None:
    _, dom = render(certificate(), results(finding(Severity.BREACH), finding(Severity.QUERY)))
    assert dom.one(data_verdict="fails_requirements").text().strip() == "fails requirements"
    counts = {n.attrs["data-severity"]: n.text() for n in dom.find_all("div")
              if "count" in n.classes() and "data-severity" in n.attrs}
    assert counts["breach"].startswith("1") and counts["query"].startswith("1")
    assert counts["impossible"].startswith("0")


def test_questioned_cell_is_highlighted_with_expected_value() -> None:
    _, dom = render(certificate(), results(finding(Severity.BREACH)))
    row = dom.one("tr", data_circuit="3")
    cell = row.one("td", data_field="zs")
    assert {"questioned", "sev-breach"} <= cell.classes()
    assert "expected ≤ 1.10 Ω" in cell.text()
    assert "breach" in cell.text()  # severity as text, not colour alone
    assert "Measured Zs is too high" in cell.attrs["title"]
    # the same field on another circuit, and another field on this one, are not questioned
    assert "questioned" not in dom.one("tr", data_circuit="2").one("td", data_field="zs").classes()
    assert "questioned" not in row.one("td", data_field="rating").classes()
    assert row.one("td", data_field="zs").one("span", **{"class": "as-printed"}).text() == "1.45"


def test_real_check_results_are_highlighted() -> None:
    cert = certificate()
    res = run_checks(cert)
    ring = [f for f in res.findings if f.check_id == "ring-rn-matches-r1"]
    assert len(ring) == 1
    _, dom = render(cert, res)
    cell = dom.one("tr", data_circuit="1").one("td", data_field="rn")
    assert f"sev-{ring[0].severity.slug}" in cell.classes()
    assert "expected 0.52 Ω (± 0.05 Ω)" in cell.text()
    run_row = dom.one("tr", data_run="ring-rn-matches-r1")
    assert "found 1" in run_row.text() and "tolerance_ohm = 0.05" in run_row.text()


def test_findings_grouped_worst_first_with_reference_and_page() -> None:
    res = results(finding(Severity.NOTE, circuit="1"), finding(Severity.IMPOSSIBLE, circuit="2"),
                  finding(Severity.QUERY, circuit=None, fld="next_inspection"))
    _, dom = render(certificate(), res)
    groups = [g.attrs["data-group"] for g in dom.find_all("div") if "data-group" in g.attrs]
    assert groups == ["impossible", "query", "note"]
    first = dom.one("tr", id="finding-1")
    assert "Board DB1, circuit 2" in first.text() and "Test Table 1" in first.text()
    assert "zs-test-check" in first.text()
    assert dom.one("tr", id="finding-2").text().count("Certificate") == 1


def test_cautions_are_present() -> None:
    _, dom = render(certificate(), results())
    text = " ".join(dom.one("section", id="cautions").text().split())
    for phrase in ("cannot show that an installation is safe",
                   "does not replace inspection and testing by a competent person",
                   "BS 7671, local codes or licensed practice", "Electrical work can kill"):
        assert phrase in text


def test_hostile_cell_text_is_escaped_not_executed() -> None:
    html, dom = render(certificate(), results(finding(Severity.QUERY, circuit="1",
                                                      fld="description", expected=IMG)))
    assert "<script" not in html.lower()
    assert "<img" not in html.lower()
    assert not dom.find_all("script") and not dom.find_all("img")
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in html
    desc1 = dom.one("tr", data_circuit="1").one("td", data_field="description")
    assert desc1.one("span", **{"class": "as-printed"}).text() == SCRIPT
    assert IMG in desc1.text()  # the expected value is escaped too
    desc2 = dom.one("tr", data_circuit="2").one("td", data_field="description")
    assert desc2.text().strip() == IMG
    assert SCRIPT in dom.one("dl").text()  # certificate-level client


def test_checks_run_section_lists_outcomes_and_profile_options() -> None:
    profile = Profile(name="scheme-x", description="our scheme",
                      checks={"ring-rn-matches-r1": CheckSettings(options={"tolerance_ohm": 0.1})})
    cert = certificate()
    res = run_checks(cert, profile)
    _, dom = render(cert, res)
    section = " ".join(dom.text().split())
    assert "Rule profile scheme-x (our scheme)" in section
    row = dom.one("tr", data_run="ring-rn-matches-r1")
    assert "tolerance_ohm = 0.1" in row.text() and "raised nothing" in row.text()
    assert "(set by profile)" in row.text()
    rows = [r for r in dom.find_all("tr") if "data-outcome" in r.attrs]
    assert len(rows) == len(res.runs)
    labels = {o.value: o for o in Outcome}
    for r, run in zip(rows, res.runs, strict=True):
        shown = r.one("td", **{"class": f"outcome o-{r.attrs['data-outcome']}"}).text()
        assert shown == labels[r.attrs["data-outcome"]].describe(run.findings)
        assert shown in ("raised nothing", "did not apply", "turned off") or re.fullmatch(
            r"found \d+", shown)


def test_empty_certificate_renders_as_incomplete(tmp_path: Path) -> None:
    cert = make_certificate([])
    cert.boards.clear()
    out = write_html(cert, results(), tmp_path / "r.html", certvet_version="1")
    dom = parse(out.read_text(encoding="utf-8"))
    assert dom.one(data_verdict="incomplete").text() == "audit incomplete"
    assert "No boards were read" in dom.text()


# --- JSON -------------------------------------------------------------------------------


def test_json_round_trips(tmp_path: Path) -> None:
    cert = certificate()
    board = cert.boards[0]
    c = board.circuits[0]
    c.cells["zs"] = Cell("zs", c.cells["zs"].value, Box(2, 10.25, 20.5, 30.75, 40.0))
    cert.problems.append(ExtractionProblem("odd row", board="DB1", raw="??",
                                           box=Box(2, 1.0, 2.0, 3.0, 4.0)))
    res = run_checks(cert)
    path = write_json(cert, res, tmp_path / "r.json", certvet_version="9.9.9",
                      generated_at="fixed")
    data = json.loads(path.read_text(encoding="utf-8"))
    assert data["format_version"] == FORMAT_VERSION == 6
    assert data["cautions"] == list(CAUTIONS)
    for r in data["check_runs"]:
        assert r["outcome_label"] == Outcome(r["outcome"]).describe(r["findings"])
    assert {r["outcome_label"] for r in data["check_runs"]} >= {"raised nothing", "found 3"}
    assert data["related"] == []  # filled in by batch runs only
    assert list(data)[0] == "format_version"
    assert data == report_dict(cert, res, certvet_version="9.9.9", generated_at="fixed")
    assert data["findings"] == [f.to_dict() for f in res.findings]
    assert data["verdict"]["key"] == decide(cert, res).key.value
    assert data["boards"][0]["circuits"][0]["cells"]["zs"]["box"]["x0"] == 10.25
    assert data["boards"][0]["circuits"][0]["cells"]["ir_live_earth"]["kind"] == "lower_bound"
    assert len(data["check_runs"]) == len(res.runs)
    assert certificate_from_json(data) == cert
    # re-running the checks on the rebuilt certificate gives the same findings
    assert run_checks(certificate_from_json(data)).findings == res.findings


def test_json_rejects_unknown_format_version() -> None:
    data = report_dict(certificate(), results(), certvet_version="1", generated_at="x")
    data["format_version"] = FORMAT_VERSION + 1
    with pytest.raises(ValueError, match="format_version"):
        certificate_from_json(data)


def test_json_version_1_documents_still_read() -> None:
    cert = certificate()
    data = report_dict(cert, results(), certvet_version="1", generated_at="x")
    del data["related"]  # what version 1 wrote
    data["format_version"] = 1
    assert certificate_from_json(data) == cert


# --- CSV and frame ------------------------------------------------------------------------


def test_csv_files(tmp_path: Path) -> None:
    cert = certificate()
    res = results(finding(Severity.BREACH, box=Box(1, 1, 2, 3, 4)))
    records, findings = write_csv(cert, res, tmp_path / "cert")
    assert records.name == "cert.records.csv" and findings.name == "cert.findings.csv"
    rows = read_table(records)
    assert list(rows[0]) == frame_columns()
    assert [r["circuit_ref"] for r in rows] == ["1", "2", "3"]
    assert rows[2]["zs"] == "1.45" and rows[0]["ir_live_earth"] == ""
    assert rows[0]["description_raw"] == SCRIPT
    assert rows[2]["remarks_raw"].startswith("'=HYPERLINK")
    with findings.open(encoding="utf-8", newline="") as fh:
        frows = list(csv.reader(fh))[1:]  # the caution row first
    assert tuple(frows[0]) == FINDING_COLUMNS
    assert frows[1][FINDING_COLUMNS.index("severity")] == "breach"
    assert frows[1][FINDING_COLUMNS.index("box")] == "1.00 2.00 3.00 4.00"


@pytest.mark.parametrize(
    ("text", "safe"),
    [("=1+1", "'=1+1"), ("+44", "'+44"), ("@SUM(A1)", "'@SUM(A1)"), ("-cmd", "'-cmd"),
     ("-", "-"), ("-0.01", "-0.01"), ("0.35", "0.35"), ("N/A", "N/A")],
)
def test_neutralise(text: str, safe: str) -> None:
    assert neutralise(text) == safe


def test_circuits_frame_types() -> None:
    df = circuits_frame(certificate())
    assert list(df.columns) == frame_columns()
    assert len(df) == 3
    first = df.iloc[0]
    assert first["certificate"] == "EIC-0042" and first["board"] == "DB1"
    assert first["zs"] == pytest.approx(0.56) and df["zs"].dtype == "float64"
    assert math.isnan(first["ir_live_earth"])  # a bound is not a plain reading
    assert first["ir_live_earth_raw"] == ">999" and first["ir_live_earth_kind"] == "lower_bound"
    assert bool(first["polarity"]) is True
    assert first["description"] == SCRIPT
    assert df.iloc[1]["r1_kind"] == "empty" and math.isnan(df.iloc[1]["r1"])
    assert int(first["page"]) == 1


def test_circuits_frame_of_empty_certificate() -> None:
    df = circuits_frame(make_certificate([]))
    assert df.empty and list(df.columns) == frame_columns()


def test_questioned_board_and_certificate_values_name_their_severity() -> None:
    res = results(
        finding(Severity.BREACH, circuit=None, fld="ze", board="DB1", expected="≤ 0.35 Ω"),
        finding(Severity.QUERY, circuit=None, fld="contractor", board=None),
    )
    _, dom = render(certificate(), res)
    board = [n for n in dom.find_all("span") if "bq" in n.classes()]
    assert len(board) == 1 and "sev-breach" in board[0].classes()
    assert "0.21 Ω" in board[0].text() and "(breach)" in board[0].text()
    cert_detail = [n for n in dom.find_all("div") if "sev-query" in n.classes()]
    assert len(cert_detail) == 1 and "Contractor" in cert_detail[0].text()
    assert "query" in cert_detail[0].one("dt").text()
