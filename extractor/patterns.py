"""Layout patterns that cannot hang: Python `re` where backtracking is harmless, RE2 (linear
time, the `google-re2` package) where it is not.

A pattern is at exponential risk when its parse tree repeats something that itself repeats
or branches (`(a+)+`, `(a|ab)*`, `(\\s*x?)*`): on a line of PDF text Python's backtracking
engine can then run for ever. It is compiled with RE2, which matches in time linear in the
text. RE2 has no look-around and no back-references, and its `\\d`, `\\s`, `\\w` and `\\b` are
ASCII; such a pattern that needs those features is refused (`UnsafePattern`), as is any when
RE2 is not installed. A pattern with more than `MAX_FREE_REPEATS` unbounded repeats is at
polynomial risk only (slow, never endless, on lines of text): RE2 runs it when it can, else
Python's engine does (within the per-file time limit of audit and batch). Patterns not at
risk, which are nearly all layout patterns, keep Python's `re` (its speed, Unicode classes).
"""

from __future__ import annotations

import re
from collections.abc import Iterator
from typing import Any, cast

MAX_FREE_REPEATS = 3  # unbounded repeats (*, +, {n,}) in one pattern before RE2 takes it

try:  # the parser behind re.compile (public as sre_parse before 3.11, deprecated since)
    import re._parser as _sre  # type: ignore[import-not-found,unused-ignore]
except ImportError:  # pragma: no cover - Python < 3.11
    import sre_parse as _sre  # type: ignore[no-redef,unused-ignore]

_REPEATS = {_sre.MAX_REPEAT, _sre.MIN_REPEAT, getattr(_sre, "POSSESSIVE_REPEAT", None)} - {None}


class UnsafePattern(ValueError):
    """A pattern that could take exponential time and that no linear-time engine can run."""


def _walk(items: Any, inside_repeat: bool, free: list[int]) -> bool:
    """True when the parsed pattern repeats a repeat or a branch."""
    for op, av in items:
        if op in _REPEATS:
            lo, hi, sub = av
            many = hi is _sre.MAXREPEAT or hi > 1
            if many and hi is _sre.MAXREPEAT:
                free[0] += 1
            if many and inside_repeat:
                return True
            if _walk(sub, inside_repeat or many, free):
                return True
        elif op is _sre.BRANCH:
            if inside_repeat:
                return True
            if any(_walk(alt, inside_repeat, free) for alt in av[1]):
                return True
        elif op is _sre.SUBPATTERN:
            if _walk(av[-1], inside_repeat, free):
                return True
        elif op in (_sre.ASSERT, _sre.ASSERT_NOT):
            if _walk(av[1], inside_repeat, free):
                return True
        elif op is getattr(_sre, "ATOMIC_GROUP", None):
            if _walk(av, inside_repeat, free):
                return True
        elif op is _sre.GROUPREF_EXISTS:
            if any(b is not None and _walk(b, inside_repeat, free) for b in av[1:]):
                return True
    return False


def backtracking_risk(text: str, flags: int = 0) -> str | None:
    """"exponential", "polynomial" or None: what Python's engine could take on this pattern."""
    free = [0]
    if _walk(_sre.parse(text, flags), False, free):
        return "exponential"
    return "polynomial" if free[0] > MAX_FREE_REPEATS else None


class _Re2Match:
    """The part of `re.Match` the extractor uses, over an RE2 match (group names allowed)."""

    __slots__ = ("_m", "_names")

    def __init__(self, m: Any, names: dict[str, int]) -> None:
        self._m = m
        self._names = names

    def _index(self, g: int | str) -> int:
        return self._names[g] if isinstance(g, str) else g

    def group(self, *groups: int | str) -> Any:
        return self._m.group(*groups)

    def groupdict(self) -> dict[str, str | None]:
        return {name: self._m.group(i) for name, i in self._names.items()}

    def span(self, g: int | str = 0) -> tuple[int, int]:
        return cast(tuple[int, int], self._m.span(self._index(g)))

    def start(self, g: int | str = 0) -> int:
        return self.span(g)[0]

    def end(self, g: int | str = 0) -> int:
        return self.span(g)[1]

    def __bool__(self) -> bool:
        return True


class LinearPattern:
    """A compiled pattern run by RE2, with the part of `re.Pattern` the extractor uses."""

    def __init__(self, text: str, flags: int, rx: Any) -> None:
        self.pattern = text
        self.flags = flags
        self._rx = rx
        self.groupindex: dict[str, int] = dict(rx.groupindex)

    def search(self, text: str) -> _Re2Match | None:
        m = self._rx.search(text)
        return _Re2Match(m, self.groupindex) if m is not None else None

    def match(self, text: str) -> _Re2Match | None:
        m = self._rx.match(text)
        return _Re2Match(m, self.groupindex) if m is not None else None

    def fullmatch(self, text: str) -> _Re2Match | None:
        m = self._rx.fullmatch(text)
        return _Re2Match(m, self.groupindex) if m is not None else None

    def finditer(self, text: str) -> Iterator[_Re2Match]:
        for m in self._rx.finditer(text):
            yield _Re2Match(m, self.groupindex)

    def __reduce__(self) -> tuple[Any, tuple[str, int]]:  # Dask ships layouts pickled
        return compile_pattern, (self.pattern, self.flags)

    def __repr__(self) -> str:
        return f"LinearPattern({self.pattern!r})"


def compile_pattern(text: str, flags: int = 0) -> re.Pattern[str]:
    """Compile a layout pattern so that matching it cannot hang (see the module docstring).

    Raises re.error for a pattern that is not valid, UnsafePattern for one at risk that RE2
    cannot run. The result is typed as `re.Pattern`: an RE2 pattern offers the same search,
    match, fullmatch, finditer, group, span, pattern, flags and groupindex."""
    compiled = re.compile(text, flags)
    risk = backtracking_risk(text, flags)
    if risk is None:
        return compiled
    try:
        import re2
    except ImportError:
        if risk == "polynomial":
            return compiled
        raise UnsafePattern(
            "repeats a repeated or alternative part, which can take exponential time, and the "
            "linear-time engine (the google-re2 package) is not installed"
        ) from None
    options = re2.Options()
    options.log_errors = False
    options.case_sensitive = not flags & re.IGNORECASE
    try:
        rx = re2.compile(text, options)
    except re2.error:
        if risk == "polynomial":
            return compiled
        raise UnsafePattern(
            "repeats a repeated or alternative part, which can take exponential time, and uses "
            "a feature the linear-time engine lacks (look-around or back-reference): simplify it"
        ) from None
    return cast(re.Pattern[str], LinearPattern(text, flags, rx))
