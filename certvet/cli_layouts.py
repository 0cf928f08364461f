"""Layout commands the main CLI mounts: draft a layout from a sample, preview it, try it.

    certvet draft-layout SAMPLE.pdf -o layout.toml
    certvet preview SAMPLE.pdf --layout layout.toml -o preview.html   (or .png)
    certvet try-layout SAMPLE.pdf --layout layout.toml
    certvet show-text SAMPLE.pdf [--page 2] [--positions]   (the lines patterns are matched on)

Mount with ``cli_layouts.register(app)`` (or ``app.add_typer(cli_layouts.app)`` for a group).
Heavy libraries are imported inside the commands. Exit codes (certvet/exitcodes.py): 0 done;
2 usage error (bad layout file); 3 the PDF could not be read or gave no draft / no circuits.
PDF text is printed as text, never as markup (certvet/console.py).
"""

from __future__ import annotations

import sys
from pathlib import Path
from typing import TYPE_CHECKING, Annotated

import typer

from certvet.console import err as _err
from certvet.console import one_line, plain_console
from certvet.exitcodes import EXIT_FAILED, EXIT_USAGE
from certvet.extractor.engines.names import EngineName

if TYPE_CHECKING:  # for annotations only: heavy modules are imported inside the commands
    from certvet.extractor.layout import Layout

app = typer.Typer(
    add_completion=False,
    rich_markup_mode=None,
    no_args_is_help=True,
    help="Write and check layout files for new certificate forms.",
)




Engine = Annotated[
    EngineName, typer.Option("--engine", help="pdfium (default), pdfplumber or lattice")
]
OptionalEngine = Annotated[
    EngineName | None,
    typer.Option("--engine", help="Override the layout's engine: pdfium, pdfplumber or lattice."),
]


def _layout(path: Path) -> Layout:
    from certvet.extractor.layout import LayoutError, load_layout

    try:
        return load_layout(path)
    except LayoutError as exc:
        _err(str(exc))
        raise typer.Exit(EXIT_USAGE) from None


def draft_layout_cmd(
    sample: Annotated[Path, typer.Argument(metavar="SAMPLE.pdf", help="a sample PDF of the form")],
    out: Annotated[Path | None, typer.Option("-o", "--out", help="write the TOML here")] = None,
    name: Annotated[
        str | None, typer.Option("--name", help="form name (default: file name)")
    ] = None,
    engine: Engine = EngineName.pdfium,
) -> None:
    """Draft a layout file from one sample PDF and show what was matched."""
    from certvet.extractor.draft import draft_layout
    from certvet.extractor.errors import InputError

    try:
        result = draft_layout(sample, engine=engine, name=name)
    except InputError as exc:
        _err(str(exc))
        raise typer.Exit(EXIT_FAILED) from None
    from rich.table import Table
    from rich.text import Text

    con = plain_console(stderr=out is None)
    t = Table(
        title=f"{len(result.matched_fields)} field(s) matched "
        f"({'ruled' if result.ruled else 'unruled'} table, pages {result.schedule_pages})"
    )
    for h in ("field", "header as printed", "confidence", "note"):
        t.add_column(h)
    for f, label, conf, note in result.table():
        t.add_row(f, label, Text(f"{conf:.2f}", style="yellow" if conf < 0.75 else ""), note)
    con.print(t)
    for lab in result.labels:
        con.print(f"{lab.level} {lab.field}: {lab.example!r}")
    for head, items in (("not placed:", result.unplaced), ("ambiguous:", result.ambiguities),
                        ("note:", result.notes)):
        for item in items:
            con.print(Text.assemble((head, "yellow"), " ", str(item)))
    if out is None:
        typer.echo(result.toml)
    else:
        try:
            out.write_text(result.toml, encoding="utf-8")
        except OSError as exc:
            _err(f"{out}: cannot write the layout: {exc.strerror or exc}")
            raise typer.Exit(EXIT_FAILED) from None
        con.print(f"wrote {out}")


def preview_cmd(
    sample: Annotated[Path, typer.Argument(metavar="SAMPLE.pdf", help="the PDF to read")],
    layout: Annotated[Path, typer.Option("--layout", "-l", help="layout TOML")],
    out: Annotated[Path, typer.Option("-o", "--out", help="preview.html or preview.png")] = Path(
        "preview.html"
    ),
    engine: OptionalEngine = None,
) -> None:
    """Draw what the layout reads over the pages (HTML with images, or PNG)."""
    from certvet.extractor.errors import InputError
    from certvet.extractor.preview import preview

    lay = _layout(layout)
    try:
        res = preview(sample, lay, out, engine=engine)
    except InputError as exc:
        _err(str(exc))
        raise typer.Exit(EXIT_FAILED) from None
    typer.echo(
        f"wrote {res.out}: {res.pages} page(s), {res.cells} value(s) drawn, "
        f"{res.unreadable} did not parse"
    )
    if res.message:
        _err(res.message)
        raise typer.Exit(EXIT_FAILED)


def try_layout_cmd(
    sample: Annotated[Path, typer.Argument(metavar="SAMPLE.pdf", help="the PDF to read")],
    layout: Annotated[Path, typer.Option("--layout", "-l", help="layout TOML")],
    engine: OptionalEngine = None,
) -> None:
    """Read the PDF with the layout; print the rows and every cell that did not parse."""
    from certvet.extractor.errors import InputError
    from certvet.extractor.preview import rich_tables, try_layout

    lay = _layout(layout)
    try:
        res = try_layout(sample, lay, engine=engine)
    except InputError as exc:
        _err(str(exc))
        raise typer.Exit(EXIT_FAILED) from None
    if res.certificate is None:
        _err(res.message)
        raise typer.Exit(EXIT_FAILED)
    # piped or redirected: rich would squeeze the table into 80 columns; give it its own width
    con = plain_console() if sys.stdout.isatty() else plain_console(width=1000)
    for t in rich_tables(res, lay):
        con.print(t)
    if not res.unparsed:
        con.print("every cell parsed")


def show_text_cmd(
    pdf: Annotated[Path, typer.Argument(metavar="PDF", help="the PDF to read")],
    page: Annotated[
        list[int],
        typer.Option("--page", "-p", min=1, help="Page number (repeatable; default: every page)."),
    ] = [],  # noqa: B006
    positions: Annotated[
        bool,
        typer.Option("--positions", help="Also print each line's box: x0 top x1 bottom, in "
                     "points from the page's top-left corner."),
    ] = False,
    engine: Engine = EngineName.pdfium,
) -> None:
    """Print a page's text lines as the extractor reads them, for writing label, recognise and
    header patterns. Text is printed exactly as read (never as terminal markup)."""
    from certvet.extractor.errors import InputError
    from certvet.extractor.show_text import page_lines

    try:
        shown = page_lines(str(pdf), pages=page or None, engine=engine.value)
    except InputError as exc:
        _err(str(exc))
        raise typer.Exit(EXIT_FAILED) from None
    for pg in shown:
        turned = f", turned {pg.rotation}°" if pg.rotation else ""
        typer.echo(f"--- page {pg.number} ({pg.width:.0f} x {pg.height:.0f} pt{turned}, "
                   f"{len(pg.lines)} lines)")
        if positions:
            typer.echo(f"{'x0':>7} {'top':>7} {'x1':>7} {'bottom':>7}  text")
        for ln in pg.lines:  # plain text, control characters escaped: never markup
            text = ("[vertical] " if ln.vertical else "") + one_line(ln.text)
            if positions:
                typer.echo(f"{ln.x0:7.1f} {ln.top:7.1f} {ln.x1:7.1f} {ln.bottom:7.1f}  {text}")
            else:
                typer.echo(text)


def register(target: typer.Typer) -> None:
    """Add the layout commands to the main `certvet` app."""
    target.command("draft-layout")(draft_layout_cmd)
    target.command("preview")(preview_cmd)
    target.command("try-layout")(try_layout_cmd)
    target.command("show-text")(show_text_cmd)


register(app)
