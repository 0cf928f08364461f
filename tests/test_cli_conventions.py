"""The conventions users expect of a command: --version, -h, python -m certvet, shell
completion, -v/-q, --json on stdout with its format version, help in words not Python types."""

from __future__ import annotations

import json
import re
import subprocess
import sys
from pathlib import Path

import pytest
from typer.testing import CliRunner

from certvet import __version__
from certvet.cli import app
from certvet.jsonresult import FORMAT_VERSION, KIND

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "fixtures" / "demo"
LAYOUTS = ROOT / "fixtures" / "layouts"
runner = CliRunner()
COMMANDS = sorted(c.name or c.callback.__name__ for c in app.registered_commands
                  if c.callback is not None)
PYTHON_TYPES = re.compile(r"<[^>]*>|\b(?:list\[|Path\b|str\b|int range|float range)")


@pytest.mark.parametrize("flag", ["--version", "-V"])
def test_version(flag: str) -> None:
    res = runner.invoke(app, [flag])
    assert res.exit_code == 0 and res.output.strip() == f"certvet {__version__}"


def test_python_dash_m_certvet_is_the_same_command() -> None:
    out = subprocess.run([sys.executable, "-m", "certvet", "--version"], capture_output=True,
                         text=True, timeout=120, check=False, cwd=ROOT)
    assert out.returncode == 0 and out.stdout.strip() == f"certvet {__version__}"


def test_there_are_commands_to_check() -> None:
    assert {"audit", "demo", "explain"} <= set(COMMANDS)


@pytest.mark.parametrize("command", [None, *COMMANDS])
def test_dash_h_is_help_and_help_shows_words_not_python_types(command: str | None) -> None:
    args = ([command] if command else []) + ["-h"]
    res = runner.invoke(app, args)
    assert res.exit_code == 0, res.output
    assert "Usage:" in res.output
    options = res.output[res.output.find("Options:"):]
    assert not PYTHON_TYPES.findall(options), PYTHON_TYPES.findall(options)


def test_shell_completion_script_is_offered() -> None:
    res = runner.invoke(app, ["--show-completion", "bash"])
    assert res.exit_code == 0 and "_CERTVET_COMPLETE" in res.output


def test_json_result_on_stdout(tmp_path: Path) -> None:
    junk = tmp_path / "junk.pdf"
    junk.write_text("not a pdf")
    res = runner.invoke(app, ["audit", str(DEMO / "grid-faulty-03.pdf"), str(junk),
                              "-l", str(LAYOUTS), "-o", str(tmp_path / "out"), "--json"])
    doc = json.loads(res.stdout)  # stdout is the document alone
    assert list(doc)[0] == "format_version" and doc["format_version"] == FORMAT_VERSION
    assert doc["kind"] == KIND and doc["certvet_version"] == __version__
    assert doc["exit_code"] == res.exit_code == 3
    assert doc["cautions"] and "cannot show" in doc["cautions"][0]
    assert doc["totals"] == {"files": 2, "audited": 1, "not_audited": 1}
    audited = next(f for f in doc["files"] if f["status"] == "audited")
    assert audited["verdict"]["key"] == "fails_requirements"
    assert audited["counts"]["breach"] == 2  # the two planted breaches (truth JSON)
    assert Path(audited["reports"]["json"]).exists()
    bad = next(f for f in doc["files"] if f["status"] == "not_audited")
    assert "junk.pdf" in bad["reason"]


def test_verbose_lists_findings_and_quiet_prints_nothing(tmp_path: Path) -> None:
    args = ["audit", str(DEMO / "grid-faulty-03.pdf"), "-l", str(LAYOUTS), "-o", str(tmp_path)]
    loud = runner.invoke(app, [*args, "-v"])
    assert "polarity-not-confirmed:" in loud.output and "rcd-time-limit:" in loud.output
    plain = runner.invoke(app, args)
    assert "polarity-not-confirmed:" not in plain.output
    quiet = runner.invoke(app, [*args, "-q"])
    assert quiet.output == "" and quiet.exit_code == loud.exit_code == 1
