"""Invented data reads as invented: every firm and client carries "(fictional)", every
instrument serial starts "ZX-", every postcode is in the impossible QX area; no retired serial
prefix (MF…, MFT…, LT-, QV-, RZ-) reappears in a fixture, truth file, template, test or gold
report. The convention lives in fixtures/generator/fictional.py."""

from __future__ import annotations

import json
import random
import re
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
FIXTURES = ROOT / "fixtures"
if str(FIXTURES) not in sys.path:
    sys.path.insert(0, str(FIXTURES))

from generator import fictional as fx  # noqa: E402

TRUTH_FILES = sorted(FIXTURES.rglob("*.truth.json"))
# Text that is written to users or describes fixtures: scanned for a retired serial prefix.
SCANNED = sorted(
    p
    for pattern in ("fixtures/**/*.py", "fixtures/**/*.json", "fixtures/**/*.toml",
                    "reports/templates/*.j2", "tests/*.py", "tests/gold/*", "certvet/**/*.py",
                    "corpus/*.py",
                    "README.md", "DEVELOPERS.md", "docs/*.md")
    for p in ROOT.glob(pattern)
    if p.name != "fictional.py" and p != Path(__file__)
)
# A retired prefix as it was printed: "MF7-204118", "MF92559-L", "MFT-5", "LT-55-0917" …
RETIRED = re.compile(r"\b(?:MFT?[-\d]\w*|LT-\d|QV-\d|RZ-\d)")


def test_there_are_truth_files_to_check() -> None:
    assert len(TRUTH_FILES) >= 18  # 7 demo + 11 forms_extra


@pytest.mark.parametrize("path", TRUTH_FILES, ids=lambda p: p.name)
def test_truth_names_and_serials_read_as_invented(path: Path) -> None:
    t = json.loads(path.read_text(encoding="utf-8"))
    cert = t["certificate"]
    assert fx.is_fictional_serial(cert["instrument_serial"]), cert["instrument_serial"]
    for key in ("contractor", "client"):
        if key in cert:
            assert fx.is_marked(cert[key]), (key, cert[key])
    for code in re.findall(r"\b[A-Z]{1,2}\d{1,2} \d[A-Z]{2}\b", cert.get("address", "")):
        assert fx.POSTCODE_PATTERN.match(code), code


@pytest.mark.parametrize("path", SCANNED, ids=lambda p: str(p.relative_to(ROOT)))
def test_no_retired_serial_prefix_reappears(path: Path) -> None:
    hits = RETIRED.findall(path.read_text(encoding="utf-8", errors="replace"))
    assert hits == [], f"{path.relative_to(ROOT)}: use fictional.serial(), not {hits[:3]}"


def test_generated_pdfs_print_the_invented_data() -> None:
    import pdfplumber

    t = json.loads((FIXTURES / "demo/grid-faulty-03.truth.json").read_text(encoding="utf-8"))
    with pdfplumber.open(ROOT / t["pdf"]) as pdf:
        text = pdf.pages[0].extract_text()
    assert "ZX-55-0917" in text
    assert "Oriel & Finch Electrical Services (fictional)" in text


def test_synthetic_corpus_follows_the_convention() -> None:
    from certvet.corpus.synthetic import generate

    certs, _ = generate(40, seed=3)
    for cert in certs:
        assert fx.is_fictional_serial(cert.text("instrument_serial"))
        assert fx.is_marked(cert.text("contractor"))
        postcode = cert.text("address").rsplit(", ", 1)[-1]
        assert fx.POSTCODE_PATTERN.match(postcode), postcode


def test_helpers_mark_and_refuse() -> None:
    assert fx.firm("Brackenfold Electrical") == "Brackenfold Electrical (fictional)"
    assert fx.client("Mr H. Quillam") == "Mr H. Quillam (fictional)"
    assert fx.postcode(4, "7TB") == "QX4 7TB"
    assert fx.serial("7-204118") == "ZX-7-204118"
    assert fx.is_fictional_serial(fx.random_serial(random.Random(1)))
    assert not fx.is_fictional_serial("MF7-204118")
    with pytest.raises(ValueError):
        fx.firm("Already (fictional)")
    with pytest.raises(ValueError):
        fx.postcode(4, "TB7")
    with pytest.raises(ValueError):
        fx.known_person("Someone Real")
