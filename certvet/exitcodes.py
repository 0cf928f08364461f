"""Exit codes of every certvet command, defined once (README "Exit codes" shows this table;
tests/test_cli_robustness.py checks that it does)."""

from __future__ import annotations

from enum import IntEnum


class ExitCode(IntEnum):
    CLEAN = 0
    FINDINGS = 1
    USAGE = 2
    INPUT_FAILED = 3
    INTERNAL = 4


MEANING: dict[ExitCode, str] = {
    ExitCode.CLEAN: "done; no breach or impossible result found",
    ExitCode.FINDINGS: "at least one certificate has a breach or an impossible result",
    ExitCode.USAGE: "usage error: a bad option, layout file or rule profile (nothing was read)",
    ExitCode.INPUT_FAILED: "at least one input could not be audited (one line each says why), "
    "or the store or output folder could not be used",
    ExitCode.INTERNAL: "internal error in certvet itself (a bug: one line names it; "
    "CERTVET_DEBUG=1 shows the traceback)",
}

EXIT_CLEAN = ExitCode.CLEAN
EXIT_FINDINGS = ExitCode.FINDINGS
EXIT_USAGE = ExitCode.USAGE
EXIT_FAILED = ExitCode.INPUT_FAILED
EXIT_INTERNAL = ExitCode.INTERNAL


def markdown_table() -> str:
    """The table as README shows it."""
    rows = ["| code | meaning |", "|---|---|"]
    rows += [f"| {int(code)} | {text} |" for code, text in MEANING.items()]
    return "\n".join(rows)
