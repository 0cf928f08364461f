"""The pipeline's layer rules hold: certvet → reports → checks → extractor, and neither checks
nor reports import a PDF library (contracts in pyproject.toml, [tool.importlinter])."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]


def test_import_contracts_kept() -> None:
    exe = Path(sys.executable).with_name("lint-imports")
    out = subprocess.run([str(exe)], cwd=ROOT, capture_output=True, text=True, timeout=300)
    assert out.returncode == 0, out.stdout + out.stderr
    assert "0 broken" in out.stdout


def test_cli_start_up_imports_no_heavy_library() -> None:
    code = (
        "import sys, certvet.cli; "
        "heavy = [m for m in ('pandas', 'pdfplumber', 'pypdfium2', 'camelot', 'dask', 'jinja2')"
        " if m in sys.modules]; print(','.join(heavy))"
    )
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "", f"imported at CLI start-up: {out.stdout.strip()}"
