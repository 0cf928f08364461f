"""Rule profiles: disable a check, re-tune an option, change a severity; errors name the key."""

from __future__ import annotations

from pathlib import Path

import pytest
from casekit import make_certificate

from certvet.checks.model import Outcome, Severity
from certvet.checks.profile import DEFAULT_PROFILE, ProfileError, load_profile, parse_profile
from certvet.checks.runner import run_checks

# A socket ring on an RCBO with a blank test-button cell, and an IR of 3 MΩ.
# 3 MΩ passes BS 7671:2018+A2:2022 Table 64 (1 MΩ at 500 V) and the 2 MΩ investigation level
# (from memory: IET Guidance Note 3); 22 ms is within 300 ms (BS EN 61009-1).
CIRCUITS = [
    {"circuit_ref": "1", "description": "Sockets ring", "device_standard": "61009",
     "device_type": "B", "rating": "32", "rcd_idn": "30", "rcd_time": "22", "rcd_button": "",
     "ir_test_voltage": "500", "ir_live_earth": "3.0", "polarity": "✓"},
]


def _run(profile_text: str, tmp_path: Path):
    path = tmp_path / "scheme.toml"
    path.write_text(profile_text, encoding="utf-8")
    profile = load_profile(path)
    return run_checks(make_certificate(CIRCUITS), profile)


def _of(results, check_id: str):
    return [f for f in results.findings if f.check_id == check_id]


def test_default_profile_baseline() -> None:
    results = run_checks(make_certificate(CIRCUITS), DEFAULT_PROFILE)
    assert len(_of(results, "rcd-button-not-confirmed")) == 1
    assert _of(results, "rcd-button-not-confirmed")[0].severity is Severity.QUERY
    assert _of(results, "ir-worth-investigating") == []


def test_disable_a_check(tmp_path: Path) -> None:
    results = _run("[checks.rcd-button-not-confirmed]\nenabled = false\n", tmp_path)
    assert _of(results, "rcd-button-not-confirmed") == []
    run = next(r for r in results.runs if r.check_id == "rcd-button-not-confirmed")
    assert run.outcome is Outcome.TURNED_OFF


def test_retune_an_option(tmp_path: Path) -> None:
    # A scheme choosing a 5 MΩ investigation level (a profile choice, no source) notes 3 MΩ.
    results = _run("[checks.ir-worth-investigating]\ninvestigate_below_mohm = 5\n", tmp_path)
    found = _of(results, "ir-worth-investigating")
    assert len(found) == 1 and "5.0 MΩ" in found[0].message
    run = next(r for r in results.runs if r.check_id == "ir-worth-investigating")
    assert run.options == {"investigate_below_mohm": 5.0}


def test_change_a_severity(tmp_path: Path) -> None:
    results = _run('[checks.rcd-button-not-confirmed]\nseverity = "breach"\n', tmp_path)
    found = _of(results, "rcd-button-not-confirmed")
    assert [f.severity for f in found] == [Severity.BREACH]
    assert results.worst() is Severity.BREACH


def test_profile_name_and_description(tmp_path: Path) -> None:
    path = tmp_path / "scheme.toml"
    path.write_text('[profile]\nname = "desk"\ndescription = "Our desk audit"\n', "utf-8")
    profile = load_profile(path)
    assert (profile.name, profile.description, profile.path) == ("desk", "Our desk audit",
                                                                  str(path))


@pytest.mark.parametrize(
    ("text", "key", "problem"),
    [
        ("[checks.no-such-check]\nenabled = false\n", "checks.no-such-check", "no check"),
        ("[checks.ir-worth-investigating]\nlevel = 3\n",
         "checks.ir-worth-investigating.level", "unknown option"),
        ('[checks.ir-worth-investigating]\ninvestigate_below_mohm = "high"\n',
         "checks.ir-worth-investigating.investigate_below_mohm", "expected a value like"),
        ('[checks.rcd-time-limit]\nseverity = "critical"\n',
         "checks.rcd-time-limit.severity", "unknown severity"),
        ('[checks.rcd-time-limit]\nenabled = "no"\n',
         "checks.rcd-time-limit.enabled", "expected true or false"),
        ('[checks.rcd-times-all-identical]\nrcbo_only = 1\n',
         "checks.rcd-times-all-identical.rcbo_only", "expected a value like"),
        ("[profile]\nowner = 'x'\n", "profile.owner", "unknown key"),
        ("[rules]\n", "rules", "unknown section"),
    ],
)
def test_errors_name_file_and_key(tmp_path: Path, text: str, key: str, problem: str) -> None:
    path = tmp_path / "bad.toml"
    path.write_text(text, encoding="utf-8")
    with pytest.raises(ProfileError) as info:
        load_profile(path)
    message = str(info.value)
    assert message.startswith(f"{path}: {key}: "), message
    assert problem in message


def test_unreadable_and_missing_files(tmp_path: Path) -> None:
    bad = tmp_path / "broken.toml"
    bad.write_text("[checks\n", encoding="utf-8")
    with pytest.raises(ProfileError, match=f"^{bad}: not valid TOML"):
        load_profile(bad)
    with pytest.raises(ProfileError, match="profile file not found"):
        load_profile(tmp_path / "absent.toml")


def test_parse_profile_default_path_label() -> None:
    with pytest.raises(ProfileError, match=r"^<profile>: checks\.x-y: "):
        parse_profile({"checks": {"x-y": {}}})


def test_negative_option_is_refused(tmp_path) -> None:
    # A negative tolerance would flag every ring: refused at load time, naming file and key.
    import pytest

    from certvet.checks.profile import ProfileError, load_profile

    p = tmp_path / "neg.toml"
    p.write_text("[checks.ring-rn-matches-r1]\ntolerance_ohm = -1\n", encoding="utf-8")
    with pytest.raises(ProfileError) as err:
        load_profile(p)
    assert str(err.value).startswith(f"{p}: checks.ring-rn-matches-r1.tolerance_ohm: ")
    assert "zero or more" in str(err.value)
