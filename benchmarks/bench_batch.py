"""Batch throughput by hand: certificates per minute over N copies of the demo PDFs on all
cores, and the parent's peak RSS along the way (it should stay flat: the parent only stores).

    .venv/bin/python benchmarks/bench_batch.py [--copies 10] [--workers N] [--scheduler ADDR]

Each copy gets one byte appended after %%EOF so its hash differs (otherwise the batch would
skip it as already done). Prints one line per 10 % of the batch and a summary.
"""

from __future__ import annotations

import argparse
import resource
import shutil
import tempfile
import time
from pathlib import Path

from certvet.api import DEMO_DIR, DEMO_LAYOUTS, load_layouts
from certvet.batch import FileOutcome, run_batch


def rss_mb() -> float:
    """Current resident set of this process (Linux /proc), in MB."""
    with open("/proc/self/statm") as fh:
        pages = int(fh.read().split()[1])
    return pages * resource.getpagesize() / 2**20


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--copies", type=int, default=10, help="copies of each demo PDF")
    ap.add_argument("--seeds", type=int, default=0,
                    help="instead of copies: generate the demo set with this many seeds (distinct "
                         "readings; each seed's set has one planted copy), a realistic corpus")
    ap.add_argument("--workers", type=int, default=None, help="default: every core")
    ap.add_argument("--scheduler", default=None, help="Dask scheduler address")
    ap.add_argument("--audit-only", action="store_true",
                    help="measure the whole audit alone (extract, checks, HTML, JSON, CSV in "
                         "forked workers) without the corpus and cross-certificate phase")
    args = ap.parse_args()
    with tempfile.TemporaryDirectory(prefix="certvet-bench-") as tmp:
        inbox = Path(tmp) / "inbox"
        inbox.mkdir()
        if args.seeds:
            generate_sets(inbox, args.seeds)
        else:
            for pdf in sorted(DEMO_DIR.glob("*.pdf")):
                data = pdf.read_bytes()
                for i in range(args.copies):
                    (inbox / f"{pdf.stem}-{i:04d}.pdf").write_bytes(
                        data + b"\n%" + str(i).encode()
                    )
        n = sum(1 for _ in inbox.rglob("*.pdf"))
        samples: list[tuple[int, float]] = []
        done = 0

        def on_event(_o: FileOutcome) -> None:
            nonlocal done
            done += 1
            samples.append((done, rss_mb()))
            if done % max(1, n // 10) == 0:
                print(f"  {done:>5}/{n}  parent RSS {samples[-1][1]:.0f} MB", flush=True)

        if args.audit_only:
            return audit_only(inbox, Path(tmp) / "out", n, args.workers)
        t0 = time.perf_counter()
        report = run_batch([inbox], layouts=load_layouts([DEMO_LAYOUTS]),
                           store=Path(tmp) / "corpus.sqlite", out_dir=Path(tmp) / "out",
                           workers=args.workers, scheduler=args.scheduler, on_event=on_event)
        elapsed = time.perf_counter() - t0
        shutil.rmtree(inbox)
    audited = report.totals["audited"]
    first = samples[len(samples) // 10][1] if samples else 0.0
    peak = max((r for _, r in samples), default=0.0)
    print(f"{n} files: {report.totals}; {elapsed:.1f} s wall (incl. cross-checks and portfolio)")
    print(f"throughput: {audited / elapsed * 60:.1f} certificates per minute")
    print(f"parent RSS: {first:.0f} MB after 10 % of the batch, peak {peak:.0f} MB "
          f"(ru_maxrss {resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024:.0f} MB)")
    return 0


def generate_sets(inbox: Path, seeds: int) -> None:
    """The demo set generated with seeds 100, 101, …: distinct readings in every set."""
    import subprocess
    import sys

    script = Path(__file__).resolve().parents[1] / "fixtures" / "generate.py"
    made, seed = 0, 100
    while made < seeds:
        out = inbox / f"seed-{seed}"
        done = subprocess.run([sys.executable, str(script), "--seed", str(seed), "--out",
                               str(out)], capture_output=True)
        seed += 1
        if done.returncode != 0:  # the generator's self-check refused this seed's draw
            shutil.rmtree(out, ignore_errors=True)
            continue
        for truth in out.glob("*.truth.json"):
            truth.unlink()
        made += 1
    print(f"generated {made} demo sets ({sum(1 for _ in inbox.rglob('*.pdf'))} certificates; "
          f"{seed - 100 - made} seeds refused by the generator's self-check)", flush=True)


def audit_only(inbox: Path, out: Path, n: int, workers: int | None) -> int:
    """Certificates per minute for the whole audit of each file (the per-file work of a batch:
    recognise, extract, check, write HTML/JSON/CSV) on all cores, and the pages it read."""
    from certvet.batch import AuditJob, warm_up
    from certvet.workers import run_isolated

    layouts = tuple(load_layouts([DEMO_LAYOUTS]))
    job = AuditJob(layouts, reports_dir=out)
    t0 = time.perf_counter()
    warm_up(layouts, None)
    pages = failed = 0
    for oc in run_isolated(sorted(inbox.rglob("*.pdf")), job, workers=workers):
        if oc.result is None:
            failed += 1
        else:
            pages += oc.result.certificate.page_count
    elapsed = time.perf_counter() - t0
    done = n - failed
    print(f"{n} files ({pages} pages, {pages / max(done, 1):.1f} per certificate), "
          f"{failed} failed; {elapsed:.1f} s wall")
    print(f"whole audit: {done / elapsed * 60:.0f} certificates per minute, "
          f"{pages / elapsed:.0f} pages per second")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
