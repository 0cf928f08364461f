"""Benchmark the corpus similarity index: lookup time, memory and recall/precision by size.

Run by hand (not part of the test suite):

    .venv/bin/python benchmarks/bench_similarity.py --sizes 1000,10000,100000

Fills one store with synthetic certificates (corpus/synthetic.py) up to each size in
turn — the 1,000 are the first 1,000 of the 10,000 — and at each size prints:

* lookup time per certificate, median and 95th percentile over `--queries` lookups: of stored
  certificates (`similar_to`) and of new independent certificates not in the store (`similar`);
* peak resident memory of this process and the store's size on disk;
* recall of planted copies (whole, nudged, board, run: is the source among the matches?) and
  precision of every link found during those lookups (a link between two copies of one source
  counts as correct).

Checks are not run on the synthetic certificates (empty results), so the fill time is the
store's and the index's alone.
"""

from __future__ import annotations

import argparse
import random
import resource
import statistics
import sys
import tempfile
import time
from collections import Counter
from pathlib import Path

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

from certvet.checks.profile import DEFAULT_PROFILE  # noqa: E402
from certvet.checks.runner import CheckResults  # noqa: E402
from certvet.corpus import Corpus  # noqa: E402
from certvet.corpus.fingerprints import certificate_readings  # noqa: E402
from certvet.corpus.similarity import build_signatures, find_similar  # noqa: E402
from certvet.corpus.synthetic import CertificateStream  # noqa: E402

COPY_KINDS = ("whole", "nudged", "board", "run")


def _ms(xs: list[float]) -> str:
    xs = sorted(xs)
    p95 = xs[min(len(xs) - 1, int(0.95 * len(xs)))]
    return f"median {statistics.median(xs) * 1000:6.2f} ms  p95 {p95 * 1000:6.2f} ms"


def _disk(path: Path) -> float:
    return sum(p.stat().st_size for p in path.parent.glob(path.name + "*")) / 2**20


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default="1000,10000,100000")
    ap.add_argument("--queries", type=int, default=200)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--store", type=Path, default=None, help="store path (default: a temp dir)")
    args = ap.parse_args()
    sizes = sorted(int(s) for s in args.sizes.split(","))

    tmp = tempfile.TemporaryDirectory()
    path = args.store or Path(tmp.name) / "bench.sqlite"
    stream = CertificateStream(args.seed)
    empty = CheckResults(DEFAULT_PROFILE)
    rng = random.Random(args.seed)
    fresh = CertificateStream(args.seed + 10_000, copy_rate=0.0).take(args.queries)
    print(f"store: {path}")
    with Corpus(path) as corpus:
        filled = 0
        it = iter(stream)
        for size in sizes:
            t0 = time.perf_counter()
            while filled < size:
                with corpus.batch():
                    for _ in range(min(1000, size - filled)):
                        corpus.add(next(it), empty)
                        filled += 1
            fill = time.perf_counter() - t0
            ids = [r[0] for r in corpus.conn.execute("SELECT id FROM certificates")]

            stored_t = []
            for cid in rng.sample(ids, min(args.queries, len(ids))):
                t = time.perf_counter()
                corpus.similar_to(cid)
                stored_t.append(time.perf_counter() - t)
            new_t, sig_t, idx_t = [], [], []
            for cert in fresh:
                t = time.perf_counter()
                sigs = build_signatures(certificate_readings(cert), corpus.params)
                t1 = time.perf_counter()
                find_similar(corpus.conn, sigs, corpus.params)
                t2 = time.perf_counter()
                sig_t.append(t1 - t)
                idx_t.append(t2 - t1)
                new_t.append(t2 - t)

            # recall and precision over planted copies in the store
            sha_id = dict(corpus.conn.execute("SELECT sha256, id FROM certificates"))
            planted = [p for p in stream.truth.planted
                       if p.kind in COPY_KINDS and p.copy_sha256 in sha_id]
            groups: dict[int, set[int]] = {}
            for p in stream.truth.planted:
                if p.source_sha256 in sha_id and p.copy_sha256 in sha_id and p.kind != "retest" \
                        and p.kind in (*COPY_KINDS, "repeat"):
                    s = sha_id[p.source_sha256]
                    groups.setdefault(s, {s}).add(sha_id[p.copy_sha256])
            allowed = {frozenset((a, b)) for g in groups.values() for a in g for b in g if a != b}
            hit: Counter[str] = Counter()
            total: Counter[str] = Counter()
            links: set[frozenset[int]] = set()
            queried = {sha_id[p.copy_sha256] for p in planted} | set(
                rng.sample(ids, min(args.queries, len(ids))))
            found_by: dict[int, set[int]] = {}
            for cid in queried:
                found_by[cid] = {m.cert_b for m in corpus.similar_to(cid)}
                links |= {frozenset((cid, b)) for b in found_by[cid]}
            for p in planted:
                total[p.kind] += 1
                hit[p.kind] += sha_id[p.source_sha256] in found_by[sha_id[p.copy_sha256]]
            good = len(links & allowed)
            rss = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024
            added = size - (sizes[sizes.index(size) - 1] if sizes.index(size) else 0)
            print(f"\n== {size:,} certificates (fill {fill:.1f} s, "
                  f"{fill / max(1, added) * 1000:.2f} ms each, generation included)")
            print(f"lookup, stored certificate: {_ms(stored_t)}")
            print(f"lookup, new certificate:    {_ms(new_t)}")
            print(f"  of which signatures:      {_ms(sig_t)}  (CPU only, size-independent)")
            print(f"  of which index + verify:  {_ms(idx_t)}")
            print(f"memory: peak RSS {rss:.0f} MiB; store on disk {_disk(path):.0f} MiB")
            print("recall: " + ", ".join(f"{k} {hit[k]}/{total[k]}" for k in COPY_KINDS)
                  + f"; all {sum(hit.values())}/{sum(total.values())}")
            print(f"precision: {good}/{len(links)} links found are planted copies "
                  f"(from {len(queried)} lookups)")
    tmp.cleanup()


if __name__ == "__main__":
    main()
