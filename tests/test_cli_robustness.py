"""Bad input from the command line: each ends in one line naming the file and the reason, a
non-zero exit and no traceback."""

from __future__ import annotations

from pathlib import Path

import pytest
from typer.testing import CliRunner

from certvet.cli import app

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "fixtures" / "demo"
LAYOUTS = ROOT / "fixtures" / "layouts"
GRID = LAYOUTS / "grid-landscape.toml"
PDF = DEMO / "grid-clean-01.pdf"
runner = CliRunner()


def _run(args: list[str]) -> tuple[int, str]:
    res = runner.invoke(app, [str(a) for a in args])
    assert res.exception is None or isinstance(res.exception, SystemExit), res.exception
    assert "Traceback" not in res.output
    return res.exit_code, res.output


def _error_line(output: str, name: str) -> str:
    lines = [ln for ln in output.splitlines() if ln.startswith("certvet: ") and name in ln]
    assert len(lines) == 1, output
    return lines[0]


def test_audit_of_a_folder_without_pdfs_names_the_folder(tmp_path: Path) -> None:
    empty = tmp_path / "inbox"
    empty.mkdir()
    code, out = _run(["audit", empty, "-l", LAYOUTS, "-o", tmp_path / "out"])
    assert code == 3
    assert "inbox: no PDF files found" in _error_line(out, "inbox")


def test_batch_of_a_folder_without_pdfs_is_an_error_like_audit(tmp_path: Path) -> None:
    empty = tmp_path / "inbox"
    empty.mkdir()
    store = tmp_path / "c.sqlite"
    code, out = _run(["batch", empty, "-l", LAYOUTS, "--store", store, "-o", tmp_path / "out"])
    assert code == 3
    assert "inbox: no PDF files found" in _error_line(out, "inbox")
    assert not store.exists()


@pytest.mark.parametrize("command", ["audit", "batch"])
def test_layout_folder_without_layouts_is_a_usage_error(tmp_path: Path, command: str) -> None:
    empty = tmp_path / "layouts"
    empty.mkdir()
    extra = ["--store", tmp_path / "c.sqlite"] if command == "batch" else []
    code, out = _run([command, PDF, "-l", empty, "-o", tmp_path / "out", *extra])
    assert code == 2
    assert "no layout files (*.toml) in this folder" in _error_line(out, "layouts")


def test_check_layout_of_a_folder_without_layouts_fails(tmp_path: Path) -> None:
    code, out = _run(["check-layout", tmp_path])
    assert code == 2
    assert f"invalid  {tmp_path}: no layout files" in out


@pytest.mark.parametrize("command", ["audit", "batch"])
def test_out_under_a_regular_file_is_one_line(tmp_path: Path, command: str) -> None:
    blocker = tmp_path / "afile"
    blocker.write_text("x")
    extra = ["--store", tmp_path / "c.sqlite"] if command == "batch" else []
    code, out = _run([command, PDF, "-l", LAYOUTS, "-o", blocker / "sub", *extra])
    assert code == 3
    assert "cannot create the reports folder: Not a directory" in _error_line(out, "afile/sub")
    code, out = _run([command, PDF, "-l", LAYOUTS, "-o", blocker, *extra])
    assert code == 3
    assert "a file of that name is in the way" in _error_line(out, "afile")


def test_store_under_a_regular_file_says_why(tmp_path: Path) -> None:
    blocker = tmp_path / "afile"
    blocker.write_text("x")
    code, out = _run(["batch", PDF, "-l", LAYOUTS, "--store", blocker / "c.sqlite",
                      "-o", tmp_path / "out"])
    assert code == 3
    assert "a file of that name is in the way" in _error_line(out, "c.sqlite")


def test_profile_that_is_a_folder_or_not_text(tmp_path: Path) -> None:
    code, out = _run(["audit", PDF, "-l", LAYOUTS, "--profile", tmp_path])
    assert code == 2
    assert "is a folder, not a profile file" in _error_line(out, str(tmp_path))
    binary = tmp_path / "p.toml"
    binary.write_bytes(b"\xff\xfe[profile]")
    code, out = _run(["audit", PDF, "-l", LAYOUTS, "--profile", binary])
    assert code == 2
    assert "cannot read profile" in _error_line(out, "p.toml")


def test_preview_with_a_layout_folder_says_it_is_a_folder(tmp_path: Path) -> None:
    code, out = _run(["preview", PDF, "--layout", LAYOUTS, "-o", tmp_path / "p.html"])
    assert code == 2
    line = _error_line(out, "layouts")
    assert "is a folder, not a layout file" in line
    assert "Errno" not in line


@pytest.mark.parametrize("name", ["p.html", "p.png"])
def test_preview_to_an_unwritable_path(tmp_path: Path, name: str) -> None:
    blocker = tmp_path / "afile"
    blocker.write_text("x")
    code, out = _run(["preview", PDF, "--layout", GRID, "-o", blocker / name])
    assert code == 3
    assert "cannot write the preview" in _error_line(out, name)


def test_draft_layout_to_an_unwritable_path(tmp_path: Path) -> None:
    blocker = tmp_path / "afile"
    blocker.write_text("x")
    code, out = _run(["draft-layout", PDF, "-o", blocker / "x.toml"])
    assert code == 3
    assert "cannot write the layout" in _error_line(out, "x.toml")


@pytest.mark.parametrize("command", ["try-layout", "preview"])
def test_unknown_engine_in_layout_commands_is_a_usage_error(tmp_path: Path, command: str
                                                             ) -> None:
    args = [command, PDF, "--layout", GRID, "--engine", "foo"]
    if command == "preview":
        args += ["-o", tmp_path / "p.html"]
    code, out = _run(args)
    assert code == 2
    assert "foo" in out


def test_quiet_audit_still_prints_the_failures(tmp_path: Path) -> None:
    junk = tmp_path / "junk.pdf"
    junk.write_text("not a pdf")
    code, out = _run(["audit", junk, PDF, "-l", LAYOUTS, "-o", tmp_path / "out", "-q"])
    assert code == 3
    assert "not a PDF" in _error_line(out, "junk.pdf")
    assert "NO CONCERNS FOUND" not in out


def test_try_layout_piped_prints_whole_values() -> None:
    """Not on a terminal (CliRunner, a pipe, a file) the table keeps its natural width instead
    of being squeezed into 80 columns, where 27 columns showed nothing readable."""
    code, out = _run(["try-layout", PDF, "--layout", GRID])
    assert code == 0
    assert "Sockets ring kitchen and utility room" in out
    assert "max_disconnection_time" in out


def test_portfolio_and_export_to_an_unwritable_path(tmp_path: Path) -> None:
    store = tmp_path / "c.sqlite"
    code, _ = _run(["batch", PDF, "-l", LAYOUTS, "--store", store, "-o", tmp_path / "out"])
    assert code == 0
    blocker = tmp_path / "afile"
    blocker.write_text("x")
    code, out = _run(["portfolio", "--store", store, "-o", blocker / "p.html"])
    assert code == 3
    assert "cannot write the portfolio" in _error_line(out, "p.html")
    code, out = _run(["export", "--store", store, "-o", blocker / "x"])
    assert code == 3
    assert "cannot write the export: Not a directory" in _error_line(out, "afile/x")


def test_audit_and_batch_word_a_failed_file_the_same(tmp_path: Path) -> None:
    junk = tmp_path / "in" / "junk.pdf"
    junk.parent.mkdir()
    junk.write_text("not a pdf")
    _, audit_out = _run(["audit", junk, "-l", LAYOUTS, "-o", tmp_path / "a"])
    _, batch_out = _run(["batch", junk, "-l", LAYOUTS, "--store", tmp_path / "c.sqlite",
                         "-o", tmp_path / "b"])
    first = [ln for ln in audit_out.splitlines() if ln.startswith("NOT AUDITED")]
    assert first and first == [ln for ln in batch_out.splitlines() if ln.startswith("NOT AUDITED")]


def test_audit_keeps_the_reports_of_equal_file_names_in_different_folders(tmp_path: Path
                                                                           ) -> None:
    import shutil

    for folder, src in (("a", "grid-clean-01.pdf"), ("b", "grid-faulty-03.pdf")):
        (tmp_path / folder).mkdir()
        shutil.copy(DEMO / src, tmp_path / folder / "cert.pdf")
    shutil.copy(DEMO / "plain-clean-04.pdf", tmp_path / "b" / "cert-2.pdf")
    out = tmp_path / "out"
    code, _ = _run(["audit", tmp_path / "a", tmp_path / "b", "-l", LAYOUTS, "-o", out])
    assert code == 1
    import json

    sources = {json.loads(p.read_text())["certificate"]["source"] for p in out.glob("*.json")}
    assert len([p for p in out.glob("*.html")
                if not p.name.endswith((".summary.html", ".queries.html"))]) == 3
    assert len(list(out.glob("*.queries.html"))) == 3
    assert {Path(s).name for s in sources} == {"cert.pdf", "cert-2.pdf"} and len(sources) == 3
