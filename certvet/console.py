"""What certvet prints: untrusted text (file names, PDF text) always as plain text.

`err` prints one error line (control characters escaped, so a file name with a newline cannot
forge a second line); `plain_console` is a rich Console that never reads markup or emoji
codes in what it prints (a cell reading "[/red]" or "[kitchen]" prints as written): style
with `rich.text.Text` objects, never with markup in strings.
"""

from __future__ import annotations

from pathlib import Path
from typing import TYPE_CHECKING, Any

import typer

from certvet.extractor.untrusted import one_line

if TYPE_CHECKING:
    from rich.console import Console

__all__ = ["err", "make_out_dir", "one_line", "plain_console"]


def err(message: str) -> None:
    typer.echo(f"certvet: {one_line(message)}", err=True)


def make_out_dir(out: Path) -> None:
    """Create the reports folder up front: one line and exit 3 when it cannot be made."""
    from certvet.exitcodes import EXIT_FAILED

    try:
        out.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        why = "a file of that name is in the way" if isinstance(exc, FileExistsError) else (
            exc.strerror or str(exc))
        err(f"{out}: cannot create the reports folder: {why}")
        raise typer.Exit(EXIT_FAILED) from None


def plain_console(**kwargs: Any) -> Console:
    from rich.console import Console

    return Console(markup=False, emoji=False, highlight=False, **kwargs)
