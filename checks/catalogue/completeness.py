"""Polarity and completeness: what a certificate must record, and whether it adds up."""

from __future__ import annotations

import re
from collections.abc import Iterable
from dataclasses import dataclass

from certvet.checks.base import CertificateCheck, CircuitCheck, option
from certvet.checks.catalogue.rcd import has_rcd
from certvet.checks.certificate_facts import observation_codes  # one parser, shared
from certvet.checks.model import Finding, Severity
from certvet.checks.registry import register
from certvet.checks.tables import EARTHING_CHOICES
from certvet.extractor.fields import CERTIFICATE, FIELDS
from certvet.extractor.records import Board, Certificate, Circuit, Value, ValueKind
from certvet.extractor.tokens import ticked_choice

_SPARE = re.compile(r"\b(?:spare|unused|not used|blank|empty way|redundant)\b", re.IGNORECASE)
_NONE_WORDS = {"none", "nil", "no", "no limitations", "none recorded", "n/a", "na"}
_HAS_READING = (ValueKind.NUMBER, ValueKind.LOWER_BOUND, ValueKind.UPPER_BOUND,
                ValueKind.CONFIRMED, ValueKind.NOT_CONFIRMED)


def is_spare(circuit: Circuit) -> bool:
    """A spare way or unused circuit, where blank readings are expected."""
    return bool(_SPARE.search(circuit.text("description")))


def limitations_recorded(cert: Certificate) -> bool:
    """The certificate's "agreed limitations" field holds a real limitation (not "None")."""
    v = cert.value("limitations")
    if v.kind is not ValueKind.TEXT or not v.text:
        return False
    return v.text.strip().strip(".").lower() not in _NONE_WORDS


_ON_FORM: dict[int, tuple[list[Circuit], int, frozenset[str]]] = {}


def _column_on_form(board: Board, name: str) -> bool:
    """The board's schedule has this column: at least one circuit row has the cell.

    The board's set of columns is worked out once per board, not once per circuit (a board of
    thousands of rows made this check quadratic); the cache entry is checked against the very
    list of circuits and its length, so a changed board is worked out again."""
    got = _ON_FORM.get(id(board))
    if got is None or got[0] is not board.circuits or got[1] != len(board.circuits):
        names = frozenset(n for c in board.circuits for n in c.cells)
        if len(_ON_FORM) > 8:
            _ON_FORM.clear()
        got = _ON_FORM[id(board)] = (board.circuits, len(board.circuits), names)
    return name in got[2]


@register
class PolarityNotConfirmed(CircuitCheck):
    """Polarity not confirmed for a circuit.

    What it checks:
    The polarity column of each circuit (spare ways excepted). A cross ("✗", "No", "Fail")
    records incorrect polarity: a breach. A blank, a dash or N/A records nothing: a query
    (reported at query severity). LIM is left to the limitation checks and unreadable text
    to the extraction check.

    Why it matters:
    With the polarity wrong, a single-pole switch or fuse breaks the neutral and leaves the
    load live when it is "off", and an Edison screw lampholder's outer contact can be live.
    Polarity applies to every circuit, so N/A is never a right answer.

    Known false alarms:
    Forms where polarity is recorded once for the board rather than per circuit.

    Failing example:
    Polarity "✗" (breach); polarity blank (query).

    Passing example:
    Polarity "✓".

    Options:
    none.

    Reference:
    BS 7671:2018+A2:2022 Reg 643.6 (polarity test); severity split: common practice, no
    source.
    """

    id = "polarity-not-confirmed"
    title = "Polarity not confirmed"
    severity = Severity.BREACH
    reference = "BS 7671:2018+A2:2022 Reg 643.6"
    basis = "published"
    group = "completeness"

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        if is_spare(circuit) or not _column_on_form(board, "polarity"):
            return None
        v = circuit.value("polarity")
        if v.kind in (ValueKind.CONFIRMED, ValueKind.LIMITATION, ValueKind.UNREADABLE):
            return []
        if v.kind is ValueKind.NOT_CONFIRMED:
            message = f"Polarity recorded as incorrect ({v.display()})."
            severity = self.effective_severity
        else:
            message = f"Polarity not confirmed ({v.display()}); it applies to every circuit."
            severity = min(self.effective_severity, Severity.QUERY)
        return [
            self.make(cert, message, board=board, circuit=circuit, field="polarity",
                      expected="✓", severity=severity)
        ]


# Groups of fields of which at least one must hold a reading, by what the circuit is.
_ALWAYS: tuple[tuple[str, ...], ...] = (
    ("zs",),
    ("r1_r2", "r2_only"),
    ("ir_live_earth",),
)
# Results for which N/A is never an answer, limitation or not: insulation live-earth applies
# to every circuit (a limitation is written as LIM).
_NEVER_NA = frozenset({"ir_live_earth"})
_RCD: tuple[tuple[str, ...], ...] = (("rcd_time",),)


def _label(names: tuple[str, ...]) -> str:
    return " or ".join(FIELDS[n].label for n in names)


@register
class RequiredValueMissing(CircuitCheck):
    """A test result the circuit needs is blank, a dash, or N/A without a recorded limitation.

    What it checks:
    For every circuit that is not a spare way: Zs, R1+R2 (or R2), insulation resistance
    live-earth (always, even when live-live is recorded: N/A is never accepted for it, a
    limitation is written LIM; live-live may be LIM or left to the form); for an
    RCD-protected circuit the trip time at
    IΔn (a ring's r1, rn and r2 are left to ring-readings-missing). Each is missing when
    blank or a dash; N/A counts as missing unless the certificate records a limitation.
    Columns the form does not have (no circuit on the board has that cell) are not
    required. Polarity has its own check (polarity-not-confirmed) and LIM its own
    (limitation-not-recorded).

    Why it matters:
    A blank result is a test not done or not written down; the certificate then claims
    more than it shows. N/A on a test that applies to the circuit hides the same gap.

    Known false alarms:
    Circuits that could not be tested for a reason written only in the remarks; Zs left
    blank on a circuit fed from a generator or PV inverter with a note elsewhere.

    Failing example:
    "Kitchen sockets ring": r1 0.52, rn 0.53, r2 0.86, R1+R2 0.35, Zs blank.

    Passing example:
    "Lights": R1+R2 0.84, Zs 1.19, IR ">999", r1/rn/r2 N/A (a radial needs no end-to-end
    readings).

    Options:
    na_allowed_with_limitation: N/A is accepted when the certificate records a limitation.

    Reference:
    BS 7671:2018+A2:2022 Reg 643.1 (the tests to be made, in order) and Appendix 6 (the
    schedule of test results records them); which results each circuit kind needs: common
    practice, no source.
    """

    id = "required-value-missing"
    title = "A required test result is missing"
    severity = Severity.QUERY
    reference = (
        "BS 7671:2018+A2:2022 Reg 643.1, Appendix 6; per-kind requirements: common "
        "practice, no source"
    )
    basis = "common practice"
    group = "completeness"

    @dataclass(frozen=True)
    class Options:
        na_allowed_with_limitation: bool = option(
            True,
            "common practice, no source",
            "accept N/A on a required result when the certificate records a limitation",
        )

    def check_circuit(
        self, cert: Certificate, board: Board, circuit: Circuit
    ) -> Iterable[Finding] | None:
        if is_spare(circuit):
            return None
        groups = list(_ALWAYS)
        if has_rcd(circuit, board):
            groups += _RCD
        na_ok = self.options.na_allowed_with_limitation and limitations_recorded(cert)
        found = []
        for names in groups:
            present = [n for n in names if _column_on_form(board, n)]
            if not present:
                continue
            values: list[Value] = [circuit.value(n) for n in present]
            kinds = {v.kind for v in values}
            if kinds & set(_HAS_READING) or kinds & {ValueKind.LIMITATION,
                                                     ValueKind.UNREADABLE}:
                continue
            if ValueKind.NOT_APPLICABLE in kinds and na_ok and not set(present) & _NEVER_NA:
                continue
            field = present[0]
            shown = values[0].display()
            why = " without a recorded limitation" if ValueKind.NOT_APPLICABLE in kinds else ""
            found.append(
                self.make(
                    cert,
                    f"{_label(tuple(present))} is required for this circuit but recorded as "
                    f"{shown}{why}.",
                    board=board,
                    circuit=circuit,
                    field=field,
                    expected="a reading",
                )
            )
        return found


@register
class LimitationNotRecorded(CertificateCheck):
    """LIM written in the schedule but no limitation recorded on the certificate.

    What it checks:
    When any circuit records LIM for a result, that the certificate's agreed limitations
    field holds a limitation (not blank, "None" or N/A). One finding per circuit, naming
    its LIM columns.

    Why it matters:
    LIM says a test was not done because of an agreed limitation; with no limitation
    recorded, nothing explains or authorises the gap, and the result is simply missing.

    Known false alarms:
    Limitations written on a continuation sheet the layout does not read.

    Failing example:
    Circuit 3 Zs "LIM"; limitations field "None".

    Passing example:
    Circuit 3 Zs "LIM"; limitations "Loft circuits not accessible, agreed with client".

    Options:
    none.

    Reference:
    BS 7671:2018+A2:2022 Reg 653.2 (limitations agreed and recorded on the report) and
    Appendix 6 (the report's limitations section); from memory for the regulation number.
    """

    id = "limitation-not-recorded"
    title = "LIM used but no limitation recorded"
    severity = Severity.QUERY
    reference = "BS 7671:2018+A2:2022 Reg 653.2 (from memory), Appendix 6"
    basis = "from memory"
    group = "completeness"

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        lim_rows = []
        for board, circuit in cert.circuits():
            names = [n for n, c in circuit.cells.items() if c.value.kind is ValueKind.LIMITATION]
            if names:
                lim_rows.append((board, circuit, names))
        if not lim_rows:
            return None
        if limitations_recorded(cert):
            return []
        recorded = cert.value("limitations").display()
        return [
            self.make(
                cert,
                f"LIM recorded for {', '.join(FIELDS[n].label for n in names)} but the "
                f"certificate records no limitation (limitations: {recorded}).",
                board=board,
                circuit=circuit,
                field=names[0],
                expected="a limitation recorded on the certificate",
            )
            for board, circuit, names in lim_rows
        ]


@register
class CertificateDetailsMissing(CertificateCheck):
    """A detail every certificate must carry is blank.

    What it checks:
    The certificate-level details named in the option (by default: certificate number,
    installation address, date of inspection, inspector, next inspection date) are present
    and not blank, a dash or N/A. Not applied when the layout reads no certificate details
    at all.

    Why it matters:
    Without them the certificate cannot be tied to a property, a person or a date, and the
    landlord cannot show when the next inspection is due.

    Known false alarms:
    A layout that reads some certificate details but not the one reported (the detail is on
    the form, the layout misses it): check the layout's labels.

    Failing example:
    Date of inspection blank.

    Passing example:
    Certificate "EICR-0042", address, date 2024-03-12, inspector, next inspection 2029-03.

    Options:
    fields: comma-separated certificate fields that must be filled in.

    Reference:
    BS 7671:2018+A2:2022 Appendix 6 (model forms: details of the installation, the
    inspector's declaration and the recommended next inspection); common practice, no
    source for which are treated as essential.
    """

    id = "certificate-details-missing"
    title = "Certificate details missing"
    severity = Severity.QUERY
    reference = "BS 7671:2018+A2:2022 Appendix 6; selection: common practice, no source"
    basis = "common practice"
    group = "completeness"

    @dataclass(frozen=True)
    class Options:
        fields: str = option(
            "cert_number,address,inspection_date,inspector,next_inspection",
            "common practice, no source",
            "comma-separated certificate fields that must be filled in", names="certificate"
        )

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        if not cert.cells:
            return None
        wanted = [f.strip() for f in self.options.fields.split(",") if f.strip()]
        unknown = [f for f in wanted if f not in CERTIFICATE]
        if unknown:
            raise ValueError(f"{self.id}: unknown certificate field(s) {unknown} in option fields")
        found = []
        for name in wanted:
            v = cert.value(name)
            if v.kind in (ValueKind.EMPTY, ValueKind.DASH, ValueKind.NOT_APPLICABLE):
                found.append(
                    self.make(
                        cert,
                        f"{CERTIFICATE[name].label} is not filled in ({v.display()}).",
                        field=name,
                        expected="filled in",
                    )
                )
        return found


@register
class OutcomeContradictsObservations(CertificateCheck):
    """Overall assessment "Satisfactory" while C1, C2 or FI observations are recorded.

    What it checks:
    When the overall assessment reads satisfactory (and not "unsatisfactory"), that the
    observation codes hold no C1 (danger present), C2 (potentially dangerous) or FI
    (further investigation) with a count above zero. C3 does not affect the outcome.

    Why it matters:
    A report with C1, C2 or FI observations is unsatisfactory by definition; calling it
    satisfactory tells a landlord the installation is safe to let when it is not.

    Known false alarms:
    Observation codes recorded as text the parser reads as a code (e.g. a circuit named
    "C2" in the observations field).

    Failing example:
    Overall assessment "Satisfactory", observation codes "C2 x1, C3 x2".

    Passing example:
    Overall assessment "Satisfactory", observation codes "C3 x2"; "C1 - 0, C2 - 0, C3 - 1"
    (a summary of counts); or "Unsatisfactory" with "C2". When both outcomes are printed as
    tick boxes, the ticked one is read; if that cannot be told the check does not apply.

    Options:
    none.

    Reference:
    BS 7671:2018+A2:2022 Appendix 6 (EICR guidance: C1, C2 or FI make the overall
    assessment unsatisfactory).
    """

    id = "outcome-contradicts-observations"
    title = "Satisfactory outcome with C1/C2/FI observations"
    severity = Severity.BREACH
    reference = "BS 7671:2018+A2:2022 Appendix 6, EICR guidance on classification codes"
    basis = "published"
    group = "completeness"

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        outcome = cert.text("overall_outcome").lower()
        if "unsatisf" in outcome and "satisfactory" in outcome.replace("unsatisfactory", ""):
            choice, _ = ticked_choice(outcome, ("satisfactory", "unsatisfactory"))
            if choice is None:
                return None  # both printed, which one is ticked cannot be told
            outcome = choice
        if "satisf" not in outcome or "unsatisf" in outcome or "not satisf" in outcome:
            return None
        codes = observation_codes(cert.text("observation_codes"))
        bad = {c: n for c, n in codes.items() if c in ("C1", "C2", "FI") and n > 0}
        if not bad:
            return []
        listed = ", ".join(f"{c} ×{n}" for c, n in sorted(bad.items()))
        return [
            self.make(
                cert,
                f"Overall assessment is satisfactory but the report records {listed}; "
                "C1, C2 or FI make it unsatisfactory.",
                field="overall_outcome",
                expected="Unsatisfactory",
            )
        ]


_OUTCOMES = ("Satisfactory", "Unsatisfactory")
_BOX_GLYPHS = frozenset("☐□☑☒")


def _unclear_choice(text: str, choices: tuple[str, ...]) -> str | None:
    """Why a printed tick-box line cannot be read, or None when it can (or is no such line)."""
    named = {c.lower() for c in choices if re.search(
        r"(?<![\w-])" + re.escape(c) + r"(?![\w-])", text, re.IGNORECASE)}
    if len(named) < 2 and not any(ch in text for ch in _BOX_GLYPHS):
        return None
    choice, reason = ticked_choice(text, choices)
    return None if choice is not None else reason


@register
class TickBoxChoiceUnclear(CertificateCheck):
    """A tick-box line that prints every option, where which one is ticked cannot be told.

    What it checks:
    The earthing system (certificate and each board) and the overall assessment, when the
    form prints every option with a box or mark beside each ("TN-S ☐ TN-C-S ☑ TT ☐",
    "Satisfactory ☐ Unsatisfactory ☒"): exactly one option must be marked. None marked,
    or several, is queried; the checks that need the earthing system or the outcome then
    do not apply, rather than guess.

    Why it matters:
    The earthing system decides which limits apply (Ze, disconnection times, RCD fault
    protection on TT); the overall assessment is the certificate's verdict. Read wrongly,
    every check downstream is judged against the wrong rule.

    Known false alarms:
    A mark the PDF draws as a picture rather than a character is not seen.

    Failing example:
    Earthing "TN-S ✔ TN-C-S ✔ TT" (two marked); overall assessment "Satisfactory
    Unsatisfactory" with neither marked.

    Passing example:
    Earthing "TN-S ☐ TN-C-S ☑ TT ☐"; earthing "TN-C-S" written plainly.

    Options:
    none.

    Reference:
    BS 7671:2018+A2:2022 Appendix 6 model forms (earthing arrangements and overall
    assessment are chosen by ticking one box), from memory; common practice, no source.
    """

    id = "tick-box-choice-unclear"
    title = "Tick-box choice (earthing, outcome) cannot be read"
    severity = Severity.QUERY
    reference = "BS 7671:2018+A2:2022 Appendix 6 model forms (from memory)"
    basis = "from memory"
    group = "completeness"

    def check_certificate(self, cert: Certificate) -> Iterable[Finding] | None:
        holders: list[tuple[Board | None, str, tuple[str, ...]]] = [
            (None, "earthing", EARTHING_CHOICES), (None, "overall_outcome", _OUTCOMES)]
        holders += [(b, "earthing", EARTHING_CHOICES) for b in cert.boards]
        found: list[Finding] = []
        applied = False
        for board, name, choices in holders:
            text = board.text(name) if board is not None else cert.text(name)
            if not text:
                continue
            applied = True
            why = _unclear_choice(text, choices)
            if why is None:
                continue
            found.append(self.make(
                cert,
                f"{CERTIFICATE[name].label} is printed as a tick-box line ({text!r}) and which "
                f"option is ticked cannot be told: {why}.",
                board=board,
                field=name,
                expected="one option ticked",
            ))
        return found if applied else None
