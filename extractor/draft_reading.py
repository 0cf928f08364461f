"""Read a file that no layout recognises with a layout drafted from the file itself.

    drafted, cert = draft_and_read("unknown-form.pdf")
    print(drafted.quality.confidence, drafted.toml)

`draft_and_read` drafts a layout from the PDF (extractor.draft), refuses a document whose table
is no schedule of test results, reads the PDF with the draft and scores the draft by what that
read gave. The caller (certvet.drafting) decides, by the thresholds below, whether the
certificate is read with it, and whether the result can be trusted.

The confidence of a draft (0…1) is the product of five shares, each measured on the file the
draft was made from:

* header — the mean confidence of the columns the draft matched to fields (extractor.draft:
  how well each printed heading matched a trade term, times how well the values beneath fit
  the field);
* columns placed — the share of the table's columns holding values that the draft matched to
  a field (a column left unread is a value no check sees);
* parsed — the share of the circuit cells read with the draft that parsed as their field's
  kind of value;
* headings found — the share of the draft's columns whose heading the assembler found again
  on every schedule page it read;
* rows — the rows read with the draft, as a share of the lines numbered like circuits on the
  schedule pages (or of the rows the drafter saw, when more; at most 1), times the share of
  rows whose circuit number is not repeated on their board (boards read as one repeat them).

Thresholds (chosen on the fixture forms, common practice, no source): drafts that read every
column and row of a fixture form score 0.79–0.91; drafts that leave columns unread, miss a
board or read two boards as one score 0.50–0.75. `READ_THRESHOLD` 0.60 — below it the file is
refused; `TRUSTED_THRESHOLD` 0.85 — below it the certificate is read, but its verdict can never
be "no concerns found".
"""

from __future__ import annotations

import re
import tomllib
from dataclasses import dataclass
from pathlib import Path

from certvet.extractor.assemble import group_lines
from certvet.extractor.draft import DraftError, DraftResult, draft_layout, read_pages
from certvet.extractor.engines.base import PageContent
from certvet.extractor.errors import InputError
from certvet.extractor.layout import Layout, LayoutError, parse_layout
from certvet.extractor.records import Certificate, ValueKind

READ_THRESHOLD = 0.60
TRUSTED_THRESHOLD = 0.85
# the readings a schedule of test results exists to record: a table with fewer of them is no
# schedule, whatever its other headings say
TEST_RESULT_FIELDS = frozenset({
    "r1", "rn", "r2", "r1_r2", "r1_rn", "r2_only", "ir_test_voltage", "ir_live_live",
    "ir_live_earth", "polarity", "zs", "rcd_time", "rcd_time_5x", "rcd_button", "max_zs",
})
MIN_TEST_RESULT_COLUMNS = 3
# a text no certificate form prints: recognise patterns that match it match any file
_NEUTRAL_TEXT = "zq\nzq zq\n"


def draft_command(pdf: str | Path) -> str:
    """The command that drafts a layout for editing (named in every refusal)."""
    return f"certvet draft-layout {pdf} -o form.toml"


@dataclass(frozen=True)
class DraftQuality:
    """How far a draft can be trusted, measured on the file it was drafted from."""

    header: float
    placed: float
    parsed: float
    headings_found: float
    rows: float

    @property
    def confidence(self) -> float:
        return round(self.header * self.placed * self.parsed * self.headings_found * self.rows,
                     2)

    def describe(self) -> str:
        return (f"confidence {self.confidence:.2f} (headings {self.header:.2f}, columns placed "
                f"{self.placed:.2f}, cells parsed {self.parsed:.2f}, headings found on every "
                f"page {self.headings_found:.2f}, rows {self.rows:.2f})")


@dataclass(frozen=True)
class DraftedForm:
    """A layout drafted from one file, ready to read it and others of its form."""

    layout: Layout
    toml: str
    sample: str  # the PDF it was drafted from
    quality: DraftQuality
    # False when the recognise patterns match any text, or not the sample's own: the layout
    # then reads its sample only
    distinctive: bool


def _quality(draft: DraftResult, cert: Certificate, layout: Layout,
             numbered: int) -> DraftQuality:
    matched = [c for c in draft.columns if c.fields]
    header = sum(c.confidence for c in matched) / len(matched) if matched else 0.0
    with_values = [c for c in draft.columns if any(v.strip() for v in c.samples)]
    placed = (sum(1 for c in with_values if c.fields) / len(with_values)) if with_values else 0.0
    cells = [cell for _, c in cert.circuits() for cell in c.cells.values()
             if cell.value.kind is not ValueKind.EMPTY]
    bad = sum(1 for cell in cells if cell.value.kind is ValueKind.UNREADABLE)
    parsed = 1 - bad / len(cells) if cells else 0.0
    fields = {c.fields[0] for c in matched}
    lost = {p.field for p in cert.problems
            if p.field in fields and p.message.startswith("column header for")}
    found = 1 - len(lost) / len(fields) if fields else 0.0
    read = cert.circuits()
    seen = max(draft.rows_seen, numbered)
    unique = len({(b.ref, c.ref) for b, c in read})
    rows = min(1.0, len(read) / seen) * (unique / len(read)) if seen and read else 0.0
    return DraftQuality(header, placed, parsed, found, rows)


def _numbered_lines(pages: list[PageContent], layout: Layout) -> int:
    """Lines on the schedule pages that start with a circuit number, as the layout's row key
    pattern reads one: the rows a complete read should hold (some may be notes)."""
    sched = layout.schedule
    n = 0
    for page in pages:
        if not sched.page_selected(page.number, len(pages)):
            continue
        for ln in group_lines(page.words, sched.line_tolerance):
            first = ln.text.split(maxsplit=1)[0] if ln.text.strip() else ""
            n += bool(first) and sched.row_key_pattern.fullmatch(first) is not None
    return n


def _refuse_non_schedule(src: str, draft: DraftResult) -> None:
    fields = set(draft.matched_fields)
    results = sorted(fields & TEST_RESULT_FIELDS)
    if "circuit_ref" in fields and len(results) >= MIN_TEST_RESULT_COLUMNS:
        return
    shown = ", ".join(sorted(fields - {"circuit_ref"})) or "none"
    raise DraftError(
        src,
        f"looks like no certificate: its table has {len(results)} column(s) of test results "
        f"(needs {MIN_TEST_RESULT_COLUMNS}: r1, R1+R2, Zs, insulation resistance, RCD time…; "
        f"columns matched: {shown}); not audited",
    )


def draft_and_read(
    pdf: str | Path,
    *,
    name: str | None = None,
    engine: str = "pdfium",
    password: str | None = None,
) -> tuple[DraftedForm, Certificate]:
    """Draft a layout from `pdf` and read `pdf` with it.

    Raises DraftError (an InputError, one line naming the file) when the file gives no draft
    or looks like no schedule of test results, and InputError when the draft reads nothing.
    """
    from certvet.extractor.api import extract

    src = str(pdf)
    draft = draft_layout(src, engine, name=name, password=password)
    _refuse_non_schedule(src, draft)
    try:
        layout = parse_layout(tomllib.loads(draft.toml), f"<layout drafted from {src}>")
    except (LayoutError, tomllib.TOMLDecodeError) as exc:  # a drafter bug, said plainly
        raise DraftError(src, f"the drafted layout is not valid ({exc})") from None
    cert = extract(src, layout, engine=engine, password=password)
    numbered = _numbered_lines(read_pages(src, engine, password), layout)
    form = DraftedForm(layout, draft.toml, src, _quality(draft, cert, layout, numbered),
                       _identifies_form(src, layout, engine, password))
    return form, cert


def _identifies_form(src: str, layout: Layout, engine: str, password: str | None) -> bool:
    """The draft's recognise patterns match its own sample and not any text at all: only then
    may it recognise other files of the run."""
    from certvet.extractor.api import page_text, recognises

    if all(p.search(_NEUTRAL_TEXT) for p in layout.recognise.require):
        return False
    texts = page_text(src, pages=layout.recognise.pages, engine=engine, password=password)
    return recognises(texts, layout)
def safe_name(stem: str, taken: set[str]) -> str:
    """A layout name (lower-case letters, digits, '-') for a form drafted from `stem`, unique
    among `taken`."""
    base = "drafted-" + (re.sub(r"[^a-z0-9]+", "-", stem.lower()).strip("-") or "form")
    name, n = base, 1
    while name in taken:
        n += 1
        name = f"{base}-{n}"
    return name


__all__ = [
    "READ_THRESHOLD",
    "TRUSTED_THRESHOLD",
    "DraftError",
    "DraftQuality",
    "DraftedForm",
    "InputError",
    "draft_and_read",
    "draft_command",
    "safe_name",
]
