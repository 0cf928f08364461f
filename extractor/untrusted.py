"""Untrusted text (read from PDFs, or a file's name) made safe for where it is written.

One place for each kind of output, so no writer has its own rule:

* `spreadsheet_cell(value)` — one value for a CSV (or any sheet) cell. Text a spreadsheet
  would run as a formula (starting with ``=``, ``+``, ``@``, a tab or carriage return, or
  ``-`` followed by anything but a number) gets a leading apostrophe; readings such as ``-``
  and ``-0.01`` stay as printed; None and NaN become blank. Used by every CSV writer
  (reports/csvout.py, the batch's cross-findings, the corpus export).
* `one_line(text)` — text for one console line: line breaks and other control characters
  become visible escapes, so a file name with a newline cannot forge a second line.
"""

from __future__ import annotations

import re

_PLAIN_NEGATIVE = re.compile(r"^-+\s*$|^-\s*\d+([.,]\d+)?\s*[a-zA-ZΩμ²/]*$")
_FORMULA_START = "=+@\t\r"
_CONTROL = re.compile(r"[\x00-\x1f\x7f\x85\u2028\u2029]")


def spreadsheet_safe(text: str) -> str:
    """Make one text value safe to open in a spreadsheet."""
    if not text:
        return text
    first = text[0]
    if first in _FORMULA_START or (first == "-" and not _PLAIN_NEGATIVE.match(text)):
        return "'" + text
    return text


def spreadsheet_cell(value: object) -> object:
    """One value as a CSV cell: blanks for None/NaN, text made safe, numbers as they are."""
    if value is None or (isinstance(value, float) and value != value):
        return ""
    if isinstance(value, str):
        return spreadsheet_safe(value)
    return value


def one_line(text: str) -> str:
    """Text that stays on one console line: control characters shown as escapes."""
    return _CONTROL.sub(lambda m: repr(m.group())[1:-1], text)
