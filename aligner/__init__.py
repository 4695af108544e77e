"""aligner: one-to-one network alignment by product-graph diffusion and linear-assignment rounding."""

__version__ = "0.1.0"

from .exceptions import (  # noqa: E402
    AlignerError,
    AlignerWarning,
    ConvergenceError,
    InputFormatError,
    InvalidParameterError,
    MemoryBudgetError,
    NoCandidatesError,
)
from .api import AlignmentResult, align, score  # noqa: E402
from .scoring import Scores  # noqa: E402
from .query import QueryResult, query  # noqa: E402  (the function shadows the submodule name)

__all__ = [
    "align",
    "score",
    "query",
    "QueryResult",
    "AlignmentResult",
    "Scores",
    "AlignerError",
    "AlignerWarning",
    "ConvergenceError",
    "InputFormatError",
    "InvalidParameterError",
    "MemoryBudgetError",
    "NoCandidatesError",
    "__version__",
]
