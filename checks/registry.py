"""The catalogue: every check class, found by importing the modules of ``checks.catalogue``."""

from __future__ import annotations

import importlib
import pkgutil

from certvet.checks.base import Check

_REGISTRY: dict[str, type[Check]] = {}
_LOADED = False


def register(cls: type[Check]) -> type[Check]:
    """Class decorator: add a check to the catalogue. Ids are unique and never reused."""
    if cls.id in _REGISTRY and _REGISTRY[cls.id] is not cls:
        raise ValueError(f"duplicate check id {cls.id!r}")
    _REGISTRY[cls.id] = cls
    return cls


def _load() -> None:
    """Import every module of checks.catalogue once per process (their @register fills the
    registry)."""
    global _LOADED
    if _LOADED:
        return
    import certvet.checks.catalogue as pkg

    for mod in pkgutil.iter_modules(pkg.__path__):
        importlib.import_module(f"certvet.checks.catalogue.{mod.name}")
    _LOADED = True


def all_checks() -> list[type[Check]]:
    """Every registered check, ordered by group then id."""
    _load()
    return sorted(_REGISTRY.values(), key=lambda c: (c.group, c.id))


def get_check(check_id: str) -> type[Check]:
    _load()
    try:
        return _REGISTRY[check_id]
    except KeyError:
        raise KeyError(f"no check with id {check_id!r} (see `certvet checks`)") from None
