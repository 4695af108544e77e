"""Parameter checks shared by every stage: one message shape for every failure."""

from __future__ import annotations

import math
from numbers import Integral, Real
from typing import Iterable

from aligner.errors import InvalidParameterError

__all__ = ["check_real", "check_int", "check_choice"]


def _fail(name: str, where: str, must: str, value: object) -> InvalidParameterError:
    return InvalidParameterError(f"The '{name}' parameter of {where} must be {must}. Got {value!r} instead.")


def check_real(
    value: object,
    name: str,
    where: str,
    *,
    low: float | None = None,
    high: float | None = None,
    closed: str = "both",
) -> float:
    """Return ``value`` as a float after checking it lies in the stated interval.

    ``closed`` is one of "both", "left", "right", "neither" and says which ends belong to it.
    """
    left = "[" if closed in ("both", "left") else "("
    right = "]" if closed in ("both", "right") else ")"
    lo = "-inf" if low is None else f"{low:g}"
    hi = "inf" if high is None else f"{high:g}"
    must = f"a real number in {left}{lo}, {hi}{right}"
    if isinstance(value, bool) or not isinstance(value, Real):
        raise _fail(name, where, must, value)
    v = float(value)
    if math.isnan(v):
        raise _fail(name, where, must, value)
    if low is not None and (v < low or (v == low and left == "(")):
        raise _fail(name, where, must, value)
    if high is not None and (v > high or (v == high and right == ")")):
        raise _fail(name, where, must, value)
    return v


def check_int(value: object, name: str, where: str, *, low: int | None = None) -> int:
    """Return ``value`` as an int after checking it is an integer of at least ``low``."""
    must = "an integer" if low is None else f"an integer >= {low}"
    if isinstance(value, bool) or not isinstance(value, Integral):
        raise _fail(name, where, must, value)
    if low is not None and value < low:
        raise _fail(name, where, must, value)
    return int(value)


def check_choice(value: object, name: str, where: str, options: Iterable[str]) -> str:
    """Return ``value`` after checking it is one of ``options``."""
    opts = list(options)
    if value not in opts:
        raise _fail(name, where, "one of " + ", ".join(repr(o) for o in opts), value)
    return str(value)
