"""Hostile inputs (fixtures/hostile/): each gives a correct audit or a one-line error naming the
file and the reason — never a traceback, never another exception, never an empty "all clear".

Expected outcomes live in fixtures/hostile/expected.json; regenerate the files with
`.venv/bin/python fixtures/hostile/generate.py`.
"""

from __future__ import annotations

import csv
import json
import re
from pathlib import Path

import pytest

from certvet.api import AuditResult, audit_file
from certvet.extractor.errors import InputError
from certvet.extractor.layout import LayoutError, load_layout
from certvet.reports.verdict import VerdictKey

HOSTILE = Path(__file__).resolve().parents[1] / "fixtures" / "hostile"
EXPECTED = json.loads((HOSTILE / "expected.json").read_text(encoding="utf-8"))
ENGINES = ("pdfplumber", "pdfium")


def _audit(path: Path, engine: str, password: str | None,
           layout_file: str = "layouts/hostile-grid.toml") -> AuditResult:
    """Through the library API (extract, check, verdict), as `certvet audit` does."""
    layout = load_layout(HOSTILE / layout_file)
    return audit_file(path, layout=layout, engine=engine, password=password, formats=())


def _cases() -> list[object]:
    out = []
    for key, spec in EXPECTED["files"].items():
        if key.startswith("_"):
            continue
        for engine in spec.get("only_engines", ENGINES):  # the 300-page file: one engine
            marks = [pytest.mark.slow] if spec.get("slow") else []
            out.append(pytest.param(key, engine, id=f"{key}-{engine}", marks=marks))
    return out


@pytest.mark.parametrize(("key", "engine"), _cases())
def test_hostile_file(key: str, engine: str) -> None:
    spec = dict(EXPECTED["files"][key])
    spec.update(spec.get("engines", {}).get(engine, {}))
    path = HOSTILE / spec.get("file", key)
    assert path.is_file(), f"{path} missing: run fixtures/hostile/generate.py"
    if spec["outcome"] == "input_error":
        with pytest.raises(InputError) as info:
            _audit(path, engine, spec.get("password"))
        message = str(info.value)
        assert "\n" not in message
        assert message.startswith(f"{path}: ")
        assert spec["reason"] in message, message
        return
    try:
        result = _audit(path, engine, spec.get("password"),
                        spec.get("layout", "layouts/hostile-grid.toml"))
    except InputError as exc:  # a clean refusal, but not what this file should give
        pytest.fail(f"expected an audit, got InputError: {exc}")
    cert = result.certificate
    messages = [p.message for p in cert.problems]
    if "complete" in spec:
        assert result.verdict.complete is spec["complete"], (result.verdict, messages)
        if not spec["complete"]:  # never "no concerns found" on a partial read
            assert result.verdict.key is not VerdictKey.NO_CONCERNS
            assert result.verdict.headline != "no concerns found"
    if "problems" in spec:
        if not spec["problems"]:
            assert messages == []
        for expected in spec["problems"]:
            assert any(expected in m for m in messages), (expected, messages)
    circuits = {c.ref: c for _, c in cert.circuits()}
    assert len(cert.circuits()) == spec["circuits"]
    for ref, fields in spec.get("cells", {}).items():
        for name, (kind, number) in fields.items():
            value = circuits[ref].value(name)
            assert value.kind.value == kind, (ref, name, value)
            if number is not None:
                assert value.number == pytest.approx(number), (ref, name, value)
    for ref, fields in spec.get("texts", {}).items():
        for name, text in fields.items():
            assert circuits[ref].text(name) == text


def test_every_hostile_pdf_has_an_expected_outcome() -> None:
    listed = {
        spec.get("file", key) for key, spec in EXPECTED["files"].items() if not key.startswith("_")
    }
    assert {p.name for p in HOSTILE.glob("*.pdf")} == listed
    assert {p.name for p in (HOSTILE / "layouts").glob("*.toml")} == set(EXPECTED["layouts"])


@pytest.mark.parametrize("name", sorted(EXPECTED["layouts"]))
def test_hostile_layout(name: str) -> None:
    spec = EXPECTED["layouts"][name]
    path = HOSTILE / "layouts" / name
    if spec["outcome"] == "ok":
        assert load_layout(path).name == "hostile-grid"
        return
    with pytest.raises(LayoutError) as info:
        load_layout(path)
    message = str(info.value)
    assert "\n" not in message
    assert message.startswith(f"{path}: ")
    assert spec["reason"] in message, message


# --- spreadsheet formulas in every CSV writer -----------------------------------------------

_FORMULA = re.compile(r"^[=+@\t\r]")
_PLAIN_DASH = re.compile(r"^-+\s*$|^-\s*\d+([.,]\d+)?\s*\S*$")  # "-", "-0.01", "-5 mA"


def _unsafe_cells(path: Path) -> list[str]:
    with path.open(newline="", encoding="utf-8") as fh:
        cells = [c for row in csv.reader(fh) for c in row]
    return [c for c in cells if _FORMULA.match(c) or (c[:1] == "-" and not _PLAIN_DASH.match(c))]


def test_no_csv_writer_writes_a_formula(tmp_path: Path) -> None:
    """Formula text from PDFs reaches every CSV certvet writes (the per-certificate records and
    findings, the batch's cross-findings, `certvet export --format csv`), always defused."""
    from typer.testing import CliRunner

    from certvet.cli import app

    names = ("formula-text-in-cells.pdf", "formula-text-in-cells-same-number.pdf")
    pdfs = [HOSTILE / n for n in names]
    layout = HOSTILE / "layouts" / "hostile-grid.toml"
    runner = CliRunner()
    res = runner.invoke(app, ["audit", str(pdfs[0]), "--layout", str(layout),
                              "--out", str(tmp_path / "audit")])
    assert res.exception is None or isinstance(res.exception, SystemExit), res.output
    res = runner.invoke(app, ["batch", *map(str, pdfs), "--layout", str(layout),
                              "--store", str(tmp_path / "s.sqlite"), "--out", str(tmp_path / "b")])
    assert res.exception is None or isinstance(res.exception, SystemExit), res.output
    res = runner.invoke(app, ["export", "--store", str(tmp_path / "s.sqlite"),
                              "--out", str(tmp_path / "e"), "--format", "csv"])
    assert res.exit_code == 0, res.output
    written = sorted(tmp_path.rglob("*.csv"))
    names = {p.name for p in written}
    assert "cross-findings.csv" in names and "certificates.csv" in names, names
    assert any(n.endswith(".records.csv") for n in names), names
    assert any(n.endswith(".findings.csv") for n in names), names
    for path in written:
        assert _unsafe_cells(path) == [], path
    # the formula text got there, defused (so the test above looked at the hostile text)
    cross = (tmp_path / "b" / "cross-findings.csv").read_text(encoding="utf-8")
    assert "'=HYPERLINK" in cross
    exported = (tmp_path / "e" / "certificates.csv").read_text(encoding="utf-8")
    assert "'=HYPERLINK" in exported
    records = next(p for p in written if p.name.endswith(".records.csv")).read_text("utf-8")
    assert "'=1+2" in records and "'+SUM(A1:A9)" in records and "'@cmd" in records
    assert "'-2+3" in records


# --- console output: PDF text and file names printed as text --------------------------------


def _invoke(args: list[str]) -> tuple[int, str]:
    from typer.testing import CliRunner

    from certvet.cli import app

    res = CliRunner().invoke(app, [str(a) for a in args])
    assert res.exception is None or isinstance(res.exception, SystemExit), repr(res.exception)
    assert "Traceback" not in res.output
    return res.exit_code, res.output


def test_markup_in_cells_prints_as_written(tmp_path: Path) -> None:
    pdf = HOSTILE / "markup-text-in-cells.pdf"
    code, out = _invoke(["try-layout", pdf, "--layout", HOSTILE / "layouts" / "hostile-grid.toml"])
    assert code == 0, out
    for text in ("[kitchen]", "[/red]", "[bold]Cooker", ":smile:"):
        assert text in out, (text, out)
    code, out = _invoke(["draft-layout", pdf, "-o", tmp_path / "draft.toml"])
    assert code in (0, 3), out  # a draft, or a one-line refusal: never a markup crash


def test_a_file_name_cannot_forge_a_console_line(tmp_path: Path) -> None:
    forged = tmp_path / "a\nNO CONCERNS FOUND   forged.pdf"
    forged.write_bytes((HOSTILE / "valid-base.pdf").read_bytes())
    layout = HOSTILE / "layouts" / "hostile-grid.toml"
    _, out = _invoke(["audit", forged, "--layout", layout, "--out", tmp_path / "a"])
    _, out_batch = _invoke(["batch", forged, "--layout", layout, "--store", tmp_path / "s.sqlite",
                            "--out", tmp_path / "b"])
    (tmp_path / "bad\nFAKE.pdf").write_bytes(b"not a pdf")
    _, out_err = _invoke(["audit", tmp_path / "bad\nFAKE.pdf", "--layout", layout,
                          "--out", tmp_path / "c"])
    for text in (out, out_batch, out_err):
        assert not any(ln.startswith(("NO CONCERNS FOUND", "FAKE")) for ln in text.splitlines())
    assert "a\\nNO CONCERNS FOUND   forged.pdf" in out
    assert "bad\\nFAKE.pdf" in out_err


# --- exit codes ------------------------------------------------------------------------------


def test_exit_codes_are_one_table_shown_in_the_readme() -> None:
    from certvet.exitcodes import ExitCode, markdown_table

    readme = (HOSTILE.parents[1] / "README.md").read_text(encoding="utf-8")
    assert markdown_table() in readme
    assert len({int(c) for c in ExitCode}) == len(ExitCode)


def test_an_internal_error_has_its_own_exit_code(
    monkeypatch: pytest.MonkeyPatch, capsys: pytest.CaptureFixture[str], tmp_path: Path
) -> None:
    import sys

    import certvet.api
    from certvet.cli import main
    from certvet.exitcodes import ExitCode

    def broken(*args: object, **kwargs: object) -> None:
        raise RuntimeError("a bug\nwith two lines")

    monkeypatch.setattr(certvet.api, "audit_many", broken)
    monkeypatch.delenv("CERTVET_DEBUG", raising=False)
    layout = HOSTILE / "layouts" / "hostile-grid.toml"
    monkeypatch.setattr(sys, "argv", ["certvet", "audit", str(HOSTILE / "valid-base.pdf"),
                                      "--layout", str(layout), "--out", str(tmp_path)])
    with pytest.raises(SystemExit) as info:
        main()
    assert info.value.code == ExitCode.INTERNAL != ExitCode.FINDINGS
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "Traceback" not in err
    assert err.startswith("certvet: internal error (RuntimeError: a bug\\nwith two lines)")


# --- per-file limits in audit ---------------------------------------------------------------


def test_audit_has_the_batch_limits_on_resident_memory(tmp_path: Path) -> None:
    """`audit` runs each file under a time and memory limit, and the memory limit is on
    resident memory: 250 MB is plenty for a 3-page certificate (an address-space limit of
    250 MB fails it), while 1 MB stops the file with a one-line reason."""
    demo = HOSTILE.parents[0] / "demo"
    pdf, layouts = demo / "grid-clean-01.pdf", HOSTILE.parents[0] / "layouts"
    code, out = _invoke(["audit", pdf, "-l", layouts, "-o", tmp_path / "a", "--memory-mb", "250"])
    assert code in (0, 1) and "FAILED" not in out, out
    code, out = _invoke(["audit", pdf, "-l", layouts, "-o", tmp_path / "b", "--memory-mb", "1"])
    assert code == 3, out
    assert "used more than the memory limit" in out


# --- patterns that cannot hang, limited TOML, profiles validated before any file is read ----


@pytest.mark.parametrize("name", sorted(EXPECTED["profiles"]))
def test_hostile_profile(name: str) -> None:
    from certvet.checks.profile import ProfileError, load_profile

    path = HOSTILE / "profiles" / name
    with pytest.raises(ProfileError) as info:
        load_profile(path)
    message = str(info.value)
    assert "\n" not in message and message.startswith(f"{path}: ")
    assert EXPECTED["profiles"][name] in message, message


def test_every_hostile_profile_has_an_expected_outcome() -> None:
    assert {p.name for p in (HOSTILE / "profiles").glob("*.toml")} == set(EXPECTED["profiles"])


def test_a_bad_profile_stops_the_cli_before_any_file_is_read(tmp_path: Path) -> None:
    layout, profile = HOSTILE / "layouts" / "hostile-grid.toml", HOSTILE / "profiles"
    code, out = _invoke(["audit", HOSTILE / "not-a-pdf.pdf", "-l", layout,
                         "--profile", profile / "zero-voltage.toml", "-o", tmp_path])
    assert code == 2, out
    assert "u0_v: must be above 0" in out and "not a PDF" not in out


def _audit_bait(path: Path) -> int:
    layout = load_layout(HOSTILE / "layouts" / "catastrophic-pattern.toml")
    return len(audit_file(path, layout=layout, formats=()).certificate.circuits())


def test_a_catastrophic_pattern_does_not_hang() -> None:
    """`^(a+)+$` against a line of 40 a's and a "!" backtracks for ever in Python's engine;
    the layout runs it on RE2. Run in a child with a generous limit, so a regression fails
    rather than hangs the suite."""
    from certvet.workers import Limits, run_isolated

    [outcome] = run_isolated([HOSTILE / "backtracking-bait.pdf"], _audit_bait,
                             limits=Limits(seconds=60, memory_mb=0))
    assert outcome.error is None and outcome.result == 4


def test_an_oversized_layout_is_refused_in_one_line(tmp_path: Path) -> None:
    big = tmp_path / "big.toml"
    good = (HOSTILE / "layouts" / "hostile-grid.toml").read_text(encoding="utf-8")
    big.write_text(good + "\n# " + "x" * 1_100_000 + "\n", encoding="utf-8")
    with pytest.raises(LayoutError) as info:
        load_layout(big)
    assert str(info.value).startswith(f"{big}: file too large")


# --- large inputs ----------------------------------------------------------------------------


@pytest.mark.slow
def test_a_huge_schedule_gives_a_bounded_usable_report(tmp_path: Path) -> None:
    """6,600 rows in one board (its heading pattern never matched): flagged as a problem, and
    the HTML report lists at most SHOWN_ROWS rows (circuits with findings first), says how
    many it left out, and stays a few MB (it was hundreds)."""
    from certvet.reports.model import SHOWN_ROWS

    layout = load_layout(HOSTILE / "layouts" / "hostile-grid.toml")
    result = audit_file(HOSTILE / "three-hundred-pages-board-heading-missed.pdf", layout=layout,
                        out_dir=tmp_path, formats=("html",), engine="pdfium")
    assert result.verdict.key is not VerdictKey.NO_CONCERNS and not result.verdict.complete
    html = result.outputs["html"].read_text(encoding="utf-8")
    rows = html.count("<tr data-circuit=")
    assert 0 < rows <= SHOWN_ROWS
    assert "of this board not shown" in html
    assert "has 6600 rows, more than a board plausibly holds" in html
    print(f"HTML report for 6,600 circuits: {len(html.encode()) / 1e6:.1f} MB, {rows} rows shown")
