"""The portfolio page: one self-contained HTML page over a batch or a whole corpus.

Plain inputs in (`PortfolioData`, gathered from the store by certvet.batch.collect_portfolio —
reports never imports certvet), a view-model built here, a dumb template
(`templates/portfolio.html.j2`, autoescape on), charts as inline SVG (reports/charts.py).

    from certvet.batch import write_portfolio       # from a store, a Corpus or a BatchReport
    write_portfolio("corpus.sqlite", "portfolio.html")

Risk score (which certificates a desk auditor should sample first)
------------------------------------------------------------------
Our own documented points, common practice, no source; the page prints this table too:

* each counted finding of the certificate's own checks: impossible 10, breach 5, query 2,
  note 0 — at most 3 findings of one check count, so one noisy check cannot rank a
  certificate alone;
* readings copied from a certificate at another address: 12 for a whole schedule, 8 for a
  board, 5 for a run of circuits, for each of at most 2 other certificates;
* readings repeating an earlier certificate at the same address: 8;
* certificate number also used on another certificate: 6;
* inspector or instrument signing more circuits in a day than can be tested: 6 (each);
* audit incomplete (part of the schedule unreadable): 2.

Ties are broken by the worst severity, then the name. The score orders the sample; it is not
a measure of danger.
"""

from __future__ import annotations

import os
from collections import Counter, defaultdict
from dataclasses import dataclass, field
from pathlib import Path

from markupsafe import Markup

from certvet.checks.catalogue.across import ScheduleCopiedFromOtherAddress
from certvet.reports import charts

SEVERITY_POINTS = {"impossible": 10.0, "breach": 5.0, "query": 2.0, "note": 0.0}
MAX_PER_CHECK = 3
COPY_POINTS = {"whole": 12.0, "board": 8.0, "run": 5.0}
MAX_COPY_LINKS = 2
CROSS_POINTS = {
    "schedule-repeats-earlier-at-address": 8.0,
    "certificate-number-reused": 6.0,
    "inspector-workload-implausible": 6.0,
    "instrument-workload-implausible": 6.0,
}
COPIED = ScheduleCopiedFromOtherAddress.id
INCOMPLETE_POINTS = 2.0
SHOW_PAIR_ROWS = 30  # aligned circuits shown per pair before "and N more"
FIELD_ORDER = ("r1", "rn", "r2", "r1_r2", "r1_rn", "r2_only", "ir_live_live", "ir_live_earth",
               "zs", "rcd_time", "rcd_time_5x")

SCORE_RULES: tuple[tuple[str, str], ...] = (
    ("Impossible-as-recorded finding", "10 each"),
    ("Breach finding", "5 each"),
    ("Query finding", "2 each"),
    ("Note", "0"),
    ("Findings of one check", f"at most {MAX_PER_CHECK} count"),
    ("Whole schedule copied from another address", "12 per other certificate"),
    ("A board copied from another address", "8 per other certificate"),
    ("A run of circuits copied from another address", "5 per other certificate"),
    ("Copy links counted", f"at most {MAX_COPY_LINKS}"),
    ("Readings repeat an earlier certificate at the same address", "8"),
    ("Certificate number used on another certificate", "6"),
    ("Inspector or instrument over a day's testing", "6 each"),
    ("Audit incomplete (part of the schedule unreadable)", "2"),
)

CAUTIONS = (
    "A desk check of recorded results cannot show that an installation is safe, or that any "
    "test was carried out: it tells you which certificates and results to question first.",
    "Shared readings and heavy workloads are reasons to ask, not proof of wrongdoing: a "
    "contractor may have a good explanation (a re-issued certificate, a corrected address).",
    "Defer to BS 7671, local codes and licensed practice; only an inspection and test on site "
    "by a competent person can confirm the condition of an installation.",
)


# --- inputs (plain data, filled by certvet.batch.collect_portfolio) ------------------------


@dataclass(frozen=True)
class CertInput:
    id: int
    name: str
    sha256: str
    source: str
    address: str | None
    inspector: str | None
    contractor: str | None
    date: str | None
    verdict_key: str
    verdict_label: str
    tone: str
    circuits: int
    tested: int
    findings: tuple[tuple[str, str, str], ...]  # (check id, severity slug, message), counted
    report: Path | None = None


@dataclass(frozen=True)
class LinkInput:
    """One cross-certificate finding attributed to one certificate."""

    cert: int
    other: int | None  # the certificate sharing readings (copies and repeats)
    check_id: str
    severity: str
    message: str
    kind: str | None = None  # whole / board / run
    share: float | None = None
    # (board a, board b, ((field, circuit a, raw a, circuit b, raw b, relation), ...))
    blocks: tuple[tuple[str, str, tuple[tuple[str, str, str | None, str, str | None, str],
                                         ...]], ...] = ()
    related: tuple[str, ...] = ()


@dataclass(frozen=True)
class PartyInput:
    role: str  # contractor / inspector
    party: str
    last_digit_chi2: float
    share_0_or_5: float
    share_zs_exact: float
    zs_compared: int
    readings: int


@dataclass
class PortfolioData:
    title: str
    scope: str
    store: str
    certificates: list[CertInput]
    failures: list[tuple[str, str]]
    links: list[LinkInput]
    parties: list[PartyInput]
    zs_ratios: list[float]
    last_digits: list[int]
    workload: list[tuple[str, str, int]]  # (inspector, day, tested circuits)
    workload_limit: int
    severities: list[str] = field(default_factory=lambda: ["impossible", "breach", "query",
                                                           "note"])


# --- view-model ------------------------------------------------------------------------------


@dataclass(frozen=True)
class Ranked:
    rank: int
    name: str
    address: str
    inspector: str
    contractor: str
    date: str
    verdict: str
    tone: str
    score: float
    reasons: tuple[str, ...]
    href: str | None
    counts: dict[str, int]


@dataclass(frozen=True)
class CheckRow:
    check_id: str
    severity: str
    findings: int
    certificates: int
    cross: bool


@dataclass(frozen=True)
class PartyRow:
    role: str
    party: str
    certificates: int
    tested: int
    counts: dict[str, int]
    share_flagged: str
    cross: int
    chi2: str
    share_0_or_5: str
    share_zs_exact: str


@dataclass(frozen=True)
class PairCell:
    a: str
    b: str
    relation: str  # equal / near / different


@dataclass(frozen=True)
class PairRow:
    board_a: str
    circuit_a: str
    board_b: str
    circuit_b: str
    cells: tuple[PairCell | None, ...]  # one per field of PairView.fields


@dataclass(frozen=True)
class PairView:
    a: str
    b: str
    kind: str
    check_id: str
    summary: str
    fields: tuple[str, ...]
    rows: tuple[PairRow, ...]
    more: int


@dataclass(frozen=True)
class ClusterView:
    number: int
    members: tuple[tuple[str, str, str, str | None], ...]  # (name, address, inspector, href)
    pairs: tuple[PairView, ...]


# rows of "Sample these first" before the grouped list (common practice, no source)
SAMPLE_SIZE = 25
OPEN_TONES = ("impossible", "breach", "query", "incomplete")  # groups shown open: the problems


@dataclass(frozen=True)
class VerdictGroup:
    """Every certificate of one verdict, in rank order; problem groups start open."""
    label: str
    tone: str
    rows: list[Ranked]
    open: bool


@dataclass
class PortfolioView:
    title: str
    scope: str
    store: str
    total: int
    failed: int
    verdicts: list[tuple[str, str, int]]
    ranked: list[Ranked]
    checks: list[CheckRow]
    parties: list[PartyRow]
    clusters: list[ClusterView]
    charts: dict[str, Markup]
    chart_notes: dict[str, str]
    failures: list[tuple[str, str]]
    score_rules: tuple[tuple[str, str], ...]
    cautions: tuple[str, ...]
    severities: list[str]
    cross_count: int
    sample: list[Ranked] = field(default_factory=list)  # the top of `ranked` with a score
    groups: list[VerdictGroup] = field(default_factory=list)  # all of `ranked`, by verdict


def _label(c: CertInput) -> str:
    return f"{c.name} — {c.address}" if c.address else c.name


def risk(c: CertInput, links: list[LinkInput]) -> tuple[float, tuple[str, ...]]:
    """The documented score (module docstring) and its reasons, biggest first."""
    parts: list[tuple[float, str]] = []
    by_check: dict[str, list[str]] = defaultdict(list)
    for check_id, sev, _msg in c.findings:
        by_check[check_id].append(sev)
    for check_id, sevs in by_check.items():
        sevs.sort(key=lambda s: -SEVERITY_POINTS.get(s, 0))
        pts = sum(SEVERITY_POINTS.get(s, 0) for s in sevs[:MAX_PER_CHECK])
        if pts:
            parts.append((pts, f"{len(sevs)} × {sevs[0]}: {check_id}"))
    copies = sorted((lk for lk in links if lk.check_id == COPIED),
                    key=lambda lk: -COPY_POINTS.get(lk.kind or "run", 0))
    for lk in copies[:MAX_COPY_LINKS]:
        what = {"whole": "whole schedule", "board": "a board", "run": "a run of circuits"}
        parts.append((COPY_POINTS.get(lk.kind or "run", 0),
                      f"{what.get(lk.kind or 'run', 'readings')} shared with "
                      f"{', '.join(lk.related) or 'another certificate'} at another address"))
    seen: set[str] = set()
    for lk in links:
        if lk.check_id in CROSS_POINTS and lk.check_id not in seen:
            seen.add(lk.check_id)
            parts.append((CROSS_POINTS[lk.check_id], lk.check_id.replace("-", " ")))
    if c.verdict_key == "incomplete":
        parts.append((INCOMPLETE_POINTS, "audit incomplete"))
    parts.sort(key=lambda p: -p[0])
    return sum(p for p, _ in parts), tuple(f"{why} (+{p:g})" for p, why in parts)


def _href(target: Path | None, page: Path) -> str | None:
    if target is None:
        return None
    return Path(os.path.relpath(Path(target).resolve(), page.parent.resolve())).as_posix()


def _pct(x: float) -> str:
    return f"{100 * x:.0f} %"


def build_view(data: PortfolioData, page: Path) -> PortfolioView:
    certs = {c.id: c for c in data.certificates}
    links_of: dict[int, list[LinkInput]] = defaultdict(list)
    for lk in data.links:
        links_of[lk.cert].append(lk)
    sev_rank = {s: i for i, s in enumerate(reversed(data.severities))}

    scored = []
    for c in data.certificates:
        score, reasons = risk(c, links_of[c.id])
        counts = Counter(sev for _, sev, _ in c.findings)
        counts["cross"] = len(links_of[c.id])
        worst = max((sev_rank.get(s, 0) for _, s, _ in c.findings), default=-1)
        scored.append((score, worst, c, reasons, counts))
    scored.sort(key=lambda t: (-t[0], -t[1], t[2].name, t[2].id))
    ranked = [
        Ranked(i + 1, c.name, c.address or "", c.inspector or "", c.contractor or "",
               c.date or "", c.verdict_label, c.tone, score, reasons, _href(c.report, page),
               dict(counts))
        for i, (score, _w, c, reasons, counts) in enumerate(scored)
    ]

    verdict_counts: Counter[tuple[str, str]] = Counter(
        (c.verdict_label, c.tone) for c in data.certificates)
    order = ["impossible", "breach", "query", "incomplete", "clear"]
    verdicts = sorted(((lab, tone, n) for (lab, tone), n in verdict_counts.items()),
                      key=lambda t: order.index(t[1]) if t[1] in order else 99)

    sample = [r for r in ranked if r.score][:SAMPLE_SIZE]
    verdict_groups = [
        VerdictGroup(lab, tone, [r for r in ranked if (r.verdict, r.tone) == (lab, tone)],
                     tone in OPEN_TONES) for lab, tone, _n in verdicts]

    fcount: Counter[tuple[str, str, bool]] = Counter()
    fcerts: dict[tuple[str, str, bool], set[int]] = defaultdict(set)
    for c in data.certificates:
        for check_id, sev, _ in c.findings:
            fcount[(check_id, sev, False)] += 1
            fcerts[(check_id, sev, False)].add(c.id)
    for lk in data.links:
        fcount[(lk.check_id, lk.severity, True)] += 1
        fcerts[(lk.check_id, lk.severity, True)].add(lk.cert)
    checks = sorted(
        (CheckRow(k[0], k[1], n, len(fcerts[k]), k[2]) for k, n in fcount.items()),
        key=lambda r: (-sev_rank.get(r.severity, 0), -r.certificates, r.check_id))

    stats = {(p.role, p.party): p for p in data.parties}
    parties: list[PartyRow] = []
    for role in ("contractor", "inspector"):
        groups: dict[str, list[CertInput]] = defaultdict(list)
        for c in data.certificates:
            who = c.contractor if role == "contractor" else c.inspector
            groups[who or "(not read)"].append(c)
        for party, members in sorted(groups.items()):
            counts = Counter(sev for c in members for _, sev, _ in c.findings)
            flagged = sum(1 for c in members if any(
                s in ("impossible", "breach", "query") for _, s, _ in c.findings))
            st = stats.get((role, party))
            parties.append(PartyRow(
                role, party, len(members), sum(c.tested for c in members), dict(counts),
                _pct(flagged / len(members)), sum(len(links_of[c.id]) for c in members),
                f"{st.last_digit_chi2:.1f}" if st and st.readings else "–",
                _pct(st.share_0_or_5) if st and st.readings else "–",
                _pct(st.share_zs_exact) if st and st.zs_compared else "–",
            ))

    clusters = _clusters(data, certs, page)
    ratio_svg, ratio_note = charts.zs_ratio_chart(data.zs_ratios)
    digit_svg, digit_note = charts.last_digit_chart(data.last_digits)
    work_svg, work_note = charts.workload_chart(data.workload, data.workload_limit)
    return PortfolioView(
        title=data.title, scope=data.scope, store=data.store, total=len(data.certificates),
        failed=len(data.failures), verdicts=verdicts, ranked=ranked, checks=checks,
        parties=parties, clusters=clusters,
        charts={"zs": Markup(ratio_svg), "digits": Markup(digit_svg),  # noqa: S704 built by reports/charts.py, every text escaped there
                "workload": Markup(work_svg)},  # noqa: S704
        chart_notes={"zs": ratio_note, "digits": digit_note, "workload": work_note},
        failures=sorted(data.failures), score_rules=SCORE_RULES, cautions=CAUTIONS,
        severities=data.severities, cross_count=len(data.links), sample=sample,
        groups=verdict_groups,
    )


def _clusters(data: PortfolioData, certs: dict[int, CertInput], page: Path
              ) -> list[ClusterView]:
    parent: dict[int, int] = {}

    def find(x: int) -> int:
        parent.setdefault(x, x)
        while parent[x] != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    pairs: dict[tuple[int, int], LinkInput] = {}
    for lk in data.links:
        if lk.other is None or not lk.blocks:
            continue
        key = (min(lk.cert, lk.other), max(lk.cert, lk.other))
        pairs.setdefault(key, lk)
        parent[find(key[0])] = find(key[1])
    groups: dict[int, set[int]] = defaultdict(set)
    for a, b in pairs:
        groups[find(a)].update((a, b))
    out = []
    ordered = sorted(groups.values(), key=lambda g: (-len(g), min(g)))
    for n, members in enumerate(ordered, 1):
        views = []
        for (a, _b), lk in sorted(pairs.items()):
            if a not in members:
                continue
            fields: list[str] = []
            grouped: dict[tuple[str, str, str, str], dict[str, PairCell]] = {}
            n_readings = 0
            for board_a, board_b, readings in lk.blocks:
                for fld, ca, ra, cb, rb, rel in readings:
                    n_readings += 1
                    if fld not in fields:
                        fields.append(fld)
                    grouped.setdefault((board_a, ca, board_b, cb), {})[fld] = PairCell(
                        ra or "", rb or "", rel)
            fields.sort(key=lambda f: (FIELD_ORDER.index(f) if f in FIELD_ORDER else 99, f))
            rows = [PairRow(ba, ca, bb, cb, tuple(cells.get(f) for f in fields))
                    for (ba, ca, bb, cb), cells in grouped.items()]
            name_a = _name(certs, lk.cert)
            name_b = _name(certs, lk.other) if lk.other is not None else "?"
            summary = (f"{lk.kind or ''} match: {100 * (lk.share or 0):.0f} % of "
                       f"{n_readings} aligned readings equal or ±1 in the last digit")
            views.append(PairView(name_a, name_b, lk.kind or "", lk.check_id, summary,
                                  tuple(fields), tuple(rows[:SHOW_PAIR_ROWS]),
                                  max(0, len(rows) - SHOW_PAIR_ROWS)))
        mem = tuple(
            (_name(certs, m), certs[m].address or "" if m in certs else "",
             (certs[m].inspector or "") if m in certs else "",
             _href(certs[m].report, page) if m in certs else None)
            for m in sorted(members))
        out.append(ClusterView(n, mem, tuple(views)))
    return out


def _name(certs: dict[int, CertInput], cid: int) -> str:
    c = certs.get(cid)
    return c.name if c else f"certificate #{cid} (outside this batch)"


def render_portfolio(data: PortfolioData, path: Path) -> Path:
    """Write the portfolio page to `path` (self-contained: no scripts, no network)."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    view = build_view(data, path)
    from certvet.reports.html import environment

    html = environment().get_template("portfolio.html.j2").render(v=view)
    path.write_text(html, encoding="utf-8")
    return path


def write_portfolio(store_or_results: object, path: str | Path) -> Path:
    """Render a PortfolioData, or anything with a `portfolio_data()` method (a
    certvet.batch.BatchReport). For a store or Corpus use certvet.batch.write_portfolio."""
    if isinstance(store_or_results, PortfolioData):
        data = store_or_results
    elif hasattr(store_or_results, "portfolio_data"):
        data = store_or_results.portfolio_data()
    else:
        raise TypeError("write_portfolio takes PortfolioData or a BatchReport here; for a "
                        "store use certvet.batch.write_portfolio")
    return render_portfolio(data, Path(path))
