"""The caution every output of certvet carries, data files included: a desk check of recorded
results cannot show that an installation is safe.

It lives at this layer so that the corpus's exports (which may not import the reports) and the
reports write the same words. reports/model.py's CAUTIONS start with DESK_CHECK_CAUTION; data
files carry DATA_CAUTION (docs/corpus.md, "Cautions in data files"):

* CSV: the first row is one cell, ``# certvet caution: ...``; the header row follows. Skip one
  line to read (``pandas.read_csv(path, skiprows=1)``, reports.csvout.read_table).
* Parquet: file metadata key ``certvet.caution``.
* JSON: a ``cautions`` list.
"""

from __future__ import annotations

DESK_CHECK_CAUTION = (
    "This is a desk check of the results written on a certificate. It cannot show that an "
    "installation is safe, and it cannot show that the tests were actually carried out."
)
NOT_AN_INSPECTION = "It does not replace inspection and testing by a competent person."

DATA_CAUTION = f"certvet caution: {DESK_CHECK_CAUTION} {NOT_AN_INSPECTION}"
CSV_CAUTION_MARK = "# "  # the CSV caution row starts with this; readers skip one line
CSV_CAUTION_ROW: tuple[str] = (CSV_CAUTION_MARK + DATA_CAUTION,)
PARQUET_CAUTION_KEY = "certvet.caution"
