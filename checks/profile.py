"""Rule profiles: a scheme's choice of which checks run, at what severity, with which options.

A profile is a TOML file::

    [profile]
    name = "strict-desk-audit"
    description = "Our scheme's desk audit"
    audit_date = 2026-12-01          # optional: the date the audit speaks for (else today)

    [checks.zs-over-80-percent-rule]
    enabled = false

    [checks.ring-rn-matches-r1]
    severity = "breach"
    tolerance_ohm = 0.05

Every key is validated against the check's declared options; errors name the file and key.
"""

from __future__ import annotations

import dataclasses
import tomllib
from dataclasses import dataclass, field
from datetime import date
from pathlib import Path
from typing import Any

from checks.base import Check
from checks.model import Severity
from checks.registry import all_checks


class ProfileError(ValueError):
    pass


@dataclass(frozen=True)
class CheckSettings:
    enabled: bool = True
    severity: Severity | None = None
    options: dict[str, Any] = field(default_factory=dict)


@dataclass(frozen=True)
class Profile:
    name: str = "default"
    description: str = "certvet's defaults"
    path: str | None = None
    checks: dict[str, CheckSettings] = field(default_factory=dict)
    audit_date: date | None = None  # the date the audit speaks for; None: the day it runs

    def settings(self, check_id: str) -> CheckSettings:
        return self.checks.get(check_id, CheckSettings())

    def instantiate(self, cls: type[Check]) -> Check:
        s = self.settings(cls.id)
        opts = cls.Options(**s.options) if s.options else cls.Options()
        return cls(opts, s.severity)

    def to_dict(self) -> dict[str, Any]:
        """Plain JSON-able data (as stored in the corpus); `from_dict` rebuilds the profile."""
        return {
            "name": self.name,
            "description": self.description,
            "path": self.path,
            "audit_date": self.audit_date.isoformat() if self.audit_date else None,
            "checks": {
                cid: {"enabled": s.enabled,
                      "severity": s.severity.slug if s.severity is not None else None,
                      "options": dict(s.options)}
                for cid, s in self.checks.items()
            },
        }

    @classmethod
    def from_dict(cls, data: dict[str, Any]) -> Profile:
        """The profile `to_dict` gave. Not validated against today's checks: a stored profile
        may name a check or option since removed, and is only shown, never run."""
        checks = {
            cid: CheckSettings(
                enabled=bool(s.get("enabled", True)),
                severity=Severity.parse(s["severity"]) if s.get("severity") else None,
                options=dict(s.get("options") or {}),
            )
            for cid, s in (data.get("checks") or {}).items()
        }
        return cls(name=str(data.get("name", "default")),
                   description=str(data.get("description", "")),
                   path=data.get("path"), checks=checks,
                   audit_date=date.fromisoformat(data["audit_date"])
                   if data.get("audit_date") else None)


DEFAULT_PROFILE = Profile()


def parse_audit_date(value: object, where: str) -> date:
    """An audit date from a TOML date or "YYYY-MM-DD" text; ProfileError naming `where`."""
    if isinstance(value, date):
        return value
    try:
        return date.fromisoformat(str(value))
    except ValueError:
        raise ProfileError(f"{where}: expected a date as YYYY-MM-DD, got {value!r}") from None


def parse_profile(data: dict[str, Any], path: str = "<profile>") -> Profile:
    def fail(key: str, problem: str) -> ProfileError:
        return ProfileError(f"{path}: {key}: {problem}")

    unknown = set(data) - {"profile", "checks"}
    if unknown:
        raise fail(sorted(unknown)[0], "unknown section (allowed: profile, checks)")
    head = data.get("profile", {})
    if not isinstance(head, dict):
        raise fail("profile", "expected a table")
    for k in head:
        if k not in ("name", "description", "audit_date"):
            raise fail(f"profile.{k}", "unknown key (allowed: name, description, audit_date)")
    audit_date = parse_audit_date(head["audit_date"], f"{path}: profile.audit_date") \
        if "audit_date" in head else None
    known = {c.id: c for c in all_checks()}
    settings: dict[str, CheckSettings] = {}
    raw_checks = data.get("checks", {})
    if not isinstance(raw_checks, dict):
        raise fail("checks", "expected a table of check ids")
    for cid, raw in raw_checks.items():
        key = f"checks.{cid}"
        if cid not in known:
            raise fail(key, "no check with this id (see `certvet checks`)")
        if not isinstance(raw, dict):
            raise fail(key, "expected a table")
        cls = known[cid]
        fields = {f.name: f for f in dataclasses.fields(cls.Options)}
        enabled = raw.get("enabled", True)
        if not isinstance(enabled, bool):
            raise fail(f"{key}.enabled", "expected true or false")
        sev = None
        if "severity" in raw:
            try:
                sev = Severity.parse(str(raw["severity"]))
            except ValueError as exc:
                raise fail(f"{key}.severity", str(exc)) from None
        opts: dict[str, Any] = {}
        for k, v in raw.items():
            if k in ("enabled", "severity"):
                continue
            if k not in fields:
                allowed = ", ".join(sorted(fields)) or "none"
                raise fail(f"{key}.{k}", f"unknown option (options: {allowed})")
            default = fields[k].default
            if isinstance(default, bool) != isinstance(v, bool) or (
                isinstance(default, (int, float)) and not isinstance(v, (int, float))
            ) or (isinstance(default, str) and not isinstance(v, str)):
                raise fail(f"{key}.{k}", f"expected a value like {default!r}, got {v!r}")
            if isinstance(v, (int, float)) and not isinstance(v, bool) and not v >= 0:
                raise fail(f"{key}.{k}", f"must be zero or more, got {v!r}")
            opts[k] = float(v) if isinstance(default, float) and not isinstance(v, bool) else v
        settings[cid] = CheckSettings(enabled, sev, opts)
    return Profile(
        name=str(head.get("name", Path(path).stem)),
        description=str(head.get("description", "")),
        path=path,
        checks=settings,
        audit_date=audit_date,
    )


def load_profile(path: str | Path) -> Profile:
    p = Path(path)
    try:
        data = tomllib.loads(p.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise ProfileError(f"{p}: profile file not found") from None
    except IsADirectoryError:
        raise ProfileError(f"{p}: is a folder, not a profile file") from None
    except (OSError, UnicodeDecodeError) as exc:
        why = exc.strerror if isinstance(exc, OSError) and exc.strerror else exc
        raise ProfileError(f"{p}: cannot read profile: {why}") from None
    except tomllib.TOMLDecodeError as exc:
        raise ProfileError(f"{p}: not valid TOML: {exc}") from None
    return parse_profile(data, str(p))
