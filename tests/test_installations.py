"""The generated installations (fixtures/installations/): TT, split-load and 5 s sub-mains.

Each truth file holds the printed text of every cell; the certificate is built through the real
token parser and the whole catalogue runs with the default profile. A clean installation must
raise no finding at all; a faulty one must raise every planted fault by its own check, at the
board, circuit and field the truth names, and nothing that was not planted. The readings and
their sources are in fixtures/installations/generate.py (IEC 60228 resistances, BS 7671:2018+A2:2022
Tables 41.3 and 41.5; scatter and ranges: common practice, no source).
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import pytest
from casekit import make_certificate

from certvet.checks.runner import run_checks
from certvet.extractor.records import Certificate

HERE = Path(__file__).resolve().parent
INSTALLATIONS = sorted((HERE.parent / "fixtures" / "installations").glob("*.truth.json"))


def _truth(path: Path) -> dict[str, Any]:
    return json.loads(path.read_text(encoding="utf-8"))


def build(truth: dict[str, Any]) -> Certificate:
    boards = [dict(b["fields"], board_ref=b["board_ref"], circuits=b["circuits"])
              for b in truth["boards"]]
    return make_certificate([], certificate=truth["certificate"], boards=boards)


def test_there_are_clean_and_faulty_installations_of_each_kind() -> None:
    names = {p.name.removesuffix(".truth.json") for p in INSTALLATIONS}
    for kind in ("tt-cottage", "split-load", "submains-5s"):
        assert {f"{kind}-clean", f"{kind}-faulty"} <= names


def test_every_file_is_stamped() -> None:
    for path in INSTALLATIONS:
        assert _truth(path)["generated_by"] == "fixtures/installations/generate.py, do not edit"


@pytest.mark.parametrize("path", INSTALLATIONS, ids=[p.stem for p in INSTALLATIONS])
def test_installation(path: Path) -> None:
    truth = _truth(path)
    cert = build(truth)
    assert not cert.problems, cert.problems
    findings = run_checks(cert).findings
    shown = [f"{f.check_id} {f.board}/{f.circuit}/{f.field}: {f.message}" for f in findings]
    if truth["clean"]:
        assert not truth["faults"]
        assert findings == [], shown
        return
    assert truth["faults"]
    planted = []
    for fault in truth["faults"]:
        for check_id in fault["checks"]:
            hits = [f for f in findings if f.check_id == check_id
                    and f.board == fault["board"] and f.circuit == fault["circuit"]
                    and f.field == fault["field"]]
            assert hits, f"not found: {check_id} at {fault}; got {shown}"
            planted += hits
    unplanted = [line for f, line in zip(findings, shown, strict=True) if f not in planted]
    assert not unplanted, unplanted


def test_regenerating_gives_the_committed_files(tmp_path: Path) -> None:
    import importlib.util

    spec = importlib.util.spec_from_file_location(
        "installations_generate", HERE.parent / "fixtures" / "installations" / "generate.py")
    assert spec is not None and spec.loader is not None
    module = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(module)
    for written in module.generate(tmp_path):
        committed = HERE.parent / "fixtures" / "installations" / written.name
        assert written.read_text(encoding="utf-8") == committed.read_text(encoding="utf-8")
