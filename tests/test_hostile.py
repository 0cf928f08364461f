"""Hostile inputs (fixtures/hostile/): each gives a correct audit or a one-line error naming the
file and the reason — never a traceback, never another exception, never an empty "all clear".

Expected outcomes live in fixtures/hostile/expected.json; regenerate the files with
`.venv/bin/python fixtures/hostile/generate.py`.
"""

from __future__ import annotations

import json
from pathlib import Path

import pytest

from certvet.api import AuditResult, audit_file
from extractor.errors import InputError
from extractor.layout import LayoutError, load_layout
from reports.verdict import VerdictKey

HOSTILE = Path(__file__).resolve().parents[1] / "fixtures" / "hostile"
EXPECTED = json.loads((HOSTILE / "expected.json").read_text(encoding="utf-8"))
ENGINES = ("pdfplumber", "pdfium")


def _audit(path: Path, engine: str, password: str | None) -> AuditResult:
    """Through the library API (extract, check, verdict), as `certvet audit` does."""
    layout = load_layout(HOSTILE / "layouts" / "hostile-grid.toml")
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
        result = _audit(path, engine, spec.get("password"))
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
