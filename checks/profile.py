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

Every key is validated against the check's declared options before any file is read: its
type, that a number is finite and not negative and within the option's declared bounds
(`option(above=..., below=...)`: U0 = 0 V is refused), that a field list names known fields,
and that no `min_…` option exceeds its `max_…`; errors name the file and key. The file's size
and nesting are limited (extractor/tomlfile.py).
"""

from __future__ import annotations

import dataclasses
import math
from dataclasses import dataclass, field
from datetime import date
from pathlib import Path
from typing import Any

from certvet.checks.base import Check
from certvet.checks.model import Severity
from certvet.checks.registry import all_checks
from certvet.extractor.fields import CERTIFICATE, FIELDS
from certvet.extractor.tomlfile import TomlProblem, parse_toml


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
            problem = _option_problem(fields[k], v)
            if problem:
                raise fail(f"{key}.{k}", problem)
            default = fields[k].default
            opts[k] = float(v) if isinstance(default, float) and not isinstance(v, bool) else v
        problem = _range_problem({**_defaults(cls), **opts})
        if problem:
            raise fail(key, problem)
        settings[cid] = CheckSettings(enabled, sev, opts)
    return Profile(
        name=str(head.get("name", Path(path).stem)),
        description=str(head.get("description", "")),
        path=path,
        checks=settings,
        audit_date=audit_date,
    )


def _option_problem(f: dataclasses.Field[Any], v: Any) -> str | None:
    """Why `v` cannot be this option's value (None when it can)."""
    default, meta = f.default, f.metadata
    if isinstance(default, bool) != isinstance(v, bool) or (
        isinstance(default, (int, float)) and not isinstance(v, (int, float))
    ) or (isinstance(default, str) and not isinstance(v, str)):
        return f"expected a value like {default!r}, got {v!r}"
    if isinstance(default, int) and not isinstance(default, bool) and not isinstance(v, int):
        return f"expected a whole number, got {v!r}"
    if isinstance(v, (int, float)) and not isinstance(v, bool):
        if not math.isfinite(v) or v < 0:
            return f"must be a finite number, zero or more, got {v!r}"
        above, below = meta.get("above"), meta.get("below")
        if above is not None and not v > above:
            return f"must be above {above:g}, got {v!r}"
        if below is not None and not v < below:
            return f"must be below {below:g}, got {v!r}"
    names = meta.get("names")
    if names and isinstance(v, str):
        known = FIELDS if names == "circuit" else CERTIFICATE
        listed = [n.strip() for n in v.split(",") if n.strip()]
        if not listed:
            return "expected a comma-separated list of field names"
        unknown = [n for n in listed if n not in known]
        if unknown:
            return f"unknown {names} field {unknown[0]!r} (see `certvet fields`)"
    return None


def _defaults(cls: type[Check]) -> dict[str, Any]:
    return {f.name: f.default for f in dataclasses.fields(cls.Options)}


def _range_problem(values: dict[str, Any]) -> str | None:
    """A lower limit above its upper limit (`min_x` / `max_x`, `x_min_y` / `x_max_y`)."""
    for name, lo in values.items():
        if "min" not in name.split("_"):
            continue
        other = "_".join("max" if part == "min" else part for part in name.split("_"))
        hi = values.get(other)
        if isinstance(lo, (int, float)) and isinstance(hi, (int, float)) and lo > hi:
            return f"{name} ({lo:g}) is above {other} ({hi:g})"
    return None


def load_profile(path: str | Path) -> Profile:
    p = Path(path)
    try:
        data = parse_toml(p.read_text(encoding="utf-8"))
    except FileNotFoundError:
        raise ProfileError(f"{p}: profile file not found") from None
    except IsADirectoryError:
        raise ProfileError(f"{p}: is a folder, not a profile file") from None
    except (OSError, UnicodeDecodeError) as exc:
        why = exc.strerror if isinstance(exc, OSError) and exc.strerror else exc
        raise ProfileError(f"{p}: cannot read profile: {why}") from None
    except TomlProblem as exc:
        raise ProfileError(f"{p}: {exc}") from None
    return parse_profile(data, str(p))
