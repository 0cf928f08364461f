"""Kill a batch at random moments, resume it, and compare the store with an uninterrupted run.

    .venv/bin/python scripts/crash_safety.py [--trials 8] [--seed 1] [--copies 3]

Inputs: the demo certificates (each also copied --copies times with a byte appended, so the
copies are distinct files), a hostile PDF and a file that is not a PDF. One uninterrupted
`certvet batch` makes the reference store. Each trial starts the same batch into a fresh
store, sends SIGKILL to the batch's parent process only (not its process group) at a random
moment within the reference run's duration, checks that none of its worker processes is left
running, then runs the batch again to completion and compares the store with the reference
(every table's rows without row ids and timestamps).

Prints, per trial, when it was killed, how many files were stored by then, lingering workers
and whether the resumed store equals the reference; then the totals. Target: 0 lingering
workers, 0 differing stores.
"""

from __future__ import annotations

import argparse
import os
import random
import shutil
import signal
import sqlite3
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
VOLATILE = {"id", "cert_id", "board_id", "audited_at", "certvet_version", "stored_at"}


def snapshot(store: Path) -> dict[str, list[tuple[str, ...]]]:
    """Every table's rows (rows sorted, ids and timestamps left out), keyed by table."""
    conn = sqlite3.connect(store)
    try:
        tables = [r[0] for r in conn.execute(
            "SELECT name FROM sqlite_master WHERE type = 'table' AND name NOT LIKE 'sqlite_%'")]
        out = {}
        for table in sorted(tables):
            cur = conn.execute(f"SELECT * FROM {table}")
            names = [d[0] for d in cur.description]
            keep = [i for i, n in enumerate(names) if n not in VOLATILE and not n.endswith("_at")]
            out[table] = sorted(tuple(repr(r[i]) for i in keep) for r in cur)
        if "meta" in out:  # keys such as the time of the last run
            out.pop("meta")
        return out
    finally:
        conn.close()


def _workers_of(marker: str) -> list[int]:
    """Live processes started with this trial's environment marker (the batch and workers:
    re-parented workers cannot be found through their dead parent)."""
    found = []
    for proc in Path("/proc").iterdir():
        if not proc.name.isdigit():
            continue
        try:
            env = (proc / "environ").read_bytes()
            stat = (proc / "stat").read_text()
        except OSError:
            continue
        if marker.encode() in env and stat.split()[2] != "Z":
            found.append(int(proc.name))
    return found


def _batch_cmd(inputs: Path, store: Path, out: Path) -> list[str]:
    return [sys.executable, "-m", "certvet.cli", "batch", str(inputs), "--layout",
            str(ROOT / "fixtures" / "layouts"), "--layout",
            str(ROOT / "fixtures" / "hostile" / "layouts" / "hostile-grid.toml"),
            "--store", str(store), "--out", str(out), "--workers", "2", "--quiet"]


def _stored(store: Path) -> int:
    try:
        with sqlite3.connect(store, timeout=1) as conn:
            return int(conn.execute("SELECT count(*) FROM files").fetchone()[0])
    except sqlite3.Error:
        return 0


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--trials", type=int, default=8)
    ap.add_argument("--seed", type=int, default=1)
    ap.add_argument("--copies", type=int, default=3)
    args = ap.parse_args()
    rng = random.Random(args.seed)
    with tempfile.TemporaryDirectory() as tmp:
        work = Path(tmp)
        inputs = work / "inputs"
        inputs.mkdir()
        for pdf in sorted((ROOT / "fixtures" / "demo").glob("*.pdf")):
            for k in range(args.copies + 1):
                data = pdf.read_bytes() + (b"\n%" + str(k).encode() if k else b"")
                (inputs / f"{pdf.stem}-{k}.pdf").write_bytes(data)
        shutil.copy(ROOT / "fixtures" / "hostile" / "valid-base.pdf", inputs)
        (inputs / "not-a-pdf.pdf").write_text("a letter, not a certificate\n")
        n_inputs = len(list(inputs.glob("*.pdf")))
        env = {**os.environ, "PYTHONPATH": str(ROOT)}

        ref = work / "reference.sqlite"
        t0 = time.monotonic()
        subprocess.run(_batch_cmd(inputs, ref, work / "ref-out"), cwd=ROOT, env=env,
                       stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=False)
        duration = time.monotonic() - t0
        expected = snapshot(ref)
        print(f"reference: {n_inputs} inputs, {duration:.1f} s, "
              f"{len(expected.get('files', []))} files stored")
        lingering_total = differing = killed = 0
        for trial in range(1, args.trials + 1):
            store = work / f"trial-{trial}.sqlite"
            marker = f"CERTVET_CRASH_TRIAL={trial}-{os.getpid()}"
            key, _, value = marker.partition("=")
            proc = subprocess.Popen(_batch_cmd(inputs, store, work / f"out-{trial}"), cwd=ROOT,
                                    env={**env, key: value}, stdout=subprocess.DEVNULL,
                                    stderr=subprocess.DEVNULL)
            at = rng.uniform(0.1, duration)
            time.sleep(at)
            was_running = proc.poll() is None
            if was_running:
                os.kill(proc.pid, signal.SIGKILL)  # the parent alone: its workers must follow
                killed += 1
            proc.wait()
            stored = _stored(store)
            lingering: list[int] = []
            for _ in range(100):  # give the kernel a moment to deliver the parent-death signal
                lingering = _workers_of(marker)
                if not lingering:
                    break
                time.sleep(0.1)
            for pid in lingering:  # clean up what should not be there
                os.kill(pid, signal.SIGKILL)
            subprocess.run(_batch_cmd(inputs, store, work / f"out-{trial}"), cwd=ROOT, env=env,
                           stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, check=False)
            got = snapshot(store)
            same = got == expected
            tables = sorted(t for t in set(got) | set(expected) if got.get(t) != expected.get(t))
            if tables and os.environ.get("CRASH_SAFETY_DEBUG"):
                for t in tables:
                    a, b = set(got.get(t, [])), set(expected.get(t, []))
                    print(f"  {t}: only resumed {sorted(a - b)[:2]} only reference "
                          f"{sorted(b - a)[:2]}")
            lingering_total += len(lingering)
            differing += not same
            print(f"trial {trial}: killed at {at:.1f} s{'' if was_running else ' (had finished)'}"
                  f", {stored} files stored by then, {len(lingering)} workers left running, "
                  f"resumed store {'equals' if same else 'DIFFERS FROM'} the reference"
                  + (f" (tables {', '.join(tables)})" if tables else ""))
        print(f"{args.trials} trials ({killed} killed mid-run): {lingering_total} lingering "
              f"workers, {differing} differing stores (target 0, 0)")
        return 1 if lingering_total or differing else 0


if __name__ == "__main__":
    raise SystemExit(main())
