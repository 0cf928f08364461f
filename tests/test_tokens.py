"""The token parser on what the trade writes in a schedule cell."""

from __future__ import annotations

import pytest

from certvet.extractor.fields import FieldKind
from certvet.extractor.records import Cell, Circuit, ValueKind
from certvet.extractor.tokens import normalise_text, parse_value, resolve_row_marks, ticked_choice

N, T, C = FieldKind.NUMBER, FieldKind.TEXT, FieldKind.CONFIRM
K = ValueKind


@pytest.mark.parametrize(
    ("raw", "kind", "unit", "want", "number"),
    [
        ("0.42", N, "Ω", K.NUMBER, 0.42),
        ("0,42", N, "Ω", K.NUMBER, 0.42),  # decimal comma
        ("0.42Ω", N, "Ω", K.NUMBER, 0.42),
        ("0.42 \u2126", N, "Ω", K.NUMBER, 0.42),  # ohm sign U+2126
        ("0.42\u00a0Ω", N, "Ω", K.NUMBER, 0.42),  # NBSP before the unit
        ("０.４２", N, "Ω", K.NUMBER, 0.42),  # full-width digits
        (".35", N, "Ω", K.NUMBER, 0.35),
        (">999", N, "MΩ", K.LOWER_BOUND, 999.0),
        ("> 200 MΩ", N, "MΩ", K.LOWER_BOUND, 200.0),
        ("999+", N, "MΩ", K.LOWER_BOUND, 999.0),
        ("≥500", N, "MΩ", K.LOWER_BOUND, 500.0),
        ("<0.01", N, "Ω", K.UPPER_BOUND, 0.01),
        ("30 mA", N, "mA", K.NUMBER, 30.0),
        ("1200 A", N, "kA", K.NUMBER, 1.2),
        ("6kA", N, "kA", K.NUMBER, 6.0),
        ("0.4 s", N, "s", K.NUMBER, 0.4),
        ("2.5mm²", N, "mm²", K.NUMBER, 2.5),
        ("500V", N, "V", K.NUMBER, 500.0),
        ("24ms", N, "ms", K.NUMBER, 24.0),
        ("N/A", N, "Ω", K.NOT_APPLICABLE, None),
        ("n/a", C, None, K.NOT_APPLICABLE, None),
        ("N / A", N, "Ω", K.NOT_APPLICABLE, None),
        ("LIM", N, "Ω", K.LIMITATION, None),
        ("Lim", T, None, K.LIMITATION, None),
        ("-", N, "Ω", K.DASH, None),
        ("—", N, "Ω", K.DASH, None),
        ("–", C, None, K.DASH, None),
        ("", N, "Ω", K.EMPTY, None),
        ("  ", T, None, K.EMPTY, None),
        ("✓", C, None, K.CONFIRMED, None),
        ("✔", C, None, K.CONFIRMED, None),
        ("√", C, None, K.CONFIRMED, None),
        ("OK", C, None, K.CONFIRMED, None),
        ("Yes", C, None, K.CONFIRMED, None),
        ("✘", C, None, K.NOT_CONFIRMED, None),
        ("No", C, None, K.NOT_CONFIRMED, None),
        ("Sockets ring", T, None, K.TEXT, None),
        ("0.4.2", N, "Ω", K.UNREADABLE, None),
        ("1,23.4", N, "Ω", K.UNREADABLE, None),  # a comma that is neither decimal nor 1,000s
        ("30 mA", N, "Ω", K.UNREADABLE, None),  # a unit that does not fit
        ("3", C, None, K.UNREADABLE, None),  # an unmapped ZapfDingbats tick stays visible
        ("0.42Ω", N, None, K.UNREADABLE, None),  # a unit on a unitless field
    ],
)
def test_trade_tokens(
    raw: str, kind: FieldKind, unit: str | None, want: ValueKind, number: float | None
) -> None:
    v = parse_value(raw, kind, unit)
    assert v.kind is want, (raw, v)
    assert v.raw == raw
    if number is None:
        assert v.number is None
    else:
        assert v.number == pytest.approx(number)
        assert v.unit == unit
    if want is K.UNREADABLE:
        assert v.problem


def test_bounds_are_never_plain_numbers() -> None:
    v = parse_value(">999", N, "MΩ")
    assert v.is_bound and not v.is_number


def test_megohm_units() -> None:
    assert parse_value("200MΩ", N, "MΩ").number == 200.0
    assert parse_value("200 M\u2126", N, "MΩ").number == 200.0
    assert parse_value("0.5 GΩ", N, "MΩ").number == pytest.approx(500.0)


def test_normalise_text() -> None:
    assert normalise_text(" 0.42\u00a0\u2126 ") == "0.42 Ω"
    assert normalise_text("Ring\n  final") == "Ring final"
    assert normalise_text("１２") == "12"


# --- what real schedules write (issue 11, "cell tokens"): value, and the flag that says how -----
@pytest.mark.parametrize(
    ("raw", "unit", "want", "number", "flag"),
    [
        (">1,000", "MΩ", K.LOWER_BOUND, 1000.0, None),  # comma as thousands separator
        ("1,250A", "A", K.NUMBER, 1250.0, None),
        ("1,250A", "kA", K.NUMBER, 1.25, None),
        ("0,25", "Ω", K.NUMBER, 0.25, None),  # still a decimal comma (not three digits)
        ("0.03", "mA", K.NUMBER, 30.0, "amperes"),  # IΔn written in amperes
        ("0.025", "ms", K.NUMBER, 25.0, "seconds"),  # trip time written in seconds
        ("<0.04", "ms", K.UPPER_BOUND, 40.0, "seconds"),
        ("N/V", "Ω", K.LIMITATION, None, "not verified"),
        ("NT", "ms", K.NOT_CONFIRMED, None, "did not trip"),  # an RCD that did not trip
        ("No trip", "ms", K.NOT_CONFIRMED, None, "did not trip"),
        ("OL", "MΩ", K.LOWER_BOUND, None, "over-range"),
        ("O/L", "Ω", K.LOWER_BOUND, None, "over-range"),
        ("∞", "MΩ", K.LOWER_BOUND, None, "over-range"),
        ('"', "Ω", K.DITTO, None, "as above"),
        ("do", "Ω", K.DITTO, None, "as above"),
        ("1.37*", "Ω", K.NUMBER, 1.37, "footnote mark *"),
        ("0.42 (calc)", "Ω", K.NUMBER, 0.42, "(calc)"),
        ("B32", "A", K.NUMBER, 32.0, "type B"),
        ("M6", "kA", K.NUMBER, 6.0, "M6"),  # BS 3871 / BS EN 60898 marking, 6 kA
        ("S1A", "kA", K.NUMBER, 1.0, "S1A"),  # BS 3036 category of duty S1A: 1 kA, from memory
        ("2x2.5", "mm²", K.NUMBER, 2.5, "2 × 2.5"),
        ("2.5 T&E", "mm²", K.NUMBER, 2.5, "T&E"),
        ("2.5+1.5", "mm²", K.NUMBER, 2.5, "line and cpc"),
        ("NT", "Ω", K.UNREADABLE, None, None),  # "NT" outside an RCD time is not guessed
        ("B32", "Ω", K.UNREADABLE, None, None),
        ("M6", "A", K.UNREADABLE, None, None),
    ],
)
def test_real_schedule_tokens(raw: str, unit: str, want: ValueKind, number: float | None,
                              flag: str | None) -> None:
    v = parse_value(raw, N, unit)
    assert v.kind is want, (raw, v)
    assert v.number == (pytest.approx(number) if number is not None else None)
    if flag is None:
        assert v.flag is None
    else:
        assert v.flag is not None and flag in v.flag, v


def _board(rows: list[dict[str, str]]) -> list[Circuit]:
    from certvet.extractor.fields import FIELDS

    out = []
    for i, row in enumerate(rows):
        c = Circuit(board="DB1", ref=str(i + 1))
        for name, text in row.items():
            spec = FIELDS[name]
            c.cells[name] = Cell(name, parse_value(text, spec.kind, spec.unit))
        out.append(c)
    return out


def test_ditto_marks_take_the_row_above() -> None:
    rows = _board([{"device_type": "B", "rating": "32", "zs": "0.45"},
                   {"device_type": '"', "rating": "do", "zs": "0.51"},
                   {"device_type": "〃", "rating": '"', "zs": '"'}])
    assert resolve_row_marks(rows) == []
    assert [c.text("device_type") for c in rows] == ["B", "B", "B"]
    assert [c.number("rating") for c in rows] == [32.0, 32.0, 32.0]
    assert rows[2].number("zs") == 0.51  # chained: the row above's own reading
    assert rows[2].value("zs").raw == '"' and "as above" in (rows[2].value("zs").flag or "")


def test_ditto_with_nothing_above_is_unreadable() -> None:
    rows = _board([{"zs": '"'}, {"zs": ""}, {"zs": "do"}])
    problems = resolve_row_marks(rows)
    assert [(c.ref, f) for c, f, _ in problems] == [("1", "zs"), ("3", "zs")]
    assert rows[0].value("zs").kind is K.UNREADABLE and rows[2].value("zs").kind is K.UNREADABLE


def test_line_and_cpc_in_one_cell() -> None:
    rows = _board([{"live_csa": "2.5+1.5", "cpc_csa": ""}, {"live_csa": "2.5/1.5"},
                   {"live_csa": "6+2.5", "cpc_csa": "4"}])
    resolve_row_marks(rows)
    assert [(c.number("live_csa"), c.number("cpc_csa")) for c in rows] == [
        (2.5, 1.5), (2.5, 1.5), (6.0, 4.0)]  # a cpc written in its own cell is kept


@pytest.mark.parametrize(("text", "choice"), [
    ("TN-S ☐ TN-C-S ☑ TT ☐", "TN-C-S"),
    ("☐ TN-S ☑ TN-C-S ☐ TT", "TN-C-S"),
    ("TN-S TN-C-S ✔ TT", "TN-C-S"),
    ("TN-C-S", "TN-C-S"),
    ("Satisfactory ☐ Unsatisfactory ☒", "Unsatisfactory"),
    ("TN-S ✔ TN-C-S ✔ TT", None),  # two marked: could not be told
    ("TN-S TN-C-S TT", None),  # none marked
])
def test_ticked_choice(text: str, choice: str | None) -> None:
    got, reason = ticked_choice(text, ["TN-S", "TN-C-S", "TT", "TN-C", "Satisfactory",
                                       "Unsatisfactory"])
    assert got == choice
    assert (reason == "") == (choice is not None)
