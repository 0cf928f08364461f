"""Facts about a certificate as a whole, read once for every check that needs them.

One definition each: what kind of report it is, its dates, the BS 7671 edition it claims and
the one in force on a date, the kind of premises and its longest inspection interval, the
installation's age, and the observations it lists. Checks ask this module; none re-parses the
same text its own way.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from datetime import date
from enum import StrEnum
from functools import cache

from certvet.checks.tables import load
from certvet.extractor.records import Certificate, ValueKind


class ReportKind(StrEnum):
    EIC = "EIC"  # Electrical Installation Certificate: new work, every requirement applies
    EICR = "EICR"  # Electrical Installation Condition Report: periodic, observations coded
    MINOR_WORKS = "minor works"  # Minor Electrical Installation Works Certificate
    UNKNOWN = "unknown"


_KIND_PATTERNS: tuple[tuple[ReportKind, re.Pattern[str]], ...] = (
    (ReportKind.MINOR_WORKS,
     re.compile(r"\bMEIWC\b|minor\s+(?:electrical\s+)?(?:installation\s+)?works", re.I)),
    (ReportKind.EICR, re.compile(r"\bEICR\b|condition\s+report|periodic", re.I)),
    (ReportKind.EIC, re.compile(r"\bEIC\b|installation\s+certificate", re.I)),
)


def report_kind(cert: Certificate) -> ReportKind:
    """The report type printed on the form, or UNKNOWN when none is read."""
    text = cert.text("report_type")
    for kind, pattern in _KIND_PATTERNS:
        if pattern.search(text):
            return kind
    return ReportKind.UNKNOWN


# --- dates -------------------------------------------------------------------------------------

_MONTHS = {m: i + 1 for i, m in enumerate(
    ("jan", "feb", "mar", "apr", "may", "jun", "jul", "aug", "sep", "oct", "nov", "dec"))}
_DMY = re.compile(r"^(\d{1,2})[/.\-](\d{1,2})[/.\-](\d{2}|\d{4})$")
_YMD = re.compile(r"^(\d{4})-(\d{1,2})-(\d{1,2})$")
_TEXT_DATE = re.compile(r"^(\d{1,2})(?:st|nd|rd|th)?\s+([A-Za-z]{3})[a-z]*\.?,?\s+(\d{4})$")


def parse_date(text: str) -> date | None:
    """A date as UK forms print it: 21/04/2026, 21.04.26, 2026-04-21, 21 April 2026.
    Day first (UK usage); None for anything else, never a guess."""
    s = " ".join(text.split())
    try:
        if m := _YMD.match(s):
            return date(int(m[1]), int(m[2]), int(m[3]))
        if m := _DMY.match(s):
            year = int(m[3])
            year += 2000 if year < 100 else 0
            return date(year, int(m[2]), int(m[1]))
        if (m := _TEXT_DATE.match(s)) and m[2].lower() in _MONTHS:
            return date(int(m[3]), _MONTHS[m[2].lower()], int(m[1]))
    except ValueError:
        return None
    return None


def cert_date(cert: Certificate, name: str) -> date | None:
    return parse_date(cert.text(name)) if cert.text(name) else None


def months_between(a: date, b: date) -> float:
    """Calendar months from a to b (negative when b is earlier), with days as a fraction."""
    return (b.year - a.year) * 12 + (b.month - a.month) + (b.day - a.day) / 31.0


def months_before(d: date, months: int) -> date:
    """The date `months` calendar months before d (day clipped to 28)."""
    y, m = divmod(d.year * 12 + d.month - 1 - months, 12)
    return date(y, m + 1, min(d.day, 28))


def certificate_date(cert: Certificate) -> date | None:
    """The date the certificate speaks for: its date of issue, else of inspection."""
    return cert_date(cert, "issue_date") or cert_date(cert, "inspection_date")


# --- editions -----------------------------------------------------------------------------------


@dataclass(frozen=True)
class Edition:
    key: str
    name: str
    published: date
    in_force: date
    tables: str  # the key of checks.tables' edition whose maximum Zs tables it prints
    source: str


@cache
def editions() -> tuple[Edition, ...]:
    """Every edition and amendment, oldest first (checks/data/bs7671_editions.csv)."""
    rows = load("bs7671_editions").rows
    out = [Edition(r["key"], r["name"], date.fromisoformat(r["published"]),
                   date.fromisoformat(r["in_force"]), r["tables"], r.source) for r in rows]
    return tuple(sorted(out, key=lambda e: e.published))


def edition(key: str) -> Edition:
    for e in editions():
        if e.key == key:
            return e
    raise KeyError(key)


_ORDINAL_YEAR = {"16": "16th", "17": "2008", "18": "2018"}


def parse_edition(text: str) -> Edition | None:
    """The edition a form claims: "BS 7671:2018+A2:2022", "BS7671 2008 A3 2015",
    "18th Edition Amendment 2", "17th edition", "16th". None when it cannot be told."""
    s = text.upper().replace(" ", "")
    year = None
    if m := re.search(r"7671[:\-]?(\d{4})", s):
        year = m[1]
    elif m := re.search(r"(16|17|18)(?:TH)?(?:ED|EDITION)", s):
        year = _ORDINAL_YEAR[m[1]]
    elif m := re.match(r"^(2008|2018|2001|1992)", s):
        year = m[1]
    if year is None:
        return None
    if year in ("1992", "2001", "16th"):
        return edition("16th")
    amendment = re.search(r"(?:\+|AMD|AMENDMENT|\bA|(?<=\d)A)(\d)", s.split(year, 1)[-1])
    key = year if amendment is None else f"{year}+A{amendment[1]}"
    try:
        return edition(key)
    except KeyError:
        return None


def edition_in_force(on: date) -> Edition:
    """The edition new work had to meet on this date: the latest already in force."""
    current = editions()[0]
    for e in editions():
        if e.in_force <= on:
            current = e
    return current


def latest_published(on: date) -> Edition:
    """The newest edition published by this date (work may follow it from publication)."""
    latest = editions()[0]
    for e in editions():
        if e.published <= on:
            latest = e
    return latest


def tables_edition(cert: Certificate, audit: date) -> str:
    """Which edition's tables judge this certificate: an EIC or minor works certificate the
    ones in force when it was issued; an EICR (and a certificate of unknown type) the
    current ones, as of the audit date."""
    when = certificate_date(cert)
    if report_kind(cert) in (ReportKind.EIC, ReportKind.MINOR_WORKS) and when is not None:
        return edition_in_force(when).tables
    return edition_in_force(audit).tables


# --- installation age -------------------------------------------------------------------------

_AGE_YEARS = re.compile(r"(\d{1,3})(?:\s*(?:-|to)\s*(\d{1,3}))?\s*(?:years?|yrs?)\b", re.I)
_BUILT_YEAR = re.compile(r"\b(19\d{2}|20\d{2})\b")


def installation_built(cert: Certificate) -> date | None:
    """When the installation was built, from its estimated age ("35 years", "30-40 yrs":
    the younger end) counted back from the inspection date, or a year written there
    ("c. 1985"). None when not printed."""
    text = cert.text("installation_age")
    if not text:
        return None
    if m := _AGE_YEARS.search(text):
        years = min(int(m[1]), int(m[2])) if m[2] else int(m[1])
        when = cert_date(cert, "inspection_date") or certificate_date(cert)
        if when is None:
            return None
        return date(when.year - years, when.month, min(when.day, 28))
    if m := _BUILT_YEAR.search(text):
        return date(int(m[1]), 12, 31)  # the latest day of that year: the benefit of doubt
    return None


def built_before(cert: Certificate, when: date) -> bool | None:
    """Was the installation built before `when`? None when the form does not tell."""
    built = installation_built(cert)
    return None if built is None else built < when


# --- premises and inspection intervals ---------------------------------------------------------


@dataclass(frozen=True)
class Interval:
    kind: str
    max_months: int
    basis: str  # "published" or "from memory"
    source: str


def premises_interval(cert: Certificate) -> Interval | None:
    """The longest interval between inspections for the premises the form describes, or
    None when it does not say (checks/data/inspection_intervals.csv, first match wins)."""
    text = f" {cert.text('premises_type').lower()} "
    if not text.strip():
        return None
    for r in load("inspection_intervals").rows:
        if any(w and w in text for w in r["words"].split("|")):
            return Interval(r["kind"], int(r.num("max_months")), r["basis"], r.source)
    return None


def is_domestic(cert: Certificate) -> bool | None:
    """Domestic premises (rented or not)? None when the form does not say."""
    iv = premises_interval(cert)
    if iv is None:
        return None
    return iv.kind in ("domestic", "rented-domestic")


# --- observations --------------------------------------------------------------------------------

_CODES = ("C1", "C2", "C3", "FI")
_OBS_SPLIT = re.compile(r",\s*(?=\d{1,3}[.)]\s)")
_CODE_IN = re.compile(r"\b(C1|C2|C3|FI)\b")
_CIRCUIT_IN = re.compile(
    r"\b(?:(?P<board>DB\w*|CU\w*)\s*(?:/|circuit|cct|way)\s*(?:no\.?\s*)?(?P<bc>\d{1,3}[A-Z]?)"
    r"|(?:circuit|cct|way)\s*(?:no\.?\s*)?(?P<c>\d{1,3}[A-Z]?))\b",
    re.I,
)


@dataclass(frozen=True)
class Observation:
    text: str
    code: str | None  # C1, C2, C3, FI, or None when the line carries no code
    circuits: tuple[tuple[str | None, str], ...]  # (board or None, circuit) it names


def observations(cert: Certificate) -> list[Observation]:
    """The numbered observations the form lists ("1. C2 Circuit 7: ..."), one each."""
    text = cert.text("observations")
    if not text:
        return []
    out = []
    for part in _OBS_SPLIT.split(text):
        part = part.strip()
        if not part:
            continue
        code = _CODE_IN.search(part.upper())
        named = tuple(((m["board"].upper() if m["board"] else None), (m["bc"] or m["c"]).upper())
                      for m in _CIRCUIT_IN.finditer(part))
        out.append(Observation(part, code[1] if code else None, named))
    return out


def summary_counts(cert: Certificate) -> dict[str, int] | None:
    """The observation counts from the form's summary table (C1/C2/C3/FI count fields),
    or None when the form prints no such table."""
    counts: dict[str, int] = {}
    for code in _CODES:
        v = cert.value(f"{code.lower()}_count")
        if v.kind is ValueKind.NUMBER and v.number is not None:
            counts[code] = int(v.number)
    return counts or None


_CODE_RE = re.compile(
    r"\b(C1|C2|C3|FI)\b(?:\s*(?:[:=x×\-–—]|\bX\b)?\s*(\d+|NIL|NONE|NO)\b)?")


def observation_codes(text: str) -> dict[str, int]:
    """Codes and counts from text like "C2, C3", "C1: 0 C2: 2 C3: 1", "C2 x2, FI" or a
    summary "C1 - 0, C2 - 0, C3 - 2" (a count after a dash is a count, not a code listed)."""
    counts: dict[str, int] = {}
    for m in _CODE_RE.finditer(text.upper()):
        got = m.group(2)
        n = (int(got) if got.isdigit() else 0) if got is not None else 1
        counts[m.group(1)] = counts.get(m.group(1), 0) + n
    return counts


def recorded_codes(cert: Certificate) -> dict[str, int]:
    """How many of each code the report records: the summary table when printed, else the
    listed observations, else the observation-codes field."""
    counts = summary_counts(cert)
    if counts is not None:
        return counts
    obs = observations(cert)
    if obs:
        tally: dict[str, int] = {}
        for o in obs:
            if o.code:
                tally[o.code] = tally.get(o.code, 0) + 1
        return tally
    return observation_codes(cert.text("observation_codes"))


def outcome(cert: Certificate) -> str | None:
    """ "satisfactory", "unsatisfactory", or None when the overall assessment is not read."""
    text = cert.text("overall_outcome").lower()
    if "unsatisf" in text or "not satisf" in text:
        return "unsatisfactory"
    if "satisf" in text:
        return "satisfactory"
    return None


# --- when a requirement applies -----------------------------------------------------------------


class Applies(StrEnum):
    """How a requirement that came in on a date bears on this certificate."""

    IN_FULL = "in full"  # new work after it came in, or an installation built after it
    OBSERVATION = "observation"  # an EICR of an installation built before it: code, not fail
    NOT_YET = "not yet"  # new work dated before the requirement came in


def requirement_applies(cert: Certificate, since: date) -> Applies:
    """A requirement of BS 7671 in force from `since`: on an EIC or minor works certificate
    it applies in full to work dated on or after it (else not yet); on an EICR of an
    installation built before it, a shortfall is an observation to code (usually C3, or C2
    by the inspector's judgement), not a failed certificate."""
    kind = report_kind(cert)
    if kind is ReportKind.EICR:
        return Applies.OBSERVATION if built_before(cert, since) else Applies.IN_FULL
    if kind in (ReportKind.EIC, ReportKind.MINOR_WORKS):
        when = certificate_date(cert)
        return Applies.NOT_YET if when is not None and when < since else Applies.IN_FULL
    return Applies.IN_FULL  # type or date not told: judged as today


def observation_note(since: date) -> str:
    return (f"the installation predates this requirement ({since:%d/%m/%Y}): an observation "
            "to raise (C3, or C2 by the inspector's judgement), not a failed report")
