"""One installation: boards that fit together (sub-mains, Zdb, Ipf, earthing, numbering).

How boards are linked: a board's "supplied from" names the origin ("Origin", "Intake",
"Supply", "Meter") or its parent board, optionally with the way ("DB1 circuit 7", "DB1/7",
"DB1 way 7"). Without the way, the parent's circuit whose description names the board
("Sub-main to DB2") is its sub-main.
"""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass

from certvet.checks.base import BoardCheck, CertificateCheck, fmt, option
from certvet.checks.catalogue.completeness import is_spare
from certvet.checks.catalogue.loop import earthing_of
from certvet.checks.catalogue.supply import kiloamps
from certvet.checks.model import Finding, Severity
from certvet.checks.registry import register
from certvet.extractor.records import Board, Certificate, Circuit, ValueKind

_ORIGIN = re.compile(r"\b(?:origin|intake|supply|meter|dno|cut-?out|service head)\b", re.I)
_PARENT = re.compile(r"^\s*(?P<board>[A-Z][\w-]*)\s*(?:(?:/|circuit|cct|way|way no\.?)\s*"
                     r"(?P<way>[A-Z]{0,3}\d{1,3}[A-Z]?))?\s*$", re.I)
_OUTBUILDING = re.compile(r"\b(?:outbuilding|garage|shed|garden|workshop|annex|barn|"
                          r"summer ?house|cabin|out-?house|stable)\b", re.I)
_SUBMAIN = re.compile(r"\bsub[- ]?mains?\b|\bto\s+(?:DB|CU)\w*|\bdistribution\b", re.I)


@dataclass(frozen=True)
class Feed:
    """Where a board is supplied from: the origin, or a parent board and (when found) the
    parent's circuit that is its sub-main."""

    origin: bool
    parent: Board | None = None
    submain: Circuit | None = None
    parent_name: str | None = None  # as written, when no such board is on the certificate


def _names(board_ref: str, text: str) -> bool:
    return re.search(rf"(?<![\w-]){re.escape(board_ref)}(?![\w-])", text, re.I) is not None


def feed_of(cert: Certificate, board: Board) -> Feed | None:
    """How the board is supplied, or None when the form does not say."""
    text = board.text("supplied_from")
    if not text:
        return None
    if _ORIGIN.search(text):
        return Feed(origin=True)
    m = _PARENT.match(text)
    if m is None:
        return None
    parent = next((b for b in cert.boards if b.ref.upper() == m["board"].upper()
                   and b is not board), None)
    if parent is None:
        return Feed(origin=False, parent_name=m["board"])
    if m["way"]:
        sub = next((c for c in parent.circuits if c.ref.upper() == m["way"].upper()), None)
    else:
        sub = next((c for c in parent.circuits if _names(board.ref, c.text("description"))),
                   None)
    return Feed(origin=False, parent=parent, submain=sub)


def _zdb(board: Board) -> float | None:
    return board.number("ze")


def _origin_ze(cert: Certificate) -> float | None:
    z = cert.number("ze")
    if z is not None:
        return z
    for b in cert.boards:
        f = feed_of(cert, b)
        if f is not None and f.origin:
            return _zdb(b)
    return None


def _ipf(v_holder: Board | Certificate) -> float | None:
    return kiloamps(v_holder.value("ipf"))


def _sub_boards(check: BoardCheck, cert: Certificate, board: Board) -> Feed | None:
    if len(cert.boards) < 2:
        check.not_applicable("one board only")
        return None
    f = feed_of(cert, board)
    if f is None or f.origin or f.parent is None:
        return None
    return f


@register
class SubmainZsMatchesBoardZdb(BoardCheck):
    """The sub-main's Zs on the parent board differs from the sub-board's Zdb.

    What it checks:
    For each board fed from another board: the Zs recorded for the sub-main circuit on the
    parent board and the Ze/Zdb recorded at the sub-board measure the same loop at the same
    point, so they agree within the tolerance.

    Why it matters:
    Two readings of one loop that disagree mean one of them was not measured where the form
    says, or belongs to another board; the sub-board's circuits are judged from its Zdb.

    Known false alarms:
    Zs on the parent taken at the far end of a sub-main that also feeds other points; loop
    tester resolution on long TT sub-mains.

    Failing example:
    DB1 circuit 7 "Sub-main to DB2" Zs 0.62 Ω; DB2 Zdb 0.31 Ω.

    Passing example:
    DB1 circuit 7 Zs 0.45 Ω; DB2 Zdb 0.44 Ω.

    Options:
    tolerance_ohm: absolute difference accepted.
    tolerance_fraction: relative difference accepted (whichever is larger).

    Reference:
    Common practice, no source (Zdb at a sub-board is the sub-main's Zs at its far end).
    """

    id = "submain-zs-matches-board-zdb"
    title = "Sub-main Zs differs from the sub-board's Zdb"
    severity = Severity.QUERY
    reference = "common practice, no source"
    basis = "common practice"
    group = "installation"

    @dataclass(frozen=True)
    class Options:
        tolerance_ohm: float = option(0.05, "common practice, no source: two readings of one "
                                      "loop at 0.01 Ω resolution", "absolute difference (Ω)")
        tolerance_fraction: float = option(0.15, "common practice, no source",
                                           "relative difference accepted")

    def check_board(self, cert: Certificate, board: Board) -> Iterable[Finding] | None:
        f = _sub_boards(self, cert, board)
        zdb = _zdb(board)
        if f is None or f.submain is None or zdb is None:
            return None
        zs = f.submain.number("zs")
        if zs is None:
            return None
        tol = max(self.options.tolerance_ohm, self.options.tolerance_fraction * max(zs, zdb))
        if abs(zs - zdb) <= tol + 1e-9:
            return []
        assert f.parent is not None
        return [self.make(cert, f"{board.ref} Zdb {fmt(zdb, 'Ω')} but the sub-main "
                          f"{f.parent.ref}/{f.submain.ref} Zs is {fmt(zs, 'Ω')}: one loop, two "
                          "readings.", board=board, field="ze", expected=f"≈ {fmt(zs, 'Ω')}",
                          tolerance=f"± {fmt(tol, 'Ω')}")]


@register
class BoardZdbBelowOriginZe(BoardCheck):
    """A sub-board's Zdb is below Ze at the origin.

    What it checks:
    For each board fed from another board (not the origin): its Zdb is not lower than Ze at
    the origin (the certificate's Ze, else the board fed from the origin) by more than the
    tolerance. The loop at a sub-board includes the whole loop at the origin.

    Why it matters:
    A lower impedance further from the supply is physically impossible on one path: the
    reading was taken elsewhere, with parallel earth paths, or copied.

    Known false alarms:
    Parallel earth paths through bonded services; a sub-board on a separate supply.

    Failing example:
    Ze 0.35 Ω; DB2 (fed from DB1) Zdb 0.20 Ω.

    Passing example:
    Ze 0.35 Ω; DB2 Zdb 0.52 Ω.

    Options:
    tolerance_ohm: difference treated as instrument resolution.

    Reference:
    Common practice, no source (impedances in series add).
    """

    id = "board-zdb-below-origin-ze"
    title = "Sub-board Zdb below the origin's Ze"
    severity = Severity.QUERY
    reference = "common practice, no source"
    basis = "common practice"
    group = "installation"

    @dataclass(frozen=True)
    class Options:
        tolerance_ohm: float = option(0.02, "common practice, no source: 0.01 Ω resolution",
                                      "difference treated as resolution (Ω)")

    def check_board(self, cert: Certificate, board: Board) -> Iterable[Finding] | None:
        f = _sub_boards(self, cert, board)
        ze, zdb = _origin_ze(cert), _zdb(board)
        if f is None or ze is None or zdb is None:
            return None
        if zdb >= ze - self.options.tolerance_ohm - 1e-9:
            return []
        return [self.make(cert, f"{board.ref} Zdb {fmt(zdb, 'Ω')} is below Ze at the origin "
                          f"({fmt(ze, 'Ω')}); the loop at a sub-board includes the origin's.",
                          board=board, field="ze", expected=f"≥ {fmt(ze, 'Ω')}")]


@register
class FaultCurrentRisesDownstream(BoardCheck):
    """Prospective fault current higher at a sub-board than at the board feeding it.

    What it checks:
    Ipf at each board fed from another board is not above Ipf at its parent, and no board's
    Ipf is above the origin's (the certificate's Ipf), by more than the tolerance. Numbers
    above 100 without a unit are read as amperes.

    Why it matters:
    Fault current can only fall along a circuit. A higher figure downstream is a reading
    from the wrong point, or a declared figure mixed with measured ones; protective devices
    are chosen for their breaking capacity against it.

    Known false alarms:
    A declared 16 kA at the origin with measured figures at the boards (that direction
    passes); boards fed from a second supply.

    Failing example:
    Origin 1.6 kA; DB2 2.4 kA.

    Passing example:
    Origin 1.6 kA; DB1 1.6 kA; DB2 0.9 kA.

    Options:
    tolerance_ka: difference treated as rounding (kA).

    Reference:
    Common practice, no source (fault current falls as impedance rises along the supply).
    """

    id = "fault-current-rises-downstream"
    title = "Fault current higher downstream than upstream"
    severity = Severity.QUERY
    reference = "common practice, no source"
    basis = "common practice"
    group = "installation"

    @dataclass(frozen=True)
    class Options:
        tolerance_ka: float = option(0.05, "common practice, no source: rounding to 0.1 kA",
                                     "difference treated as rounding (kA)")

    def check_board(self, cert: Certificate, board: Board) -> Iterable[Finding] | None:
        ipf = _ipf(board)
        if ipf is None:
            return None
        tol = self.options.tolerance_ka + 1e-9
        f = feed_of(cert, board)
        up = _ipf(f.parent) if f is not None and f.parent is not None else None
        origin = _ipf(cert)
        if up is None and origin is None:
            return None
        if up is not None and f is not None and f.parent is not None and ipf > up + tol:
            return [self.make(cert, f"{board.ref} Ipf {fmt(ipf, 'kA')} is above "
                              f"{f.parent.ref}'s {fmt(up, 'kA')}, the board feeding it.",
                              board=board, field="ipf", expected=f"≤ {fmt(up, 'kA')}")]
        if origin is not None and ipf > origin + tol:
            return [self.make(cert, f"{board.ref} Ipf {fmt(ipf, 'kA')} is above the origin's "
                              f"{fmt(origin, 'kA')}.", board=board, field="ipf",
                              expected=f"≤ {fmt(origin, 'kA')}")]
        return []


@register
class EarthingDiffersBetweenBoards(BoardCheck):
    """A board's earthing system differs from the origin's without being an outbuilding
    made TT.

    What it checks:
    The earthing system recorded at each board against the origin's (the certificate's, else
    the first board's). A sub-board recorded TT is accepted when its location names an
    outbuilding (garage, shed, workshop…), the usual case of an outbuilding given its own
    electrode; any other difference is reported.

    Why it matters:
    One supply has one earthing system unless a part of the installation was deliberately
    separated; a board recorded differently was either copied from another job or changes
    the limits its circuits are judged by.

    Known false alarms:
    A deliberate TT island whose location does not name an outbuilding.

    Failing example:
    Origin TN-C-S; DB2 "Landing" TN-S.

    Passing example:
    Origin TN-C-S; DB3 "Garage" TT.

    Options:
    none.

    Reference:
    BS 7671:2018+A2:2022 Reg 312.2 (types of system earthing); outbuilding TT: common
    practice, no source.
    """

    id = "earthing-differs-between-boards"
    title = "Earthing system differs between boards"
    severity = Severity.QUERY
    reference = "BS 7671:2018+A2:2022 Reg 312.2; outbuilding TT: common practice"
    basis = "published"
    group = "installation"

    def check_board(self, cert: Certificate, board: Board) -> Iterable[Finding] | None:
        if len(cert.boards) < 2 and not cert.text("earthing"):
            self.not_applicable("one board and no origin earthing recorded")
            return None
        origin = earthing_of(cert) or (earthing_of(cert, cert.boards[0]) if cert.boards else None)
        here = earthing_of(cert, board) if board.text("earthing") else None
        if origin is None or here is None:
            return None
        if here == origin or (here == "TT" and _OUTBUILDING.search(board.text("location"))):
            return []
        return [self.make(cert, f"{board.ref} is recorded {here}; the origin is {origin}.",
                          board=board, field="earthing", expected=origin)]


@register
class SubmainBoardUnmatched(CertificateCheck):
    """A sub-main with no board on the certificate, or a board with no sub-main feeding it.

    What it checks:
    Every board recorded as supplied from another board names a board on the certificate,
    and that board has a circuit feeding it (by the way given, or by a description naming
    the board). Every circuit described as a sub-main to a board reference ("Sub-main to
    DB3") names a board on the certificate.

    Why it matters:
    A board left off the schedule is a set of circuits nobody reported on; a board with no
    sub-main cannot have its supply checked against its parent.

    Known false alarms:
    Boards described by location rather than reference in a sub-main's description.

    Failing example:
    DB1 circuit 8 "Sub-main to DB3", no DB3 on the certificate.

    Passing example:
    DB1 circuit 8 "Sub-main to DB2" and DB2 supplied from "DB1 circuit 8".

    Options:
    none.

    Reference:
    Common practice, no source (a schedule for every distribution board, BS 7671:2018+A2:2022
    Appendix 6 forms).
    """

    id = "submain-board-unmatched"
    title = "Sub-main and board do not match up"
    severity = Severity.QUERY
    reference = "common practice, no source; BS 7671:2018+A2:2022 Appendix 6"
    basis = "common practice"
    group = "installation"

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        if not cert.boards:
            self.not_applicable("no boards read")
            return None
        refs = {b.ref.upper() for b in cert.boards}
        found = []
        for b in cert.boards:
            f = feed_of(cert, b)
            if f is None or f.origin:
                continue
            if f.parent is None:
                found.append(self.make(cert, f"{b.ref} is supplied from {f.parent_name}, which "
                                       "is not on the certificate.", board=b,
                                       field="supplied_from", expected="a board on the schedule"))
            elif f.submain is None:
                found.append(self.make(cert, f"{b.ref} is supplied from {f.parent.ref}, but no "
                                       f"circuit on {f.parent.ref} feeds it.", board=b,
                                       field="supplied_from",
                                       expected=f"a sub-main on {f.parent.ref}"))
        for b, c in cert.circuits():
            desc = c.text("description")
            if not _SUBMAIN.search(desc):
                continue
            for m in re.finditer(r"(?<![\w-])((?:DB|CU)[\w-]*)", desc, re.I):
                if m[1].upper() not in refs:
                    found.append(self.make(cert, f"{b.ref}/{c.ref} {desc!r} feeds {m[1]}, which "
                                           "is not on the certificate.", board=b, circuit=c,
                                           field="description", expected="a board on the schedule"))
        return found


@register
class CircuitNumberDuplicated(BoardCheck):
    """The same circuit number twice on one board.

    What it checks:
    Circuit references on each board are unique (case and spaces ignored).

    Why it matters:
    Two rows with one number mean a row was copied or two boards were merged; a finding
    or an observation naming that circuit cannot tell which row it means.

    Known false alarms:
    Three-phase circuits written as one number per phase without a phase suffix.

    Failing example:
    DB1 rows "4" and "4".

    Passing example:
    DB1 rows "4", "5", "6".

    Options:
    none.

    Reference:
    Common practice, no source (circuits identified uniquely, BS 7671:2018+A2:2022 Reg
    514.9.1 diagrams and charts: regulation number from memory).
    """

    id = "circuit-number-duplicated"
    title = "Circuit number repeated on a board"
    severity = Severity.QUERY
    reference = "common practice, no source (Reg 514.9.1, from memory)"
    basis = "common practice"
    group = "installation"

    def check_board(self, cert: Certificate, board: Board) -> Iterable[Finding] | None:
        if not board.circuits:
            return None
        seen: dict[str, Circuit] = {}
        found = []
        for c in board.circuits:
            key = "".join(c.ref.split()).upper()
            if key in seen:
                found.append(self.make(cert, f"Circuit {c.ref} appears more than once on "
                                       f"{board.ref}.", board=board, circuit=c,
                                       field="circuit_ref", expected="a unique number"))
            seen.setdefault(key, c)
        return found


_READINGS = ("zs", "r1_r2", "r2_only", "r1", "rn", "r2", "ir_live_live", "ir_live_earth",
             "rcd_time")
_HAS_READING = (ValueKind.NUMBER, ValueKind.LOWER_BOUND, ValueKind.UPPER_BOUND)


@register
class ReadingsOnSpareWay(BoardCheck):
    """A way described as spare carries test readings.

    What it checks:
    A circuit whose description says spare, unused, not used or redundant has no Zs,
    continuity, insulation or RCD readings.

    Why it matters:
    Readings cannot be taken on a way with nothing connected; they were copied from another
    row, or the way is in use and the description is wrong (and the circuit unlabelled).

    Known false alarms:
    A spare way with a device fitted and insulation-tested on purpose, noted in remarks.

    Failing example:
    Circuit 9 "Spare", Zs 0.74 Ω.

    Passing example:
    Circuit 9 "Spare", every reading N/A.

    Options:
    none.

    Reference:
    Common practice, no source.
    """

    id = "readings-on-spare-way"
    title = "Readings on a way described as spare"
    severity = Severity.QUERY
    reference = "common practice, no source"
    basis = "common practice"
    group = "installation"

    def check_board(self, cert: Certificate, board: Board) -> Iterable[Finding] | None:
        spares = [c for c in board.circuits if is_spare(c)]
        if not spares:
            return None
        found = []
        for c in spares:
            with_values = [n for n in _READINGS if c.value(n).kind in _HAS_READING]
            if with_values:
                found.append(self.make(cert, f"Circuit {c.ref} is described as "
                                       f"{c.text('description')!r} but has readings "
                                       f"({', '.join(with_values)}).", board=board, circuit=c,
                                       field=with_values[0], expected="N/A on a spare way"))
        return found
