"""aligner: one-to-one network alignment by product-graph diffusion and linear-assignment rounding.

The public API is imported lazily (PEP 562), so ``import aligner`` and the command line's
``--help`` do not pay for numpy, scipy, pandas and numba until a function is used.
"""

from __future__ import annotations

from importlib import import_module
from typing import TYPE_CHECKING

__version__ = "0.1.0"

#: public name -> module that defines it
_EXPORTS = {
    "align": "aligner.pipeline",
    "score": "aligner.pipeline",
    "prepare": "aligner.pipeline",
    "Problem": "aligner.pipeline",
    "AlignmentResult": "aligner.pipeline",
    "AlignConfig": "aligner.config",
    "sweep": "aligner.analysis.sweep",
    "SweepResult": "aligner.analysis.sweep",
    "query": "aligner.analysis.query",
    "QueryResult": "aligner.analysis.query",
    "Scores": "aligner.core.scoring",
    "AlignerError": "aligner.errors",
    "AlignerWarning": "aligner.errors",
    "ConvergenceError": "aligner.errors",
    "InputFormatError": "aligner.errors",
    "InvalidParameterError": "aligner.errors",
    "MemoryBudgetError": "aligner.errors",
    "NoCandidatesError": "aligner.errors",
}

__all__ = sorted(_EXPORTS) + ["__version__"]


def __getattr__(name: str):
    if name in _EXPORTS:
        value = getattr(import_module(_EXPORTS[name]), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module 'aligner' has no attribute {name!r}")


def __dir__():
    return __all__


if TYPE_CHECKING:  # pragma: no cover
    from aligner.analysis.query import QueryResult, query
    from aligner.analysis.sweep import SweepResult, sweep
    from aligner.config import AlignConfig
    from aligner.core.scoring import Scores
    from aligner.errors import (AlignerError, AlignerWarning, ConvergenceError, InputFormatError,
                                InvalidParameterError, MemoryBudgetError, NoCandidatesError)
    from aligner.pipeline import AlignmentResult, Problem, align, prepare, score
