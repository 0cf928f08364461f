"""The catalogue described from the registry: listing rows, one check explained, the README table.

``certvet checks`` prints ``catalogue_rows()``, ``certvet explain ID`` prints
``explain_check(ID)``, and ``scripts/gen_docs.py`` writes ``markdown_table()`` into the README,
so all three come from the checks' own declarations and cannot disagree.
"""

from __future__ import annotations

import dataclasses
import textwrap
from dataclasses import dataclass

from certvet.checks.base import DOC_SECTIONS, Check
from certvet.checks.registry import all_checks, get_check


@dataclass(frozen=True)
class CatalogueRow:
    id: str
    group: str
    title: str
    severity: str  # slug: note, query, breach, impossible
    scope: str
    basis: str
    preview: bool
    reference: str


def row_for(cls: type[Check]) -> CatalogueRow:
    return CatalogueRow(
        id=cls.id,
        group=cls.group,
        title=cls.title,
        severity=cls.severity.slug,
        scope=cls.scope,
        basis=cls.basis,
        preview=cls.preview,
        reference=cls.reference,
    )


def catalogue_rows() -> list[CatalogueRow]:
    """One row per registered check, ordered by group then id."""
    return [row_for(cls) for cls in all_checks()]


def _options_text(cls: type[Check]) -> list[str]:
    lines = []
    for f in dataclasses.fields(cls.Options):
        lines.append(f"  {f.name} = {f.default!r}")
        lines.append(f"      {f.metadata.get('help', '')}")
        lines.append(f"      default's source: {f.metadata.get('source', '')}")
    return lines or ["  none"]


def explain_check(check_id: str, width: int = 88) -> str:
    """A plain-text handbook entry for one check; KeyError for an unknown id."""
    cls = get_check(check_id)
    sections = cls.doc_sections()
    head = [
        f"{cls.id}: {cls.title}",
        f"group {cls.group} · severity {cls.severity.label} · applies per {cls.scope} · "
        f"basis {cls.basis}" + (" · preview (reported, never fails a run)" if cls.preview
                                else ""),
        f"reference: {cls.reference}",
    ]
    out = head + [""]
    summary = sections.get("summary", "")
    if summary:
        out += [textwrap.fill(summary, width), ""]
    for name in DOC_SECTIONS:
        if name == "Options":
            out.append("Options (set in a rule profile under [checks." + cls.id + "]):")
            out += _options_text(cls)
            out.append("")
            continue
        body = sections.get(name, "")
        out.append(f"{name}:")
        for para in body.split("\n\n"):
            if para.strip():
                out.append(textwrap.fill(" ".join(para.split()), width, initial_indent="  ",
                                         subsequent_indent="  "))
        out.append("")
    return "\n".join(out).rstrip() + "\n"


def _cell(text: str) -> str:
    return " ".join(text.split()).replace("|", "\\|")


def markdown_table() -> str:
    """The README's table of checks (between the checks-table markers)."""
    lines = [
        "| id | group | severity | title | basis | reference |",
        "|---|---|---|---|---|---|",
    ]
    for r in catalogue_rows():
        sev = r.severity + (" (preview)" if r.preview else "")
        lines.append(
            f"| `{r.id}` | {r.group} | {sev} | {_cell(r.title)} | {r.basis} | "
            f"{_cell(r.reference)} |"
        )
    return "\n".join(lines) + "\n"
