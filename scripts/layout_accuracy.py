"""How well drafted and final layouts read the fixture forms, measured against ground truth.

Part 1, one sample per form (the PDF the draft is made from, its `<name>.truth.json` beside it):

* matched — share of the circuit fields printed on the form that the draft matched to a column;
* draft   — cell accuracy of the draft layout on its own sample, as drafted, without edits;
* final   — cell accuracy of the kept (hand-written) layout named in the truth file.

Part 2, every certificate of every form, read with the unedited drafts (one draft per form,
made from that form's sample; each certificate is recognised among all drafts, as `audit`
does, and read with the draft that recognised it):

* recognised — certificates of the form its own draft recognises (target 100 %);
* by other   — certificates of OTHER forms this form's draft recognises (target 0);
* rows       — circuits of the truth found on the right board (row recall, target 100 %);
* cells      — cells whose text equals the printed text (target ≥ 97 %);
* no layout  — the same cell accuracy read with no layout at all (`read_without_layout`).

Cell accuracy = cells whose text equals the printed text (whitespace folded, NFKC) divided by
the printed cells; circuits the layout reads that the truth does not hold count as errors.
Pitfall PDFs (fixtures/forms_extra/<pitfall>-*.pdf) are certificates of their form like any
other in part 2, and are measured with their final layout by `--pitfalls`.

Part 3, with no layout at all (`--no-layout`): every certificate of every form audited in ONE
run with no layout given, as `certvet audit FOLDER/` does it (certvet.api.audit_many: a layout
drafted on the fly from the first file of each unknown form, shared by later files of the form),
per form: certificates read, read by a layout drafted from another form's file, layouts
drafted, row recall, cell accuracy.

Run: .venv/bin/python scripts/layout_accuracy.py [--engine pdfium] [--pitfalls] [--no-layout] [-v]
Figures are printed, never asserted here; tests/test_draft.py and
tests/test_audit_without_layout.py pin them as lower bounds.
"""

from __future__ import annotations

import argparse
import json
import sys
import tempfile
from collections.abc import Callable
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from certvet.extractor.tokens import normalise_text  # noqa: E402

# one sample per form: the PDF the draft is made from (form name → sample)
FORM_SAMPLES: dict[str, str] = {
    "grid-landscape": "fixtures/demo/grid-clean-01.pdf",
    "plain-columns": "fixtures/demo/plain-clean-04.pdf",
    "ledger": "fixtures/forms_extra/ledger-sample.pdf",
    "boxed": "fixtures/forms_extra/boxed-sample.pdf",
    "twolevel-html": "fixtures/forms_new/twolevel-html-01.pdf",
    "rotated-sheet": "fixtures/forms_new/rotated-sheet-01.pdf",
    "stacked-canvas": "fixtures/forms_new/stacked-canvas-01.pdf",
}
SAMPLES = list(FORM_SAMPLES.values())
FIXTURE_DIRS = ("fixtures/demo", "fixtures/forms_extra", "fixtures/forms_new")
PITFALLS = sorted(
    str(p.relative_to(ROOT))
    for p in (ROOT / "fixtures/forms_extra").glob("*.pdf")
    if not p.stem.endswith("-sample")
)
# PDFs whose tables look like no certificate: the drafter must refuse them
NOT_CERTIFICATES = sorted(
    str(p.relative_to(ROOT)) for p in (ROOT / "fixtures/forms_new").glob("not-a-certificate-*.pdf")
)


@dataclass
class Score:
    correct: int = 0
    total: int = 0
    extra_rows: int = 0
    rows_found: int = 0
    rows_total: int = 0
    wrong: list[str] = field(default_factory=list)

    @property
    def share(self) -> float:
        return self.correct / self.total if self.total else 0.0

    @property
    def row_recall(self) -> float:
        return self.rows_found / self.rows_total if self.rows_total else 0.0

    def add(self, other: Score) -> None:
        self.correct += other.correct
        self.total += other.total
        self.extra_rows += other.extra_rows
        self.rows_found += other.rows_found
        self.rows_total += other.rows_total
        self.wrong += other.wrong[: max(0, 12 - len(self.wrong))]


def load_truth(pdf: str | Path) -> dict[str, Any]:
    p = Path(pdf)
    data: dict[str, Any] = json.loads(
        p.with_name(p.stem + ".truth.json").read_text(encoding="utf-8")
    )
    return data


def certificates_by_form() -> dict[str, list[str]]:
    """Every fixture PDF with a truth file, grouped by the form named in its truth."""
    out: dict[str, list[str]] = {}
    for d in FIXTURE_DIRS:
        for truth in sorted((ROOT / d).glob("*.truth.json")):
            pdf = truth.with_name(truth.name.removesuffix(".truth.json") + ".pdf")
            form = json.loads(truth.read_text(encoding="utf-8"))["form"]
            out.setdefault(form, []).append(str(pdf.relative_to(ROOT)))
    return out


def _norm(s: str | None) -> str:
    return normalise_text(s or "")


def _cell_count(truth: dict[str, Any]) -> int:
    return sum(len(c) for b in truth["boards"] for c in b["circuits"])


def _row_count(truth: dict[str, Any]) -> int:
    return sum(len(b["circuits"]) for b in truth["boards"])


def cell_accuracy(cert: Any, truth: dict[str, Any]) -> Score:
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
            sc.rows_total += 1
            c = next((x for x in pool if x.ref == tc["circuit_ref"]), None)
            if c is not None:
                pool.remove(c)
                sc.rows_found += 1
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


def printed_fields(truth: dict[str, Any]) -> set[str]:
    return {f for b in truth["boards"] for c in b["circuits"] for f in c}


def _unread(truth: dict[str, Any], why: str) -> Score:
    sc = Score(total=_cell_count(truth), rows_total=_row_count(truth))
    sc.wrong.append(why)
    return sc


def measure_layout(pdf: str, layout_path: str | Path, engine: str | None = None) -> Score:
    from certvet.extractor.api import extract
    from certvet.extractor.errors import InputError
    from certvet.extractor.layout import load_layout

    truth = load_truth(ROOT / pdf)
    try:
        cert = extract(str(ROOT / pdf), load_layout(layout_path), engine=engine)
    except InputError as exc:
        return _unread(truth, str(exc))
    return cell_accuracy(cert, truth)


@dataclass
class FormResult:
    pdf: str
    matched: float
    draft: Score
    final: Score
    unmatched: list[str]


def measure_form(pdf: str, engine: str = "pdfium") -> FormResult:
    from certvet.extractor.draft import draft_layout

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


# --- part 2: every certificate with the unedited drafts -----------------------------------------


def read_without_layout(pdf: str) -> Any | None:
    """The "with no layout at all" figure: read `pdf` the way `audit` does when no layout is
    given (a layout drafted from the file itself), and return the Certificate, or None when it
    is refused (no draft, or a draft below the read threshold)."""
    from certvet.api import audit_file
    from certvet.extractor.errors import InputError

    try:
        return audit_file(pdf, layouts=[]).certificate
    except InputError:
        return None


@dataclass
class FormFigures:
    form: str
    sample: str
    certificates: int = 0
    recognised: int = 0  # by the form's own draft
    by_other: int = 0  # certificates of other forms this form's draft recognises
    read: Score = field(default_factory=Score)
    no_layout: Score | None = None
    draft_error: str = ""

    @property
    def recognised_share(self) -> float:
        return self.recognised / self.certificates if self.certificates else 0.0


def draft_all(
    engine: str = "pdfium", out: Path | None = None, samples: dict[str, str] | None = None
) -> dict[str, Any]:
    """form → its unedited draft Layout (or the DraftError text), drafted from `samples`
    (default FORM_SAMPLES)."""
    from certvet.extractor.draft import draft_layout
    from certvet.extractor.errors import InputError
    from certvet.extractor.layout import load_layout

    drafts: dict[str, Any] = {}
    with tempfile.TemporaryDirectory() as tmp:
        folder = out or Path(tmp)
        for form, sample in (samples or FORM_SAMPLES).items():
            try:
                res = draft_layout(ROOT / sample, engine=engine, name=form)
            except InputError as exc:
                drafts[form] = str(exc)
                continue
            path = folder / f"{form}.toml"
            path.write_text(res.toml, encoding="utf-8")
            drafts[form] = load_layout(path)
    return drafts


def measure_all(
    engine: str = "pdfium",
    forms: dict[str, list[str]] | None = None,
    no_layout: Callable[[str], Any | None] = read_without_layout,
    samples: dict[str, str] | None = None,
) -> list[FormFigures]:
    """Part 2: draft one sample per form, then read every certificate with the drafts.
    `forms` (default: every fixture form) limits the certificates read, `samples` (default
    FORM_SAMPLES) names the certificate each form's draft is made from."""
    from certvet.extractor.api import _first_recognising, extract, page_text
    from certvet.extractor.errors import InputError

    forms = forms or certificates_by_form()
    samples = samples or FORM_SAMPLES
    drafts = draft_all(engine, samples=samples)
    layouts = [lay for lay in drafts.values() if not isinstance(lay, str)]
    figures = {f: FormFigures(f, samples.get(f, "")) for f in forms}
    for form, d in drafts.items():
        if isinstance(d, str) and form in figures:
            figures[form].draft_error = d
    for form, pdfs in forms.items():
        fig = figures[form]
        for pdf in pdfs:
            fig.certificates += 1
            truth = load_truth(ROOT / pdf)
            try:
                texts = page_text(str(ROOT / pdf), pages=2)
            except InputError as exc:
                fig.read.add(_unread(truth, str(exc)))
                continue
            for other, lay in drafts.items():
                if isinstance(lay, str) or other == form or other not in figures:
                    continue
                if _first_recognising(texts, [lay]) is not None:
                    figures[other].by_other += 1
            own = drafts.get(form)
            if not isinstance(own, str) and own is not None:
                fig.recognised += _first_recognising(texts, [own]) is not None
            chosen = _first_recognising(texts, layouts)
            if chosen is None:
                fig.read.add(_unread(truth, f"{pdf}: no draft recognises it"))
            else:
                try:
                    cert = extract(str(ROOT / pdf), chosen, engine=engine)
                    fig.read.add(cell_accuracy(cert, truth))
                except InputError as exc:
                    fig.read.add(_unread(truth, str(exc)))
            got = no_layout(str(ROOT / pdf))
            if got is not None:
                fig.no_layout = fig.no_layout or Score()
                fig.no_layout.add(cell_accuracy(got, truth))
    return list(figures.values())


def _pct(x: float) -> str:
    return f"{x:.1%}"


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=(__doc__ or "").splitlines()[0])
    ap.add_argument("--engine", default="pdfium")
    ap.add_argument("--pitfalls", action="store_true", help="also measure the pitfall PDFs")
    ap.add_argument("-v", "--verbose", action="store_true", help="list wrong cells")
    ap.add_argument("--no-layout", action="store_true",
                    help="also audit every fixture certificate in one run with no layout given")
    args = ap.parse_args(argv)
    print("Part 1: each form's sample, drafted and read with its draft and its final layout")
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
    print("\nPart 2: every certificate of every form, read with the unedited drafts")
    print(
        f"{'form':<16} {'certs':>5} {'recognised':>10} {'by other':>8} {'rows':>8} "
        f"{'cells':>8} {'no layout':>10}"
    )
    for fig in measure_all(args.engine):
        nl = _pct(fig.no_layout.share) if fig.no_layout else "not measured"
        print(
            f"{fig.form:<16} {fig.certificates:>5} {_pct(fig.recognised_share):>10} "
            f"{fig.by_other:>8} {_pct(fig.read.row_recall):>8} {_pct(fig.read.share):>8} {nl:>10}"
        )
        if fig.draft_error:
            print(f"    draft refused: {fig.draft_error}")
        if args.verbose:
            for w in fig.read.wrong:
                print(f"    {w}")
    print("\nPDFs that are no certificate (the drafter must refuse them)")
    from certvet.extractor.draft import draft_layout
    from certvet.extractor.errors import InputError

    for pdf in NOT_CERTIFICATES:
        try:
            draft_layout(ROOT / pdf, engine=args.engine)
            print(f"{pdf:<60} NOT REFUSED")
        except InputError as exc:
            print(f"{pdf:<60} refused: {str(exc).split(': ', 1)[-1]}")
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


# --- part 3: one run with no layout at all (layouts drafted on the fly, shared) ------------------


@dataclass
class NoLayoutForm:
    form: str
    certificates: int = 0
    read: int = 0
    read_by_other_form: int = 0  # read with a layout drafted from another form's file
    drafted: set[str] = field(default_factory=set)  # layouts drafted from this form's files
    cells: Score = field(default_factory=Score)
    refused: list[str] = field(default_factory=list)


def measure_without_layout(forms: dict[str, list[str]] | None = None) -> list[NoLayoutForm]:
    """Audit every certificate of the forms in one run, input sorted, with no layout given
    (drafting on, default thresholds); score each against its truth, per form."""
    from certvet.api import audit_many

    forms = forms or certificates_by_form()
    form_of = {ROOT / pdf: form for form, pdfs in forms.items() for pdf in pdfs}
    results = {form: NoLayoutForm(form, len(pdfs)) for form, pdfs in forms.items()}
    with tempfile.TemporaryDirectory() as tmp:
        summary = audit_many(sorted(form_of), layouts=[], out_dir=Path(tmp))
    for res in summary.audited:
        entry = results[form_of[res.source]]
        entry.read += 1
        note = res.certificate.drafted
        if note is not None:
            entry.read_by_other_form += form_of.get(Path(note.sample)) != entry.form
            if Path(note.sample) == res.source:
                entry.drafted.add(res.layout)
        sc = cell_accuracy(res.certificate, load_truth(res.source))
        sc.wrong = [f"{res.source.name}: {w}" for w in sc.wrong[:3]]
        entry.cells.add(sc)
    for fail in summary.failed:
        entry = results[form_of[fail.source]]
        entry.cells.add(_unread(load_truth(fail.source), fail.reason))
        entry.refused.append(fail.reason)
    return sorted(results.values(), key=lambda f: f.form)


def print_without_layout(results: list[NoLayoutForm], verbose: bool = False) -> None:
    print("\nPart 3: every certificate in one run with no layout at all (drafted on the fly)")
    print(f"{'form':<16} {'read':>7} {'by other':>8} {'drafts':>6} {'rows':>8} {'cells':>8}")
    for r in results:
        print(f"{r.form:<16} {f'{r.read}/{r.certificates}':>7} {r.read_by_other_form:>8} "
              f"{len(r.drafted):>6} {_pct(r.cells.row_recall):>8} {_pct(r.cells.share):>8}")
        for w in r.refused:
            print(f"    refused: {w}")
        if verbose:
            for w in r.cells.wrong:
                print(f"    cell: {w}")


if __name__ == "__main__":
    raise SystemExit(main())
