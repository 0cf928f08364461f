"""The extraction engines' names, defined once: layouts (`engine = "..."`), `--engine` options
and `extractor.api.get_engine` all use these."""

from __future__ import annotations

from enum import StrEnum


class EngineName(StrEnum):
    pdfium = "pdfium"  # the default: pypdfium2
    pdfplumber = "pdfplumber"
    lattice = "lattice"  # camelot lattice, for fully ruled grids


ENGINE_NAMES: tuple[str, ...] = tuple(e.value for e in EngineName)
DEFAULT_ENGINE = EngineName.pdfium.value
