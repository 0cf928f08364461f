"""Parse the text of one cell into a typed Value.

The trade writes far more than numbers in a schedule: N/A, LIM, N/V, ticks, dashes,
over-range readings (">999", "999+", "OL", "∞"), units after the number ("0.42Ω", "30 mA"),
decimal commas and thousands separators (">1,000"), amperes in a mA column ("0.03"),
seconds in a ms column ("0.025"), "NT" / "No trip" on an RCD, ditto marks ('"', "do"),
footnote marks ("1.37*", "0.42 (calc)"), the curve with the rating ("B32"), breaking-capacity
markings ("M6", "S1A") and conductor sizes written "2x2.5", "2.5 T&E" or "2.5+1.5".
Every one of them is parsed here, once; how a value was written, when that matters, is kept
in ``Value.flag``. A text that fits nothing becomes UNREADABLE with the reason, and is
reported as a finding by the checks (never silently dropped, never guessed).

``resolve_row_marks(circuits)`` resolves ditto marks against the row above and splits a
"2.5+1.5" size into the line and cpc cells; the extractor calls it once per board.
``ticked_choice(text, choices)`` reads a tick-box line where every option is printed.
"""

from __future__ import annotations

import re
import unicodedata
from collections.abc import Sequence
from dataclasses import replace

from certvet.extractor.fields import FieldKind
from certvet.extractor.records import Cell, Circuit, Value, ValueKind

# Glyphs a form may use for "confirmed" / "not confirmed". ZapfDingbats ticks are mapped to
# these by the engines before parsing (see extractor.engines).
TICKS = frozenset("✓✔√☑✅🗸")
CROSSES = frozenset("✗✘×☒❌")
_YES = {"ok", "yes", "y", "pass", "passed", "sat", "satisfactory", "correct", "c"}
_NO = {"no", "n", "fail", "failed", "x", "incorrect", "unsat"}
_NA = {"n/a", "na", "n.a.", "n/a.", "not applicable", "n / a"}
_LIM = {"lim", "lim.", "limitation", "lim*"}
_DASHES = {"-", "--", "---", "–", "—", "−", "‐", "‒"}
_NOT_VERIFIED = {"n/v", "nv", "n.v.", "not verified"}  # like LIM: not verified, say why
_OVER_RANGE = {"ol", "o/l", "o.l.", "o.l", "∞", "over range", "over-range", "overrange"}
_NO_TRIP = {"nt", "n.t.", "no trip", "no-trip", "did not trip", "not tripped", "dnt"}
# '"', two primes (NFKC of ″), curly quotes, "do", "ditto": "as above"
_DITTO = {'"', "''", "′′", "〃", "“", "”", "„", "do", "do.", "ditto", "dtto"}

_THOUSANDS_RE = re.compile(r"(?<![\d.,])([1-9]\d{0,2})((?:,\d{3})+)(?![\d,])")
_FOOTNOTE_RE = re.compile(
    r"^(?P<body>.*?\d.*?)\s*(?P<mark>\*+|†|‡|\((?:calc\.?|calculated|est\.?|estimated|c)\))$",
    re.IGNORECASE,
)
_CURVE_RATING_RE = re.compile(r"^(?:type\s*)?(?P<curve>[BCDbcd])\s*-?\s*(?P<num>\d{1,3})\s*[aA]?$")
# Breaking capacity markings: BS 3871 / BS EN 60898 "M6" (6 kA) and BS 3036 categories of
# duty S1A, S2A, S4A (1, 2, 4 kA) — from memory.
_M_CODE_RE = re.compile(r"^m\s*(?P<num>\d+(?:\.\d+)?)$", re.IGNORECASE)
_S_CODE_RE = re.compile(r"^s\s*(?P<num>[124])\s*a$", re.IGNORECASE)
_MULTI_CORE_RE = re.compile(r"^(?P<n>[1-9])\s*[x×]\s*(?P<num>\d+(?:[.,]\d+)?)\s*(?:mm2?|mm²)?$")
_WIRING_AFTER_RE = re.compile(
    r"^(?P<num>\d+(?:[.,]\d+)?)\s*(?:mm2?|mm²)?\s+(?P<what>t\s*&\s*e|t\s*\+\s*e|t&e|twin(?:\s*&\s*earth)?|"
    r"swa|singles|ffc|micc|lsf|xlpe)$",
    re.IGNORECASE,
)
_PAIR_RE = re.compile(
    r"^(?P<a>\d+(?:\.\d+)?)\s*(?:mm2?|mm²)?\s*[+/]\s*(?P<b>\d+(?:\.\d+)?)\s*(?:mm2?|mm²)?$")

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
    if low in _NOT_VERIFIED:
        return Value(ValueKind.LIMITATION, original, flag="not verified (N/V)")
    if low in _DITTO:
        return Value(ValueKind.DITTO, original, flag="as above (ditto)")

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

    return _parse_number(original, s, low, unit)


def _parse_number(original: str, s: str, low: str, unit: str | None) -> Value:
    if low in _OVER_RANGE:
        return Value(ValueKind.LOWER_BOUND, original, unit=unit, flag="over-range (no figure)")
    if unit == "ms" and low in _NO_TRIP:
        return Value(ValueKind.NOT_CONFIRMED, original, flag="did not trip")
    special = _special_number(original, s, unit)
    if special is not None:
        return special
    flag = None
    fm = _FOOTNOTE_RE.match(s)
    if fm:
        mark = fm.group("mark")
        flag = f"footnote mark {mark}" if mark[0] != "(" else f"marked {mark}"
        s = fm.group("body")
    s = _THOUSANDS_RE.sub(lambda m: m.group(1) + m.group(2).replace(",", ""), s)
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
    elif unit in ("mA", "ms") and 0 < number < 1:
        # No RCD has IΔn below 1 mA nor trips in under 1 ms: a figure below 1 was written
        # in amperes (0.03 = 30 mA) or seconds (0.025 = 25 ms).
        number = number * 1000
        flag = f"written in {'amperes' if unit == 'mA' else 'seconds'}, read as {number:g} {unit}"
    cmp = m.group("cmp")
    if cmp in (">", ">=", "≥") or m.group("plus"):
        vkind = ValueKind.LOWER_BOUND
    elif cmp in ("<", "<=", "≤"):
        vkind = ValueKind.UPPER_BOUND
    else:
        vkind = ValueKind.NUMBER
    return Value(vkind, original, number=round(number, 9), unit=unit, flag=flag)


def _special_number(original: str, s: str, unit: str | None) -> Value | None:
    """Numbers written with trade markings: "B32", "M6", "S1A", "2x2.5", "2.5 T&E", "2.5+1.5"."""
    def num(text: str) -> float:
        return round(float(text.replace(",", ".")), 9)

    if unit == "A":
        m = _CURVE_RATING_RE.match(s)
        if m:
            return Value(ValueKind.NUMBER, original, number=num(m.group("num")), unit=unit,
                         flag=f"type {m.group('curve').upper()} written with the rating")
    if unit == "kA":
        m = _M_CODE_RE.match(s)
        if m:
            return Value(ValueKind.NUMBER, original, number=num(m.group("num")), unit=unit,
                         flag=f"marking {s} ({m.group('num')} kA)")
        m = _S_CODE_RE.match(s)
        if m:
            return Value(ValueKind.NUMBER, original, number=num(m.group("num")), unit=unit,
                         flag=f"BS 3036 category of duty {s.upper()} ({m.group('num')} kA, "
                              "from memory)")
    if unit == "mm²":
        m = _MULTI_CORE_RE.match(s)
        if m:
            return Value(ValueKind.NUMBER, original, number=num(m.group("num")), unit=unit,
                         flag=f"{m.group('n')} × {m.group('num')} mm² (csa of one conductor)")
        m = _WIRING_AFTER_RE.match(s)
        if m:
            return Value(ValueKind.NUMBER, original, number=num(m.group("num")), unit=unit,
                         flag=f"wiring written with the size: {m.group('what')}")
        m = _PAIR_RE.match(s)
        if m:
            return Value(ValueKind.NUMBER, original, number=num(m.group("a")), unit=unit,
                         flag=f"line and cpc in one cell: {m.group('a')} + {m.group('b')} mm²")
    return None


def conductor_pair(value: Value) -> tuple[float, float] | None:
    """(line, cpc) csa from a cell written "2.5+1.5" or "2.5/1.5", else None."""
    m = _PAIR_RE.match(normalise_text(value.raw))
    return (float(m.group("a")), float(m.group("b"))) if m else None


def resolve_row_marks(circuits: Sequence[Circuit]) -> list[tuple[Circuit, str, str]]:
    """Resolve ditto marks and line+cpc pairs in one board's rows, in place.

    A ditto cell takes the value of the same field in the row above (the row above's own
    ditto already resolved), keeping its own raw text and the flag "as above"; with no
    reading above it becomes UNREADABLE. A live_csa written "2.5+1.5" gives the cpc_csa
    cell its second part when that cell is blank, a ditto, or the same pair. Returns the
    (circuit, field, problem) of every cell that could not be resolved.
    """
    problems: list[tuple[Circuit, str, str]] = []
    above: Circuit | None = None
    for circuit in circuits:
        for name, cell in list(circuit.cells.items()):
            if cell.value.kind is not ValueKind.DITTO:
                continue
            prior = above.cells.get(name) if above is not None else None
            if prior is None or prior.value.kind in (ValueKind.EMPTY, ValueKind.UNREADABLE,
                                                     ValueKind.DITTO):
                why = "ditto mark with no reading in the row above"
                circuit.cells[name] = replace(
                    cell, value=Value(ValueKind.UNREADABLE, cell.value.raw, problem=why))
                problems.append((circuit, name, why))
                continue
            v = prior.value
            circuit.cells[name] = replace(cell, value=replace(
                v, raw=cell.value.raw, flag=f"as above ({v.raw})"))
        live = circuit.cells.get("live_csa")
        pair = conductor_pair(live.value) if live is not None else None
        if pair is not None and live is not None:
            cpc = circuit.cells.get("cpc_csa")
            if cpc is None or cpc.value.kind in (ValueKind.EMPTY, ValueKind.DITTO) or (
                    conductor_pair(cpc.value) == pair):
                raw = cpc.value.raw if cpc is not None else ""
                circuit.cells["cpc_csa"] = Cell(
                    "cpc_csa",
                    Value(ValueKind.NUMBER, raw, number=pair[1], unit="mm²",
                          flag=f"cpc from the line cell {live.value.raw!r}"),
                    cpc.box if cpc is not None else live.box)
        above = circuit
    return problems


_MARKED = frozenset("✓✔√☑✅🗸✗✘×☒❌xX■●")
_UNMARKED = frozenset("☐□○◯")


def ticked_choice(text: str, choices: Sequence[str]) -> tuple[str | None, str]:
    """Which one of printed options is ticked, in a line like "TN-S ☐ TN-C-S ☑ TT ☐".

    Returns (choice, "") or (None, reason). A text naming one option and no marks is that
    option. Marks are read on the side where the line's marks are printed (before or after
    each option); none or several marked is "could not be told", never a guess.
    """
    s = normalise_text(text)
    spans: list[tuple[int, int, str]] = []
    taken: list[tuple[int, int]] = []
    for choice in sorted(choices, key=len, reverse=True):
        pat = re.compile(r"(?<![\w-])" + re.escape(choice) + r"(?![\w-])", re.IGNORECASE)
        for m in pat.finditer(s):
            if any(a < m.end() and m.start() < b for a, b in taken):
                continue
            taken.append((m.start(), m.end()))
            spans.append((m.start(), m.end(), choice))
    spans.sort()
    marks = [(i, ch in _MARKED) for i, ch in enumerate(s)
             if (ch in _MARKED or ch in _UNMARKED)
             and not any(a <= i < b for a, b, _ in spans)
             and not (ch in "xX" and (i > 0 and s[i - 1].isalnum()
                                      or i + 1 < len(s) and s[i + 1].isalnum()))]
    names = {c for _, _, c in spans}
    if not spans:
        return None, "none of the options is written"
    if not marks:
        if len(names) == 1:
            return spans[0][2], ""
        return None, "several options printed and none is marked"
    before = marks[0][0] < spans[0][0]
    ticked: set[str] = set()
    for k, (a, b, choice) in enumerate(spans):
        if before:
            lo = spans[k - 1][1] if k > 0 else -1
            hi = a
        else:
            lo = b
            hi = spans[k + 1][0] if k + 1 < len(spans) else len(s)
        if any(lo <= i < hi and on for i, on in marks):
            ticked.add(choice)
    if len(ticked) == 1:
        return ticked.pop(), ""
    if not ticked:
        return None, "no option is marked"
    return None, "more than one option is marked: " + ", ".join(sorted(ticked))
