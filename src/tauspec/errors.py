"""Exceptions and warnings raised by tauspec.

Every problem with a user's input is a :class:`TauspecError`; the command line
turns it into one line on stderr and exit status 1.
"""

from __future__ import annotations

__all__ = [
    "TauspecError",
    "SweepError",
    "SettingsError",
    "TauspecWarning",
    "WeakResultWarning",
    "DroppedPointsWarning",
    "EncodingGuessWarning",
]


class TauspecError(Exception):
    """Base class for every error tauspec reports to a user.

    Parameters
    ----------
    reason : str
        What is wrong, in one sentence.
    source : str, optional
        The file (or sample) the problem belongs to.
    line : int, optional
        1-based line number in ``source``.
    """

    def __init__(self, reason: str, source: str | None = None, line: int | None = None):
        self.reason = " ".join(str(reason).split())
        self.source = None if source is None else str(source)
        self.line = line
        super().__init__(self.one_line())

    def one_line(self) -> str:
        """Return the message as one line, ``file:line: reason``."""
        where = self.source or ""
        if where and self.line is not None:
            where = f"{where}:{self.line}"
        return f"{where}: {self.reason}" if where else self.reason

    def __reduce__(self):  # keep the fields through pickling (parallel workers)
        return (type(self), (self.reason, self.source, self.line))


class SweepError(TauspecError):
    """A frequency-sweep file or array set that cannot be used."""


class SettingsError(TauspecError):
    """An option or settings value outside its allowed range."""


class TauspecWarning(UserWarning):
    """Base class for warnings about the data or the result."""


class DroppedPointsWarning(TauspecWarning):
    """Points were removed from a sweep (a missing value or a non-positive modulus)."""


class EncodingGuessWarning(TauspecWarning):
    """A file that is not UTF-8 (nor marked UTF-16) was decoded with a single-byte encoding; the warning names it."""


class WeakResultWarning(TauspecWarning):
    """A result leans on assumptions or on data the sweep barely supports."""
