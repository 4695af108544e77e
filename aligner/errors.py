"""The package's exceptions: one base class, each subclass also a built-in error."""

from __future__ import annotations

from collections.abc import Mapping

__all__ = [
    "AlignerError",
    "InputFormatError",
    "InvalidParameterError",
    "NoCandidatesError",
    "ConvergenceError",
    "AlignerWarning",
    "MemoryBudgetError",
    "ClusterError",
]


class AlignerError(Exception):
    """Base class of every error raised on purpose by aligner."""


class InputFormatError(AlignerError, ValueError):
    """An input file or table is malformed; the message names the file and line."""

    def __init__(self, message: str, *, path: str | None = None, line: int | None = None):
        self.path = path
        self.line = line
        self.bare = message
        where = ""
        if path is not None:
            where = f"{path}"
            if line is not None:
                where += f", line {line}"
            where += ": "
        super().__init__(where + message)

    def __reduce__(self):  # keeps path and line through pickling (an error raised on a dask worker)
        return _input_format_error, (type(self), self.bare, self.path, self.line)


def _input_format_error(cls, message: str, path: str | None, line: int | None) -> "InputFormatError":
    return cls(message, path=path, line=line)


class InvalidParameterError(AlignerError, ValueError, TypeError):
    """A parameter is out of its allowed range or of the wrong type.

    ``param`` is the Python keyword at fault (None when the message names no single one); a
    message that starts with it can be shown with the command-line option in its place.
    """

    def __init__(self, message: str, *, param: str | None = None):
        self.param = param
        super().__init__(message)


class NoCandidatesError(AlignerError, ValueError):
    """No candidate pair is left to align after filtering the prior."""


class ConvergenceError(AlignerError, RuntimeError):
    """A solver stopped at its work cap before reaching the requested residual.

    ``advice`` lists the ways out as ``(verb, keyword, value)``: ``("raise {}", "tol", None)``,
    ``("try {}", "solver", "power")``; the keyword may be a tuple of those that set the same thing
    in different places (``("alpha", "alphas")``). The message names the Python keywords (``raise
    tol``, ``try solver='power'``; the first of a tuple); :meth:`shown` names the command-line
    options instead and leaves out a keyword that has none.
    """

    def __init__(self, message: str, *, iterations: int, residual: float,
                 advice: tuple[tuple[str, str | tuple[str, ...], object], ...] = ()):
        self.iterations = iterations
        self.residual = residual
        self.bare = message
        self.advice = tuple(advice)
        super().__init__(self.shown())

    def shown(self, flags: Mapping[str, str] | None = None) -> str:
        """The message, its advice naming the Python keywords, or with ``flags`` (keyword -> option
        as typed) the options, leaving out the keywords ``flags`` lacks."""
        ways = []
        for verb, keywords, value in self.advice:
            keywords = (keywords,) if isinstance(keywords, str) else tuple(keywords)
            if flags is None:
                ways.append(verb.format(keywords[0] if value is None else f"{keywords[0]}={value!r}"))
                continue
            flag = next((flags[k] for k in keywords if k in flags), None)
            if flag is not None:
                ways.append(verb.format(flag if value is None else f"{flag} {value}"))
        text = self.bare
        if ways:
            text += "; " + (ways[0] if len(ways) == 1 else ", ".join(ways[:-1]) + " or " + ways[-1])
        return f"{text} (stopped after {self.iterations} steps with 1-norm residual {self.residual:.3e})"


class AlignerWarning(UserWarning):
    """A recoverable problem with the input or the parameters."""


class MemoryBudgetError(AlignerError, MemoryError):
    """A stage would need more memory than the budget allows; the message says what to change."""


class ClusterError(AlignerError, RuntimeError):
    """The cluster of a distributed engine failed under a run (a worker or the scheduler was lost)
    and the run could not recover; nothing was written. The message says in which stage and what
    to do.

    Not a mistake in the inputs or options, so the command line exits with ``exit_status`` (1),
    not the 2 of the other errors; ``stage`` names the stage that was running.
    """

    exit_status = 1

    def __init__(self, message: str, *, stage: str | None = None):
        self.stage = stage
        super().__init__(message)
