"""A certificate's circuits as one tidy pandas DataFrame (one row per circuit).

Columns, in order: ``certificate``, ``board``, ``circuit_ref``, then for every canonical
circuit field (``extractor.fields.CIRCUIT_FIELDS``) three columns:

* ``<field>`` — the typed value: float for number fields (NaN unless the cell holds a plain
  reading; bounds such as ">999" are NaN here, as in ``Circuit.number``), nullable boolean for
  confirm fields (True for a tick, False for a cross, NA otherwise), string for text fields
  (NA unless the cell holds text);
* ``<field>_raw`` — the text as printed ("" when the cell is absent);
* ``<field>_kind`` — the ``ValueKind`` of the cell ("empty" when absent);

and finally ``page`` (nullable integer). ``circuit_ref`` itself is not repeated as a typed
column, but has its ``_raw`` and ``_kind`` columns.

pandas is imported inside the function so that importing the extractor stays cheap.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

from certvet.extractor.fields import CIRCUIT_FIELDS, FieldKind
from certvet.extractor.records import Certificate, Value, ValueKind

if TYPE_CHECKING:
    import pandas as pd


def frame_columns() -> list[str]:
    cols = ["certificate", "board", "circuit_ref"]
    for spec in CIRCUIT_FIELDS:
        if spec.name != "circuit_ref":
            cols.append(spec.name)
        cols += [f"{spec.name}_raw", f"{spec.name}_kind"]
    cols.append("page")
    return cols


def _typed(kind: FieldKind, v: Value) -> Any:
    if kind is FieldKind.NUMBER:
        return float(v.number) if v.kind is ValueKind.NUMBER and v.number is not None else None
    if kind is FieldKind.CONFIRM:
        if v.kind is ValueKind.CONFIRMED:
            return True
        if v.kind is ValueKind.NOT_CONFIRMED:
            return False
        return None
    if v.kind is ValueKind.TEXT:
        return v.text if v.text is not None else v.raw.strip()
    return None


def circuit_rows(cert: Certificate) -> list[dict[str, Any]]:
    """One plain dict per circuit, keyed by ``frame_columns()`` (no pandas needed)."""
    rows: list[dict[str, Any]] = []
    for board, circuit in cert.circuits():
        row: dict[str, Any] = {
            "certificate": cert.name,
            "board": board.ref,
            "circuit_ref": circuit.ref,
        }
        for spec in CIRCUIT_FIELDS:
            v = circuit.value(spec.name)
            if spec.name != "circuit_ref":
                row[spec.name] = _typed(spec.kind, v)
            row[f"{spec.name}_raw"] = v.raw
            row[f"{spec.name}_kind"] = v.kind.value
        row["page"] = circuit.page
        rows.append(row)
    return rows


def circuits_frame(cert: Certificate) -> pd.DataFrame:
    """One row per circuit of ``cert``; see the module docstring for the columns."""
    import pandas as pd

    df = pd.DataFrame(circuit_rows(cert), columns=frame_columns())
    dtypes: dict[str, str] = {
        "certificate": "string",
        "board": "string",
        "circuit_ref": "string",
        "page": "Int64",
    }
    for spec in CIRCUIT_FIELDS:
        if spec.name != "circuit_ref":
            dtypes[spec.name] = {
                FieldKind.NUMBER: "float64",
                FieldKind.CONFIRM: "boolean",
                FieldKind.TEXT: "string",
            }[spec.kind]
        dtypes[f"{spec.name}_raw"] = "string"
        dtypes[f"{spec.name}_kind"] = "string"
    return df.astype(dtypes)
