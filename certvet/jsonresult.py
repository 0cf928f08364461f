"""The machine-readable result of `certvet audit --json` (on stdout, for pipelines).

One JSON object whose first key is ``format_version``; readers must check it. It summarises the
run; each certificate's full report is the JSON file named in ``reports``.

Format history:

* 1 — ``format_version``, ``kind`` ("certvet audit result"), ``certvet_version``,
  ``exit_code`` and ``exit_meaning`` (certvet/exitcodes.py), ``cautions`` (the cautions every
  report carries), ``totals`` (files, audited, not_audited), ``files``: one entry per input in
  completion order with ``path``, ``status`` (``audited`` or ``not_audited``), and for an
  audited file ``verdict`` (key, headline, complete), ``counts`` (non-preview findings by
  severity slug), ``findings`` (their number), ``layout``, ``reports`` (format → path); for a
  file not audited, ``reason`` (one line naming the file).
* 2 — an audited file has ``drafted_layout``: null, or, when it was read with a layout drafted
  on the fly because no layout recognised its form, the note of its report (``sample``,
  ``confidence``, ``trusted_at``, ``trusted``, ``saved_to``) plus ``message``, the line the
  console prints.
"""

from __future__ import annotations

from typing import TYPE_CHECKING, Any

if TYPE_CHECKING:
    from certvet.api import BatchSummary

FORMAT_VERSION = 2
KIND = "certvet audit result"


def audit_result_document(summary: BatchSummary, exit_code: int) -> dict[str, Any]:
    """The `--json` document for one `certvet audit` run."""
    from certvet import __version__
    from certvet.checks.model import Severity
    from certvet.exitcodes import MEANING, ExitCode
    from certvet.reports.model import CAUTIONS

    files: list[dict[str, Any]] = []
    for r in summary.audited:
        v = r.verdict
        counted = [f for f in r.results.findings if not f.preview]
        files.append({
            "path": str(r.source),
            "status": "audited",
            "verdict": {"key": v.key.value, "headline": v.headline, "complete": v.complete},
            "counts": {s.slug: sum(1 for f in counted if f.severity is s)
                       for s in sorted(Severity, reverse=True)},
            "findings": len(counted),
            "layout": r.layout,
            "reports": {fmt: str(p) for fmt, p in r.outputs.items()},
            "drafted_layout": None if r.certificate.drafted is None else {
                **r.certificate.drafted.to_dict(),
                "message": r.certificate.drafted.message(str(r.source))},
        })
    for failure in summary.failed:
        files.append({"path": str(failure.source), "status": "not_audited",
                      "reason": failure.reason})
    return {
        "format_version": FORMAT_VERSION,
        "kind": KIND,
        "certvet_version": __version__,
        "exit_code": int(exit_code),
        "exit_meaning": MEANING[ExitCode(exit_code)],
        "cautions": list(CAUTIONS),
        "totals": {"files": summary.total, "audited": len(summary.audited),
                   "not_audited": len(summary.failed)},
        "files": files,
    }
