"""One vocabulary of outcomes, worded no stronger than the evidence.

Check outcomes say what was found ("raised nothing", "found N", "did not apply", "turned off");
a file that could not be read is "not audited" — never "failed", which the reports once used
for a check that found something. Severities are certvet's own scale, each a labelled badge
with its own mark, with a legend that says they are not the certificate's C1/C2/C3/FI.
This test fails when an old status word reappears in a template, a gold report or an output.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest
from typer.testing import CliRunner

from certvet.checks.model import Outcome, Severity
from certvet.cli import app
from certvet.reports.csvout import read_table
from certvet.reports.model import SEVERITY_LEGEND, SEVERITY_LEGEND_NOTE, severity_css
from certvet.reports.verdict import NOT_AUDITED, WORDING, VerdictKey

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "fixtures" / "demo"
LAYOUTS = ROOT / "fixtures" / "layouts"
TEMPLATES = sorted((ROOT / "reports" / "templates").glob("*.j2"))
GOLD = sorted((ROOT / "tests" / "gold").iterdir())

OLD_OUTCOME_VALUES = ("passed", "failed", "not_applicable", "disabled")
OLD_OUTCOME_WORDS = re.compile(r"\b(?:passed|failed|not applicable|disabled)\b", re.I)
OLD_SEVERITY_WORDS = re.compile(r"impossible or unsafe|immediate(?:ly)? danger", re.I)
NEW_OUTCOME = re.compile(r"^(?:raised nothing|found \d+|did not apply|turned off)$")


def test_outcomes_are_worded_as_what_was_found() -> None:
    assert [o.value for o in Outcome] == ["raised_nothing", "found", "did_not_apply",
                                          "turned_off"]
    assert Outcome.FOUND.describe(3) == "found 3"
    assert Outcome.RAISED_NOTHING.describe(0) == "raised nothing"
    assert Outcome.DID_NOT_APPLY.label == "did not apply"
    assert Outcome.TURNED_OFF.label == "turned off"
    # an outcome stored before JSON format 3 still reads
    assert [Outcome(v) for v in OLD_OUTCOME_VALUES] == list(Outcome)


def test_file_not_audited_shares_no_word_with_a_check_outcome() -> None:
    outcome_words = {w for o in Outcome for w in o.label.split()}
    assert NOT_AUDITED == "not audited"
    assert "audited" not in outcome_words and "failed" not in outcome_words


@pytest.mark.parametrize("path", TEMPLATES + GOLD, ids=lambda p: p.name)
def test_no_old_status_word_in_templates_or_gold_reports(path: Path) -> None:
    text = path.read_text(encoding="utf-8")
    assert not OLD_SEVERITY_WORDS.findall(text)
    assert not re.findall(r"o-(?:passed|failed|not_applicable|disabled)\b", text)
    assert not re.findall(r'"outcome": "(?:passed|failed|not_applicable|disabled)"', text)


def test_not_credible_explanation_claims_no_danger() -> None:
    text = WORDING[VerdictKey.NOT_CREDIBLE].explanation
    assert "danger" not in text.replace("says nothing about danger", "")
    assert "cannot all be right" in text


def test_severities_have_a_mark_each_and_a_legend_that_disowns_classification_codes() -> None:
    marks = [s.mark for s in Severity]
    assert len(set(marks)) == len(marks) == 4
    css = severity_css()
    for s in Severity:
        assert f".sev.sev-{s.slug}::before" in css and s.mark in css
    assert [k.slug for k in SEVERITY_LEGEND] == ["impossible", "breach", "query", "note"]
    for code in ("C1", "C2", "C3", "FI"):
        assert code in SEVERITY_LEGEND_NOTE
    assert "own scale" in SEVERITY_LEGEND_NOTE


def test_every_output_uses_the_one_vocabulary(tmp_path: Path) -> None:
    junk = tmp_path / "in" / "junk.pdf"
    junk.parent.mkdir()
    junk.write_text("not a pdf")
    out = tmp_path / "out"
    res = CliRunner().invoke(app, ["audit", str(DEMO / "grid-faulty-03.pdf"), str(junk),
                                   "-l", str(LAYOUTS), "-o", str(out)])
    assert res.exit_code == 3, res.output
    # console: the unreadable file is "not audited"; no old status word anywhere
    assert f"{NOT_AUDITED.upper()}" in res.output and f"1 {NOT_AUDITED}" in res.output
    assert not OLD_OUTCOME_WORDS.findall(res.output), res.output
    # JSON: outcomes and their labels from the one vocabulary; the cautions are carried
    doc = json.loads((out / "grid-faulty-03.json").read_text(encoding="utf-8"))
    assert doc["cautions"] and "cannot show" in doc["cautions"][0]
    for run in doc["check_runs"]:
        assert run["outcome"] in {o.value for o in Outcome}
        assert NEW_OUTCOME.match(run["outcome_label"]), run
    assert {r["outcome"] for r in doc["check_runs"]} >= {"found", "raised_nothing"}
    # HTML: the "Checks run" column and the summary line
    html = (out / "grid-faulty-03.html").read_text(encoding="utf-8")
    cells = re.findall(r'<td class="outcome o-[a-z_]+">([^<]*)</td>', html)
    assert cells and all(NEW_OUTCOME.match(c) for c in cells), set(cells)
    assert "severity-legend" in html
    runs_section = html[html.index('id="checks"'):]
    assert not OLD_OUTCOME_WORDS.findall(re.sub(r"<[^>]+>", " ", runs_section))
    # CSV: no status words at all in the findings (severity slugs only)
    rows = read_table(out / "grid-faulty-03.findings.csv")
    assert rows and {r["severity"] for r in rows} <= {s.slug for s in Severity}
