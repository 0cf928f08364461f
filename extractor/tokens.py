"""Parse the text of one cell into a typed Value.

The trade writes far more than numbers in a schedule: N/A, LIM, ticks, dashes, over-range
readings (">999", "999+"), units after the number ("0.42Ω", "30 mA"), decimal commas.
Every one of them is parsed here, once; a text that fits nothing becomes UNREADABLE with the
reason, and is reported as a finding by the checks (never silently dropped).
"""

from __future__ import annotations

import re
import unicodedata

from extractor.fields import FieldKind
from extractor.records import Value, ValueKind

# Glyphs a form may use for "confirmed" / "not confirmed". ZapfDingbats ticks are mapped to
# these by the engines before parsing (see extractor.engines).
TICKS = frozenset("✓✔√☑✅🗸")
CROSSES = frozenset("✗✘×☒❌")
_YES = {"ok", "yes", "y", "pass", "passed", "sat", "satisfactory", "correct", "c"}
_NO = {"no", "n", "fail", "failed", "x", "incorrect", "unsat"}
_NA = {"n/a", "na", "n.a.", "n/a.", "not applicable", "n / a"}
_LIM = {"lim", "lim.", "limitation", "lim*"}
_DASHES = {"-", "--", "---", "–", "—", "−", "‐", "‒"}

# Units we accept after a number, normalised (lower-case, Ω as "ohm") → (canonical unit, factor)
_UNIT_FACTORS: dict[str, dict[str, float]] = {
    "Ω": {"ohm": 1.0, "ohms": 1.0, "mohm_milli": 0.001},
    "MΩ": {"mohm": 1.0, "megohm": 1.0, "megohms": 1.0, "m": 1.0, "gohm": 1000.0, "kohm": 0.001},
    "ms": {"ms": 1.0, "s": 1000.0},
    "mA": {"ma": 1.0, "a": 1000.0},
    "A": {"a": 1.0, "amp": 1.0, "amps": 1.0, "ka": 1000.0},
    "kA": {"ka": 1.0, "a": 0.001},
    "V": {"v": 1.0, "vdc": 1.0, "kv": 1000.0},
    "mm²": {"mm2": 1.0, "mm": 1.0, "sqmm": 1.0},
    "s": {"s": 1.0, "sec": 1.0, "ms": 0.001},
}

_NUMBER_RE = re.compile(
    r"""^(?P<cmp>>=|<=|>|<|≥|≤)?\s*
        (?P<num>\d+(?:[.,]\d+)?|[.,]\d+)
        \s*(?P<plus>\+)?
        \s*(?P<unit>[a-zA-Zμ²Ω/]*(?<=[a-zA-Z])2?|[a-zA-Zμ²Ω/]*)\.?$""",  # NFKC: "mm²" → "mm2"
    re.VERBOSE,
)


def normalise_text(raw: str) -> str:
    """NFKC (full-width digits, ligatures, ohm sign U+2126 → Ω U+03A9), spaces folded."""
    s = unicodedata.normalize("NFKC", raw)
    s = s.replace("\u00a0", " ").replace("\u2009", " ").replace("\u202f", " ")
    s = s.replace("\u200b", "")
    return " ".join(s.split())


def _unit_key(unit: str) -> str:
    u = unit.strip().replace("μ", "u").replace("²", "2")
    if u in ("MΩ", "Mohm", "MOhm", "Mohms"):
        return "mohm"
    if u in ("mΩ",):
        return "mohm_milli"
    if u in ("GΩ",):
        return "gohm"
    if u in ("kΩ",):
        return "kohm"
    u = u.replace("Ω", "ohm").lower()
    return u


def parse_value(raw: str | None, kind: FieldKind, unit: str | None = None) -> Value:
    """Parse one cell's text for a field of the given kind and canonical unit."""
    original = raw or ""
    s = normalise_text(original)
    low = s.lower()
    if not s:
        return Value(ValueKind.EMPTY, original)
    if s in _DASHES:
        return Value(ValueKind.DASH, original)
    if low in _NA or low.replace(" ", "") == "n/a":
        return Value(ValueKind.NOT_APPLICABLE, original)
    if low in _LIM:
        return Value(ValueKind.LIMITATION, original)

    if kind is FieldKind.TEXT:
        return Value(ValueKind.TEXT, original, text=s)

    if kind is FieldKind.CONFIRM:
        if s in TICKS or low in _YES:
            return Value(ValueKind.CONFIRMED, original)
        if s in CROSSES or low in _NO:
            return Value(ValueKind.NOT_CONFIRMED, original)
        return Value(
            ValueKind.UNREADABLE, original, problem="expected a tick, cross, Yes/No or N/A"
        )

    # NUMBER
    m = _NUMBER_RE.match(s.replace(" ", "") if len(s) < 24 else s)
    if not m:
        return Value(ValueKind.UNREADABLE, original, problem="not a number this field can hold")
    num_text = m.group("num")
    if num_text.count(",") and num_text.count("."):
        return Value(
            ValueKind.UNREADABLE, original, problem="both a comma and a point in the number"
        )
    number = float(num_text.replace(",", "."))
    written_unit = m.group("unit") or ""
    if written_unit:
        if unit is None:
            return Value(
                ValueKind.UNREADABLE, original, problem=f"unexpected unit {written_unit!r}"
            )
        key = _unit_key(written_unit)
        canon_key = _unit_key(unit)
        factors = _UNIT_FACTORS.get(unit, {})
        if key == canon_key:
            factor = 1.0
        elif key in factors:
            factor = factors[key]
        else:
            return Value(
                ValueKind.UNREADABLE,
                original,
                problem=f"unit {written_unit!r} does not fit a value in {unit}",
            )
        number = number * factor
    cmp = m.group("cmp")
    if cmp in (">", ">=", "≥") or m.group("plus"):
        vkind = ValueKind.LOWER_BOUND
    elif cmp in ("<", "<=", "≤"):
        vkind = ValueKind.UPPER_BOUND
    else:
        vkind = ValueKind.NUMBER
    return Value(vkind, original, number=round(number, 9), unit=unit)
