"""The layout loader: every error is one line naming the file, the key and the problem."""

from __future__ import annotations

import tomllib
from pathlib import Path

import pytest

from certvet.extractor.layout import LayoutError, load_layout, parse_layout

GOOD = r"""
[form]
name = "mini"
[recognise]
require = ["SCHEDULE"]
[schedule]
pages = "2-"
ignore = ['^Page \d+']
[board]
start = 'Board:\s*(?P<value>\S+)'
[board.fields]
ze = 'Ze:\s*(?P<value>\S+)'
[certificate.fields]
cert_number = 'No\.\s*(?P<value>\S+)'
[[columns]]
field = "circuit_ref"
header = '^Circuit'
[[columns]]
field = "zs"
x = [700.0, 730.0]
[[columns]]
fields = ["live_csa", "cpc_csa"]
split = "/"
header = 'CSA'
"""


def _write(tmp_path: Path, text: str) -> Path:
    p = tmp_path / "form.toml"
    p.write_text(text, encoding="utf-8")
    return p


def test_good_layout_loads(tmp_path: Path) -> None:
    lay = load_layout(_write(tmp_path, GOOD))
    assert lay.name == "mini" and lay.engine == "pdfium"  # the default engine
    assert lay.column_fields() == ["circuit_ref", "zs", "live_csa", "cpc_csa"]
    assert lay.schedule.page_selected(2, 5) and not lay.schedule.page_selected(1, 5)
    assert lay.columns[1].x == (700.0, 730.0)


@pytest.mark.parametrize(
    ("old", "new", "key", "problem"),
    [
        ('name = "mini"', 'name = "mini"\ncolour = "red"', "form.colour", "unknown key"),
        ('field = "zs"', 'field = "zed"', "columns[1].field", "unknown field 'zed'"),
        (
            "header = '^Circuit'",
            "header = '^Circ(uit'",
            "columns[0].header",
            "bad regular expression",
        ),
        ("x = [700.0, 730.0]", "x = [740.0, 730.0]", "columns[1].x", "is not less than right edge"),
        (
            'field = "zs"\nx = [700.0, 730.0]',
            'field = "zs"\nx = [700.0, 730.0]\n[[columns]]\nfield = "rating"\nx = [720.0, 750.0]',
            "columns",
            "overlap",
        ),
        ('[recognise]\nrequire = ["SCHEDULE"]', "", "recognise", "missing section"),
        (
            'require = ["SCHEDULE"]',
            "require = 3",
            "recognise.require",
            "expected a list of patterns",
        ),
        ('pages = "2-"', "pages = true", "schedule.pages", "expected a string"),
        ("start = 'Board:\\s*(?P<value>\\S+)'", "start = 'Board:'", "board.start", "named group"),
        (  # the pattern is quoted as written in the file, not as a Python repr (no doubled \\)
            "start = 'Board:\\s*(?P<value>\\S+)'",
            "start = 'Board:\\s*(\\S+)'",
            "board.start",
            "pattern 'Board:\\s*(\\S+)' needs a named group",
        ),
        ('split = "/"', "split = 1", "columns[2].split", "expected a string"),
        (
            "ze = 'Ze:\\s*(?P<value>\\S+)'",
            "zee = 'Ze:\\s*(?P<value>\\S+)'",
            "board.fields.zee",
            "unknown key",
        ),
    ],
)
def test_layout_errors_name_file_and_key(
    tmp_path: Path, old: str, new: str, key: str, problem: str
) -> None:
    assert old in GOOD
    path = _write(tmp_path, GOOD.replace(old, new, 1))
    with pytest.raises(LayoutError) as err:
        load_layout(path)
    msg = str(err.value)
    assert "\n" not in msg
    assert msg.startswith(f"{path}: {key}: "), msg
    assert problem in msg, msg


def test_unreadable_layout_files(tmp_path: Path) -> None:
    with pytest.raises(LayoutError, match="layout file not found"):
        load_layout(tmp_path / "nope.toml")
    bad = _write(tmp_path, "[form\nname=")
    with pytest.raises(LayoutError, match=r"form\.toml: not valid TOML"):
        load_layout(bad)
    with pytest.raises(LayoutError, match="is a folder, not a layout file"):
        load_layout(tmp_path)


def test_parse_layout_from_dict() -> None:
    lay = parse_layout(tomllib.loads(GOOD), "inline.toml")
    assert lay.path == "inline.toml"
    assert lay.board.start.search("Board: DB1").group("value") == "DB1"
