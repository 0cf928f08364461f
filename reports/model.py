"""View-models for the per-certificate report: plain dataclasses built from a Certificate and
its CheckResults. Templates only lay these out; every decision (what is questioned, which
colour class, which wording) is made here or in ``reports.verdict``.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field, replace
from typing import Any

from certvet.checks.caution import DESK_CHECK_CAUTION, NOT_AN_INSPECTION
from certvet.checks.model import CheckRun, Finding, Outcome, Severity
from certvet.checks.profile import Profile
from certvet.checks.registry import get_check
from certvet.checks.runner import CheckResults
from certvet.extractor.fields import BOARD, CERTIFICATE, FIELDS
from certvet.extractor.records import Board, Cell, Certificate, Circuit, ValueKind
from certvet.reports.verdict import Verdict, decide

CAUTIONS: tuple[str, ...] = (
    DESK_CHECK_CAUTION,
    NOT_AN_INSPECTION,
    "Where this report and BS 7671, local codes or licensed practice differ, they prevail. "
    "Limits used by the checks are listed with their source; check them before relying on them.",
    "Electrical work can kill. Do not open, test or alter an installation unless you are "
    "competent to do so.",
)

SEVERITIES_WORST_FIRST: tuple[Severity, ...] = tuple(sorted(Severity, reverse=True))

SEVERITY_LEGEND_NOTE = (
    "Severities are certvet's own scale for what this desk check found in the recorded "
    "figures. They are not the certificate's classification codes (C1, C2, C3, FI), which are "
    "shown as plain text, exactly as printed."
)


@dataclass(frozen=True)
class SeverityKey:
    """One entry of the severity legend."""

    slug: str
    mark: str
    label: str
    meaning: str
    outline: str  # how a questioned cell of the schedule is outlined (the template's CSS)


_OUTLINES = {Severity.IMPOSSIBLE: "double", Severity.BREACH: "solid", Severity.QUERY: "dashed",
             Severity.NOTE: "dotted"}
SEVERITY_LEGEND: tuple[SeverityKey, ...] = tuple(
    SeverityKey(s.slug, s.mark, s.label, s.meaning, _OUTLINES[s]) for s in SEVERITIES_WORST_FIRST
)


def severity_css() -> str:
    """CSS that puts each severity's mark before its badge (and a questioned cell's tag), so a
    severity is told by its shape and label, never by colour alone. Marks: ``Severity.mark``."""
    return "\n".join(
        f'.sev.sev-{k.slug}::before, .sev-{k.slug} > .tag::before {{ content: "{k.mark}\\a0"; }}'
        for k in SEVERITY_LEGEND
    )

# Certificate-level details shown in the header, in order.
HEADER_FIELDS: tuple[str, ...] = (
    "cert_number", "report_type", "address", "client", "contractor", "inspector",
    "inspection_date", "issue_date", "next_inspection", "bs7671_edition", "premises_type",
    "installation_age", "instrument_serial", "earthing", "ze", "ipf",
    "overall_outcome", "observation_codes", "limitations",
)

# Short column headings for the schedule table (the full label is the heading's tooltip).
SHORT_LABELS: dict[str, str] = {
    "circuit_ref": "Cct", "description": "Description", "wiring_type": "Wiring",
    "ref_method": "Ref. method", "points": "Points", "live_csa": "Live", "cpc_csa": "CPC",
    "max_disconnection_time": "Max disc.", "device_standard": "BS (EN)",
    "device_type": "Type", "rating": "Rating", "breaking_capacity": "Break. cap.",
    "rcd_type": "RCD type", "rcd_idn": "IΔn", "max_zs": "Max Zs", "r1": "r1", "rn": "rn",
    "r2": "r2", "r1_r2": "R1+R2", "r1_rn": "R1+Rn", "r2_only": "R2",
    "ir_test_voltage": "IR test", "ir_live_live": "IR L–L", "ir_live_earth": "IR L–E",
    "polarity": "Polarity", "zs": "Zs", "rcd_time": "RCD at IΔn", "rcd_time_5x": "RCD at 5×",
    "rcd_button": "RCD button", "afdd_button": "AFDD button", "remarks": "Remarks",
}
WIDE_COLUMNS = frozenset({"description", "remarks"})

# Board-level values shown above each board's schedule.
BOARD_HEADER_FIELDS: tuple[str, ...] = (
    "location", "supplied_from", "earthing", "ze", "ipf", "board_polarity",
)


# --------------------------------------------------------------------------------------------
# dataclasses


@dataclass(frozen=True)
class Detail:
    label: str
    text: str  # as printed, or "" when not read
    unit: str = ""
    questioned: str | None = None  # severity slug when a finding questions this value
    note: str = ""  # tooltip: the findings about it
    questioned_label: str = ""  # severity as words, shown beside the value


@dataclass(frozen=True)
class SeverityCount:
    slug: str
    label: str
    count: int


@dataclass(frozen=True)
class FindingView:
    number: int  # stable number within the report, used to link cells to findings
    check_id: str
    check_title: str
    severity: str  # slug
    severity_label: str
    location: str  # "Board DB1, circuit 3" or "Certificate"
    field_label: str
    message: str
    recorded: str
    expected: str
    tolerance: str
    reference: str
    page: str
    preview: bool


@dataclass(frozen=True)
class FindingGroup:
    slug: str
    label: str
    findings: list[FindingView]  # the first SHOWN_FINDINGS_PER_GROUP of the group
    hidden: int = 0  # findings of the group not listed in the HTML (all are in JSON and CSV)


@dataclass(frozen=True)
class ColumnView:
    name: str
    label: str  # full label (tooltip)
    short: str  # heading as shown
    unit: str
    wide: bool  # free text that may wrap (description, remarks)


@dataclass(frozen=True)
class CellView:
    text: str  # as printed
    kind: str
    severity: str | None = None  # worst questioning severity slug, None when not questioned
    severity_label: str = ""
    expected: str = ""  # expected value(s) to print beside the recorded one
    tooltip: str = ""
    finding_numbers: tuple[int, ...] = ()

    @property
    def css(self) -> str:
        classes = [f"k-{self.kind}"]
        if self.severity:
            classes += ["questioned", f"sev-{self.severity}"]
        return " ".join(classes)


@dataclass(frozen=True)
class RowView:
    ref: str
    page: str
    cells: list[CellView]
    severity: str | None  # worst severity of any finding on this circuit
    severity_label: str
    circuit_notes: list[str]  # findings about the circuit as a whole (no single field)


@dataclass(frozen=True)
class BoardView:
    ref: str
    page: str
    details: list[Detail]
    columns: list[ColumnView]
    rows: list[RowView]
    hidden: int = 0  # circuits without findings left out of a long schedule (SHOWN_ROWS)


@dataclass(frozen=True)
class OptionView:
    name: str
    value: str


@dataclass(frozen=True)
class CheckRunView:
    check_id: str
    title: str
    outcome: str  # Outcome value, used as CSS class
    outcome_label: str
    applied_to: int
    findings: int
    severity: str  # severity label in effect
    options: list[OptionView]
    overridden: bool  # the profile changed something for this check
    reason: str = ""  # why it did not apply, when the check says


@dataclass(frozen=True)
class ProblemView:
    message: str
    where: str
    raw: str
    page: str


@dataclass(frozen=True)
class SourceView:
    file: str
    sha256: str
    layout: str
    engine: str
    page_count: int


@dataclass(frozen=True)
class ProfileView:
    name: str
    description: str
    path: str


@dataclass
class ReportView:
    title: str
    subtitle: str  # the installation address, when read
    certvet_version: str
    generated_at: str
    verdict: Verdict
    counts: list[SeverityCount]
    preview_count: int
    details: list[Detail]
    source: SourceView
    finding_groups: list[FindingGroup]
    boards: list[BoardView]
    problems: list[ProblemView]
    runs: list[CheckRunView]
    run_summary: str
    profile: ProfileView
    cautions: tuple[str, ...] = CAUTIONS
    circuit_count: int = 0
    extra: dict[str, Any] = field(default_factory=dict)
    related: list[RelatedView] = field(default_factory=list)  # cross-certificate findings
    related_note: str = ""  # the verdict box's sentence about them
    problems_hidden: int = 0  # extraction problems not listed (all are in the JSON)
    drafted_note: str = ""  # read with a layout drafted on the fly: the verdict box says so


# --------------------------------------------------------------------------------------------
# building


def _cell_text(cell: Cell | None) -> str:
    return cell.value.raw if cell is not None else ""


def _page(p: int | None) -> str:
    return str(p) if p is not None else "—"


def _location(f: Finding) -> str:
    if f.board and f.circuit:
        return f"Board {f.board}, circuit {f.circuit}"
    if f.board:
        return f"Board {f.board}"
    if f.circuit:
        return f"Circuit {f.circuit}"
    return "Certificate"


def _field_label(f: Finding) -> str:
    if not f.field:
        return ""
    if f.circuit is not None and f.field in FIELDS:
        return FIELDS[f.field].label
    if f.board is not None and f.field in BOARD:
        return BOARD[f.field].label
    for table in (FIELDS, BOARD, CERTIFICATE):
        if f.field in table:
            return table[f.field].label
    return f.field


location_text = _location  # "Board DB1, circuit 4": public for the reader outputs
field_label = _field_label


def _check_title(check_id: str, runs: dict[str, CheckRun]) -> str:
    if check_id in runs:
        return runs[check_id].title
    try:
        return get_check(check_id).title
    except KeyError:
        return check_id


def _ref_sort(ref: str | None) -> tuple[int, int, str]:
    if ref is None:
        return (0, -1, "")
    digits = "".join(ch for ch in ref if ch.isdigit())
    return (1, int(digits) if digits else 10**6, ref)


# A report stays one usable page however large the certificate: a schedule of thousands of
# circuits (a board heading never matched) would otherwise make a report of hundreds of MB.
# Beyond these numbers the HTML lists what needs attention and says what it left out; the
# JSON and CSV reports always hold everything. Common practice, no source.
SHOWN_ROWS = 600  # schedule rows in one report (circuits with findings first)
SHOWN_FINDINGS_PER_GROUP = 500
SHOWN_PROBLEMS = 300


def _finding_views(
    findings: list[Finding], runs: dict[str, CheckRun]
) -> tuple[list[FindingGroup], dict[int, FindingView]]:
    """Group findings by severity (worst first) then board/circuit; previews last."""
    ordered = sorted(
        enumerate(findings),
        key=lambda pair: (
            pair[1].preview,
            -int(pair[1].severity),
            pair[1].board or "",
            _ref_sort(pair[1].circuit),
            pair[1].check_id,
            pair[0],
        ),
    )
    by_index: dict[int, FindingView] = {}
    groups: dict[str, FindingGroup] = {}
    for number, (idx, f) in enumerate(ordered, start=1):
        view = FindingView(
            number=number,
            check_id=f.check_id,
            check_title=_check_title(f.check_id, runs),
            severity=f.severity.slug,
            severity_label=f.severity.label,
            location=_location(f),
            field_label=_field_label(f),
            message=f.message,
            recorded=f.recorded or "",
            expected=f.expected or "",
            tolerance=f.tolerance or "",
            reference=f.reference,
            page=_page(f.page),
            preview=f.preview,
        )
        by_index[idx] = view
        key = "preview" if f.preview else f.severity.slug
        if key not in groups:
            label = "preview checks (not counted)" if f.preview else f.severity.label
            groups[key] = FindingGroup(key, label, [])
        groups[key].findings.append(view)
    return [
        replace(g, findings=g.findings[:SHOWN_FINDINGS_PER_GROUP],
                hidden=max(0, len(g.findings) - SHOWN_FINDINGS_PER_GROUP))
        for g in groups.values()
    ], by_index


def _shown_rows(boards: list[BoardView]) -> list[BoardView]:
    """At most SHOWN_ROWS schedule rows in all: rows with a finding first, then the others,
    each board keeping its own order; each board says how many it left out."""
    total = sum(len(b.rows) for b in boards)
    if total <= SHOWN_ROWS:
        return boards
    flagged = [(k, i) for k, b in enumerate(boards) for i, r in enumerate(b.rows)
               if r.severity or r.circuit_notes]
    plain = [(k, i) for k, b in enumerate(boards) for i, r in enumerate(b.rows)
             if not (r.severity or r.circuit_notes)]
    keep = set((flagged + plain)[:SHOWN_ROWS])
    return [
        replace(b, rows=[r for i, r in enumerate(b.rows) if (k, i) in keep],
                hidden=sum(1 for i in range(len(b.rows)) if (k, i) not in keep))
        for k, b in enumerate(boards)
    ]


def _questioned(
    items: list[tuple[Finding, FindingView]],
) -> tuple[str | None, str, str, str, tuple[int, ...]]:
    """Worst severity slug, its label, expected text, tooltip and finding numbers."""
    if not items:
        return None, "", "", "", ()
    counted = [it for it in items if not it[0].preview] or items
    worst = max(counted, key=lambda it: int(it[0].severity))[0].severity
    expected: list[str] = []
    for f, _ in items:
        if f.expected:
            text = f.expected + (f" ({f.tolerance})" if f.tolerance else "")
            if text not in expected:
                expected.append(text)
    tooltip = "\n".join(
        f"[{v.number}] {f.severity.label}: {f.check_id}: {f.message}" for f, v in items
    )
    return worst.slug, worst.label, "; ".join(expected), tooltip, tuple(v.number for _, v in items)


def _cell_view(cell: Cell | None, items: list[tuple[Finding, FindingView]]) -> CellView:
    kind = cell.value.kind.value if cell is not None else ValueKind.EMPTY.value
    sev, label, expected, tooltip, numbers = _questioned(items)
    if cell is not None and cell.value.kind is ValueKind.UNREADABLE and cell.value.problem:
        tooltip = (tooltip + "\n" if tooltip else "") + f"could not be read: {cell.value.problem}"
    return CellView(_cell_text(cell), kind, sev, label, expected, tooltip, numbers)


def _detail(label: str, cell: Cell | None, unit: str | None,
            items: list[tuple[Finding, FindingView]]) -> Detail:
    sev, sev_label, expected, tooltip, _ = _questioned(items)
    note = tooltip + (f"\nexpected: {expected}" if expected else "")
    text = _cell_text(cell).strip()
    # add the unit only to a bare printed number ("0.35" -> "0.35 Ω"), never to "0.35Ω"
    bare = text[-1:].isdigit() and cell is not None and (
        cell.value.is_number or cell.value.is_bound)
    shown_unit = (unit or "") if bare else ""
    return Detail(label, text, shown_unit, sev, note.strip(), sev_label)


def _columns_for(board: Board) -> list[ColumnView]:
    used = {name for c in board.circuits for name, cell in c.cells.items()
            if cell.value.kind is not ValueKind.EMPTY or name == "circuit_ref"}
    used.add("circuit_ref")
    return [ColumnView(spec.name, spec.label, SHORT_LABELS.get(spec.name, spec.label),
                       spec.unit or "", spec.name in WIDE_COLUMNS)
            for spec in FIELDS.values() if spec.name in used]


def _row(circuit: Circuit, columns: list[ColumnView],
         fs: list[tuple[Finding, FindingView]]) -> RowView:
    cells: list[CellView] = []
    for col in columns:
        items = [(f, v) for f, v in fs if f.field == col.name]
        cells.append(_cell_view(circuit.cells.get(col.name), items))
    shown = {c.name for c in columns}
    loose = [(f, v) for f, v in fs if f.field is None or f.field not in shown]
    sev, label, _, _, _ = _questioned(fs)
    notes = [f"[{v.number}] {f.severity.label}: {f.message}" for f, v in loose]
    return RowView(circuit.ref, _page(circuit.page), cells, sev, label, notes)


def _option_text(value: Any) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    return str(value)


def _runs(results: CheckResults, profile: Profile) -> list[CheckRunView]:
    views: list[CheckRunView] = []
    for run in results.runs:
        settings = profile.settings(run.check_id)
        try:
            default_sev = get_check(run.check_id).severity
        except KeyError:
            default_sev = None
        sev = settings.severity or default_sev
        views.append(
            CheckRunView(
                check_id=run.check_id,
                title=run.title,
                outcome=run.outcome.value,
                outcome_label=run.outcome.describe(run.findings),
                applied_to=run.applied_to,
                findings=run.findings,
                severity=sev.label if sev is not None else "",
                options=[OptionView(k, _option_text(v)) for k, v in run.options.items()],
                overridden=run.check_id in profile.checks,
                reason=run.reason or "",
            )
        )
    return views


def _run_summary(results: CheckResults, circuits: int) -> str:
    n = len(results.runs)
    by = {o: [r for r in results.runs if r.outcome is o] for o in Outcome}
    found = sum(r.findings for r in by[Outcome.FOUND])
    parts = [
        (f"{len(by[o])} {o.label} {found} finding{'s' if found != 1 else ''}"
         if o is Outcome.FOUND else f"{len(by[o])} {o.label}")
        for o in Outcome if by[o]
    ]
    head = (f"{n} check{'s' if n != 1 else ''} run on {circuits} "
            f"circuit{'s' if circuits != 1 else ''}")
    return head + (": " + ", ".join(parts) if parts else "")


def build_report(
    cert: Certificate,
    results: CheckResults,
    *,
    certvet_version: str,
    profile: Profile | None = None,
    generated_at: str = "",
    related: Sequence[RelatedFinding] = (),
) -> ReportView:
    profile = profile or results.profile
    counted = results.with_findings(rf.finding for rf in related)  # verdict and counts
    runs = {r.check_id: r for r in results.runs}
    groups, by_index = _finding_views(results.findings, runs)
    pairs = [(f, by_index[i]) for i, f in enumerate(results.findings)]

    by_place: dict[tuple[str | None, str | None], list[tuple[Finding, FindingView]]] = {}
    for f, v in pairs:  # one pass: a schedule of thousands of circuits stays linear
        by_place.setdefault((f.board, f.circuit), []).append((f, v))

    def about(board: str | None, circuit: str | None) -> list[tuple[Finding, FindingView]]:
        return by_place.get((board, circuit), [])

    cert_level = about(None, None)
    details = [
        _detail(CERTIFICATE[name].label, cert.cells.get(name), CERTIFICATE[name].unit,
                [(f, v) for f, v in cert_level if f.field == name])
        for name in HEADER_FIELDS
    ]

    boards: list[BoardView] = []
    for board in cert.boards:
        board_level = about(board.ref, None)
        bdetails = [
            _detail(BOARD[name].label, board.cells.get(name), BOARD[name].unit,
                    [(f, v) for f, v in board_level if f.field == name])
            for name in BOARD_HEADER_FIELDS
            if name in board.cells or any(f.field == name for f, _ in board_level)
        ]
        columns = _columns_for(board)
        rows = [_row(c, columns, about(board.ref, c.ref)) for c in board.circuits]
        boards.append(BoardView(board.ref, _page(board.page), bdetails, columns, rows))

    problems = [
        ProblemView(
            message=p.message,
            where=", ".join(x for x in (
                f"board {p.board}" if p.board else "",
                f"circuit {p.circuit}" if p.circuit else "",
                (FIELDS[p.field].label if p.field in FIELDS else p.field) if p.field else "",
            ) if x) or "certificate",
            raw=p.raw or "",
            page=_page(p.box.page if p.box else None),
        )
        for p in cert.problems[:SHOWN_PROBLEMS]
    ]

    circuits = len(cert.circuits())
    number = cert.text("cert_number")
    return ReportView(
        title=f"Desk audit of certificate {number}" if number else f"Desk audit of {cert.name}",
        subtitle=cert.text("address"),
        certvet_version=certvet_version,
        generated_at=generated_at,
        verdict=decide(cert, counted),
        counts=[SeverityCount(s.slug, s.label, counted.count(s)) for s in SEVERITIES_WORST_FIRST],
        preview_count=sum(1 for f in counted.findings if f.preview),
        details=details,
        source=SourceView(cert.source, cert.sha256, cert.layout, cert.engine, cert.page_count),
        finding_groups=groups,
        boards=_shown_rows(boards),
        problems=problems,
        problems_hidden=max(0, len(cert.problems) - SHOWN_PROBLEMS),
        runs=_runs(results, profile),
        run_summary=_run_summary(results, circuits),
        profile=ProfileView(profile.name, profile.description, profile.path or "built in"),
        circuit_count=circuits,
        related=_related_views(tuple(related)),
        related_note=_related_note(tuple(related)),
        drafted_note=cert.drafted.message(cert.source) if cert.drafted is not None else "",
    )


# --------------------------------------------------------------------------------------------
# findings of the comparison across certificates (filled in by a batch run; plain data only)

RELATION_LABELS: dict[str, str] = {"equal": "equal", "near": "±1 in the last digit",
                                   "different": "different"}
@dataclass(frozen=True)
class OtherCertificate:
    """A certificate a cross-certificate finding points at."""

    name: str
    address: str = ""
    date: str = ""
    inspector: str = ""
    report: str | None = None  # href of its own report (relative), when known


@dataclass(frozen=True)
class PairedValue:
    """One reading here beside the aligned reading on the other certificate."""

    board: str
    circuit: str
    field: str
    here: str
    there: str
    relation: str  # "equal", "near" (±1 in the last printed digit) or "different"
    board_there: str = ""
    circuit_there: str = ""


@dataclass(frozen=True)
class RelatedFinding:
    """A finding of the comparison across certificates, about this certificate."""

    finding: Finding
    others: tuple[OtherCertificate, ...] = ()
    readings: tuple[PairedValue, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        return {
            "finding": self.finding.to_dict(),
            "others": [vars(o).copy() for o in self.others],
            "readings": [vars(r).copy() for r in self.readings],
        }


@dataclass(frozen=True)
class PairCellView:
    here: str
    there: str
    relation: str
    title: str


@dataclass(frozen=True)
class PairRowView:
    board: str
    circuit: str
    board_there: str
    circuit_there: str
    cells: tuple[PairCellView | None, ...]  # one per RelatedView.fields


@dataclass(frozen=True)
class RelatedView:
    number: int
    check_id: str
    check_title: str
    severity: str
    severity_label: str
    location: str
    message: str
    recorded: str
    reference: str
    others: tuple[OtherCertificate, ...]
    fields: tuple[tuple[str, str], ...]  # (short heading, full label)
    rows: tuple[PairRowView, ...]
    summary: str  # "12 equal, 3 ±1, 1 different of 16 aligned readings"


def _pair_cell(p: PairedValue | None) -> PairCellView | None:
    if p is None:
        return None
    return PairCellView(p.here, p.there, p.relation,
                        f"{p.field}: here {p.here or '—'}, there {p.there or '—'} "
                        f"({RELATION_LABELS.get(p.relation, p.relation)})")


def _related_views(related: Sequence[RelatedFinding]) -> list[RelatedView]:
    order = list(FIELDS)
    views: list[RelatedView] = []
    for number, rf in enumerate(related, start=1):
        f = rf.finding
        names: list[str] = []
        grouped: dict[tuple[str, str, str, str], dict[str, PairedValue]] = {}
        for p in rf.readings:
            if p.field not in names:
                names.append(p.field)
            grouped.setdefault((p.board, p.circuit, p.board_there, p.circuit_there),
                               {})[p.field] = p
        names.sort(key=lambda n: (order.index(n) if n in order else len(order), n))
        fields = tuple((SHORT_LABELS.get(n, n), FIELDS[n].label if n in FIELDS else n)
                       for n in names)
        rows = tuple(
            PairRowView(b, c, bt, ct, tuple(_pair_cell(cells.get(n)) for n in names))
            for (b, c, bt, ct), cells in grouped.items()
        )
        count = {k: sum(1 for p in rf.readings if p.relation == k) for k in RELATION_LABELS}
        summary = (f"{count['equal']} equal, {count['near']} within ±1 in the last digit, "
                   f"{count['different']} different, of {len(rf.readings)} aligned readings"
                   if rf.readings else "")
        views.append(RelatedView(
            number=number, check_id=f.check_id,
            check_title=_check_title(f.check_id, {}),
            severity=f.severity.slug, severity_label=f.severity.label, location=_location(f),
            message=f.message, recorded=f.recorded or "", reference=f.reference,
            others=rf.others, fields=fields, rows=rows, summary=summary,
        ))
    return views


def _related_note(related: Sequence[RelatedFinding]) -> str:
    """One sentence for the verdict box; "" when there is nothing to say."""
    if not related:
        return ""
    n = len(related)
    return (f"The comparison with other certificates raised {n} finding{'s' if n != 1 else ''}, "
            "counted in the outcome above: see \u201cCompared with other certificates\u201d "
            "below.")
