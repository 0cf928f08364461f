"""The demo fixture generator: determinism, stamps, layouts, and physics of the truth files."""

from __future__ import annotations

import importlib.util
import json
import re
import sys
from pathlib import Path

import pytest

from certvet.extractor.layout import load_layout

ROOT = Path(__file__).resolve().parents[1]
FIXTURES = ROOT / "fixtures"
DEMO = FIXTURES / "demo"
if str(FIXTURES) not in sys.path:
    sys.path.insert(0, str(FIXTURES))

from generator import STAMP, grid_form, plain_form  # noqa: E402
from generator.fonts import find_face  # noqa: E402

# loaded under its own name: other fixture folders have a generate.py too
_spec = importlib.util.spec_from_file_location("certvet_demo_generate", FIXTURES / "generate.py")
assert _spec and _spec.loader
generate = importlib.util.module_from_spec(_spec)
_spec.loader.exec_module(generate)

NAMES = [
    "grid-clean-01",
    "grid-clean-rotated-02",
    "grid-faulty-03",
    "plain-clean-04",
    "plain-faulty-05",
    "plain-unmeasured-06",
    "grid-copied-07",
]


def cross_checks() -> set[str]:
    """Checks that compare certificates with each other (found by a batch, not one audit)."""
    from certvet.corpus import crosscheck as x

    return {x.COPIED, x.REPEATED, x.NUMBER_REUSED, x.INSPECTOR_WORKLOAD, x.INSTRUMENT_WORKLOAD}


def known_checks() -> set[str]:
    from certvet.checks.registry import all_checks

    return {c.id for c in all_checks()} | cross_checks()


TICK = "✔"


def table_41_3_max_zs(rating: float) -> float:
    # BS 7671:2018+A2:2022 Table 41.3, type B circuit-breaker: Cmin × U0 / (5 × In)
    return 0.95 * 230 / (5 * rating)


@pytest.fixture(scope="module")
def regenerated(tmp_path_factory: pytest.TempPathFactory) -> tuple[Path, Path]:
    a = tmp_path_factory.mktemp("gen_a")
    b = tmp_path_factory.mktemp("gen_b")
    generate.generate(a, seed=7)
    generate.generate(b, seed=7)
    return a, b


def truth(name: str) -> dict:
    return json.loads((DEMO / f"{name}.truth.json").read_text(encoding="utf-8"))


def n(text: str) -> float:
    return float(text)


# --- regeneration --------------------------------------------------------------------------


def test_same_seed_gives_identical_files(regenerated: tuple[Path, Path]) -> None:
    a, b = regenerated
    files = sorted(p.name for p in a.iterdir())
    assert files == sorted(p.name for p in b.iterdir())
    assert len(files) == 2 * len(NAMES)
    for name in files:
        assert (a / name).read_bytes() == (b / name).read_bytes(), name


def test_committed_truth_matches_a_fresh_run(regenerated: tuple[Path, Path]) -> None:
    if not find_face().unicode:
        pytest.skip("committed fixtures were written with DejaVu Sans Condensed")
    a, _ = regenerated
    for name in NAMES:
        fresh = json.loads((a / f"{name}.truth.json").read_text(encoding="utf-8"))
        assert fresh == truth(name), f"{name}: run `python fixtures/generate.py`"


def test_another_seed_changes_the_readings(tmp_path: Path) -> None:
    generate.generate(tmp_path, seed=8)
    other = json.loads((tmp_path / "grid-clean-01.truth.json").read_text(encoding="utf-8"))
    assert other["seed"] == 8
    assert other["boards"] != truth("grid-clean-01")["boards"]


# --- stamps and PDFs -----------------------------------------------------------------------


@pytest.mark.parametrize("name", NAMES)
def test_pdf_is_stamped_and_has_the_truth_page_count(name: str) -> None:
    import pdfplumber

    t = truth(name)
    assert t["generated_by"] == "fixtures/generate.py, do not edit"
    with pdfplumber.open(ROOT / t["pdf"]) as pdf:
        assert pdf.metadata["Subject"] == STAMP
        assert len(pdf.pages) == t["pages"]
        footer = pdf.pages[-1].extract_text()
        assert f"Page {t['pages']} of {t['pages']}" in footer


def test_rotated_schedule_reads_upright() -> None:
    import pdfplumber

    t = truth("grid-clean-rotated-02")
    assert t["layout_facts"]["rotated_pages"] == [2]
    with pdfplumber.open(ROOT / t["pdf"]) as pdf:
        page = pdf.pages[1]
        assert page.rotation == 90
        assert page.width > page.height  # displayed landscape
        words = page.extract_words(char_dir_rotated="btt", line_dir_rotated="ltr")
        texts = [w["text"] for w in words]
        assert texts[:4] == ["Schedule", "of", "test", "results"]
        assert "Measured" in texts and "GL-2026-0419" in texts
        board = next(w for w in words if w["text"] == "Board:")
        assert board["x0"] < 40 and board["top"] < 80  # top-left of the displayed page


def test_grid_ticks_are_zapfdingbats_digits_to_pdfplumber() -> None:
    import pdfplumber

    t = truth("grid-clean-01")
    ticks_p2 = sum(
        1
        for c in t["boards"][0]["circuits"][:15]
        for f in ("polarity", "rcd_button")
        if c[f] == TICK
    )
    with pdfplumber.open(ROOT / t["pdf"]) as pdf:
        zapf = [c["text"] for c in pdf.pages[1].chars if "ZapfDingbats" in c["fontname"]]
    assert zapf == ["4"] * ticks_p2  # the trap: ✔ comes back as the digit 4


def test_grid_clean_01_has_continued_board_and_shared_page() -> None:
    facts = truth("grid-clean-01")["layout_facts"]
    assert truth("grid-clean-01")["pages"] >= 3
    assert facts["continued_boards"] == [{"board": "DB1", "page": 3}]
    assert 3 in facts["pages_with_several_boards"]


# --- layouts -------------------------------------------------------------------------------


@pytest.mark.parametrize(
    ("form", "module"), [("grid-landscape", grid_form), ("plain-columns", plain_form)]
)
def test_layout_loads_and_reads_every_printed_column(form: str, module: object) -> None:
    layout = load_layout(FIXTURES / "layouts" / f"{form}.toml")
    assert layout.name == form
    assert set(layout.column_fields()) == set(module.PRINTED_FIELDS)  # type: ignore[attr-defined]


def _header_texts(form: str) -> dict[str, list[str]]:
    """Each printed column's header text as a reader may see it (with and without group)."""
    out: dict[str, list[str]] = {}
    if form == "grid-landscape":
        groups = {f: g for g, fs in grid_form.GROUPS for f in fs}
        for f, label, _w, _v in grid_form.COLUMNS:
            out[f] = [label] + ([f"{groups[f]} {label}"] if f in groups else [])
    else:
        for f, h1, h2, _w, _a in plain_form.COLUMNS:
            out[f] = [f"{h1} {h2}".strip()]
    return out


@pytest.mark.parametrize("form", ["grid-landscape", "plain-columns"])
def test_each_header_pattern_picks_exactly_its_column(form: str) -> None:
    layout = load_layout(FIXTURES / "layouts" / f"{form}.toml")
    texts = _header_texts(form)
    for col in layout.columns:
        assert col.header is not None
        for variant in range(2):
            hits = [
                f for f, ts in texts.items() if col.header.search(ts[min(variant, len(ts) - 1)])
            ]
            assert hits == [col.field], (col.field, col.header.pattern, hits)


@pytest.mark.parametrize("name", NAMES)
def test_certificate_and_board_patterns_capture_the_truth(name: str) -> None:
    import pdfplumber

    t = truth(name)
    layout = load_layout(ROOT / t["layout"])
    with pdfplumber.open(ROOT / t["pdf"]) as pdf:
        page1 = pdf.pages[0].extract_text().splitlines()
        schedule = [ln for p in pdf.pages[1:] for ln in p.extract_text().splitlines()]
    for spec in layout.certificate:
        values = [m.group("value") for ln in page1 if (m := spec.pattern.search(ln))]
        got = ", ".join(values) if spec.collect_all else (values[0] if values else None)
        assert got == t["certificate"][spec.field], spec.field
    starts = [m.group("value") for ln in schedule if (m := layout.board.start.search(ln))]
    assert starts == [b["board_ref"] for b in t["boards"]]
    for b in t["boards"]:
        for spec in layout.board.fields:
            values = [m.group("value") for ln in schedule if (m := spec.pattern.search(ln))]
            assert b["fields"][spec.field] in values, (b["board_ref"], spec.field)


# --- physics of the truth files ------------------------------------------------------------


def _faulty(t: dict) -> set[tuple[str, str]]:
    return {(f["board"], f["circuit"]) for f in t["faults"] if f["circuit"]}


def _clean_circuit_problems(ze: float, c: dict) -> list[str]:
    out = []
    rating = n(c["rating"])
    max_zs = table_41_3_max_zs(rating)  # BS 7671:2018+A2:2022 Table 41.3
    zs, r12 = n(c["zs"]), n(c["r1_r2"])
    if n(c["max_zs"]) != round(max_zs + 1e-9, 2):
        out.append("recorded max Zs")
    if abs(zs - (ze + r12)) > 0.05 + 1e-9:
        out.append("Zs vs Ze+R1+R2")
    if zs < ze:
        out.append("Zs below Ze")
    if zs >= 0.8 * max_zs:
        out.append("Zs over 80 % of Table 41.3 max")
    if c["r1"] != "N/A":
        r1, rn, r2 = n(c["r1"]), n(c["rn"]), n(c["r2"])
        if abs(rn - r1) > 0.05 + 1e-9:
            out.append("rn vs r1")
        if not 1.55 <= r2 / r1 <= 1.75:
            out.append("r2/r1")
        if r12 < (r1 + r2) / 4 - 0.005:
            out.append("R1+R2 below (r1+r2)/4")
        if r12 > (r1 + r2) / 4 + 0.05:
            out.append("R1+R2 far above (r1+r2)/4")
        if not 0.15 <= r1 <= 0.6:
            out.append("ring length")
    for f in ("ir_live_live", "ir_live_earth"):
        v = c[f]
        if v not in ("LIM", "N/A") and not v.startswith(">") and n(v) < 2.0:
            out.append(f)
    if c["polarity"] != TICK:
        out.append("polarity")
    if c["rcd_idn"] == "30" and not (12 <= n(c["rcd_time"]) <= 40 and c["rcd_button"] == TICK):
        out.append("RCD")
    if "ocket" in c["description"] and c["rcd_idn"] != "30":
        out.append("sockets without RCD")
    return out


@pytest.mark.parametrize("name", NAMES)
def test_unfaulted_circuits_obey_the_physics(name: str) -> None:
    t = truth(name)
    faulty = _faulty(t)
    for b in t["boards"]:
        ze = n(b["fields"]["ze"])
        for c in b["circuits"]:
            if (b["board_ref"], c["circuit_ref"]) in faulty:
                continue
            assert _clean_circuit_problems(ze, c) == [], (name, b["board_ref"], c)


@pytest.mark.parametrize("name", ["grid-clean-01", "grid-clean-rotated-02", "plain-clean-04"])
def test_clean_certificates_are_clean_and_look_measured(name: str) -> None:
    t = truth(name)
    assert t["clean"] and t["faults"] == []
    cert = t["certificate"]
    assert all(cert[k] for k in cert), "every certificate detail present"
    assert cert["overall_outcome"] == "Satisfactory"
    assert not {"C1", "C2", "FI"} & set(cert["observation_codes"].split(", "))
    circuits = [(n(b["fields"]["ze"]), c) for b in t["boards"] for c in b["circuits"]]
    exact_zs = [abs(n(c["zs"]) - (ze + n(c["r1_r2"]))) < 0.005 for ze, c in circuits]
    assert not all(exact_zs)
    times = {c["rcd_time"] for _, c in circuits if c["rcd_idn"] == "30"}
    assert len(times) > 3
    # sub-boards: Zdb is the Zs measured at the end of their submain
    refs = {b["board_ref"]: b for b in t["boards"]}
    for b in t["boards"][1:]:
        src = re.fullmatch(r"(DB\d+) circuit (\d+)", b["fields"]["supplied_from"])
        assert src
        feed = next(c for c in refs[src[1]]["circuits"] if c["circuit_ref"] == src[2])
        assert feed["zs"] == b["fields"]["ze"]


def test_unmeasured_certificate_is_exactly_calculated() -> None:
    t = truth("plain-unmeasured-06")
    assert {c for f in t["faults"] for c in f["checks"]} == {
        "zs-all-exactly-calculated",
        "ring-all-exact-quarter",
        "rcd-times-all-identical",
        "last-digit-preference",
    }
    times = set()
    for b in t["boards"]:
        ze = n(b["fields"]["ze"])
        for c in b["circuits"]:
            assert abs(n(c["zs"]) - (ze + n(c["r1_r2"]))) < 1e-9
            if c["r1"] != "N/A":
                assert abs(n(c["r1_r2"]) - (n(c["r1"]) + n(c["r2"])) / 4) < 1e-9
            if c["rcd_idn"] == "30":
                times.add(c["rcd_time"])
    assert times == {"24"}


@pytest.mark.parametrize("name", ["grid-faulty-03", "plain-faulty-05"])
def test_faults_use_known_check_ids_and_point_at_printed_cells(name: str) -> None:
    t = truth(name)
    assert not t["clean"] and t["faults"]
    boards = {b["board_ref"]: b for b in t["boards"]}
    for f in t["faults"]:
        assert set(f["checks"]) <= known_checks()
        circuit = next(
            c for c in boards[f["board"]]["circuits"] if c["circuit_ref"] == f["circuit"]
        )
        assert f["field"] in circuit
    found = {c for f in t["faults"] for c in f["checks"]}
    assert len(found) >= 6


@pytest.mark.parametrize("name", ["grid-faulty-03", "plain-faulty-05"])
def test_each_planted_fault_breaks_a_rule(name: str) -> None:
    t = truth(name)
    boards = {b["board_ref"]: b for b in t["boards"]}
    for f in t["faults"]:
        b = boards[f["board"]]
        c = next(c for c in b["circuits"] if c["circuit_ref"] == f["circuit"])
        if f["checks"] == ["cell-unreadable"]:
            with pytest.raises(ValueError):
                n(c[f["field"]])
            continue
        problems = _clean_circuit_problems(n(b["fields"]["ze"]), c)
        if f["checks"] in (["max-zs-recorded-wrong"], ["ring-device-rating"]):
            assert c["max_zs"] == "1.44" or c["rating"] == "40", f
        else:
            assert problems, f


# --- end to end: the extractor reads every printed cell; the checks find exactly the faults --


@pytest.mark.parametrize("name", NAMES)
def test_extractor_reads_the_truth_and_checks_find_exactly_the_faults(name: str) -> None:
    from certvet.checks.runner import run_checks
    from certvet.extractor.api import extract

    t = truth(name)
    cert = extract(str(ROOT / t["pdf"]), load_layout(ROOT / t["layout"]))
    for key, text in t["certificate"].items():
        assert cert.value(key).raw.strip() == text, key
    assert [b.ref for b in cert.boards] == [b["board_ref"] for b in t["boards"]]
    for tb, board in zip(t["boards"], cert.boards, strict=True):
        for key, text in tb["fields"].items():
            assert board.value(key).raw.strip() == text, (tb["board_ref"], key)
        assert [c.ref for c in board.circuits] == [c["circuit_ref"] for c in tb["circuits"]]
        for tc, circuit in zip(tb["circuits"], board.circuits, strict=True):
            got = {f: circuit.value(f).raw.strip() for f in tc}
            assert got == tc, (tb["board_ref"], tc["circuit_ref"])
    found = {(f.check_id, f.board, f.circuit) for f in run_checks(cert).findings}
    own = [f for f in t["faults"] if not set(f["checks"]) <= cross_checks()]
    expected_cells = {
        (c, f["board"], f["circuit"]) for f in own for c in f["checks"] if f["circuit"]
    }
    expected_cert = {c for f in own for c in f["checks"] if not f["circuit"]}
    unexpected = {k for k in found if k not in expected_cells and k[0] not in expected_cert}
    missed = expected_cells - found
    missed_cert = expected_cert - {k[0] for k in found}
    assert (unexpected, missed, missed_cert) == (set(), set(), set())
