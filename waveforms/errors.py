"""One exception hierarchy for the whole package.

Every error the user can cause ends in one line that names the file, the place
inside it (line, column, dataset, key) and what is wrong.  The CLI prints
``str(err)`` and exits non-zero; it never shows a traceback for these.
"""

from __future__ import annotations

import math
from os import PathLike


class WaveformsError(Exception):
    """Base class of every error this package raises on purpose."""


class CaptureReadError(WaveformsError):
    """A capture (or a file that goes with it) cannot be read as asked.

    Parameters
    ----------
    path : str or PathLike
        The file concerned.
    where : str
        The place inside the file: ``"line 12, column 'Ib'"``, ``"dataset /ch/Va"``,
        ``"key channels.Va.ratio"``.  May be empty when the whole file is at fault.
    problem : str
        What is wrong, in plain words, ideally with a hint of what would be right.
    """

    def __init__(self, path: str | PathLike[str], where: str, problem: str) -> None:
        self.path = str(path)
        # one line always: a library's message quoted in ``problem`` may hold line breaks
        self.where = _clip(" | ".join(s.strip() for s in str(where).splitlines() if s.strip()))
        self.problem = _clip(" | ".join(s.strip() for s in str(problem).splitlines() if s.strip()))
        place = f": {self.where}" if self.where else ""
        super().__init__(f"{self.path}{place}: {self.problem}")


def _clip(text: str, limit: int = 1000) -> str:
    """A message part of at most ``limit`` characters (a 1 MB column name must not become a 1 MB line)."""
    return text if len(text) <= limit else text[: limit - 30] + f"... ({len(text)} characters)"


class MappingError(CaptureReadError):
    """A channel-mapping file or option is wrong or does not fit the capture."""


class InvalidParameterError(WaveformsError, ValueError):
    """A parameter given to a computing function or a stage is out of its domain."""


class WriteError(WaveformsError):
    """An output could not be written (nothing partial is left behind)."""


def positive_number(value: object, path: str | PathLike[str], where: str) -> float:
    """``value`` as a finite positive float, or a `CaptureReadError` naming the file and the place."""
    try:
        x = float(value)  # type: ignore[arg-type]
    except (TypeError, ValueError):
        raise CaptureReadError(path, where, f"{value!r} is not a number") from None
    if not (math.isfinite(x) and x > 0):
        raise CaptureReadError(path, where, f"{value!r} must be a positive number")
    return x
