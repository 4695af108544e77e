"""Every option of aligner, declared once.

Each option is a field of a frozen dataclass, and its declaration (:func:`option`) holds all
there is to know about it: default, allowed values, help text and the command-line flag. From
these declarations come

- the checks and their messages (``AlignConfig(alpha=1.5)`` raises
  ``alpha must be a number in [0, 1); got 1.5``),
- the keyword options of :func:`aligner.align`, :func:`aligner.sweep` and :func:`aligner.query`
  and the Parameters sections of their docstrings (:func:`describe`),
- the command-line options of every command that takes them (:mod:`aligner.cli.options`),
- the ``parameters`` section of ``summary.json`` (:meth:`AlignConfig.as_dict`).

This module imports nothing heavy: the command line reads it to build its help.

Examples
--------
>>> cfg = AlignConfig(alpha=0.8)
>>> cfg.alpha, cfg.top_k
(0.8, 25)
>>> cfg.replace(alpha=0.5).alpha
0.5
"""

from __future__ import annotations

import dataclasses
import re
from dataclasses import dataclass, field
from typing import Any, Iterable, Mapping

from aligner.checks import bad_parameter, check_choice, check_int, check_real
from aligner.errors import InvalidParameterError

__all__ = ["Spec", "option", "AlignConfig", "QueryConfig", "LabelConfig", "ClassConfig", "EngineConfig",
           "TransferConfig", "specs",
           "describe",
           "from_options", "with_options", "SCORE_KINDS", "SOLVERS", "NORMALIZATIONS", "WEIGHT_MODELS", "ROUNDINGS",
           "HEADERS", "SIDES", "ENGINES", "DASK_READING"]

SCORE_KINDS = ("similarity", "evalue", "distance")
SOLVERS = ("push", "power")
NORMALIZATIONS = ("restricted", "product")
WEIGHT_MODELS = ("agreement", "product")
ROUNDINGS = ("auto", "sparse", "dense", "scipy")
HEADERS = ("auto", "yes", "no")
SIDES = ("a", "b")
ENGINES = ("local", "dask")
#: where the dask engine reads input files: by its workers when it can ("auto"), or on the client
DASK_READING = ("auto", "client")

#: One column of a table, picked by its 1-based position (``11``) or its header name (``evalue``): a
#: name holds at least one character that is not a digit, and no comma.
_COLUMN = r"\s*(?:[1-9][0-9]*|[^,]*?[^,0-9\s][^,]*?)\s*"
#: ``--prior-columns``: three columns (node of A, node of B, score), comma-separated.
PRIOR_COLUMNS = rf"{_COLUMN},{_COLUMN},{_COLUMN}"
#: ``--label-columns``: one or more columns, comma-separated.
LABEL_COLUMNS = rf"{_COLUMN}(?:,{_COLUMN})*"
#: ``--delimiter``: a name (the readers' ``DELIMITERS`` map each to its character, whitespace to runs of
#: blanks) or one ASCII character other than a quote, '#' (comments) or a line break (both readers, pyarrow's
#: and pandas', split at one byte); the readers apply the same rule (:mod:`aligner.io.readers`), so a bad
#: delimiter is refused when the options are made
DELIMITER_NAMES = ("tab", "comma", "semicolon", "space", "whitespace")
DELIMITER = rf"(?:{'|'.join(DELIMITER_NAMES)}|(?![\"#\r\n])[\x00-\x7f])"
DELIMITER_SHAPE = ("tab, comma, semicolon, space, whitespace or one ASCII character other than a quote, '#' or a "
                   "line break")

#: The largest counts the options take. Random maps: each is one assignment over every candidate
#: pair, and the count of each is kept (16 bytes a map), so 10^9 is already days of work and 16 GB;
#: 10**23 was a numpy error ("maximum allowed dimension exceeded") after the whole alignment.
MAX_PERMUTATIONS = 10**9
#: Refinement starts: each is one more assignment and refinement, every start's matching is held
#: until the best is kept, and summary.json records each; 10**23 ran for ever.
MAX_REFINE_STARTS = 10**4
#: Worker processes of the dask engine's local cluster, all on this machine (more hardware threads
#: than one machine has); a larger cluster is started apart and named with ``--scheduler``.
MAX_WORKERS = 1024


@dataclass(frozen=True)
class Spec:
    """What an option is: its kind and bounds, its help, its flag and the group it is shown in.

    ``kind`` is one of "real", "int", "choice", "bool", "text". ``optional``: None is allowed
    (and means what the help says). ``flag`` is the command-line option ("--top-k"); a boolean's
    flag may be a pair ("--refine/--no-refine").
    """

    kind: str
    help: str
    flag: str
    group: str
    low: float | None = None
    high: float | None = None
    closed: str = "both"
    choices: tuple[str, ...] = ()
    optional: bool = False
    metavar: str | None = None
    pattern: str | None = None  # text: the form a value must have (re.fullmatch) ...
    shape: str = ""  # ... and how the message describes it ("three columns ...")

    def check(self, name: str, value: Any) -> Any:
        """``value`` in canonical form, or InvalidParameterError naming ``name``."""
        if value is None and self.optional:
            return None
        if self.kind == "real":
            return check_real(value, name, low=self.low, high=self.high, closed=self.closed)
        if self.kind == "int":
            return check_int(value, name, low=None if self.low is None else int(self.low),
                             high=None if self.high is None else int(self.high))
        if self.kind == "choice":
            return check_choice(value, name, self.choices)
        if self.kind == "bool":
            if not isinstance(value, bool):
                raise bad_parameter(name, "True or False", value)
            return value
        if not isinstance(value, str):
            raise bad_parameter(name, self.shape or "a string", value)
        if self.pattern is not None and not re.fullmatch(self.pattern, value):
            raise bad_parameter(name, self.shape, value)
        return value

    @property
    def python_type(self) -> type:
        return {"real": float, "int": int, "choice": str, "bool": bool, "text": str}[self.kind]


def option(default: Any, help: str, *, flag: str, group: str, kind: str, **spec: Any) -> Any:
    """Declare a configuration field: its default and its :class:`Spec`."""
    return field(default=default, metadata={"spec": Spec(kind=kind, help=help, flag=flag, group=group, **spec)})


class _Named(type):
    """Makes a configuration class refuse an unknown option by name, with the list of known ones
    (the dataclass's own constructor would raise a bare TypeError), and options not given by name."""

    def __call__(cls, *args, **options):
        if args:
            raise InvalidParameterError(f"{cls.__name__} takes its options by name, such as "
                                        f"{cls.__name__}({next(iter(specs(cls)))}=...)", param=cls.__name__)
        _refuse_unknown(cls, options)
        return super().__call__(**options)


class _Config(metaclass=_Named):
    """Checks every field against its declaration; shared by the configuration classes."""

    def __post_init__(self) -> None:
        for f in dataclasses.fields(self):
            object.__setattr__(self, f.name, f.metadata["spec"].check(f.name, getattr(self, f.name)))

    def replace(self, **changes: Any):
        """A copy with ``changes`` (checked like the original)."""
        _refuse_unknown(type(self), changes)
        return dataclasses.replace(self, **changes)

    def as_dict(self) -> dict[str, Any]:
        """The options as a plain dict (``summary.json``'s ``parameters``)."""
        return dataclasses.asdict(self)


# --------------------------------------------------------------------------- alignment

READ, CANDIDATES, DIFFUSION, MATCHING, ANALYSIS, LIMITS = (
    "Reading", "Candidates", "Diffusion", "Matching", "Significance", "Limits")


@dataclass(frozen=True, kw_only=True)
class AlignConfig(_Config):
    """The options of an alignment run: what :func:`aligner.align` and ``aligner align`` take.

    Every field is checked when the object is made; build variants with :meth:`replace`.
    """

    delimiter: str | None = option(
        None, "Column delimiter of the input files: tab, comma, semicolon, space, whitespace (runs of spaces and "
        "tabs), or one other ASCII character (not a quote, '#' or a line break). Default: detected from the first "
        "data line.", flag="--delimiter", group=READ, kind="text", optional=True, pattern=DELIMITER,
        shape=DELIMITER_SHAPE)
    header: str = option(
        "auto", "Whether input files start with a header line: auto, yes or no. 'auto' takes the first line as a "
        "header when its fields are column names such as node_a/source/target/pre/post, or when its third field is "
        "text above a number. It applies to every input file.", flag="--header", group=READ,
        kind="choice", choices=HEADERS)
    prior_columns: str | None = option(
        None, "The prior's columns node of A, node of B and score, by 1-based position (1,2,11) or header name "
        "(query,subject,evalue; names imply a header line): for wider tables such as the 12-column tabular output "
        "of sequence searches. A pair on several rows keeps its best row. Default: a table of exactly these "
        "three columns.", flag="--prior-columns", group=READ, kind="text", optional=True, metavar="A,B,SCORE",
        pattern=PRIOR_COLUMNS, shape="three comma-separated columns (node of A, node of B, score), each a 1-based "
        "position or a header name, such as '1,2,11' or 'query,subject,evalue'")
    directed: bool = option(
        False, "Read edge lists as arcs (first column -> second): an arc is conserved only onto an arc pointing "
        "the same way (and, when aligning, the walk follows the arcs and divides by out-degree).", flag="--directed",
        group=READ, kind="bool")
    weighted: bool = option(
        False, "Use the third column of both edge lists as edge weights: the scores add the conserved weight "
        "and weighted EC, and, when aligning, weights enter the product graph as --weight-model says.",
        flag="--weighted", group=READ, kind="bool")
    weight_model: str = option(
        "agreement", "How weights enter the product graph (with --weighted): agreement (each network's weights "
        "become their quantiles within it, and two edges count more the closer their quantiles: from 1/2 to 1; "
        "blind to the weights' scale) or product (w_A * w_B, the walk dividing by strength).",
        flag="--weight-model", group=READ, kind="choice", choices=WEIGHT_MODELS)
    top_k: int | None = option(
        25, "Candidates: every node's top-k prior pairs on each side (their union); None keeps all.",
        flag="--top-k", group=CANDIDATES, kind="int", low=1, optional=True)
    min_score: float = option(
        0.0, "Drop prior pairs scoring below this, after the score-kind transformation: with evalue a "
        "-log10 value (5 keeps E <= 1e-5), with distance 1/(1+d).", flag="--min-score",
        group=CANDIDATES, kind="real")
    score_kind: str = option(
        "similarity", "How to read the prior's scores: similarity (higher is better), evalue (-log10, 0 capped "
        "at 310, rows with E > 1 dropped) or distance (1/(1+d)).", flag="--score-kind", group=CANDIDATES,
        kind="choice", choices=SCORE_KINDS)
    structural: bool = option(
        False, "Add each node's top-k nearest nodes in structural-feature space to the prior's candidates (for a "
        "weak prior); without a prior they are the candidates (with seeds, in place of those grown from the "
        "seeds; the seed pairs are added to them).", flag="--structural-candidates",
        group=CANDIDATES, kind="bool")
    structural_weight: float = option(
        0.5, "With structural candidates and a prior: weight of the structural similarity against the prior's "
        "(both rescaled to a maximum of 1).", flag="--structural-weight", group=CANDIDATES, kind="real", low=0.0)
    seed_weight: float = option(
        1.0, "Total mass of the seed pairs in the diffusion's h, relative to the prior's (1: as much as the "
        "whole prior; 0: seeds are only fixed in the matching).", flag="--seed-weight", group=CANDIDATES,
        kind="real", low=0.0)
    alpha: float = option(
        0.9, "Weight of the wiring against the prior, in [0, 1); 0 returns the prior's own best matching.",
        flag="--alpha", group=DIFFUSION, kind="real", low=0.0, high=1.0, closed="left")
    tol: float = option(
        1e-6, "1-norm residual tolerance of the diffusion (h sums to 1), in (0, 1): the residual starts below 1, "
        "so 1 or more would ask for no work; every score is then within tol / (1 - alpha) of the exact solution.",
        flag="--tol", group=DIFFUSION, kind="real", low=0.0, high=1.0, closed="neither")
    solver: str = option(
        "push", "Diffusion solver: push (Gauss-Southwell) or power (power iteration, the reference).",
        flag="--solver", group=DIFFUSION, kind="choice", choices=SOLVERS)
    normalization: str = option(
        "restricted", "Random walk on the product graph: restricted (divide by the neighbours inside the "
        "candidates) or product (divide by deg_A * deg_B).", flag="--normalization", group=DIFFUSION,
        kind="choice", choices=NORMALIZATIONS)
    rounding: str = option(
        "auto", "Linear-assignment solver: auto, sparse (compiled shortest augmenting paths), dense (lapjv) or "
        "scipy.", flag="--rounding", group=MATCHING, kind="choice", choices=ROUNDINGS)
    refine: bool = option(
        True, "Refine the rounded matching for conserved edges (Frank-Wolfe steps, then a local search); off at "
        "alpha 0, which asks for the prior's own matching.", flag="--refine/--no-refine", group=MATCHING,
        kind="bool")
    beta: float = option(
        0.1, "Refinement: weight of a pair's normalised diffusion score against one conserved edge.",
        flag="--beta", group=MATCHING, kind="real", low=0.0)
    refine_starts: int | None = option(
        None, "Refinement: how many starts to refine from, the best result kept (the diffusion's matching, "
        "then the prior's, then matchings of randomly perturbed scores, seeded). Default: as many as fit in "
        "1,000,000 candidate pairs refined in all, at most 8 (8 up to 125,000 candidates, 1 from 1,000,000). "
        "At most 10^4.", flag="--refine-starts", group=MATCHING, kind="int", low=1, high=MAX_REFINE_STARTS,
        optional=True)
    refine_iter: int = option(
        30, "Refinement: cap on iterations (each one sparse product and one assignment).", flag="--refine-iter",
        group=MATCHING, kind="int", low=0)
    permutations: int = option(
        0, "Random one-to-one maps over the candidate pairs for the empirical p-value of the conserved edges "
        "(0: the closed-form null only; at most 10^9).", flag="--permutations", group=ANALYSIS, kind="int", low=0,
        high=MAX_PERMUTATIONS)
    permutation_seed: int = option(
        0, "Seed of the random maps of --permutations.", flag="--permutation-seed", group=ANALYSIS, kind="int",
        low=0)
    max_memory: float | None = option(
        None, "Memory budget for the product graph, in GiB. Default: half the machine's memory.",
        flag="--max-memory", group=LIMITS, kind="real", low=0.0, closed="neither", optional=True)


# --------------------------------------------------------------------------- queries and labels

@dataclass(frozen=True, kw_only=True)
class QueryConfig(_Config):
    """The options of a counterpart query that an alignment does not have."""

    side: str = option("a", "a: the asked nodes are in A and their counterparts in B; b: the reverse.",
                       flag="--side", group="Query", kind="choice", choices=SIDES)
    top: int | None = option(10, "Counterparts listed per node (None: all its candidates).", flag="--top",
                             group="Query", kind="int", low=1, optional=True)
    tol: float = option(1e-6, "Push tolerance relative to the query's mass (1), in (0, 1): each score is certified "
                        "within tol * support / (1 - alpha) (tol * deg_A * deg_B / (1 - alpha) with "
                        "--normalization product).", flag="--tol", group="Query", kind="real", low=0.0, high=1.0,
                        closed="neither")
    max_pushes: int | None = option(None, "Cap on the pushes of one query (None: 10^8).", flag="--max-pushes",
                                    group="Query", kind="int", low=0, optional=True)
    answer: bool = option(
        True, "Also give the counterpart the global assignment would choose, solved on a region around the "
        "node, with whether it is certified.", flag="--answer/--no-answer", group="Query", kind="bool")
    max_region_pairs: int = option(
        6_000, "Cap on the candidate pairs of an answer's region: it grows a layer at a time until the answer "
        "is certified or the next layer would pass the cap. The first region (the node and the strongest "
        "claimants of its candidates) is solved whatever its size.", flag="--max-region-pairs", group="Query",
        kind="int", low=1)


@dataclass(frozen=True, kw_only=True)
class LabelConfig(_Config):
    """The options of the label-similarity prior (``aligner prior-from-labels``)."""

    top_k: int = option(10, "Keep each node's top-k most similar labels on each side (their union).",
                        flag="--top-k", group="Labels", kind="int", low=1)
    min_similarity: float = option(0.1, "Drop pairs whose cosine similarity is below this, in (0, 1].",
                                   flag="--min-similarity", group="Labels", kind="real", low=0.0, high=1.0,
                                   closed="right")
    label_columns: str | None = option(
        None, "The label files are tables (CSV/TSV, identifier in the first column) and these columns, by header "
        "name or 1-based position (name,city,street), are joined by a space into each node's label text. "
        "Default: label files of identifier, tab, label.", flag="--label-columns", group="Labels", kind="text",
        optional=True, metavar="COLUMNS", pattern=LABEL_COLUMNS, shape="comma-separated columns, each a header "
        "name or a 1-based position, such as 'name,city,street'")


@dataclass(frozen=True, kw_only=True)
class ClassConfig(_Config):
    """The options of the class prior (``aligner prior-from-classes``)."""

    score: float = option(1.0, "The prior score of every pair of a node of A and a node of B sharing a class.",
                          flag="--score", group="Classes", kind="real", low=0.0, closed="neither")
    class_separator: str | None = option(
        None, "Split each class field at this text, for a node of several classes on one row (such as ';' or "
        "'|'). Several rows of one node always add classes.", flag="--class-separator", group="Classes",
        kind="text", optional=True, metavar="TEXT")


@dataclass(frozen=True, kw_only=True)
class EngineConfig(_Config):
    """Where an alignment runs (``aligner align --engine``); not part of the alignment's options,
    since every engine computes the same alignment."""

    engine: str = option(
        "local", "Where to run: local (this process) or dask (reading of input files, candidates, product graph, "
        "diffusion and matching on a dask cluster; needs the dask extra: pip install 'aligner[dask]').",
        flag="--engine", group="Engine", kind="choice", choices=ENGINES)
    scheduler: str | None = option(
        None, "With --engine dask: address of a running dask scheduler (such as tcp://host:8786). Default: start "
        "a local cluster of --workers processes.", flag="--scheduler", group="Engine", kind="text", optional=True,
        # an empty address (an unset shell variable in --scheduler "$ADDR") is refused, not taken for no address
        pattern=r".*\S.*", shape="the address of a running dask scheduler, such as tcp://host:8786")
    workers: int | None = option(
        None, "With --engine dask and no --scheduler: worker processes of the local cluster, all on this machine, "
        "at most 1024 (for more, start a dask cluster and give its --scheduler). Default: 2.", flag="--workers",
        group="Engine", kind="int", low=1, high=MAX_WORKERS, optional=True)
    partitions: int | None = option(
        None, "With --engine dask: blocks of nodes of A (default: the number of workers).", flag="--partitions",
        group="Engine", kind="int", low=1, optional=True)
    reading: str = option(
        "auto", "With --engine dask: where the input files are read. auto: by the dask workers when both "
        "networks and the prior are files (the workers must see the same paths); client: here, then shipped to "
        "the workers.", flag="--reading", group="Engine", kind="choice", choices=DASK_READING)


@dataclass(frozen=True, kw_only=True)
class OutputConfig(_Config):
    """What ``aligner align`` writes besides its TSV tables and summary.json."""

    parquet: bool = option(
        False, "Also write the alignment, conserved-edge and transferred-edge tables as Parquet files (typed "
        "columns, for dataframe and columnar tools); the TSV files stay, and the other commands read them.",
        flag="--parquet", group="Output", kind="bool")
    state: bool = option(
        True, "Keep the run state (state.npz: what aligner update starts from; about 16 bytes per candidate "
        "pair).", flag="--state/--no-state", group="Output", kind="bool")


@dataclass(frozen=True, kw_only=True)
class TransferConfig(_Config):
    """Which transferred edges ``aligner transfer`` shows and writes (the file of the run lists them all)."""

    min_support: float = option(
        0.0, "Keep the transferred edges whose support is at least this (support = confidence_1 * confidence_2 "
        "* (1 + conserved triangles)).", flag="--min-support", group="Transfer", kind="real", low=0.0)
    top: int | None = option(
        20, "Keep the first N of them, best first (None: all).", flag="--top", group="Transfer", kind="int",
        low=1, optional=True)


# --------------------------------------------------------------------------- helpers

def specs(cls: type) -> dict[str, tuple[Any, Spec]]:
    """``{name: (default, spec)}`` of a configuration class, in declaration order."""
    return {f.name: (f.default, f.metadata["spec"]) for f in dataclasses.fields(cls)}


def _refuse_unknown(cls: type, options: Mapping[str, Any]) -> None:
    unknown = sorted(set(options) - set(specs(cls)))
    if unknown:
        raise InvalidParameterError(f"unknown option {unknown[0]!r}; the options are {', '.join(specs(cls))}",
                                    param=unknown[0])


def from_options(cls: type, config: Any = None, options: Mapping[str, Any] | None = None):
    """A ``cls`` from an optional base ``config`` and keyword ``options`` that override it.

    Unknown keywords are refused with the list of known ones.
    """
    options = dict(options or {})
    _refuse_unknown(cls, options)
    if config is None:
        return cls(**options)
    if not isinstance(config, cls):
        raise InvalidParameterError(f"config must be a {cls.__name__}; got {type(config).__name__}", param="config")
    return config.replace(**options) if options else config


def with_options(*classes: type, names: Iterable[str] | None = None):
    """Decorator: show the options of ``classes`` as keyword-only parameters of a function that takes
    ``**options``, with their declared defaults, in its ``inspect.signature`` (help(), IDEs).

    The function itself still receives them through ``**options`` and checks them with
    :func:`from_options`; nothing is retyped.
    """
    import inspect

    def wrap(func):
        sig = inspect.signature(func)
        params = [p for p in sig.parameters.values() if p.kind is not inspect.Parameter.VAR_KEYWORD]
        taken = {p.name for p in params}
        for cls in classes:
            for name, (default, spec) in specs(cls).items():
                if (names is None or name in names) and name not in taken:
                    annotation = spec.python_type | None if spec.optional else spec.python_type
                    params.append(inspect.Parameter(name, inspect.Parameter.KEYWORD_ONLY, default=default,
                                                    annotation=annotation))
                    taken.add(name)
        func.__signature__ = sig.replace(parameters=params)
        return func

    return wrap


def describe(cls: type, names: Iterable[str] | None = None, indent: str = "    ") -> str:
    """numpydoc "Parameters" entries for options of ``cls`` (all, or ``names``), from the declarations."""
    table = specs(cls)
    lines = []
    for name in table if names is None else names:
        default, spec = table[name]
        kind = "{" + ", ".join(repr(c) for c in spec.choices) + "}" if spec.kind == "choice" else \
            spec.python_type.__name__
        lines.append(f"{indent}{name} : {kind}{', optional' if spec.optional else ''}, default {default!r}")
        lines.append(f"{indent}    {spec.help} (command line: ``{spec.flag}``)")
    return "\n".join(lines)
