"""The extractor's entry points: open a PDF with an engine, recognise its form, extract records.

PDF libraries are imported lazily (inside the engines), so importing this module is cheap.
"""

from __future__ import annotations

import hashlib
import itertools
from collections.abc import Iterator, Sequence
from typing import TYPE_CHECKING

from certvet.extractor.assemble import assemble, group_lines
from certvet.extractor.engines.names import DEFAULT_ENGINE, ENGINE_NAMES
from certvet.extractor.errors import InputError, NoLayoutMatches
from certvet.extractor.integrity import damaged_streams
from certvet.extractor.records import ExtractionProblem

if TYPE_CHECKING:
    from certvet.extractor.engines.base import Engine, OpenDocument, PageContent
    from certvet.extractor.layout import Layout
    from certvet.extractor.records import Certificate

UNREADABLE_SHARE = 0.5  # refuse a document when more than this share of its chars is unreadable


def get_engine(name: str, path: str = "<engine>") -> Engine:
    """The engine for a layout's `engine` value."""
    if name == "pdfplumber":
        from certvet.extractor.engines.plumber import PlumberEngine

        return PlumberEngine()
    if name == "pdfium":
        try:
            from certvet.extractor.engines import pdfium
        except ImportError as exc:
            raise InputError(
                path, f"engine 'pdfium' is not available ({exc}); use engine 'pdfplumber'"
            ) from None
        return pdfium.PdfiumEngine()
    if name == "lattice":
        from certvet.extractor.engines.lattice import LatticeEngine

        return LatticeEngine()
    raise InputError(path, f"unknown engine {name!r} (choose from {', '.join(ENGINE_NAMES)})")


def open_document(path: str, engine: str = "pdfium", password: str | None = None) -> OpenDocument:
    return get_engine(engine, path).open(str(path), password)


def _pages_checked(path: str, doc: OpenDocument, limit: int | None = None) -> Iterator[PageContent]:
    """Pages of an open document; raises InputError when no page has any text at all."""
    chars = 0
    unreadable = 0
    seen = 0
    for page in doc.pages():
        chars += page.char_count
        unreadable += page.unreadable_chars
        seen += 1
        yield page
        if limit is not None and seen >= limit:
            break
    if seen and chars == 0:
        raise InputError(path, "no text layer (image-only pages); "
            "OCR is not built in: make a text layer with an OCR tool of your choice "
            "and run certvet on the OCR'd PDF")
    if chars and unreadable > UNREADABLE_SHARE * chars:
        raise InputError(
            path,
            f"text unreadable: {unreadable} of {chars} characters have no Unicode mapping "
            "(fonts without /ToUnicode); "
            "OCR is not built in: make a text layer with an OCR tool of your choice "
            "and run certvet on the OCR'd PDF",
        )


def page_text(
    path: str, *, pages: int | None = None, engine: str = "pdfium", password: str | None = None
) -> list[str]:
    """Plain text of each page (lines of horizontal words top to bottom), first `pages` pages."""
    doc = open_document(path, engine, password)
    try:
        return [_text_of_page(p) for p in _pages_checked(path, doc, pages)]
    finally:
        doc.close()


def recognise(
    path: str, layouts: Sequence[Layout], *, password: str | None = None
) -> Layout | None:
    """The first layout whose `recognise.require` patterns all match its first pages' text."""
    if not layouts:
        return None
    most = max(lay.recognise.pages for lay in layouts)
    return _first_recognising(page_text(path, pages=most, password=password), layouts)


def _text_of_page(page: PageContent) -> str:
    """Plain text of a page: lines of horizontal words, top to bottom."""
    return "\n".join(ln.text for ln in group_lines(page.words, 3.0))


def _first_recognising(texts: Sequence[str], layouts: Sequence[Layout]) -> Layout | None:
    """The first layout whose `recognise.require` patterns all match the text of its first
    `recognise.pages` pages (texts: one string per page, from the first page on)."""
    return next((lay for lay in layouts if recognises(texts, lay)), None)


def recognises(texts: Sequence[str], layout: Layout) -> bool:
    """Whether the layout's `recognise.require` patterns all match the text of its first
    `recognise.pages` pages (texts: one string per page, from the first page on)."""
    text = "\n".join(texts[: layout.recognise.pages])
    return all(p.search(text) for p in layout.recognise.require)


def file_sha256(path: str) -> str:
    h = hashlib.sha256()
    try:
        with open(path, "rb") as fh:
            for block in iter(lambda: fh.read(1 << 20), b""):
                h.update(block)
    except OSError as exc:
        raise InputError(path, f"cannot read file: {exc.strerror or exc}") from None
    return h.hexdigest()


def extract(
    path: str, layout: Layout, *, engine: str | None = None, password: str | None = None
) -> Certificate:
    """Read a certificate PDF with a layout; InputError (one line) when it cannot be read."""
    path = str(path)
    name = engine or layout.engine
    eng = get_engine(name, path)
    doc = eng.open(path, password)
    try:
        sha = file_sha256(path)
        cert = assemble(
            _pages_checked(path, doc),
            layout,
            source=path,
            sha256=sha,
            engine_name=eng.name,
            page_count=doc.page_count,
        )
    finally:
        doc.close()
    return _require_schedule(path, layout, cert)


def _require_schedule(path: str, layout: Layout, cert: Certificate) -> Certificate:
    """A certificate with no circuit rows must never read as "all clear": refuse it."""
    if not cert.boards:
        heads = ", ".join(c.header.pattern for c in layout.columns if c.header is not None)
        raise NoLayoutMatches(
            path, f"layout {layout.name!r} found no schedule (looked for column headers {heads})"
        )
    if not any(bd.circuits for bd in cert.boards):
        raise NoLayoutMatches(
            path, f"layout {layout.name!r} found the schedule but no circuit rows"
        )
    _note_damaged_streams(path, cert)
    return cert


def _note_damaged_streams(path: str, cert: Certificate) -> None:
    """A damaged stream may have lost part of a page without a word from the PDF library: the
    audit cannot then be complete (extractor/integrity.py)."""
    try:
        with open(path, "rb") as fh:
            damaged = damaged_streams(fh.read())
    except OSError:
        return
    if damaged:
        cert.problems.append(ExtractionProblem(
            f"the file has {damaged} damaged stream{'s' if damaged != 1 else ''} that the PDF "
            "reader could only partly recover: part of the schedule may not have been read"
        ))


def extract_recognised(
    path: str,
    layouts: Sequence[Layout],
    *,
    engine: str | None = None,
    password: str | None = None,
) -> tuple[Layout | None, Certificate | None]:
    """Recognise the form and extract it, reading the PDF once when the engines allow.

    The first pages are read with `engine` (or the default engine) to recognise the form; when
    the chosen layout uses the same engine, the same pass goes on to the remaining pages.
    Returns (None, None) when no layout recognises the file.
    """
    path = str(path)
    if not layouts:
        return None, None
    eng = get_engine(engine or DEFAULT_ENGINE, path)
    doc = eng.open(path, password)
    try:
        pages = _pages_checked(path, doc)
        most = max(lay.recognise.pages for lay in layouts)
        first: list[PageContent] = []
        for page in pages:
            first.append(page)
            if len(first) >= most:
                break
        texts = [_text_of_page(p) for p in first]
        chosen = _first_recognising(texts, layouts)
        if chosen is None:
            if not any(p.char_count for p in first):
                for _ in pages:  # reading on raises the clear "no text layer" error
                    pass
            return None, None
        if (engine or chosen.engine) != eng.name:
            cert = None  # the layout wants another engine: read again with it, below
        else:
            cert = assemble(
                itertools.chain(first, pages),
                chosen,
                source=path,
                sha256=file_sha256(path),
                engine_name=eng.name,
                page_count=doc.page_count,
            )
    finally:
        doc.close()
    if cert is None:
        return chosen, extract(path, chosen, engine=engine, password=password)
    return chosen, _require_schedule(path, chosen, cert)


def warm_up_engine(name: str) -> None:
    """Read a tiny generated PDF with the engine, so its one-time set-up (library start,
    font machinery) is done now — e.g. in a parent process before it forks workers."""
    import ctypes
    import io
    import os
    import tempfile

    import pypdfium2 as pdfium
    import pypdfium2.raw as pdfium_c

    pdf = pdfium.PdfDocument.new()
    try:
        page = pdf.new_page(595, 842)
        font = pdfium_c.FPDFText_LoadStandardFont(pdf, b"Helvetica")
        obj = pdfium_c.FPDFPageObj_CreateTextObj(pdf, font, 10.0)
        text = ctypes.create_string_buffer("Circuit 1 0.42 >999 N/A\0".encode("utf-16-le"))
        pdfium_c.FPDFText_SetText(obj, ctypes.cast(text, ctypes.POINTER(pdfium_c.FPDF_WCHAR)))
        pdfium_c.FPDFPageObj_Transform(obj, 1, 0, 0, 1, 50, 700)
        pdfium_c.FPDFPage_InsertObject(page, obj)
        pdfium_c.FPDFPage_GenerateContent(page)
        buf = io.BytesIO()
        pdf.save(buf)
    finally:
        pdf.close()
    fd, tmp = tempfile.mkstemp(suffix=".pdf", prefix="certvet-warm-up-")
    try:
        with os.fdopen(fd, "wb") as fh:
            fh.write(buf.getvalue())
        doc = open_document(tmp, name)
        try:
            for _ in doc.pages():
                pass
        finally:
            doc.close()
    finally:
        os.unlink(tmp)
