"""The example profile shipped in fixtures/profiles loads, and changes what an audit reports."""

from __future__ import annotations

from pathlib import Path

from casekit import make_certificate

from certvet.checks.model import Outcome, Severity
from certvet.checks.profile import load_profile
from certvet.checks.runner import run_checks

PROFILE = Path(__file__).resolve().parents[1] / "fixtures" / "profiles" / "strict-desk-audit.toml"


def test_example_profile_retunes_and_disables() -> None:
    prof = load_profile(PROFILE)
    assert prof.name == "strict-desk-audit"
    # rn 0.04 Ω off r1: inside the default 0.05 Ω (common practice, no source), outside 0.03 Ω
    cert = make_certificate(
        [
            {
                "circuit_ref": "1",
                "description": "Sockets ring",
                "r1": "0.50",
                "rn": "0.54",
                "r2": "0.83",
                "live_csa": "2.5",
                "cpc_csa": "1.5",
            }
        ]
    )
    default_ids = {f.check_id for f in run_checks(cert).findings}
    tuned = run_checks(cert, prof)
    assert "ring-rn-matches-r1" not in default_ids
    assert "ring-rn-matches-r1" in {f.check_id for f in tuned.findings}
    runs = {r.check_id: r for r in tuned.runs}
    assert runs["ir-worth-investigating"].outcome is Outcome.TURNED_OFF
    assert runs["ring-rn-matches-r1"].options["tolerance_ohm"] == 0.03


def test_example_profile_changes_severity() -> None:
    prof = load_profile(PROFILE)
    circuits = [
        {
            "circuit_ref": str(i),
            "description": "Lights",
            "r1_r2": f"0.{20 + i}",
            "zs": f"0.{55 + i}",
        }
        for i in range(1, 6)
    ]
    cert = make_certificate(circuits, board={"ze": "0.35", "earthing": "TN-C-S"})
    found = [
        f for f in run_checks(cert, prof).findings if f.check_id == "zs-all-exactly-calculated"
    ]
    assert found and all(f.severity is Severity.BREACH for f in found)
