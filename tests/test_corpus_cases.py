"""Every check across certificates against its case file: tests/corpus_cases/<check-id>.toml.

A case stores a few certificates (cells as printed, through the real token parser) in a fresh
corpus, runs the cross-certificate checks with only this check enabled (options from the case)
and counts the findings on the certificate named `subject` (its certificate number).
"""

from __future__ import annotations

import hashlib
import tomllib
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import pytest
from casekit import make_certificate

from certvet.checks.model import Severity
from certvet.checks.profile import CheckSettings, Profile
from certvet.checks.registry import all_checks
from certvet.checks.runner import CheckResults
from certvet.corpus import Corpus
from certvet.corpus.crosscheck import CROSS_CHECKS, scan

CASES_DIR = Path(__file__).parent / "corpus_cases"


@dataclass
class CorpusCase:
    check_id: str
    name: str
    subject: str
    expect: int
    source: str
    certificates: list[dict[str, Any]]
    options: dict[str, Any] = field(default_factory=dict)
    severity: str | None = None


def _load() -> list[CorpusCase]:
    out = []
    for path in sorted(CASES_DIR.glob("*.toml")):
        for raw in tomllib.loads(path.read_text(encoding="utf-8")).get("case", []):
            out.append(CorpusCase(check_id=path.stem, **raw))
    return out


CASES = _load()


def _profile(case: CorpusCase) -> Profile:
    """Only this case's check enabled, with the case's options."""
    checks = {cls.id: CheckSettings(enabled=False) for cls in CROSS_CHECKS}
    checks[case.check_id] = CheckSettings(options=dict(case.options))
    return Profile(name="case", checks=checks)


@pytest.mark.parametrize("case", CASES, ids=[f"{c.check_id}::{c.name}" for c in CASES])
def test_corpus_case(case: CorpusCase, tmp_path: Path) -> None:
    with Corpus(tmp_path / "c.sqlite") as corpus:
        for raw in case.certificates:
            cert = make_certificate(raw.get("circuits", []), raw.get("board"),
                                    raw.get("certificate"))
            cert.sha256 = hashlib.sha256(raw["name"].encode()).hexdigest()
            cert.source = f"{raw['name']}.pdf"
            corpus.add(cert, CheckResults(_profile(case)))
        found = [cf.finding for cf in scan(corpus, _profile(case)).findings
                 if cf.finding.certificate == case.subject]
    assert {f.check_id for f in found} <= {case.check_id}
    assert len(found) == case.expect, (
        f"{case.check_id}::{case.name} (source: {case.source}) expected {case.expect} "
        f"finding(s), got {[f.message for f in found]}")
    if case.severity and found:
        assert {f.severity for f in found} == {Severity.parse(case.severity)}


def test_every_corpus_check_has_a_passing_and_a_failing_case() -> None:
    corpus_checks = {cls.id for cls in all_checks() if cls.scope == "corpus"}
    assert corpus_checks == {cls.id for cls in CROSS_CHECKS}
    missing = [cid for cid in sorted(corpus_checks)
               if not any(c.check_id == cid and c.expect == 0 for c in CASES)
               or not any(c.check_id == cid and c.expect > 0 for c in CASES)]
    assert not missing, f"checks across certificates without both kinds of case: {missing}"
    assert all(c.source.strip() for c in CASES)
