"""The options `certvet audit` and `certvet batch` share for files no layout recognises
(certvet/drafting.py): one definition, so both commands name and explain them alike."""

from __future__ import annotations

from typing import TYPE_CHECKING, Annotated

import typer

from certvet.extractor.draft_reading import READ_THRESHOLD, TRUSTED_THRESHOLD

READ_AT, TRUSTED_AT = READ_THRESHOLD, TRUSTED_THRESHOLD  # the defaults of the two options

if TYPE_CHECKING:
    from certvet.drafting import DraftOptions

DraftUnknown = Annotated[
    bool,
    typer.Option(
        "--draft-unknown-forms/--no-draft-unknown-forms",
        help="When no layout recognises a file, draft a layout from the file and read with it "
        "(saved in OUT/drafted-layouts for review and reuse). Off: such files are refused.",
    ),
]
MinConfidence = Annotated[
    float,
    typer.Option(
        "--min-draft-confidence", min=0.0, max=1.0,
        help="Refuse a file whose drafted layout's confidence (0-1) is below this.",
    ),
]
TrustedConfidence = Annotated[
    float,
    typer.Option(
        "--trusted-draft-confidence", min=0.0, max=1.0,
        help="Below this confidence (0-1) a certificate read with a drafted layout is never "
        "called 'no concerns found'.",
    ),
]


def draft_options(enabled: bool, min_confidence: float, trusted: float) -> DraftOptions:
    from certvet.drafting import DraftOptions

    return DraftOptions(enabled=enabled, read_threshold=min_confidence,
                        trusted_threshold=trusted)
