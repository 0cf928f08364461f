"""Fuzz the whole audit with mutated fixtures: count tracebacks, hangs and false all-clears.

    .venv/bin/python scripts/fuzz_inputs.py [--variants 400] [--seed 1] [--timeout 30]

Bases: the demo certificates and the hostile fixtures' complete two-page schedule, each with
its layout. Each variant is one base mutated once, either in its bytes (flipped bytes, a
truncation, a zeroed or repeated chunk) or in its pages (pypdf: a page dropped, duplicated,
blanked or rotated). Each is audited in its own child process under a time limit, as `audit`
does, and ends as one of:

* audited — a verdict;
* refused — a one-line InputError naming the file (a clean refusal);
* traceback — an uncaught internal error (a bug);
* hang — stopped by the time limit;
* false all-clear — "no concerns found" although fewer circuit rows were read than the
  variant's pages hold (known from the unmutated base, page by page: a blanked or damaged
  page still holds its rows; a dropped page does not).

Prints the count of each and the files behind every traceback, hang and false all-clear
(kept under --keep). Target: 0 tracebacks, 0 hangs, 0 false all-clears.
"""

from __future__ import annotations

import argparse
import io
import random
import sys
import tempfile
from collections import Counter
from dataclasses import dataclass
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))


@dataclass(frozen=True)
class Base:
    path: Path
    layout: Path
    per_page: dict[int, int]  # circuit rows read from each page of the unmutated file


@dataclass(frozen=True)
class Variant:
    path: Path
    base: Base
    how: str
    pages: tuple[int | None, ...]  # the base page behind each page of the variant (None: none)


def _bases() -> list[Base]:
    from certvet.api import audit_file
    from certvet.extractor.api import recognise
    from certvet.extractor.layout import load_layout, load_layouts

    demo_layouts = load_layouts([ROOT / "fixtures" / "layouts"])
    out = []
    for pdf in sorted((ROOT / "fixtures" / "demo").glob("*.pdf")):
        lay = recognise(str(pdf), demo_layouts)
        if lay is not None:
            out.append((pdf, Path(lay.path)))
    hostile = ROOT / "fixtures" / "hostile"
    out.append((hostile / "two-pages-complete.pdf", hostile / "layouts" / "hostile-grid.toml"))
    bases = []
    for pdf, layout_path in out:
        cert = audit_file(pdf, layout=load_layout(layout_path), formats=()).certificate
        per_page = Counter(c.page or 0 for _, c in cert.circuits())
        bases.append(Base(pdf, layout_path, dict(per_page)))
    return bases


def _byte_mutation(data: bytes, rng: random.Random) -> tuple[bytes, str]:
    kind = rng.choice(["flip", "truncate", "zero", "repeat"])
    b = bytearray(data)
    if kind == "flip":
        n = rng.randint(1, 30)
        for _ in range(n):
            b[rng.randrange(len(b))] = rng.randrange(256)
        return bytes(b), f"{n} bytes flipped"
    at = rng.randrange(len(b))
    if kind == "truncate":
        return bytes(b[:at]), f"truncated at {at}"
    size = rng.randint(1, 2000)
    if kind == "zero":
        b[at:at + size] = bytes(len(b[at:at + size]))
        return bytes(b), f"{size} bytes zeroed at {at}"
    chunk = b[at:at + size]
    return bytes(b[:at] + chunk + b[at:]), f"{size} bytes repeated at {at}"


def _page_mutation(data: bytes, rng: random.Random) -> tuple[bytes, str, tuple[int | None, ...]]:
    from pypdf import PdfReader, PdfWriter
    from pypdf.generic import ArrayObject, NameObject

    reader = PdfReader(io.BytesIO(data))
    n = len(reader.pages)
    order: list[int] = list(range(n))
    kind = rng.choice(["drop", "duplicate", "blank", "rotate", "reverse"])
    k = rng.randrange(n)
    if kind == "drop" and n > 1:
        order.pop(k)
    elif kind == "duplicate":
        order.insert(k, k)
    elif kind == "reverse":
        order.reverse()
    writer = PdfWriter()
    for i in order:
        writer.add_page(reader.pages[i])
    if kind == "blank":
        writer.pages[k][NameObject("/Contents")] = ArrayObject()
    if kind == "rotate":
        writer.pages[k].rotate(90)
    buf = io.BytesIO()
    writer.write(buf)
    return buf.getvalue(), f"page {k + 1} {kind}", tuple(i + 1 for i in order)


def _variants(bases: list[Base], count: int, seed: int, folder: Path) -> list[Variant]:
    rng = random.Random(seed)
    out = []
    for k in range(count):
        base = bases[k % len(bases)]
        data = base.path.read_bytes()
        pages: tuple[int | None, ...]
        n_pages = max(base.per_page, default=1)
        if rng.random() < 0.5:
            mutated, how = _byte_mutation(data, rng)
            pages = tuple(range(1, n_pages + 1))
        else:
            try:
                mutated, how, pages = _page_mutation(data, rng)
            except Exception as exc:  # pypdf could not rewrite it: skip, say so
                print(f"skipped a page mutation of {base.path.name}: {exc}", file=sys.stderr)
                continue
        path = folder / f"{k:04d}-{base.path.stem}.pdf"
        path.write_bytes(mutated)
        out.append(Variant(path, base, how, pages))
    return out


def _job_for(variants: dict[Path, Variant]):  # -> Callable[[Path], tuple[str, int]]
    def job(path: Path) -> tuple[str, int]:
        from certvet.api import audit_file
        from certvet.extractor.layout import load_layout

        v = variants[path]
        res = audit_file(path, layout=load_layout(v.base.layout), formats=())
        return res.verdict.key.value, len(res.certificate.circuits())

    return job


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--variants", type=int, default=400)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--timeout", type=float, default=30.0)
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--keep", type=Path, default=None, help="folder for the variants that failed")
    args = ap.parse_args()

    from certvet.workers import Limits, run_isolated

    bases = _bases()
    with tempfile.TemporaryDirectory() as tmp:
        variants = {v.path: v for v in _variants(bases, args.variants, args.seed, Path(tmp))}
        tally: Counter[str] = Counter()
        reasons: Counter[str] = Counter()
        bad: list[tuple[str, Variant, str]] = []
        limits = Limits(seconds=args.timeout, memory_mb=1024)
        for o in run_isolated(list(variants), _job_for(variants), workers=args.workers,
                              limits=limits):
            v = variants[o.path]
            if o.error is None:
                verdict, read = o.result
                expected = sum(v.base.per_page.get(p, 0) for p in v.pages if p is not None)
                if verdict == "no_concerns" and read < expected:
                    tally["false all-clear"] += 1
                    bad.append(("false all-clear", v, f"read {read} of {expected} rows"))
                else:
                    tally["audited"] += 1
            elif "internal error" in o.error or "without an answer" in o.error:
                tally["traceback"] += 1
                bad.append(("traceback", v, o.error))
            elif "time limit" in o.error:
                tally["hang"] += 1
                bad.append(("hang", v, o.error))
            else:
                tally["refused"] += 1
                reasons[o.error.split(": ", 1)[-1][:60]] += 1
        if args.keep and bad:
            args.keep.mkdir(parents=True, exist_ok=True)
            for _, v, _ in bad:
                (args.keep / v.path.name).write_bytes(v.path.read_bytes())
    total = sum(tally.values())
    print(f"{total} variants of {len(bases)} bases (seed {args.seed}): "
          + ", ".join(f"{tally[k]} {k}" for k in ("audited", "refused")))
    print(f"tracebacks: {tally['traceback']}   hangs: {tally['hang']}   "
          f"false all-clears: {tally['false all-clear']}   (target 0, 0, 0)")
    for why, n in reasons.most_common(8):
        print(f"  refused {n}: {why}")
    for what, v, why in bad:
        print(f"  {what}: {v.path.name} ({v.base.path.name}, {v.how}): {why}")
    return 1 if bad else 0


if __name__ == "__main__":
    raise SystemExit(main())
