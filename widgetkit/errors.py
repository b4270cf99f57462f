"""The one error hierarchy of widgetkit.

Every error raised on purpose by widgetkit derives from :class:`WidgetkitError`
and also from the built-in exception a caller would expect (``ValueError`` for
bad input, ``RuntimeError`` for a computation that could not finish), so
``except ValueError`` keeps working in user code.

A message says what was wrong, where (file, line, field or parameter) and how
to fix it.
"""

from __future__ import annotations

__all__ = [
    "WidgetkitError",
    "SpectrumFormatError",
    "SessionFormatError",
    "SessionStateError",
    "ProcessingError",
    "OscillatorError",
    "SimulationError",
    "FitError",
    "AssignmentError",
    "FilePathError",
    "SeriesError",
]


class WidgetkitError(Exception):
    """Root of every error widgetkit raises on purpose."""


class SpectrumFormatError(WidgetkitError, ValueError):
    """A spectrum file or array could not be read or is not valid.

    Parameters
    ----------
    message : str
        What was wrong and how to fix it.
    path : str, optional
        The file concerned, when there is one.
    line : int, optional
        The 1-based line number in that file, where it is known.
    """

    def __init__(self, message: str, *, path: str | None = None, line: int | None = None):
        self.path = None if path is None else str(path)
        self.line = line
        self.reason = message
        where = ""
        if self.path is not None:
            where = self.path
            if line is not None:
                where += f", line {line}"
            where += ": "
        elif line is not None:
            where = f"line {line}: "
        super().__init__(where + message)


class SessionFormatError(WidgetkitError, ValueError):
    """A saved session file is invalid, corrupt or of an unsupported version."""

    def __init__(self, message: str, *, path: str | None = None):
        self.path = None if path is None else str(path)
        super().__init__(f"{self.path}: {message}" if self.path else message)


class SessionStateError(WidgetkitError, ValueError):
    """A session method was called when the session cannot do it (for example
    fitting lines before any peak exists)."""


class ProcessingError(WidgetkitError, ValueError):
    """A processing function was given an option, method or value it cannot use."""


class OscillatorError(WidgetkitError, ValueError):
    """Bad input to the numerical oscillator, or a grid that did not converge."""


class SimulationError(WidgetkitError, ValueError):
    """Bad input to the spectrum simulator (the message names the parameter)."""


class FitError(WidgetkitError, RuntimeError):
    """A line fit could not be set up or did not give a usable result."""


class AssignmentError(WidgetkitError, ValueError):
    """Lines could not be assigned to levels, or constants could not be fitted."""


class FilePathError(WidgetkitError, OSError):
    """A file cannot be written (or read) where asked: the folder is missing, a file stands
    where a folder should be, or permission is lacking. The message names the user's path."""


class SeriesError(WidgetkitError, ValueError):
    """A recipe, a series file or the arguments of a series run are invalid (the message
    names the file, field or argument and says how to fix it)."""

    def __init__(self, message: str, *, path: str | None = None):
        self.path = None if path is None else str(path)
        super().__init__(f"{self.path}: {message}" if self.path else message)
