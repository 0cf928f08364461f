"""The protective device and the kind of a circuit, read once from the schedule's text.

A schedule writes the same device many ways: the standard as "60898", "BS EN 60898",
"BSEN60898-1", "61009", "BS 88-3", "88", "3036", "1361"; the type as "B", "Type B", "type-b",
"gG"; the rating as "32" or "32A"; or the whole device in one cell: "B32", "RCBO B32 30mA",
"60898 B 32A". ``parse_device`` turns those cells into one typed ``Device``;
``circuit_kind`` says whether the circuit is a ring or a radial (or that it cannot be told);
``rcd_protection`` is the one definition of "an RCD protects this circuit" (its own RCD or
RCBO, or a board RCD over its way). Checks read these, never the raw text, so every check
agrees on what a device is.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from enum import StrEnum

from certvet.extractor.records import Board, Circuit, ValueKind


class DeviceFamily(StrEnum):
    """What kind of protective device, by the standard it is made to."""

    MCB = "mcb"  # BS EN 60898 circuit-breaker (or an older BS 3871 one)
    RCBO = "rcbo"  # BS EN 61009 RCBO
    RCD = "rcd"  # BS EN 61008 / 62423 RCCB: no overcurrent protection
    FUSE_BS88_2 = "bs88-2"  # BS 88-2 (formerly BS 88 Part 2) gG fuse
    FUSE_BS88_3 = "bs88-3"  # BS 88-3 (formerly BS 1361) cartridge fuse for domestic use
    FUSE_BS3036 = "bs3036"  # BS 3036 semi-enclosed (rewirable) fuse
    FUSE_BS1362 = "bs1362"  # BS 1362 plug-top / fused connection unit fuse
    UNKNOWN = "unknown"


# Canonical standard names, in the order they are tried (longer / more specific first).
_STANDARDS: tuple[tuple[re.Pattern[str], str, DeviceFamily], ...] = (
    (re.compile(r"61009"), "BS EN 61009", DeviceFamily.RCBO),
    (re.compile(r"62423"), "BS EN 62423", DeviceFamily.RCD),
    (re.compile(r"61008"), "BS EN 61008", DeviceFamily.RCD),
    (re.compile(r"60898"), "BS EN 60898", DeviceFamily.MCB),
    (re.compile(r"60947"), "BS EN 60947-2", DeviceFamily.MCB),
    (re.compile(r"3871"), "BS 3871", DeviceFamily.MCB),
    (re.compile(r"88\s*[-/.]?\s*(?:pt\.?|part)?\s*3\b|88\s*[-/.]?\s*3"), "BS 88-3",
     DeviceFamily.FUSE_BS88_3),
    (re.compile(r"1361"), "BS 88-3", DeviceFamily.FUSE_BS88_3),  # BS 1361 became BS 88-3
    (re.compile(r"88\s*[-/.]?\s*(?:pt\.?|part)?\s*[26]\b|^\s*(?:bs\s*(?:en)?\s*)?88\s*$"),
     "BS 88-2", DeviceFamily.FUSE_BS88_2),
    (re.compile(r"60269"), "BS 88-2", DeviceFamily.FUSE_BS88_2),
    (re.compile(r"3036"), "BS 3036", DeviceFamily.FUSE_BS3036),
    (re.compile(r"1362"), "BS 1362", DeviceFamily.FUSE_BS1362),
)

_CURVE_RE = re.compile(r"^(?:type|curve|char\.?|characteristic)?\s*[-:]?\s*([bcd])$")
_OLD_TYPE_RE = re.compile(r"^(?:type)?\s*[-:]?\s*([1-4])$")
_FUSE_TYPE_RE = re.compile(r"^(?:g\s*g|gg|gm|g\s*m)$")

FUSES = frozenset(
    {DeviceFamily.FUSE_BS88_2, DeviceFamily.FUSE_BS88_3, DeviceFamily.FUSE_BS3036,
     DeviceFamily.FUSE_BS1362}
)


@dataclass(frozen=True)
class Device:
    """One circuit's protective device as recorded.

    ``curve`` is the circuit-breaker type letter B, C or D (None for fuses or when unreadable);
    ``old_type`` is a BS 3871 type number 1–4; ``rating`` is In in amperes.
    """

    family: DeviceFamily
    standard: str | None = None  # canonical name, e.g. "BS EN 60898", "BS 88-3"
    curve: str | None = None
    old_type: int | None = None
    rating: float | None = None
    raw_standard: str = ""
    raw_type: str = ""
    idn_ma: float | None = None  # an RCBO's IΔn written in the device cell ("RCBO B32 30mA")

    @property
    def is_breaker(self) -> bool:
        """A circuit-breaker or RCBO (the Table 41.3 devices)."""
        return self.family in (DeviceFamily.MCB, DeviceFamily.RCBO)

    @property
    def is_fuse(self) -> bool:
        return self.family in FUSES

    @property
    def table_key(self) -> str | None:
        """The key of this device in the max-Zs tables: "B32", "BS88-3:32", or None."""
        if self.rating is None:
            return None
        rating = _rating_text(self.rating)
        if self.is_breaker and self.curve:
            return f"{self.curve}{rating}"
        if self.is_fuse:
            return f"{self.family.value}:{rating}"
        return None

    def describe(self) -> str:
        """As the trade writes it: "B32", "BS 88-3 30 A", "BS 3036 15 A"."""
        rating = _rating_text(self.rating) if self.rating is not None else "?"
        if self.is_breaker and self.curve:
            return f"{self.curve}{rating}"
        if self.standard:
            return f"{self.standard} {rating} A"
        return f"{self.raw_type or 'device'} {rating} A".strip()


def _rating_text(rating: float) -> str:
    return str(int(rating)) if float(rating).is_integer() else f"{rating:g}"


def normalise_standard(text: str) -> tuple[str | None, DeviceFamily]:
    """"BS EN 60898-1" → ("BS EN 60898", MCB); unknown text → (None, UNKNOWN)."""
    s = " ".join(text.lower().replace("\u2011", "-").replace("–", "-").split())
    if not s:
        return None, DeviceFamily.UNKNOWN
    for pattern, name, family in _STANDARDS:
        if pattern.search(s):
            return name, family
    return None, DeviceFamily.UNKNOWN


def parse_curve(text: str) -> tuple[str | None, int | None, bool]:
    """Device-type text → (curve letter, BS 3871 type number, looks like a gG fuse)."""
    s = " ".join(text.lower().replace(".", " ").split()).strip()
    if not s:
        return None, None, False
    m = _CURVE_RE.match(s)
    if m:
        return m.group(1).upper(), None, False
    m = _OLD_TYPE_RE.match(s)
    if m:
        return None, int(m.group(1)), False
    if _FUSE_TYPE_RE.match(s):
        return None, None, True
    return None, None, False


# The whole device in one cell: "B32", "RCBO B32 30mA", "60898 B 32A", "C 40".
_COMBINED_RE = re.compile(r"(?<![a-z])([bcd])\s*-?\s*(\d{1,3}(?:\.\d)?)\s*a?(?![a-z0-9.])")
_RATING_RE = re.compile(r"(?<![\d.])(\d{1,3})\s*a(?![a-z])")
_IDN_RE = re.compile(r"(?<![\d.])(\d{1,4})\s*ma\b")


def _from_one_cell(texts: list[str]) -> tuple[str | None, float | None, float | None, bool]:
    """(curve, rating, IΔn mA, says RCBO) read from cells holding the whole device."""
    curve = rating = idn = None
    rcbo = False
    for text in texts:
        low = text.lower()
        rcbo = rcbo or "rcbo" in low
        if idn is None and (m := _IDN_RE.search(low)):
            idn = float(m.group(1))
            low = low[:m.start()] + " " + low[m.end():]
        if curve is None and (m := _COMBINED_RE.search(low)):
            curve, rating = m.group(1).upper(), float(m.group(2))
        elif rating is None and (m := _RATING_RE.search(low)):
            rating = float(m.group(1))
    return curve, rating, idn, rcbo


def parse_device(circuit: Circuit) -> Device:
    """The circuit's device from its device_standard, device_type and rating cells.

    A curve letter with no readable standard is taken as a BS EN 60898 circuit-breaker (the
    way most domestic schedules are filled in); a circuit with an RCD type and a curve letter
    but no standard is still a circuit-breaker as far as the Zs tables go (BS EN 60898 and
    BS EN 61009 share Table 41.3).
    """
    raw_std = circuit.text("device_standard")
    raw_type = circuit.text("device_type")
    standard, family = normalise_standard(raw_std)
    curve, old_type, gg = parse_curve(raw_type)
    if family is DeviceFamily.UNKNOWN and raw_type:
        # Some forms put the whole device in the type column: "BS88-3", "60898 B".
        standard, family = normalise_standard(raw_type)
        if curve is None:
            tail = re.search(r"(?:^|\s|type)([bcd])\s*$", raw_type.lower())
            curve = tail.group(1).upper() if tail else None
    if family is DeviceFamily.UNKNOWN:
        if curve is not None or old_type is not None:
            family = DeviceFamily.MCB
            standard = "BS EN 60898" if curve else "BS 3871"
        elif gg:
            family, standard = DeviceFamily.FUSE_BS88_2, "BS 88-2"
    rating_value = circuit.value("rating")
    rating = rating_value.number if rating_value.kind is ValueKind.NUMBER else None
    one_curve, one_rating, idn, says_rcbo = _from_one_cell([raw_type, raw_std, rating_value.raw])
    if curve is None and one_curve is not None and family not in FUSES:
        curve = one_curve
    if rating is None:
        rating = one_rating
    if says_rcbo and family in (DeviceFamily.UNKNOWN, DeviceFamily.MCB):
        family, standard = DeviceFamily.RCBO, "BS EN 61009"
    elif family is DeviceFamily.UNKNOWN and curve is not None:
        family, standard = DeviceFamily.MCB, "BS EN 60898"
    if family in FUSES:
        curve = None
    return Device(
        family=family,
        standard=standard,
        curve=curve,
        old_type=old_type,
        rating=rating,
        raw_standard=raw_std,
        raw_type=raw_type,
        idn_ma=idn,
    )


class CircuitKind(StrEnum):
    RING = "ring"
    RADIAL = "radial"
    UNKNOWN = "unknown"


_RING_WORDS = re.compile(r"\bring\b|\brfc\b|ring\s*final|ring\s*main|\bskts?\s*rng\b|\brng\b")
_RADIAL_WORDS = re.compile(r"\bradial\b|\brad\b")


def circuit_kind(circuit: Circuit) -> CircuitKind:
    """Ring or radial, from what the form says.

    A ring is a circuit whose description names a ring ("Sockets ring", "RFC kitchen",
    "ring main") or whose r1/rn/r2 end-to-end columns hold readings. A description naming a
    radial, or R1+R2 with all three end-to-end columns N/A, is a radial. Otherwise unknown.
    """
    desc = circuit.text("description").lower()
    if _RADIAL_WORDS.search(desc):
        return CircuitKind.RADIAL
    if _RING_WORDS.search(desc):
        return CircuitKind.RING
    if any(circuit.number(f) is not None for f in ("r1", "rn", "r2")):
        return CircuitKind.RING
    end_to_end = [circuit.value(f).kind for f in ("r1", "rn", "r2")]
    if circuit.number("r1_r2") is not None or circuit.number("r2_only") is not None:
        if all(k is ValueKind.NOT_APPLICABLE for k in end_to_end) or (
                all(k in (ValueKind.NOT_APPLICABLE, ValueKind.DASH, ValueKind.EMPTY)
                    for k in end_to_end) and not might_be_ring(circuit)):
            return CircuitKind.RADIAL
    return CircuitKind.UNKNOWN


_SOCKET_TEXT = re.compile(
    r"\b(?:sockets?|skts?|s/?o|sos|socket[- ]outlets?|double sockets?)\b", re.IGNORECASE)


def serves_sockets(circuit: Circuit) -> bool:
    """The description names socket-outlets ("Kitchen sockets", "skts", "s/o")."""
    return bool(_SOCKET_TEXT.search(circuit.text("description")))


def might_be_ring(circuit: Circuit) -> bool:
    """A socket circuit of 2.5 mm² on a 30–32 A device that does not say it is a radial.

    Such a circuit is normally a ring final circuit, so with its ring readings LIM, N/A or
    blank the form has not told us ring or radial: checks that judge radials leave it alone
    (common practice, no source: the usual ring of BS 7671 Reg 433.1.204, 2.5 mm² on 30/32 A).
    """
    if _RADIAL_WORDS.search(circuit.text("description").lower()):
        return False
    if not serves_sockets(circuit):
        return False
    csa, rating = circuit.number("live_csa"), circuit.number("rating")
    if rating is None:
        rating = parse_device(circuit).rating
    return (csa is None or abs(csa - 2.5) < 1e-9) and (rating is None or 30 <= rating <= 32)


def is_ring(circuit: Circuit) -> bool:
    return circuit_kind(circuit) is CircuitKind.RING


def is_radial(circuit: Circuit) -> bool:
    return circuit_kind(circuit) is CircuitKind.RADIAL


def ring_or_radial_unknown(circuit: Circuit) -> bool:
    """The form does not say ring or radial, and the circuit may well be a ring."""
    return circuit_kind(circuit) is CircuitKind.UNKNOWN and might_be_ring(circuit)


# --- RCD protection: the one definition ---------------------------------------------------------


@dataclass(frozen=True)
class RcdProtection:
    """What says an RCD protects a circuit, and its IΔn when known."""

    source: str  # "circuit" (IΔn or trip time on the row), "rcbo", "rccb" or "board"
    idn_ma: float | None


def _ways(text: str) -> list[tuple[float, float]] | None:
    """ "1-6, 9" → [(1, 6), (9, 9)]; "" or "all" → None (every way)."""
    s = text.lower().replace("–", "-").replace(" to ", "-")
    if not s.strip() or "all" in s:
        return None
    spans = []
    for part in re.split(r"[,;/&]|\band\b", s):
        nums = [float(n) for n in re.findall(r"\d+", part)]
        if len(nums) == 1:
            spans.append((nums[0], nums[0]))
        elif len(nums) >= 2:
            spans.append((nums[0], nums[1]))
    return spans


def _way_number(ref: str) -> float | None:
    m = re.search(r"\d+", ref)
    return float(m.group()) if m else None


def board_rcd_covers(board: Board | None, circuit: Circuit) -> float | None:
    """The IΔn of a board RCD over this circuit's way (board_rcd_idn / board_rcd_ways)."""
    if board is None:
        return None
    idn = board.number("board_rcd_idn")
    if idn is None:
        return None
    spans = _ways(board.text("board_rcd_ways"))
    if spans is None:
        return idn
    way = _way_number(circuit.ref)
    if way is None:
        return None
    return idn if any(a <= way <= b for a, b in spans) else None


def is_rcbo(circuit: Circuit) -> bool:
    """The circuit's own device is an RCBO (BS EN 61009, or "RCBO" written in its cells)."""
    text = f"{circuit.text('device_standard')} {circuit.text('device_type')}".lower()
    return parse_device(circuit).family is DeviceFamily.RCBO or "rcbo" in text


def rcd_protection(circuit: Circuit, board: Board | None = None) -> RcdProtection | None:
    """The one answer to "is this circuit RCD-protected?", or None when nothing says so.

    In order: an IΔn recorded on the row; an RCBO (BS EN 61009, or "RCBO" written in the
    device cells, with an IΔn written there); an RCCB as the circuit's device, or an RCD
    standard (BS EN 61008/61009/62423) in the row's RCD standard cell; a board RCD (RCD main
    switch or split-load RCD) over the circuit's way; an RCD trip time on the row.
    """
    idn = circuit.number("rcd_idn")
    device = parse_device(circuit)
    if idn is not None:
        return RcdProtection("circuit", idn)
    if is_rcbo(circuit):
        return RcdProtection("rcbo", device.idn_ma)
    if device.family is DeviceFamily.RCD:
        return RcdProtection("rccb", device.idn_ma)
    if normalise_standard(circuit.text("rcd_standard"))[1] in (DeviceFamily.RCD,
                                                               DeviceFamily.RCBO):
        return RcdProtection("rccb", None)
    board_idn = board_rcd_covers(board, circuit)
    if board_idn is not None:
        return RcdProtection("board", board_idn)
    if any(circuit.value(f).kind in (ValueKind.NUMBER, ValueKind.LOWER_BOUND,
                                     ValueKind.UPPER_BOUND, ValueKind.NOT_CONFIRMED)
           for f in ("rcd_time", "rcd_time_5x")):
        return RcdProtection("circuit", None)
    return None
