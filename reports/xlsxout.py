"""Spreadsheet workbooks (.xlsx, through openpyxl) as a compliance team expects them.

The first sheet, "Read first", carries the cautions and the summary (for a corpus: how many
certificates have each verdict); then one sheet per table, certificates, circuits and findings
first. Every sheet has a bold, frozen header row with a filter, columns as wide as their
contents (capped), and every text value made spreadsheet-safe by the one rule every CSV writer
uses (`extractor.untrusted.spreadsheet_cell`): text from a PDF is never run as a formula.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING, Any

from certvet.extractor.untrusted import spreadsheet_cell

if TYPE_CHECKING:
    import pandas as pd

FRONT_SHEET = "Read first"
MAX_WIDTH = 60  # characters: longer text wraps in the cell rather than widening the column
MIN_WIDTH = 6


def _cell(value: Any) -> Any:
    """A value as written to a cell: blanks for None/NaN, text neutralised, numbers kept."""
    if hasattr(value, "item") and not isinstance(value, str):  # numpy scalars
        value = value.item()
    out = spreadsheet_cell(value)
    return None if out == "" else out


def write_workbook(
    path: str | Path,
    front: Sequence[Sequence[Any]],
    sheets: Sequence[tuple[str, pd.DataFrame]],
) -> Path:
    """Write `front` (rows of text: the cautions and the summary) as the first sheet, then one
    sheet per (name, DataFrame)."""
    from openpyxl import Workbook
    from openpyxl.styles import Alignment, Font
    from openpyxl.utils import get_column_letter

    wb = Workbook()
    ws = wb.active
    ws.title = FRONT_SHEET
    for row in front:
        ws.append([_cell(v) for v in row])
    ws["A1"].font = Font(bold=True, size=13)
    ws.column_dimensions["A"].width = 48
    ws.column_dimensions["B"].width = 90
    for row in ws.iter_rows():
        for c in row:
            c.alignment = Alignment(wrap_text=True, vertical="top")
    for name, df in sheets:
        sheet = wb.create_sheet(name[:31])
        columns = [str(c) for c in df.columns]
        sheet.append(columns)
        widths = [len(c) for c in columns]
        for values in df.itertuples(index=False, name=None):
            row = [_cell(v) for v in values]
            sheet.append(row)
            for i, v in enumerate(row):
                if v is not None:
                    widths[i] = max(widths[i], len(str(v)))
        for i, w in enumerate(widths, start=1):
            sheet.column_dimensions[get_column_letter(i)].width = max(MIN_WIDTH,
                                                                      min(MAX_WIDTH, w + 2))
        for c in sheet[1]:
            c.font = Font(bold=True)
        sheet.freeze_panes = "A2"
        if columns:
            sheet.auto_filter.ref = f"A1:{get_column_letter(len(columns))}{max(1, sheet.max_row)}"
    out = Path(path)
    out.parent.mkdir(parents=True, exist_ok=True)
    wb.save(out)
    return out
