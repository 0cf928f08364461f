"""Every check against its case file: tests/cases/<check-id>.toml (see DEVELOPERS.md)."""

from __future__ import annotations

from datetime import date

import pytest
from casekit import Case, load_cases

from certvet.checks.model import Severity
from certvet.checks.registry import all_checks, get_check

CASES = load_cases()


@pytest.mark.parametrize("case", CASES, ids=[f"{c.check_id}::{c.name}" for c in CASES])
def test_case(case: Case) -> None:
    cls = get_check(case.check_id)
    check = cls(cls.Options(**case.options))
    check.audit_date = date.fromisoformat(case.audit_date) if case.audit_date else None
    _, findings = check.run(case.build())
    assert len(findings) == case.expect, (
        f"{case.check_id}::{case.name} (source: {case.source}) expected {case.expect} "
        f"finding(s), got {[f.message for f in findings]}"
    )
    if case.severity and findings:
        assert {f.severity for f in findings} == {Severity.parse(case.severity)}
    if case.at is not None:
        keys = sorted(set().union(*(set(a) for a in case.at))) if case.at else ["circuit"]
        got = sorted(tuple(str(getattr(f, k)) for k in keys) for f in findings)
        want = sorted(tuple(str(a.get(k)) for k in keys) for a in case.at)
        assert got == want, f"{case.check_id}::{case.name}: findings at {got}, expected {want}"


def test_every_check_has_a_passing_and_a_failing_case() -> None:
    by_id: dict[str, list[Case]] = {}
    for c in CASES:
        by_id.setdefault(c.check_id, []).append(c)
    missing = []
    for cls in all_checks():
        if cls.scope == "corpus":
            continue  # across certificates: tests/corpus_cases (tests/test_corpus_cases.py)
        cases = by_id.get(cls.id, [])
        if not any(c.expect == 0 for c in cases) or not any(c.expect > 0 for c in cases):
            missing.append(cls.id)
    assert not missing, f"checks without both a passing and a failing case: {missing}"


def test_case_files_name_existing_checks() -> None:
    ids = {c.id for c in all_checks()}
    assert {c.check_id for c in CASES} <= ids


def test_every_case_names_its_source() -> None:
    assert all(c.source.strip() for c in CASES)
