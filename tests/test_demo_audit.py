"""The bundled demo end to end: clean certificates raise no finding at all, and every fault
planted in a faulty certificate is found by the check meant for it, on its board and circuit.

The planted faults and the clean/faulty flag come from each fixture's ground truth
(fixtures/demo/*.truth.json, written by fixtures/generate.py)."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from certvet.api import audit_file, demo_inputs

DEMO = sorted(Path(__file__).resolve().parents[1].joinpath("fixtures", "demo").glob("*.pdf"))


@pytest.fixture(scope="module")
def layouts():
    return demo_inputs()[1]


@pytest.mark.parametrize("pdf", DEMO, ids=[p.stem for p in DEMO])
def test_demo_certificate(pdf: Path, layouts, tmp_path: Path) -> None:
    truth = json.loads(pdf.with_suffix("").with_suffix(".truth.json").read_text())
    result = audit_file(pdf, layouts=layouts, out_dir=tmp_path)
    assert result.layout == truth["form"]
    findings = [f for f in result.results.findings if not f.preview]
    if truth["clean"]:
        assert findings == [], [
            f"{f.check_id} {f.board}/{f.circuit}: {f.message}" for f in findings
        ]
        assert result.verdict.label == "no concerns found"
        return
    missing = []
    for fault in truth["faults"]:
        for check_id in fault["checks"]:
            hit = [
                f
                for f in findings
                if f.check_id == check_id
                and (fault["board"] is None or f.board in (None, fault["board"]))
                and (fault["circuit"] is None or f.circuit == fault["circuit"])
            ]
            if not hit:
                missing.append(f"{check_id} @ {fault['board']}/{fault['circuit']}: {fault['what']}")
    assert not missing, "planted faults not found:\n" + "\n".join(missing)
    assert result.verdict.label != "no concerns found"
    for kind in ("html", "json"):
        assert result.outputs[kind].exists()
