"""Completeness accounting: what the schedule selection covered and could not be read.

An audit may say "no concerns found" only when every page and board of the schedule was read.
`assemble` calls `page_problem` for each schedule page it could not read (no text layer, no
column header, no rows) and `account_boards` once at the end for what only the whole
certificate shows: a board with no circuits, circuit numbers repeated within a board, more
rows than a board plausibly holds, and a count of rows far from the circuits the form
declares for the board (layout key `board.circuit_count`). Each becomes an
`ExtractionProblem`, so the verdict is "audit incomplete" (reports/verdict.py) and the
extraction check lists it.
"""

from __future__ import annotations

from collections import Counter

from certvet.extractor.fields import FieldKind
from certvet.extractor.records import Box, Certificate, ExtractionProblem
from certvet.extractor.tokens import parse_value

# More rows than this in one board means a missed board heading (or a table that is not the
# schedule), not a real board: common practice, no source (large boards have a few dozen
# ways; three-phase boards list each phase, still far below this).
MAX_BOARD_ROWS = 250
# Rows read may differ from the declared circuit count by this many rows, or this share of
# it, whichever is larger, before the difference is a problem (spare ways listed or not):
# common practice, no source.
DECLARED_SLACK_ROWS = 2
DECLARED_SLACK_SHARE = 0.1
_LISTED = 10  # repeated circuit numbers named in one message


def page_problem(number: int, reason: str, width: float, height: float) -> ExtractionProblem:
    """A schedule page not (fully) read; its box is the whole page."""
    box = Box(number, 0.0, 0.0, width, height)
    return ExtractionProblem(f"schedule page {number} {reason}", box=box)


def account_boards(cert: Certificate) -> list[ExtractionProblem]:
    """Problems only the whole certificate shows, one per board and kind."""
    out: list[ExtractionProblem] = []
    for board in cert.boards:
        name = f"board {board.ref!r}" if board.ref else "the unnamed board (no board heading read)"
        n = len(board.circuits)
        if n == 0:
            out.append(ExtractionProblem(f"{name} has no circuit rows", board=board.ref))
            continue
        if n > MAX_BOARD_ROWS:
            out.append(
                ExtractionProblem(
                    f"{name} has {n} rows, more than a board plausibly holds "
                    f"({MAX_BOARD_ROWS}): board headings were probably missed",
                    board=board.ref,
                )
            )
        counts = Counter(c.ref for c in board.circuits)
        repeated = [ref for ref, k in counts.items() if k > 1]
        if repeated:
            shown = ", ".join(repeated[:_LISTED])
            more = f" and {len(repeated) - _LISTED} more" if len(repeated) > _LISTED else ""
            out.append(
                ExtractionProblem(
                    f"{name} lists circuit numbers more than once: {shown}{more}",
                    board=board.ref,
                    raw=shown,
                )
            )
        if board.declared_circuits is not None:
            raw, box = board.declared_circuits
            declared = parse_value(raw, FieldKind.NUMBER)
            if declared.number is None:
                message = f"{name}: the declared circuit count {raw!r} is not a number"
            elif abs(n - declared.number) > max(
                DECLARED_SLACK_ROWS, DECLARED_SLACK_SHARE * declared.number
            ):
                message = f"{name} declares {raw} circuits, {n} rows were read"
            else:
                continue
            out.append(ExtractionProblem(message, board=board.ref, raw=raw, box=box))
    return out
