"""Peak resident memory of a whole `certvet audit` against document length (run by hand; not a
test).

    .venv/bin/python benchmarks/bench_memory.py [--pages 3,30,300]

For each form (a demo certificate of each demo form and one certificate of each new form), a
certificate of N pages is built by repeating the source's pages (pypdfium2), then audited by
`certvet audit` (the CLI, with the reports written) in a fresh process; the figure is the peak
resident set size of the largest process of that run (ru_maxrss of the waited children, read in
a separate measuring process per run so runs do not mask each other). Target (issue: speed):
a 300-page certificate peaks at or below 300 MB.
"""

from __future__ import annotations

import argparse
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
CERTVET = Path(sys.executable).with_name("certvet")
FORMS = {
    "plain (unruled)": ROOT / "fixtures/demo/plain-clean-04.pdf",
    "grid (ruled)": ROOT / "fixtures/demo/grid-clean-01.pdf",
    "stacked-canvas": ROOT / "fixtures/forms_new/stacked-canvas-01.pdf",
    "twolevel-html": ROOT / "fixtures/forms_new/twolevel-html-01.pdf",
    "rotated-sheet": ROOT / "fixtures/forms_new/rotated-sheet-01.pdf",
}
LAYOUTS = [ROOT / "fixtures/layouts", ROOT / "fixtures/forms_new/layouts"]
TARGET_MB = 300.0

MEASURE = """
import resource, subprocess, sys
r = subprocess.run(sys.argv[1:], capture_output=True)
print(r.returncode, resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)
"""


def repeat_pages(src: Path, out: Path, pages: int) -> None:
    import pypdfium2 as pdfium

    source = pdfium.PdfDocument(str(src))
    doc = pdfium.PdfDocument.new()
    while len(doc) < pages:
        doc.import_pages(source, list(range(min(len(source), pages - len(doc)))))
    doc.save(str(out))


def peak_mb(pdf: Path, out: Path) -> tuple[int, float, float]:
    cmd = [str(CERTVET), "audit", "-q", "-o", str(out), str(pdf)]
    for layouts in LAYOUTS:
        if layouts.is_dir():
            cmd += ["-l", str(layouts)]
    start = time.perf_counter()
    res = subprocess.run([sys.executable, "-c", MEASURE, *cmd], capture_output=True, text=True,
                         check=True)
    code, kb = res.stdout.split()
    return int(code), int(kb) / 1024, time.perf_counter() - start


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--pages", default="3,30,300", help="comma-separated page counts")
    args = ap.parse_args()
    counts = [int(n) for n in args.pages.split(",")]
    print(f"command: {' '.join(sys.argv)}")
    print(f"{'form':18} {'pages':>6} {'exit':>5} {'peak RSS MB':>12} {'MB/page':>8} {'s':>6}")
    worst = 0.0
    with tempfile.TemporaryDirectory() as tmp:
        for form, src in FORMS.items():
            if not src.exists():
                print(f"{form:18} missing {src}")
                continue
            for n in counts:
                pdf = Path(tmp) / f"{src.stem}-{n}.pdf"
                repeat_pages(src, pdf, n)
                code, mb, secs = peak_mb(pdf, Path(tmp) / f"out-{src.stem}-{n}")
                if n == max(counts):
                    worst = max(worst, mb)
                print(f"{form:18} {n:6} {code:5} {mb:12.0f} {mb / n:8.2f} {secs:6.1f}")
    verdict = "met" if worst <= TARGET_MB else "NOT met"
    print(f"largest peak at {max(counts)} pages: {worst:.0f} MB (target <= {TARGET_MB:.0f} MB: "
          f"{verdict})")


if __name__ == "__main__":
    main()
