"""The CLI end to end: in-process with typer's CliRunner, and once as a real process."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from pathlib import Path

from typer.testing import CliRunner

from certvet.cli import app

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "fixtures" / "demo"
LAYOUTS = ROOT / "fixtures" / "layouts"
runner = CliRunner()


def test_clean_certificate_exits_0(tmp_path: Path) -> None:
    res = runner.invoke(app, ["audit", str(DEMO / "grid-clean-01.pdf"), "--layout", str(LAYOUTS),
                              "--out", str(tmp_path)])
    assert res.exit_code == 0, res.output
    assert "NO CONCERNS FOUND" in res.output
    assert (tmp_path / "grid-clean-01.html").exists()
    data = json.loads((tmp_path / "grid-clean-01.json").read_text())
    assert data["format_version"] == 6


def test_breach_exits_1(tmp_path: Path) -> None:
    res = runner.invoke(app, ["audit", str(DEMO / "plain-faulty-05.pdf"), "-l", str(LAYOUTS),
                              "-o", str(tmp_path)])
    assert res.exit_code == 1, res.output


def test_bad_files_listed_and_others_still_audited(tmp_path: Path) -> None:
    junk = tmp_path / "notes.pdf"
    junk.write_text("this is not a pdf")
    empty = tmp_path / "empty.pdf"
    empty.write_bytes(b"")
    res = runner.invoke(app, ["audit", str(junk), str(DEMO / "grid-clean-01.pdf"), str(empty),
                              "-l", str(LAYOUTS), "-o", str(tmp_path / "out")])
    assert res.exit_code == 3, res.output
    assert "3 file(s): 1 audited, 2 not audited" in res.output
    failed = [ln for ln in res.output.splitlines() if ln.strip().startswith("not audited:")]
    assert len(failed) == 2
    assert any("notes.pdf" in ln and "not a PDF" in ln for ln in failed)
    assert any("empty.pdf" in ln and "empty" in ln for ln in failed)
    assert "Traceback" not in res.output


def test_unrecognised_form_is_a_clear_failure(tmp_path: Path) -> None:
    # A layout that recognises nothing in the demo files.
    lay = (LAYOUTS / "grid-landscape.toml").read_text()
    lay = lay.replace("[recognise]", "[recognise]\n# changed\n", 1)
    import re

    lay = re.sub(r"require = .*", 'require = ["NO SUCH FORM TEXT"]', lay, count=1)
    (tmp_path / "other.toml").write_text(lay)
    res = runner.invoke(app, ["audit", str(DEMO / "grid-clean-01.pdf"), "-l",
                              str(tmp_path / "other.toml"), "-o", str(tmp_path / "o"),
                              "--no-draft-unknown-forms"])
    assert res.exit_code == 3
    assert "no layout recognises this form" in res.output
    # the error names the command that drafts a layout to fix it
    assert f"certvet draft-layout {DEMO / 'grid-clean-01.pdf'} -o form.toml" in res.output
    assert not (tmp_path / "o" / "drafted-layouts").exists()


def test_invalid_layout_is_a_usage_error(tmp_path: Path) -> None:
    bad = tmp_path / "bad.toml"
    bad.write_text('[form]\nname = "x"\n[recognise]\nrequire = ["a"]\n[board]\nstart = "B"\n'
                   '[[columns]]\nfield = "circuit_ref"\nheader = "("\n')
    res = runner.invoke(app, ["audit", str(DEMO / "grid-clean-01.pdf"), "-l", str(bad)])
    assert res.exit_code == 2
    assert "bad.toml" in res.output and "board.start" in res.output


def test_checks_listing_and_explain() -> None:
    res = runner.invoke(app, ["checks"])
    assert res.exit_code == 0 and "zs-over-max-for-device" in res.output
    res = runner.invoke(app, ["explain", "ring-rn-matches-r1"])
    assert res.exit_code == 0 and "Why it matters" in res.output
    res = runner.invoke(app, ["explain", "no-such-check"])
    assert res.exit_code == 2


def test_real_process_smoke(tmp_path: Path) -> None:
    exe = Path(sys.executable).with_name("certvet")
    env = dict(os.environ, COLUMNS="100")
    out = subprocess.run([str(exe), "--help"], capture_output=True, text=True, env=env,
                         timeout=60)
    assert out.returncode == 0 and "audit" in out.stdout
    out = subprocess.run([str(exe), "demo", "--out", str(tmp_path)], capture_output=True,
                         text=True, env=env, timeout=600)
    assert out.returncode == 0, out.stdout + out.stderr
    n = len(list(DEMO.glob("*.pdf")))
    assert f"{n} file(s): {n} audited, 0 skipped, 0 not audited" in out.stdout
    assert "schedule-copied-from-other-address" in out.stdout
    reports = [p for p in (tmp_path / "certificates").glob("*.html")
               if not p.name.endswith((".summary.html", ".queries.html"))]
    assert len(reports) == n
    assert len(list((tmp_path / "certificates").glob("*.summary.html"))) == n  # landlord's
    assert len(list((tmp_path / "certificates").glob("*.queries.html"))) == n  # contractor's
    assert (tmp_path / "portfolio.html").exists()
    again = subprocess.run([str(exe), "demo", "--out", str(tmp_path)], capture_output=True,
                           text=True, env=env, timeout=600)
    assert again.returncode == 0
    assert f"{n} file(s): 0 audited, {n} skipped, 0 not audited" in again.stdout
