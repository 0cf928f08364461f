"""Findings as one tidy pandas DataFrame (one row per finding).

Columns, in order: the findings table's (``checks.model.FINDING_COLUMNS``) with ``box`` split
into ``box_x0``, ``box_top``, ``box_x1``, ``box_bottom`` (points, top-left origin; NaN when the
finding has no box), then ``preview`` (bool) and ``related`` (the other certificates, joined
with "; "). ``severity`` is the slug (note, query, breach, impossible), ordered worst first as a
pandas Categorical so ``sort_values("severity")`` puts the worst first.

pandas is imported inside the function so that importing the checks stays cheap.
"""

from __future__ import annotations

from collections.abc import Iterable
from typing import TYPE_CHECKING

from certvet.checks.model import FINDING_COLUMNS, Finding, Severity

if TYPE_CHECKING:
    import pandas as pd

BOX_COLUMNS = ("box_x0", "box_top", "box_x1", "box_bottom")


def findings_columns() -> list[str]:
    cols = [c for c in FINDING_COLUMNS if c != "box"]
    return [*cols, *BOX_COLUMNS, "preview", "related"]


def findings_frame(findings: Iterable[Finding]) -> pd.DataFrame:
    import pandas as pd

    rows = []
    for f in findings:
        d = f.to_dict()
        box = f.box
        d.update(box_x0=box.x0 if box else None, box_top=box.top if box else None,
                 box_x1=box.x1 if box else None, box_bottom=box.bottom if box else None,
                 related="; ".join(f.related))
        rows.append({c: d[c] for c in findings_columns()})
    df = pd.DataFrame(rows, columns=findings_columns())
    order = [s.slug for s in sorted(Severity, reverse=True)]
    df["severity"] = pd.Categorical(df["severity"], categories=order, ordered=True)
    df["page"] = df["page"].astype("Int64")
    for c in BOX_COLUMNS:
        df[c] = df[c].astype("float64")
    df["preview"] = df["preview"].astype(bool)
    return df
