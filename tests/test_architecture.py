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


LAYERS = ["certvet", "reports", "corpus", "checks", "extractor"]


def _importlinter() -> dict:  # type: ignore[type-arg]
    with (ROOT / "pyproject.toml").open("rb") as fh:
        return tomllib.load(fh)["tool"]["importlinter"]  # type: ignore[no-any-return]


def test_layer_contract_names_every_stage_in_order() -> None:
    """Every top-level package of the project is a layer, in pipeline order, so a new stage
    cannot slip in without a contract."""
    cfg = _importlinter()
    layers = [c for c in cfg["contracts"] if c["type"] == "layers"]
    assert [c["layers"] for c in layers] == [LAYERS]
    assert sorted(cfg["root_packages"]) == sorted(LAYERS)
    packages = sorted(p.parent.name for p in ROOT.glob("*/__init__.py"))
    assert packages == sorted(LAYERS), f"top-level packages {packages} vs layers {LAYERS}"
    pdf_free = next(c for c in cfg["contracts"] if c["type"] == "forbidden")
    assert set(pdf_free["source_modules"]) == {"checks", "corpus", "reports"}


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

    graph = grimp.build_graph(*LAYERS)
    cycles = [(a, b) for a in sorted(graph.modules) for b in sorted(graph.modules)
              if a < b and graph.direct_import_exists(importer=a, imported=b)
              and graph.chain_exists(importer=b, imported=a)]
    assert cycles == []
