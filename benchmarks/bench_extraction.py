"""Extraction speed and memory, measured in one run on the same files (run by hand; not a test).

    .venv/bin/python benchmarks/bench_extraction.py [--profile] [--repeat N] [--batch N]

Prints pages/second for: raw pypdfium2 chars (the floor: count_chars, get_text_range,
get_charbox for every char), each certvet engine (plumber, pdfium: words + rules), the
pdfium engine's full extraction (`extractor.api.extract`: chars → words → assemble), and the
whole audit (certvet.api.audit_file, pdfium engine, no report files); the ratios to the floor;
`certvet --help` start-up (median of several subprocess runs); peak Python memory
(tracemalloc) and max RSS growth for the 300-page hostile PDF per engine; and, last,
certificates per minute for the whole audit of an N-file batch on every core (`--batch N`,
default 1000). `--profile` prints the top of a cProfile of the pdfium engine's full
extraction of the 300-page PDF.
"""

from __future__ import annotations

import argparse
import cProfile
import pstats
import resource
import statistics
import subprocess
import sys
import time
import tracemalloc
from collections.abc import Callable
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))
BIG = ROOT / "fixtures" / "hostile" / "three-hundred-pages.pdf"


def files() -> list[Path]:
    """The demo PDFs that open (a colleague may be regenerating them) and the 300-page PDF."""
    import pypdfium2 as pdfium

    out = []
    for p in sorted((ROOT / "fixtures" / "demo").glob("*.pdf")) + [BIG]:
        try:
            pdfium.PdfDocument(str(p)).close()
        except pdfium.PdfiumError:
            print(f"skipped {p.name}: does not open")
            continue
        out.append(p)
    return out


def raw_floor(path: Path) -> int:
    import pypdfium2 as pdfium

    pdf = pdfium.PdfDocument(str(path))
    n = len(pdf)
    for i in range(n):
        page = pdf[i]
        tp = page.get_textpage()
        count = tp.count_chars()
        tp.get_text_range(0, count)
        for k in range(count):
            tp.get_charbox(k)
        tp.close()
        page.close()
    pdf.close()
    return n


def engine_run(name: str) -> Callable[[Path], int]:
    def run(path: Path) -> int:
        from certvet.extractor.api import get_engine

        doc = get_engine(name).open(str(path))
        n = sum(1 for _ in doc.pages())
        doc.close()
        return n

    return run


_LAYOUTS: dict[Path, object] = {}


def extract_run(path: Path) -> int:
    """The pdfium engine's full extraction: chars → words → rules → assemble (records)."""
    import json

    from certvet.extractor.api import extract
    from certvet.extractor.layout import load_layout

    lay = _LAYOUTS.get(path)
    if lay is None:
        truth = path.with_suffix(".truth.json")
        if truth.is_file():
            lay_path = ROOT / json.loads(truth.read_text(encoding="utf-8"))["layout"]
        else:
            lay_path = ROOT / "fixtures" / "hostile" / "layouts" / "hostile-grid.toml"
        lay = _LAYOUTS[path] = load_layout(lay_path)
    return extract(str(path), lay, engine="pdfium").page_count  # type: ignore[arg-type]


def audit_run(path: Path) -> int:
    from certvet.api import audit_file, load_layouts

    hostile = ROOT / "fixtures" / "hostile" / "layouts" / "hostile-grid.toml"
    layouts = load_layouts([ROOT / "fixtures" / "layouts", hostile])
    result = audit_file(path, layouts=layouts, engine="pdfium")
    return result.certificate.page_count


def timed(fn: Callable[[Path], int], paths: list[Path], repeat: int) -> float:
    """Pages per second, best of `repeat` passes over all files."""
    best = float("inf")
    pages = 0
    for _ in range(repeat):
        t = time.perf_counter()
        pages = sum(fn(p) for p in paths)
        best = min(best, time.perf_counter() - t)
    return pages / best


def startup(runs: int = 7) -> float:
    exe = ROOT / ".venv" / "bin" / "certvet"
    cmd = [str(exe), "--help"] if exe.exists() else [sys.executable, "-m", "certvet.cli", "--help"]
    times = []
    for _ in range(runs):
        t = time.perf_counter()
        subprocess.run(cmd, capture_output=True, check=False)
        times.append(time.perf_counter() - t)
    return statistics.median(times)


def memory(name: str) -> tuple[float, float]:
    """(tracemalloc peak MiB, max RSS growth MiB) reading the 300-page PDF with one engine."""
    before = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    tracemalloc.start()
    engine_run(name)(BIG)
    peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    after = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return peak / 2**20, (after - before) / 1024


def batch_figure(n: int) -> None:
    """Certificates per minute for the whole audit over an n-file batch on every core (the
    same measurement as benchmarks/bench_batch.py --audit-only)."""
    import tempfile

    sys.path.insert(0, str(Path(__file__).resolve().parent))
    from bench_batch import audit_only

    demo = sorted((ROOT / "fixtures" / "demo").glob("*.pdf"))
    with tempfile.TemporaryDirectory(prefix="certvet-bench-") as tmp:
        inbox = Path(tmp) / "inbox"
        inbox.mkdir()
        for i in range(n):
            pdf = demo[i % len(demo)]
            (inbox / f"{pdf.stem}-{i:05d}.pdf").write_bytes(
                pdf.read_bytes() + b"\n%" + str(i).encode()
            )
        print(f"batch of {n} certificates on every core:")
        audit_only(inbox, Path(tmp) / "out", n, None)


def main() -> None:
    ap = argparse.ArgumentParser()
    ap.add_argument("--repeat", type=int, default=2)
    ap.add_argument("--profile", action="store_true")
    ap.add_argument("--batch", type=int, default=1000,
                    help="certificates in the all-cores batch figure (copies of the demo PDFs; "
                         "0 to skip)")
    args = ap.parse_args()
    paths = files()
    pages = sum(raw_floor(p) for p in paths)  # also warms the imports and the OS cache
    print(f"{len(paths)} files, {pages} pages")
    rates = {"raw pypdfium2 chars (floor)": timed(raw_floor, paths, args.repeat)}
    for name in ("pdfium", "pdfplumber"):
        repeat = 1 if name == "pdfplumber" else args.repeat
        rates[f"engine {name}"] = timed(engine_run(name), paths, repeat)
        if name == "pdfium":
            rates["extract (pdfium, + assemble)"] = timed(extract_run, paths, args.repeat)
    try:
        rates["whole audit (pdfium)"] = timed(audit_run, paths, 1)
    except ImportError as exc:
        print(f"(no whole-audit figure: {exc})")
    floor = rates["raw pypdfium2 chars (floor)"]
    print(f"{'what':32} {'pages/s':>9} {'ms/page':>8} {'× floor time':>13}")
    for what, rate in rates.items():
        print(f"{what:32} {rate:9.1f} {1000 / rate:8.2f} {floor / rate:13.2f}")
    print(f"certvet --help start-up (median of 7): {startup() * 1000:.0f} ms")
    for name in ("pdfium", "pdfplumber"):
        peak, rss = memory(name)
        print(f"memory, 300 pages, engine {name}: "
              f"tracemalloc peak {peak:.1f} MiB, max RSS +{rss:.1f} MiB")
    if args.batch:
        batch_figure(args.batch)
    if args.profile:
        prof = cProfile.Profile()
        prof.enable()
        extract_run(BIG)
        prof.disable()
        pstats.Stats(prof).sort_stats("tottime").print_stats(12)


if __name__ == "__main__":
    main()
