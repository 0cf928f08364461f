"""The token parser on what the trade writes in a schedule cell."""

from __future__ import annotations

import pytest

from extractor.fields import FieldKind
from extractor.records import ValueKind
from extractor.tokens import normalise_text, parse_value

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
        ("1,234.5", N, "Ω", K.UNREADABLE, None),  # a comma and a point
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
