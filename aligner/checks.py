"""Parameter checks shared by every stage: one message shape for every failure.

A failed check raises :class:`~aligner.errors.InvalidParameterError` whose text reads
``<name> must be <what>; got <value>`` and whose ``param`` attribute is the keyword, so that
the command line can put the option as the user typed it in place of the keyword. Warnings go
through :func:`warn`, which points them at the caller's line, not the package's.
"""

from __future__ import annotations

import math
import sys
import warnings
from numbers import Integral, Real
from typing import Iterable

from aligner.errors import AlignerWarning, InvalidParameterError

__all__ = ["check_real", "check_int", "check_choice", "interval_text", "bad_parameter", "warn"]


def warn(message: str, category: type[Warning] = AlignerWarning) -> None:
    """Warn, attributing the warning to the first frame outside the package: the line of the
    user's code that called into aligner (whatever path led from there to the warning)."""
    level, frame = 2, sys._getframe(1)
    while frame is not None and frame.f_globals.get("__name__", "").split(".")[0] == "aligner":
        frame, level = frame.f_back, level + 1
    warnings.warn(message, category, stacklevel=level)


def bad_parameter(name: str, must: str, value: object) -> InvalidParameterError:
    """The error for parameter ``name``, which must be ``must`` and is ``value``."""
    return InvalidParameterError(f"{name} must be {must}; got {value!r}", param=name)


def check_callable(value: object, name: str):
    """Return ``value`` (None or a callable) after checking it is one of those."""
    if value is not None and not callable(value):
        raise bad_parameter(name, "a function (or None)", value)
    return value


def interval_text(low: float | None, high: float | None, closed: str = "both") -> str:
    """``[0, 1)``-style text of an interval; ``closed`` says which ends belong to it."""
    left = "[" if closed in ("both", "left") and low is not None else "("
    right = "]" if closed in ("both", "right") and high is not None else ")"
    lo = "-inf" if low is None else _number_text(low)
    hi = "inf" if high is None else _number_text(high)
    return f"{left}{lo}, {hi}{right}"


def _number_text(value: float) -> str:
    """A bound as the messages show it: ``0.5``, ``1024``, and a whole power of ten from 10,000 up as
    ``10^9`` (not ``1e+09``, nor ten digits to count)."""
    if isinstance(value, Integral) and not isinstance(value, bool):
        v = int(value)
        if v >= 10_000 and str(v).rstrip("0") == "1":
            return f"10^{len(str(v)) - 1}"
        return str(v)
    return f"{value:g}"


def check_real(value: object, name: str, *, low: float | None = None, high: float | None = None,
               closed: str = "both") -> float:
    """Return ``value`` as a float after checking it is a finite number in the stated interval.

    ``closed`` is one of "both", "left", "right", "neither" and says which ends belong to it. An
    end left out is unbounded, and infinity itself is refused (as NaN is): ``[0, inf)`` is open at
    infinity, and no option gives infinity a meaning.
    """
    must = "a finite number" if low is None and high is None else f"a number in {interval_text(low, high, closed)}"
    if isinstance(value, bool) or not isinstance(value, Real):
        raise bad_parameter(name, must, value)
    try:
        v = float(value)
    except OverflowError:  # an int too large for a float
        raise bad_parameter(name, must, value) from None
    if not math.isfinite(v):
        raise bad_parameter(name, must, value)
    if low is not None and (v < low or (v == low and closed in ("right", "neither"))):
        raise bad_parameter(name, must, value)
    if high is not None and (v > high or (v == high and closed in ("left", "neither"))):
        raise bad_parameter(name, must, value)
    return v


def check_int(value: object, name: str, *, low: int | None = None, high: int | None = None) -> int:
    """Return ``value`` as an int after checking it is a whole number of at least ``low`` and at
    most ``high`` (both ends belong to the range; one left out is unbounded)."""
    if high is None:
        must = "a whole number" if low is None else f"a whole number >= {low}"
    else:
        must = f"a whole number in {interval_text(low, high)}"
    if isinstance(value, bool) or not isinstance(value, Integral):
        raise bad_parameter(name, must, value)
    if (low is not None and value < low) or (high is not None and value > high):
        raise bad_parameter(name, must, value)
    return int(value)


def check_choice(value: object, name: str, options: Iterable[str]) -> str:
    """Return ``value`` after checking it is one of ``options``."""
    opts = list(options)
    # a str only: `in` compares with ==, which a one-element array answers element-wise (truthy)
    if not isinstance(value, str) or value not in opts:
        raise bad_parameter(name, "one of " + ", ".join(opts), value)
    return str(value)
