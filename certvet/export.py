"""`certvet export`: every table of the corpus as CSV or Parquet files, or as one workbook.

    from certvet.export import export_store
    export_store("corpus.sqlite", "corpus-export", "xlsx")  # [Path("corpus-export/corpus.xlsx")]

The workbook's first sheet carries the cautions and how many certificates have each verdict;
then the certificates (with the verdict's words beside its key), circuits and findings sheets,
then the other tables (reports/xlsxout.py).
"""

from __future__ import annotations

from collections import Counter
from pathlib import Path
from typing import Any

FORMATS = ("csv", "parquet", "xlsx")
_FIRST = ("certificates", "circuits", "findings")


def export_store(store: str | Path, out: str | Path, format: str = "csv") -> list[Path]:
    """Export the corpus at `store` into the folder `out`; returns the files written.
    Raises corpus.store.CorpusError (one line naming the file) for a store that cannot be read,
    ValueError for an unknown format."""
    from certvet.corpus.store import Corpus

    if format not in FORMATS:
        raise ValueError(f"unknown export format {format!r} (use {', '.join(FORMATS)})")
    with Corpus(Path(store)) as corpus:
        if format != "xlsx":
            return corpus.export(out, format)
        frames = dict(corpus.frames())
    return [write_corpus_workbook(frames, Path(out) / "corpus.xlsx", Path(store))]


def write_corpus_workbook(frames: dict[str, Any], path: Path, store: Path) -> Path:
    from certvet import __version__
    from certvet.reports.model import CAUTIONS
    from certvet.reports.verdict import WORDING, VerdictKey
    from certvet.reports.xlsxout import write_workbook

    certs = frames["certificates"]
    if "verdict" in certs.columns:  # the key as stored, and its words as the reports print them
        words = {k.value: WORDING[k].headline for k in VerdictKey}
        certs.insert(certs.columns.get_loc("verdict") + 1, "verdict_words",
                     certs["verdict"].map(lambda k: words.get(k, k)))
    counts = Counter(certs["verdict_words"]) if "verdict_words" in certs.columns else Counter()
    front: list[list[Any]] = [
        ["certvet corpus export", f"certvet {__version__}, store {store}"],
        [],
        ["Before you rely on this workbook", ""],
        *[["", c] for c in CAUTIONS],
        [],
        ["Verdicts", f"{len(certs)} certificates"],
        *[[words_, n] for words_, n in counts.most_common()],
        [],
        ["Sheets", "certificates (one row each, with its verdict), circuits, findings, then "
                   "the other tables of the store (schema: docs/corpus.md)"],
    ]
    order = [t for t in _FIRST if t in frames] + [t for t in frames if t not in _FIRST]
    return write_workbook(path, front, [(t, frames[t]) for t in order])
