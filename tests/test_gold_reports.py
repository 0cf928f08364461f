"""Gold files: the HTML and JSON reports of two demo certificates, compared with reviewed
copies in tests/gold/ after scrubbing what legitimately changes (the file's absolute path).

A change to the reports' content or layout shows here as a diff to review. When the change is
intended, accept the new output with:

    CERTVET_ACCEPT_GOLD=1 .venv/bin/python -m pytest tests/test_gold_reports.py

and commit the files in tests/gold/ with the change.
"""

from __future__ import annotations

import difflib
import json
import os
from datetime import date
from pathlib import Path

import pytest

from certvet.api import DEMO_DIR, audit_file, demo_inputs
from certvet.reports.html import render_html
from certvet.reports.jsonout import report_dict

GOLD = Path(__file__).parent / "gold"
CASES = ["grid-faulty-03", "plain-clean-04"]
FIXED = {"certvet_version": "GOLD", "generated_at": "GOLD"}


def _scrub(text: str) -> str:
    return text.replace(str(DEMO_DIR), "<demo>")


def _compare(name: str, produced: str) -> None:
    path = GOLD / name
    if os.environ.get("CERTVET_ACCEPT_GOLD") == "1":
        path.write_text(produced, encoding="utf-8")
        return
    assert path.exists(), f"no gold file {path}: run with CERTVET_ACCEPT_GOLD=1 to create it"
    expected = path.read_text(encoding="utf-8")
    if produced != expected:
        diff = "".join(
            list(
                difflib.unified_diff(
                    expected.splitlines(keepends=True),
                    produced.splitlines(keepends=True),
                    f"gold/{name}",
                    "produced",
                    n=1,
                )
            )[:60]
        )
        pytest.fail(f"{name} differs from its gold copy (accept if intended):\n{diff}")


AUDIT_DATE = date(2026, 12, 1)  # fixed, so the date checks give the same findings every day


@pytest.mark.parametrize("stem", CASES)
def test_reports_match_gold(stem: str) -> None:
    result = audit_file(DEMO_DIR / f"{stem}.pdf", layouts=demo_inputs()[1],
                        audit_date=AUDIT_DATE)
    cert, res = result.certificate, result.results
    _compare(f"{stem}.html", _scrub(render_html(cert, res, **FIXED)))
    data = report_dict(cert, res, **FIXED)
    _compare(f"{stem}.json", _scrub(json.dumps(data, ensure_ascii=False, indent=1) + "\n"))
