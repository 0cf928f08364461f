"""How well drafted and final layouts read the fixture forms, measured against ground truth.

For every fixture form (one sample PDF per form, its `<name>.truth.json` beside it) prints:

* matched — share of the circuit fields printed on the form that the draft matched to a column;
* draft   — cell accuracy of the draft layout, as drafted, without edits;
* final   — cell accuracy of the kept (hand-checked) layout named in the truth file.

Cell accuracy = cells whose text equals the printed text (whitespace folded, NFKC) divided by
the printed cells; circuits the layout reads that the truth does not hold count as errors.
Pitfall PDFs (fixtures/forms_extra/<pitfall>-*.pdf) are measured with their final layout.

With no layout at all (`--no-layout`, section at the end): every fixture certificate of every
form audited in one run with no layout given, as `certvet audit` does it (certvet.api.audit_many:
a layout drafted on the fly from the first file of each unknown form, shared by the later
ones), printed per form: certificates read, certificates read by a layout drafted from another
form's file, layouts drafted, row recall, cell accuracy.

Run: .venv/bin/python scripts/layout_accuracy.py [--engine words] [--pitfalls] [--no-layout]
"""

from __future__ import annotations

import argparse
import json
import sys
import tempfile
from dataclasses import dataclass, field
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from extractor.tokens import normalise_text  # noqa: E402

# one sample per form: the PDF the draft is made from and measured on
SAMPLES = [
    "fixtures/demo/grid-clean-01.pdf",
    "fixtures/demo/plain-clean-04.pdf",
    "fixtures/forms_extra/ledger-sample.pdf",
    "fixtures/forms_extra/boxed-sample.pdf",
]
PITFALLS = sorted(
    str(p.relative_to(ROOT))
    for p in (ROOT / "fixtures/forms_extra").glob("*.pdf")
    if not p.stem.endswith("-sample")
)


@dataclass
class Score:
    correct: int = 0
    total: int = 0
    extra_rows: int = 0
    wrong: list[str] = field(default_factory=list)

    @property
    def share(self) -> float:
        return self.correct / self.total if self.total else 0.0


def load_truth(pdf: str | Path) -> dict:
    p = Path(pdf)
    return json.loads(p.with_name(p.stem + ".truth.json").read_text(encoding="utf-8"))


def _norm(s: str) -> str:
    return normalise_text(s or "")


def cell_accuracy(cert, truth: dict) -> Score:
    """Compare every printed circuit cell of the truth with the certificate's raw text."""
    sc = Score()
    boards = list(cert.boards)
    for k, tb in enumerate(truth["boards"]):
        ref = tb.get("board_ref", tb.get("ref", ""))
        got_b = next((b for b in boards if b.ref == ref), None)
        if got_b is None and k < len(boards) and len(boards) == len(truth["boards"]):
            got_b = boards[k]
        pool = list(got_b.circuits) if got_b else []
        for tc in tb["circuits"]:
            c = next((x for x in pool if x.ref == tc["circuit_ref"]), None)
            if c is not None:
                pool.remove(c)
            for name, text in tc.items():
                sc.total += 1
                have = c.value(name).raw if c is not None else None
                if c is not None and _norm(have) == _norm(text):
                    sc.correct += 1
                elif len(sc.wrong) < 12:
                    sc.wrong.append(f"{ref}/{tc['circuit_ref']}/{name}: want {text!r} got {have!r}")
        extra = [c.ref for c in pool]
        sc.extra_rows += len(extra)
        sc.total += len(extra)
        if extra and len(sc.wrong) < 12:
            sc.wrong.append(f"{ref}: rows not in the truth: {extra}")
    known = {tb.get("board_ref", tb.get("ref", "")) for tb in truth["boards"]}
    for b in boards:
        if b.ref not in known and len(boards) != len(truth["boards"]):
            sc.extra_rows += len(b.circuits)
            sc.total += len(b.circuits)
    return sc


def printed_fields(truth: dict) -> set[str]:
    return {f for b in truth["boards"] for c in b["circuits"] for f in c}


def measure_layout(pdf: str, layout_path: str | Path, engine: str | None = None) -> Score:
    from extractor.api import extract
    from extractor.errors import InputError
    from extractor.layout import load_layout

    truth = load_truth(ROOT / pdf)
    try:
        cert = extract(str(ROOT / pdf), load_layout(layout_path), engine=engine)
    except InputError as exc:
        sc = Score(total=sum(len(c) for b in truth["boards"] for c in b["circuits"]))
        sc.wrong.append(str(exc))
        return sc
    return cell_accuracy(cert, truth)


@dataclass
class FormResult:
    pdf: str
    matched: float
    draft: Score
    final: Score
    unmatched: list[str]


def measure_form(pdf: str, engine: str = "pdfium") -> FormResult:
    from extractor.draft import draft_layout

    truth = load_truth(ROOT / pdf)
    result = draft_layout(ROOT / pdf, engine=engine)
    want = printed_fields(truth)
    got = set(result.matched_fields)
    with tempfile.TemporaryDirectory() as tmp:
        path = Path(tmp) / "draft.toml"
        path.write_text(result.toml, encoding="utf-8")
        draft = measure_layout(pdf, path, engine)
    final = measure_layout(pdf, ROOT / truth["layout"], None)
    return FormResult(pdf, len(want & got) / len(want), draft, final, sorted(want - got))


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--engine", default="pdfium")
    ap.add_argument("--pitfalls", action="store_true", help="also measure the pitfall PDFs")
    ap.add_argument("-v", "--verbose", action="store_true", help="list wrong cells")
    ap.add_argument("--no-layout", action="store_true",
                    help="also read every fixture certificate with no layout at all")
    args = ap.parse_args(argv)
    print(f"{'form sample':<44} {'matched':>8} {'draft':>8} {'final':>8}")
    for pdf in SAMPLES:
        r = measure_form(pdf, args.engine)
        print(
            f"{pdf:<44} {r.matched:>8.1%} {r.draft.share:>8.1%} {r.final.share:>8.1%}"
            f"   ({r.draft.correct}/{r.draft.total} cells drafted)"
        )
        if args.verbose:
            for w in r.unmatched:
                print(f"    not matched: {w}")
            for w in r.draft.wrong:
                print(f"    draft: {w}")
            for w in r.final.wrong:
                print(f"    final: {w}")
    if args.pitfalls:
        print(f"\n{'pitfall PDF (final layout)':<60} {'final':>8}")
        for pdf in PITFALLS:
            truth = load_truth(ROOT / pdf)
            sc = measure_layout(pdf, ROOT / truth["layout"])
            print(f"{pdf:<60} {sc.share:>8.1%}")
            if args.verbose:
                for w in sc.wrong:
                    print(f"    {w}")
    if args.no_layout:
        print_without_layout(measure_without_layout(), args.verbose)
    return 0


# --- with no layout at all (certificates read with layouts drafted on the fly) ---------------

FORM_FOLDERS = ("fixtures/demo", "fixtures/forms_extra", "fixtures/forms_new")


@dataclass
class NoLayoutForm:
    form: str
    certificates: int = 0
    read: int = 0
    read_by_other_form: int = 0  # read with a layout drafted from another form's file
    drafted: set[str] = field(default_factory=set)  # layouts drafted from this form's files
    rows_found: int = 0
    rows_total: int = 0
    cells: Score = field(default_factory=Score)
    refused: list[str] = field(default_factory=list)

    @property
    def row_recall(self) -> float:
        return self.rows_found / self.rows_total if self.rows_total else 0.0


def fixture_certificates() -> list[Path]:
    """Every fixture PDF with ground truth beside it, sorted (the order a batch reads them)."""
    return sorted(p for folder in FORM_FOLDERS for p in (ROOT / folder).glob("*.pdf")
                  if p.with_name(p.stem + ".truth.json").exists())


def _rows_found(cert, truth: dict) -> tuple[int, int]:
    want = [(tb.get("board_ref", tb.get("ref", "")), tc["circuit_ref"])
            for tb in truth["boards"] for tc in tb["circuits"]]
    have = {(b.ref, c.ref) for b in cert.boards for c in b.circuits}
    refs = {c.ref for b in cert.boards for c in b.circuits}
    single = len(truth["boards"]) == 1 == len(cert.boards)  # board named differently
    found = sum(1 for b, c in want if (b, c) in have or (single and c in refs))
    return found, len(want)


def measure_without_layout(pdfs: list[Path] | None = None) -> list[NoLayoutForm]:
    """Audit the certificates in one run with no layout given (drafting on, default
    thresholds); score each against its truth, per form."""
    from certvet.api import audit_many

    pdfs = pdfs if pdfs is not None else fixture_certificates()
    truths = {p: load_truth(p) for p in pdfs}
    form_of = {p: truths[p]["form"] for p in pdfs}
    forms: dict[str, NoLayoutForm] = {}
    for p in pdfs:
        forms.setdefault(form_of[p], NoLayoutForm(form_of[p])).certificates += 1
    with tempfile.TemporaryDirectory() as tmp:
        summary = audit_many(pdfs, layouts=[], out_dir=Path(tmp))
    for res in summary.audited:
        entry = forms[form_of[res.source]]
        entry.read += 1
        note = res.certificate.drafted
        if note is not None:
            sample_form = form_of.get(Path(note.sample))
            entry.read_by_other_form += sample_form != entry.form
            if Path(note.sample) == res.source:
                entry.drafted.add(res.layout)
        found, total = _rows_found(res.certificate, truths[res.source])
        entry.rows_found += found
        entry.rows_total += total
        sc = cell_accuracy(res.certificate, truths[res.source])
        entry.cells.correct += sc.correct
        entry.cells.total += sc.total
        entry.cells.wrong += [f"{res.source.name}: {w}" for w in sc.wrong[:3]]
    for fail in summary.failed:
        entry = forms[form_of[fail.source]]
        truth = truths[fail.source]
        entry.rows_total += sum(len(tb["circuits"]) for tb in truth["boards"])
        entry.cells.total += sum(len(c) for tb in truth["boards"] for c in tb["circuits"])
        entry.refused.append(fail.reason)
    return sorted(forms.values(), key=lambda f: f.form)


def print_without_layout(results: list[NoLayoutForm], verbose: bool = False) -> None:
    print(f"\n{'form, with no layout at all':<30} {'read':>7} {'by other':>9} {'drafts':>7} "
          f"{'rows':>8} {'cells':>8}")
    for r in results:
        print(f"{r.form:<30} {f'{r.read}/{r.certificates}':>7} {r.read_by_other_form:>9} "
              f"{len(r.drafted):>7} {r.row_recall:>8.1%} {r.cells.share:>8.1%}")
        if verbose:
            for w in r.refused:
                print(f"    refused: {w}")
            for w in r.cells.wrong:
                print(f"    cell: {w}")


if __name__ == "__main__":
    raise SystemExit(main())
