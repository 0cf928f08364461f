"""The library API takes plain strings as well as Paths, and gives records and findings as
DataFrames."""

from __future__ import annotations

import json
from pathlib import Path

from certvet.api import audit_file, load_layouts
from certvet.checks.frame import findings_columns, findings_frame

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "fixtures" / "demo"


def test_load_layouts_takes_a_string_a_path_or_several() -> None:
    folder = str(ROOT / "fixtures" / "layouts")
    names = sorted(lay.name for lay in load_layouts(folder))
    assert names == ["grid-landscape", "plain-columns"]
    assert [lay.name for lay in load_layouts(Path(folder) / "plain-columns.toml")] == [
        "plain-columns"]
    assert len(load_layouts([folder, Path(folder) / "plain-columns.toml"])) == 3


def test_audit_file_with_strings_and_frames(tmp_path: Path) -> None:
    truth = json.loads((DEMO / "grid-faulty-03.truth.json").read_text(encoding="utf-8"))
    res = audit_file(str(DEMO / "grid-faulty-03.pdf"),
                     layouts=load_layouts(str(ROOT / "fixtures" / "layouts")),
                     out_dir=str(tmp_path), profile=str(ROOT / "fixtures" / "profiles" /
                                                         "strict-desk-audit.toml"))
    assert res.outputs["json"].parent == tmp_path
    circuits = res.circuits_frame()
    assert len(circuits) == sum(len(b["circuits"]) for b in truth["boards"])
    findings = res.findings_frame()
    assert list(findings.columns) == findings_columns()
    assert len(findings) == len(res.results.findings)
    # every planted fault (truth JSON) is a row at its board and circuit
    planted = {(c, f["board"], f["circuit"]) for f in truth["faults"] for c in f["checks"]}
    rows = set(zip(findings["check_id"], findings["board"], findings["circuit"], strict=True))
    assert planted <= rows
    worst_first = findings.sort_values("severity")["severity"].iloc[0]  # worst first
    assert worst_first == res.results.worst().slug  # type: ignore[union-attr]


def test_findings_frame_of_nothing_has_the_columns() -> None:
    df = findings_frame([])
    assert list(df.columns) == findings_columns() and len(df) == 0
