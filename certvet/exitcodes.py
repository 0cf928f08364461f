"""Exit codes of every certvet command, defined once (README "Exit codes" shows this table;
tests/test_cli_robustness.py checks that it does)."""

from __future__ import annotations

from enum import IntEnum
from typing import Any


class ExitCode(IntEnum):
    CLEAN = 0
    FINDINGS = 1
    USAGE = 2
    INPUT_FAILED = 3
    INTERNAL = 4


MEANING: dict[ExitCode, str] = {
    ExitCode.CLEAN: "done; no finding at a --fail-on severity (default: breach, impossible)",
    ExitCode.FINDINGS: "at least one certificate has a finding at a --fail-on severity "
    "(default: a breach or an impossible result, a copied schedule included)",
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


DEFAULT_FAIL_ON = "breach,impossible"  # the severities that make the exit status 1


def parse_fail_on(text: str) -> frozenset[Any]:
    """`--fail-on breach,impossible` as a set of checks.model.Severity; a ValueError with one
    line otherwise."""
    from certvet.checks.model import Severity

    words = [w for w in (p.strip() for p in text.split(",")) if w]
    if not words:
        raise ValueError("--fail-on: give at least one severity (note, query, breach, "
                         "impossible)")
    try:
        return frozenset(Severity.parse(w) for w in words)
    except ValueError as exc:
        raise ValueError(f"--fail-on: {exc}") from None


def markdown_table() -> str:
    """The table as README shows it."""
    rows = ["| code | meaning |", "|---|---|"]
    rows += [f"| {int(code)} | {text} |" for code, text in MEANING.items()]
    return "\n".join(rows)
