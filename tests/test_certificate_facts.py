"""The certificate-as-a-whole facts: dates, editions, premises intervals, report kinds, and the
audit date reaching the checks from the API, the profile and the CLI."""

from __future__ import annotations

import dataclasses
from datetime import date

import pytest
from casekit import make_certificate

from certvet.checks import tables
from certvet.checks.catalogue.bonding import pme_min_bonding
from certvet.checks.certificate_facts import (
    Applies,
    ReportKind,
    edition,
    edition_in_force,
    installation_built,
    parse_date,
    parse_edition,
    premises_interval,
    report_kind,
    requirement_applies,
    tables_edition,
)
from certvet.checks.profile import DEFAULT_PROFILE, ProfileError, parse_profile
from certvet.checks.runner import run_checks


@pytest.mark.parametrize(("text", "expected"), [
    ("21/04/2026", date(2026, 4, 21)),  # UK day-first
    ("21.04.26", date(2026, 4, 21)),
    ("2026-04-21", date(2026, 4, 21)),
    ("21 April 2026", date(2026, 4, 21)),
    ("3rd Feb 2025", date(2025, 2, 3)),
    ("31/02/2026", None),  # no such day
    ("next year", None),
    ("", None),
])
def test_parse_date(text: str, expected: date | None) -> None:
    assert parse_date(text) == expected


@pytest.mark.parametrize(("text", "key"), [
    ("BS 7671:2018+A2:2022", "2018+A2"),
    ("BS7671:2018 A2:2022", "2018+A2"),
    ("18th Edition Amendment 2", "2018+A2"),
    ("BS 7671:2018", "2018"),
    ("BS 7671:2008+A3:2015", "2008+A3"),
    ("17th edition", "2008"),
    ("BS 7671:2001", "16th"),
    ("16th edition", "16th"),
    ("current regulations", None),
])
def test_parse_edition(text: str, key: str | None) -> None:
    got = parse_edition(text)
    assert (got.key if got else None) == key


def test_edition_dates_in_order_and_sourced() -> None:
    # every row from memory, so each says so (checks/data/bs7671_editions.csv)
    t = tables.load("bs7671_editions")
    assert all(r.source.startswith("from memory") for r in t.rows)
    a2 = edition("2018+A2")
    # from memory, confirmed by an IET forum thread: A1 withdrawn 27 September 2022
    assert a2.in_force == date(2022, 9, 27)
    assert edition_in_force(date(2022, 9, 26)).key == "2018+A1"
    assert edition_in_force(date(2019, 1, 1)).key == "2018"  # from memory: 1 January 2019
    assert edition_in_force(date(2018, 12, 31)).key == "2008+A3"


def test_tables_edition_by_report_type() -> None:
    audit = date(2026, 12, 1)
    old_eic = make_certificate([], certificate={"report_type": "EIC", "issue_date": "01/03/2010"})
    eicr = make_certificate([], certificate={"report_type": "EICR",
                                              "inspection_date": "01/03/2010"})
    assert tables_edition(old_eic, audit) == tables.PRE_2015  # judged as issued (derived)
    assert tables_edition(eicr, audit) == tables.CURRENT  # judged against the current tables


@pytest.mark.parametrize(("premises", "kind", "months"), [
    ("Domestic (rented)", "rented-domestic", 60),  # SI 2020/312 reg 3(1)(b): 5 years
    ("HMO", "rented-domestic", 60),  # SI 2020/312 reg 3(1)(b)
    ("Domestic (owner-occupied)", "domestic", 120),  # from memory: GN3 Table 3.2, 10 years
    ("Office", "commercial", 60),  # from memory: GN3 Table 3.2, 5 years
    ("Factory", "industrial", 36),  # from memory: GN3 Table 3.2, 3 years
])
def test_premises_interval(premises: str, kind: str, months: int) -> None:
    iv = premises_interval(make_certificate([], certificate={"premises_type": premises}))
    assert iv is not None and (iv.kind, iv.max_months) == (kind, months)


def test_no_premises_no_interval() -> None:
    assert premises_interval(make_certificate([])) is None


@pytest.mark.parametrize(("neutral", "bonding"), [
    (16, 10), (25, 10), (35, 10), (50, 16), (70, 25), (95, 25), (120, 35), (185, 50),
])  # BS 7671:2018+A2:2022 Table 54.8
def test_table_54_8(neutral: float, bonding: float) -> None:
    assert pme_min_bonding(neutral) == bonding


def test_report_kind_and_requirement() -> None:
    since = date(2008, 7, 1)  # from memory: BS 7671:2008 in force
    old = make_certificate([], certificate={"report_type": "EICR", "inspection_date": "10/03/2026",
                                            "installation_age": "35 years"})
    assert report_kind(old) is ReportKind.EICR
    assert installation_built(old) == date(1991, 3, 10)  # derived: 2026 − 35 years
    assert requirement_applies(old, since) is Applies.OBSERVATION
    eic = make_certificate([], certificate={"report_type": "EIC", "issue_date": "01/01/2005"})
    assert requirement_applies(eic, since) is Applies.NOT_YET
    mw = make_certificate([], certificate={"report_type": "MEIWC"})
    assert report_kind(mw) is ReportKind.MINOR_WORKS


OLD_RENTED = {"premises_type": "Rented flat", "inspection_date": "10/01/2020",
              "next_inspection": "10/01/2025"}


def _ids(results: object) -> set[str]:
    return {f.check_id for f in results.findings}  # type: ignore[attr-defined]


def test_audit_date_parameter_and_profile_decide_the_age() -> None:
    cert = make_certificate([], certificate=OLD_RENTED)
    # SI 2020/312 reg 3(1)(b): at most 5 years; 10/01/2020 → 01/06/2024 is 4.4 years (derived)
    assert "certificate-out-of-date" not in _ids(run_checks(cert, audit_date=date(2024, 6, 1)))
    assert "certificate-out-of-date" in _ids(run_checks(cert, audit_date=date(2026, 12, 1)))
    prof = dataclasses.replace(DEFAULT_PROFILE, audit_date=date(2024, 6, 1))
    assert "certificate-out-of-date" not in _ids(run_checks(cert, prof))
    parsed = parse_profile({"profile": {"audit_date": date(2026, 12, 1)}})
    assert parsed.audit_date == date(2026, 12, 1)
    with pytest.raises(ProfileError, match="profile.audit_date"):
        parse_profile({"profile": {"audit_date": "01/12/2026"}}, "p.toml")


def test_not_applicable_says_why() -> None:
    runs = {r.check_id: r for r in run_checks(make_certificate([])).runs}
    assert runs["rcd-missing-domestic-lighting"].outcome.value == "did_not_apply"
    assert runs["rcd-missing-domestic-lighting"].reason == (
        "the form does not say the premises are domestic")
    assert runs["rcd-missing-concealed-cables"].reason == (
        "the form does not record where cables are concealed")


def test_cli_audit_date_is_validated(tmp_path: object) -> None:
    from typer.testing import CliRunner

    from certvet.api import DEMO_DIR, DEMO_LAYOUTS
    from certvet.cli import app

    done = CliRunner().invoke(app, ["audit", str(DEMO_DIR / "plain-clean-04.pdf"), "--layout",
                                    str(DEMO_LAYOUTS), "--audit-date", "01/12/2026"])
    assert done.exit_code == 2
    assert "--audit-date: expected a date as YYYY-MM-DD" in done.output
