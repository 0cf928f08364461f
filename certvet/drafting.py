"""Audits with no layout: when no layout recognises a file, draft one from it, on the fly.

    forms = DraftedForms(DraftOptions(folder=Path("out/drafted-layouts")))
    result = audit_file("unknown.pdf", layouts=[], drafts=forms)
    print(result.certificate.drafted.message())

One `DraftedForms` lives for one run (an `audit` of several files, or a `batch`). A file no
given layout recognises is first tried against the layouts drafted earlier in the run, so
certificates of one unknown form share one drafted layout; otherwise a layout is drafted from
the file (extractor.draft_reading) and, when its confidence reaches the read threshold, the
file is read with it, the layout joins the run's list and is saved as
`<folder>/<layout name>.toml` for review and reuse (`certvet audit --layout` accepts it).

Below the read threshold the file is refused with one line naming it and the command that
drafts a layout for editing. Below the trusted threshold the certificate is read but never
called "no concerns found" (reports/verdict.py). A document whose table is no schedule of test
results is refused, never read with an invented layout.

Worker processes never draft: the batch drafts in the parent (certvet/batch.py) and hands the
children the finished layouts (`DraftedForms.frozen()`), so which file a layout is drafted
from does not depend on the order in which workers finish.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import TYPE_CHECKING, Any

from certvet.extractor.draft_reading import (
    READ_THRESHOLD,
    TRUSTED_THRESHOLD,
    draft_command,
)
from certvet.extractor.errors import InputError
from certvet.extractor.records import Certificate, DraftedLayoutNote
from certvet.workers import Outcome

if TYPE_CHECKING:
    from certvet.extractor.layout import Layout

DRAFTS_SUBDIR = "drafted-layouts"


@dataclass(frozen=True)
class DraftOptions:
    """How a run treats files no layout recognises."""

    enabled: bool = True  # draft a layout from the file (False: refuse it, as before)
    read_threshold: float = READ_THRESHOLD  # below: refused
    trusted_threshold: float = TRUSTED_THRESHOLD  # below: never "no concerns found"
    folder: Path | None = None  # drafted layouts are saved here (None: not saved)

    def __post_init__(self) -> None:
        for name in ("read_threshold", "trusted_threshold"):
            value = getattr(self, name)
            if not 0.0 <= value <= 1.0:
                raise ValueError(f"{name} must be between 0 and 1, not {value}")


@dataclass(frozen=True)
class SharedDraft:
    """A drafted layout and the note every certificate it reads carries (picklable)."""

    layout: Layout
    note: DraftedLayoutNote
    distinctive: bool  # its recognise patterns identify the form (else: its sample only)


@dataclass
class DraftedForms:
    """The layouts drafted during one run, in the order they were drafted."""

    options: DraftOptions = field(default_factory=DraftOptions)
    forms: list[SharedDraft] = field(default_factory=list)
    reserved: set[str] = field(default_factory=set)  # layout names already used in the run

    def frozen(self) -> DraftedForms:
        """A copy that reads with the layouts drafted so far and drafts no more (for worker
        processes)."""
        return DraftedForms(replace(self.options, enabled=False), list(self.forms),
                            set(self.reserved))

    def shared_layouts(self) -> list[Layout]:
        return [f.layout for f in self.forms if f.distinctive]

    def note_for(self, layout: Layout) -> DraftedLayoutNote | None:
        return next((f.note for f in self.forms if f.layout is layout
                     or f.layout.name == layout.name), None)

    def read_with_shared(self, path: str, *, engine: str | None, password: str | None
                         ) -> tuple[Layout, Certificate] | None:
        """Read the file with a layout drafted earlier in this run that recognises it (None
        when none does; InputError when one does but cannot read it)."""
        from certvet.extractor.api import extract_recognised

        shared = self.shared_layouts()
        if not shared:
            return None
        found, cert = extract_recognised(path, shared, engine=engine, password=password)
        if found is None or cert is None:
            return None
        cert.drafted = self.note_for(found)
        return found, cert

    def recognised(self, path: str, *, password: str | None) -> bool:
        """Whether a layout drafted earlier in this run recognises the file (its first pages
        only are read)."""
        from certvet.extractor.api import recognise

        return recognise(path, self.shared_layouts(), password=password) is not None

    def draft(self, path: str, *, engine: str | None, password: str | None
              ) -> tuple[Layout, Certificate]:
        """Draft a layout from the file and read it; InputError (one line naming the file
        and what to do) when the draft cannot be used."""
        from certvet.extractor.draft_reading import draft_and_read, safe_name
        from certvet.extractor.engines.names import DEFAULT_ENGINE

        opts = self.options
        name = safe_name(Path(path).stem, self.reserved)
        try:
            form, cert = draft_and_read(path, name=name, engine=engine or DEFAULT_ENGINE,
                                        password=password)
        except InputError as exc:
            raise InputError(path, f"no layout recognises this form, and none could be "
                                   f"drafted from it: {exc.reason}") from None
        conf = form.quality.confidence
        if conf < opts.read_threshold:
            raise InputError(
                path,
                f"no layout recognises this form, and the layout drafted from it is not "
                f"reliable enough to read with: {form.quality.describe()}, below the "
                f"{opts.read_threshold:.2f} needed; draft one to check and edit with "
                f"`{draft_command(path)}`",
            )
        saved = self._save(name, form.toml, path)
        note = DraftedLayoutNote(sample=path, confidence=conf,
                                 trusted_at=opts.trusted_threshold, saved_to=saved)
        self.reserved.add(name)
        self.forms.append(SharedDraft(form.layout, note, form.distinctive))
        cert.drafted = note
        return form.layout, cert

    def _save(self, name: str, toml: str, sample: str) -> str | None:
        folder = self.options.folder
        if folder is None:
            return None
        target = folder / f"{name}.toml"
        try:
            folder.mkdir(parents=True, exist_ok=True)
            target.write_text(toml, encoding="utf-8")
        except OSError as exc:
            raise InputError(sample, f"cannot save the layout drafted from it to {target}: "
                                     f"{exc.strerror or exc}") from None
        return str(target)


def audit_unknown_forms(
    paths: Sequence[Path],
    drafts: DraftedForms,
    with_drafts: Callable[[DraftedForms], Callable[[Path], Any]],
    run: Callable[[list[Path], Callable[[Path], Any]], Iterator[Outcome]],
    *,
    password: str | None = None,
) -> Iterator[Outcome]:
    """The batch's files no given layout recognised, in input order: a file that a layout
    drafted earlier in this run recognises waits for the second round of workers; any other
    is audited here, in this process, drafting its layout (which then joins the list). Then the
    waiting files run through `run` with the finished drafts (`with_drafts(frozen drafts)`:
    the job as a worker runs it). Deterministic: which file a form's layout is drafted from
    depends on the input order alone, never on which worker finished first."""
    waiting: list[Path] = []
    here = with_drafts(drafts)
    for path in paths:
        try:
            if drafts.recognised(str(path), password=password):
                waiting.append(path)
                continue
            yield Outcome(path, here(path), None)
        except InputError as exc:
            yield Outcome(path, None, str(exc), exc)
        except Exception as exc:  # a bug must not lose the rest of the batch
            yield Outcome(path, None, f"{path}: internal error while drafting a layout "
                                      f"({type(exc).__name__}: {exc})")
    if waiting:
        yield from run(waiting, with_drafts(drafts.frozen()))
