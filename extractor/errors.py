"""Errors for input that cannot be audited. str() is always one line: '<file>: <reason>'."""

from __future__ import annotations

from certvet.extractor.untrusted import one_line


class InputError(Exception):
    """A file that cannot be read as a certificate (not a PDF, encrypted, no text layer…)."""

    def __init__(self, path: str, reason: str) -> None:
        super().__init__(one_line(f"{path}: {reason}"))
        self.path = path
        self.reason = reason

    def __reduce__(self) -> tuple[type[InputError], tuple[str, str]]:
        # pickle (forked workers, Dask) rebuilds from (path, reason), not from the joined
        # message in `args`, which the two-argument __init__ would not accept
        return type(self), (self.path, self.reason)


class NoLayoutMatches(InputError):
    """No layout recognised the file, or the chosen layout found no schedule in it."""


class NotRecognised(NoLayoutMatches):
    """No layout recognised the file's form (and none was drafted for it)."""
