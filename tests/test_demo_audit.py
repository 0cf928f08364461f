"""The bundled demo end to end: clean certificates raise no finding at all, and every fault
planted in a faulty certificate is found by the check meant for it, on its board and circuit.

The planted faults and the clean/faulty flag come from each fixture's ground truth
(fixtures/demo/*.truth.json, written by fixtures/generate.py). Faults that only a comparison
across certificates can show (a schedule copied from another address) are checked on a batch
run over the whole demo folder."""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from certvet.api import DEMO_DIR, audit_file, demo_inputs
from certvet.batch import run_batch
from certvet.corpus import crosscheck

DEMO = sorted(DEMO_DIR.glob("*.pdf"))
CROSS_CHECKS = {
    crosscheck.COPIED,
    crosscheck.REPEATED,
    crosscheck.NUMBER_REUSED,
    crosscheck.INSPECTOR_WORKLOAD,
    crosscheck.INSTRUMENT_WORKLOAD,
}


def _truth(pdf: Path) -> dict:
    return json.loads(pdf.with_suffix("").with_suffix(".truth.json").read_text())


def _is_cross(fault: dict) -> bool:
    return set(fault["checks"]) <= CROSS_CHECKS


@pytest.fixture(scope="module")
def layouts():
    return demo_inputs()[1]


@pytest.mark.parametrize("pdf", DEMO, ids=[p.stem for p in DEMO])
def test_demo_certificate(pdf: Path, layouts, tmp_path: Path) -> None:
    truth = _truth(pdf)
    result = audit_file(pdf, layouts=layouts, out_dir=tmp_path)
    assert result.layout == truth["form"]
    findings = [f for f in result.results.findings if not f.preview]
    own_faults = [f for f in truth["faults"] if not _is_cross(f)]
    if truth["clean"] or not own_faults:
        # clean, or consistent on its own (only a cross-certificate fault planted)
        assert findings == [], [
            f"{f.check_id} {f.board}/{f.circuit}: {f.message}" for f in findings
        ]
        assert result.verdict.label == "no concerns found"
        return
    missing = []
    for fault in own_faults:
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


def test_cross_certificate_faults_found_in_a_batch_and_nothing_else(
    layouts, tmp_path: Path
) -> None:
    report = run_batch(
        [DEMO_DIR],
        layouts=layouts,
        store=tmp_path / "corpus.sqlite",
        out_dir=tmp_path / "out",
        workers=2,
    )
    assert report.totals["audited"] == len(DEMO)
    planted = {
        (pdf.stem, check)
        for pdf in DEMO
        for fault in _truth(pdf)["faults"]
        if _is_cross(fault)
        for check in fault["checks"]
    }
    assert planted, "the demo should plant at least one cross-certificate fault"
    names = {_truth(p)["certificate"]["cert_number"]: p.stem for p in DEMO}
    found = {
        (names.get(cf.finding.certificate), cf.finding.check_id) for cf in report.cross_findings
    }
    assert planted <= found, f"not found: {planted - found}"
    # nothing links certificates that were not copied from each other
    stray = {x for x in found if x not in planted}
    copied_from = {"grid-clean-01"}  # the source of the planted copy is named as its partner
    assert {s for s, _ in stray} <= copied_from, stray
