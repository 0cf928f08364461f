"""The README's table of checks and the `explain` text come from the registry and must not drift."""

from __future__ import annotations

import importlib.util
import sys
from pathlib import Path

import pytest

from certvet.checks.base import DOC_SECTIONS
from certvet.checks.describe import catalogue_rows, explain_check, markdown_table
from certvet.checks.registry import all_checks

ROOT = Path(__file__).resolve().parent.parent


def _gen_docs():
    spec = importlib.util.spec_from_file_location("gen_docs", ROOT / "scripts" / "gen_docs.py")
    assert spec and spec.loader
    module = importlib.util.module_from_spec(spec)
    sys.modules.setdefault("gen_docs", module)
    spec.loader.exec_module(module)
    return module


def test_readme_table_matches_registry() -> None:
    gen = _gen_docs()
    text = (ROOT / "README.md").read_text(encoding="utf-8")
    assert gen.START in text and gen.END in text, "README.md lacks the checks-table markers"
    assert gen.render(text, markdown_table()) == text, (
        "README table of checks is out of date: run python scripts/gen_docs.py"
    )


def test_table_lists_every_check_once() -> None:
    table = markdown_table()
    for cls in all_checks():
        assert table.count(f"| `{cls.id}` |") == 1, cls.id


def test_check_mode_reports_drift_and_writes_nothing(tmp_path: Path) -> None:
    gen = _gen_docs()
    readme = tmp_path / "README.md"
    stale = f"# x\n\n## Checks\n\n{gen.START}\n| old |\n{gen.END}\n\nafter\n"
    readme.write_text(stale, encoding="utf-8")
    assert gen.main(["--check", "--readme", str(readme)]) == 1
    assert readme.read_text(encoding="utf-8") == stale
    assert gen.main(["--readme", str(readme)]) == 0
    fresh = readme.read_text(encoding="utf-8")
    assert "| old |" not in fresh and fresh.endswith("\n\nafter\n")
    assert gen.main(["--check", "--readme", str(readme)]) == 0


def test_markers_appended_when_absent(tmp_path: Path) -> None:
    gen = _gen_docs()
    readme = tmp_path / "README.md"
    readme.write_text("# certvet\n\nIntro.\n", encoding="utf-8")
    assert gen.main(["--readme", str(readme)]) == 0
    text = readme.read_text(encoding="utf-8")
    assert text.startswith("# certvet\n\nIntro.\n\n## Checks\n")
    assert text.index(gen.START) < text.index("| `") < text.index(gen.END)


def test_broken_markers_are_an_error(tmp_path: Path) -> None:
    gen = _gen_docs()
    readme = tmp_path / "README.md"
    readme.write_text(f"# x\n{gen.END}\n{gen.START}\n", encoding="utf-8")
    assert gen.main(["--check", "--readme", str(readme)]) == 2


def test_catalogue_rows_follow_registry() -> None:
    rows = catalogue_rows()
    assert [r.id for r in rows] == [c.id for c in all_checks()]
    assert all(r.severity in ("note", "query", "breach", "impossible") for r in rows)


@pytest.mark.parametrize("cls", all_checks(), ids=[c.id for c in all_checks()])
def test_explain_has_every_section_and_option(cls: type) -> None:
    text = explain_check(cls.id)
    assert text.startswith(f"{cls.id}: {cls.title}\n")
    assert cls.reference in text
    for section in DOC_SECTIONS:
        assert f"\n{section}" in text, section
    for name in cls.Options.__dataclass_fields__:
        assert f"  {name} = " in text, name


def test_explain_unknown_id() -> None:
    with pytest.raises(KeyError, match="no check with id"):
        explain_check("no-such-check")
