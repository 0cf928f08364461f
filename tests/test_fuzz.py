"""Fuzzing the two parsers that read text people write: cell text and layout files.

CERTVET_FUZZ_EXAMPLES sets the number of examples per test (default 1000; CI stays quick).
"""

from __future__ import annotations

import math
import os
import string

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from certvet.extractor.fields import BOARD, CERTIFICATE, FIELDS, FieldKind
from certvet.extractor.layout import Layout, LayoutError, parse_layout
from certvet.extractor.records import Value, ValueKind
from certvet.extractor.tokens import normalise_text, parse_value, ticked_choice

EXAMPLES = int(os.environ.get("CERTVET_FUZZ_EXAMPLES", "1000"))
FUZZ = settings(max_examples=EXAMPLES, deadline=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.filter_too_much])

UNITS: list[str | None] = [None, *sorted({f.unit for f in (*FIELDS.values(), *BOARD.values(),
                                                             *CERTIFICATE.values()) if f.unit})]
CELL_ALPHABET = (string.printable + "ΩΩμ²≥≤−–—✓✔✗✘×√ ０１２３４５６７８９．，ﬁﬃ"
                 "\u00a0\u2009\u200b\ufffd")
# text shaped like readings, so the number branch is reached often
READINGS = st.builds(
    lambda cmp, num, plus, unit: f"{cmp}{num}{plus}{unit}",
    st.sampled_from(["", ">", "<", ">=", "≤", "≥ "]),
    st.from_regex(r"\A\d{1,4}([.,]\d{1,3})?\Z") | st.sampled_from([".5", ",5", "1.2,3", "0"]),
    st.sampled_from(["", "+", " +"]),
    st.sampled_from(["", "Ω", "Ω", "ohm", "MΩ", "mΩ", "kΩ", "GΩ", "mA", "A", "kA", "ms", "s",
                     "V", "mm²", "mm2", "M", "x", "Ωs", "."]),
)
CELL_TEXT = st.text(CELL_ALPHABET, max_size=40) | READINGS | st.none()
NUMERIC_KINDS = {ValueKind.NUMBER, ValueKind.LOWER_BOUND, ValueKind.UPPER_BOUND}


@FUZZ
@given(raw=CELL_TEXT, kind=st.sampled_from(list(FieldKind)), unit=st.sampled_from(UNITS))
def test_parse_value_never_raises_and_is_consistent(raw: str | None, kind: FieldKind,
                                                    unit: str | None) -> None:
    v = parse_value(raw, kind, unit)
    assert isinstance(v, Value)
    assert isinstance(v.kind, ValueKind)
    assert v.raw == (raw or "")
    if v.kind in NUMERIC_KINDS:
        assert kind is FieldKind.NUMBER
        assert v.unit == unit
        if v.number is None:  # "OL", "∞": over-range with no figure, and it says so
            assert v.kind is ValueKind.LOWER_BOUND and v.flag
        else:
            assert isinstance(v.number, float) and v.number == v.number  # a real number
    else:
        assert v.number is None
    if v.kind is ValueKind.TEXT:
        assert kind is FieldKind.TEXT and v.text is not None
    if v.kind is ValueKind.CONFIRMED:
        assert kind is FieldKind.CONFIRM
    if v.kind is ValueKind.NOT_CONFIRMED:  # a cross, or "NT"/"No trip" in an RCD time column
        assert kind is FieldKind.CONFIRM or (unit == "ms" and v.flag == "did not trip")
    if v.kind is ValueKind.UNREADABLE:
        assert v.problem
    if v.kind is ValueKind.EMPTY:
        assert normalise_text(raw or "") == ""


@FUZZ
@given(raw=READINGS, unit=st.sampled_from(UNITS))
def test_parse_value_reads_plain_numbers(raw: str, unit: str | None) -> None:
    v = parse_value(raw, FieldKind.NUMBER, unit)
    if v.kind is ValueKind.NUMBER and ">" not in raw and "<" not in raw and "≥" not in raw:
        assert "+" not in raw  # "999+" is a lower bound, never a plain reading


# --- layouts ------------------------------------------------------------------------------

KEYS = ["form", "recognise", "schedule", "board", "certificate", "columns", "name", "engine",
        "description", "require", "pages", "start", "fields", "field", "header", "x", "split",
        "region", "row_key", "row_key_pattern", "ignore", "end", "line_tolerance",
        "page_pattern", "pattern", "all", "zs", "ze", "cert_number", "circuit_ref", "bogus"]
SCALARS = (
    st.sampled_from(["", "*", "2-", "3-1", "0-", "pdfplumber", "pdfium", "zs", "circuit_ref", "ze",
                     "(?P<value>x)", "(", "[a-", "a{99999}", "^Zs$", "rating", "DB(?P<value>\\d)",
                     "x", "/", "hostile", "Bad Name"])
    | st.text(max_size=8) | st.integers(-5, 1000) | st.floats(allow_nan=True) | st.booleans()
    | st.sampled_from([math.inf, -math.inf, math.nan, 10**30])
)
TOML_LIKE = st.recursive(
    SCALARS,
    lambda inner: st.lists(inner, max_size=4)
    | st.dictionaries(st.sampled_from(KEYS), inner, max_size=6),
    max_leaves=25,
)


def _valid_layout() -> dict[str, object]:
    return {
        "form": {"name": "fuzz", "engine": "pdfplumber"},
        "recognise": {"require": ["FUZZ"]},
        "board": {"start": "Board (?P<value>\\S+)", "fields": {"ze": "Ze (?P<value>\\S+)"}},
        "columns": [{"field": "circuit_ref", "header": "Cct"}, {"field": "zs", "x": [10, 20]}],
    }


@st.composite
def mutated_layouts(draw: st.DrawFn) -> dict[str, object]:
    """A valid layout with a few keys replaced, removed or added at any depth."""
    data = _valid_layout()
    for _ in range(draw(st.integers(1, 4))):
        table: object = data
        while isinstance(table, (dict, list)) and table and draw(st.booleans()):
            if isinstance(table, dict):
                table = table[draw(st.sampled_from(sorted(table)))]
            else:
                table = table[draw(st.integers(0, len(table) - 1))]
        if isinstance(table, dict):
            action = draw(st.sampled_from(["set", "del"]))
            if action == "del" and table:
                del table[draw(st.sampled_from(sorted(table)))]
            else:
                table[draw(st.sampled_from(KEYS))] = draw(TOML_LIKE)
        elif isinstance(table, list):
            table.append(draw(TOML_LIKE))
    return data


@FUZZ
@given(data=st.dictionaries(st.sampled_from(KEYS), TOML_LIKE, max_size=6) | mutated_layouts())
def test_parse_layout_raises_only_layout_error(data: dict[str, object]) -> None:
    try:
        layout = parse_layout(data, "fuzz.toml")
    except LayoutError as exc:
        message = str(exc)
        assert message.startswith("fuzz.toml: ")
        assert "\n" not in message
        return
    assert isinstance(layout, Layout)


@pytest.mark.parametrize(
    ("section", "key", "value"),
    [
        ("recognise", "pages", math.inf),  # found by fuzzing: OverflowError before the fix
        ("recognise", "pages", math.nan),  # ValueError before the fix
        ("schedule", "line_tolerance", math.nan),  # accepted silently before the fix
        ("schedule", "region", [0, 0, math.inf, 5]),  # accepted silently before the fix
    ],
)
def test_layout_rejects_non_finite_numbers(section: str, key: str, value: object) -> None:
    data = _valid_layout()
    data.setdefault(section, {})[key] = value  # type: ignore[union-attr]
    with pytest.raises(LayoutError, match="finite number"):
        parse_layout(data, "fuzz.toml")


def test_valid_layout_parses() -> None:  # the mutation base is itself valid
    assert parse_layout(_valid_layout(), "fuzz.toml").name == "fuzz"


@FUZZ
@given(text=st.text(CELL_ALPHABET + "☐□☑☒TNCS-", max_size=40))
def test_ticked_choice_never_raises_and_never_guesses(text: str) -> None:
    choices = ("TN-C-S", "TN-S", "TT")
    choice, reason = ticked_choice(text, choices)
    assert (choice is None) != (reason == "")
    if choice is not None:
        assert choice in choices and choice.lower() in text.lower()
