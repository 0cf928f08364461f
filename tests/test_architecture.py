"""The pipeline's layer rules hold: certvet → reports → corpus → checks → extractor, and neither
checks, corpus nor reports import a PDF library (contracts: pyproject.toml, [tool.importlinter])."""

from __future__ import annotations

import subprocess
import sys
import tomllib
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_import_contracts_kept() -> None:
    exe = Path(sys.executable).with_name("lint-imports")
    out = subprocess.run([str(exe)], cwd=ROOT, capture_output=True, text=True, timeout=300)
    assert out.returncode == 0, out.stdout + out.stderr
    assert "0 broken" in out.stdout


LAYERS = ["reports", "corpus", "checks", "extractor"]


def _importlinter() -> dict:  # type: ignore[type-arg]
    with (ROOT / "pyproject.toml").open("rb") as fh:
        return tomllib.load(fh)["tool"]["importlinter"]  # type: ignore[no-any-return]


def test_layer_contract_names_every_stage_in_order() -> None:
    """Every stage folder at the top of the repository is a layer of the certvet package, in
    pipeline order, so a new stage cannot slip in without a contract; the application modules
    (certvet/*.py) sit above them all."""
    cfg = _importlinter()
    layers = [c for c in cfg["contracts"] if c["type"] == "layers"]
    assert [(c["containers"], c["layers"]) for c in layers] == [(["certvet"], LAYERS)]
    assert cfg["root_packages"] == ["certvet"]
    stages = sorted(p.parent.name for p in ROOT.glob("*/__init__.py") if p.parent.name != "certvet")
    assert stages == sorted(LAYERS), f"top-level stage folders {stages} vs layers {LAYERS}"
    forbidden = [c for c in cfg["contracts"] if c["type"] == "forbidden"]
    pdf_free = next(c for c in forbidden if "pdfplumber" in c["forbidden_modules"])
    assert set(pdf_free["source_modules"]) == {"certvet.checks", "certvet.corpus",
                                               "certvet.reports"}


def test_stages_install_under_the_certvet_namespace() -> None:
    """The stage folders stay at the top of the repository but are reached as certvet.<stage>
    (symbolic links inside certvet/), so no generic top-level package lands in site-packages."""
    for stage in LAYERS:
        link = ROOT / "certvet" / stage
        assert link.is_symlink() and link.resolve() == (ROOT / stage).resolve(), stage
    for name, target in (("certificates", "fixtures/demo"), ("layouts", "fixtures/layouts")):
        link = ROOT / "certvet" / "demo" / name
        assert link.is_symlink() and link.resolve() == (ROOT / target).resolve(), name
    find = tomllib.loads((ROOT / "pyproject.toml").read_text())["tool"]["setuptools"]
    assert find["packages"]["find"]["include"] == ["certvet*"]


def test_no_module_imports_a_stage_outside_the_namespace() -> None:
    """`import checks` would load a second copy of the stage beside certvet.checks."""
    import re

    bare = re.compile(r"^\s*(from|import) (extractor|checks|corpus|reports)\b", re.M)
    offenders = []
    for folder in ("certvet", "tests", "benchmarks", "scripts", "fixtures", *LAYERS):
        for path in (ROOT / folder).rglob("*.py"):
            if ".venv" in path.parts or (path.parent.name in LAYERS and folder == "certvet"):
                continue
            if bare.search(path.read_text(encoding="utf-8")):
                offenders.append(str(path.relative_to(ROOT)))
    assert offenders == []


def test_cli_start_up_imports_no_heavy_library() -> None:
    code = (
        "import sys, certvet.cli; "
        "heavy = [m for m in ('pandas', 'pdfplumber', 'pypdfium2', 'camelot', 'dask', 'jinja2')"
        " if m in sys.modules]; print(','.join(heavy))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "", f"imported at CLI start-up: {out.stdout.strip()}"


def test_no_import_cycles_between_modules() -> None:
    """No two modules import each other, directly or through others (e.g. batch and
    distributed, cli and cli_batch), counting imports inside functions too."""
    import grimp

    graph = grimp.build_graph("certvet")
    cycles = [(a, b) for a in sorted(graph.modules) for b in sorted(graph.modules)
              if a < b and graph.direct_import_exists(importer=a, imported=b)
              and graph.chain_exists(importer=b, imported=a)]
    assert cycles == []
