"""The catalogue itself: unique ids, declared metadata, documentation sections, sourced options."""

from __future__ import annotations

import dataclasses
import re

import pytest

from certvet.checks.base import BASES, DOC_SECTIONS
from certvet.checks.model import Severity
from certvet.checks.registry import all_checks

CHECKS = all_checks()


def test_ids_unique_and_self_explaining() -> None:
    ids = [c.id for c in CHECKS]
    assert len(ids) == len(set(ids))
    for cid in ids:
        assert re.fullmatch(r"[a-z0-9]+(-[a-z0-9]+)+", cid), cid


@pytest.mark.parametrize("cls", CHECKS, ids=[c.id for c in CHECKS])
def test_declared_metadata(cls: type) -> None:
    assert cls.title and cls.reference.strip()
    assert isinstance(cls.severity, Severity)
    assert cls.basis in BASES
    assert cls.scope in ("circuit", "board", "certificate", "corpus")
    sections = cls.doc_sections()
    missing = [s for s in DOC_SECTIONS if not sections.get(s)]
    assert not missing, f"{cls.id}: docstring lacks sections {missing}"
    for f in dataclasses.fields(cls.Options):
        assert f.metadata.get("source"), f"{cls.id}: option {f.name} has no source"
        assert f.metadata.get("help"), f"{cls.id}: option {f.name} has no help"
        assert f.default is not dataclasses.MISSING, f"{cls.id}: option {f.name} has no default"
