"""The stages of an alignment, as functions over explicit data, and ``align`` composed of them.

Data flows one way::

    read_inputs -> find_candidates -> prepare (product graph, h, column scale) = Problem
    Problem -> solve (diffusion) -> match (rounding) -> improve (refinement)
            -> evaluate (scores, tables, significance) -> summarize (summary.json)

A :class:`Problem` (the networks, the candidate pairs, the product graph, the prior vector and
the options) is what :func:`align`, :func:`aligner.sweep` and :func:`aligner.query` start
from; each later stage is a plain function of it and of the stage before, so any of them can
be rerun on its own (the sweep reruns ``solve`` onwards at each alpha). Seeds are data here,
not branches: pairs added to the candidates, mass added to h, pairs fixed in the matching.
"""

from __future__ import annotations

import dataclasses
import os
import time
from contextlib import contextmanager, nullcontext
from dataclasses import dataclass
from typing import Any, Callable

import numpy as np
import numpy.typing as npt
import pandas as pd

from aligner import __version__
from aligner.checks import bad_parameter, check_callable, warn
from aligner.config import AlignConfig, describe, from_options, specs, with_options
from aligner.core.arrays import unique
from aligner.core.candidates import CandidateSet, build_candidates
from aligner.core.ambiguity import Ambiguity, find_ambiguity
from aligner.core.confidence import matching_confidence
from aligner.core.diffusion import DiffusionResult, column_scale, diffuse, prior_vector
from aligner.core.network import Network
from aligner.core.product import ProductGraph, build_product, estimate_product_edges
from aligner.core.refine import RefineResult, matched_counts, perturbed_scores, refine_from_starts
from aligner.core.rounding import Matching, round_matching
from aligner.core.scoring import (Scores, conserved_image, conserved_per_node, image_after_moves, partner_map,
                                  score_matching, share_correct)
from aligner.core.significance import significance
from aligner.core.transfer import DIRECTIONS, transfer_counts, transferred_edges
from aligner.core.weights import AGREEMENT_FLOOR, walk_degree, walk_weights
from aligner.errors import InvalidParameterError, MemoryBudgetError, NoCandidatesError
from aligner.io.inputs import as_alignment, as_network, as_pairs, as_prior, known_pairs
from aligner.io.readers import release_unused_memory
from aligner.core.identifiers import PairTable
from aligner.core.prior import PriorTable
from aligner.priors.seeds import (SeedExpansion, SeedTable, add_seed_pairs, as_seeds, expand_from_seeds,
                                  round_with_fixed, seed_index, seed_summary, seed_vector)
from aligner.priors.structural import DEFAULT_K, FEATURE_NAMES, combine_priors, structural_candidates

__all__ = ["STAGES", "Inputs", "Problem", "Improvement", "Evaluation", "AlignmentResult", "read_inputs",
           "check_networks", "finish_inputs", "find_candidates", "check_some_candidate", "with_seed_pairs",
           "prepare", "with_product_graph", "solve", "match", "counted_weights", "improve", "evaluate", "transfer",
           "summarize", "align", "score", "TRANSFER_COLUMNS"]

#: the stages of a run, in order, as named to the ``progress`` callback of :func:`align`
STAGES = ("read", "candidates", "product", "diffusion", "rounding", "refine", "scoring", "writing")
#: bytes per stored product-graph entry while building and solving (index + share of pointers,
#: queue and float work arrays), used by the memory check
BYTES_PER_PRODUCT_ENTRY = 4


class Clock:
    """Stage timings, peak resident memory per stage, and the ``progress`` callback told as
    each stage starts.

    ``memory[stage]`` is the peak resident memory in GiB: of the stage alone when the peak can
    be reset (Linux, with :attr:`reset_peaks` set: the command line does, within
    :meth:`owning_process`, since the process is its own), otherwise the process's peak so far
    at the end of the stage.
    """

    #: reset the process's resident-memory high-water mark at each stage start (Linux only);
    #: off by default because it also resets what ``getrusage`` reports to the host program
    reset_peaks: bool = False

    def __init__(self, progress: Callable[[str], None] | None = None):
        self.progress = check_callable(progress, "progress") or (lambda stage: None)
        self.timings: dict[str, float] = {}
        self.memory: dict[str, float] = {}
        self.per_stage = False

    @contextmanager
    def stage(self, name: str):
        self.progress(name)
        if self.reset_peaks:
            self.per_stage = _reset_peak_memory()
        t0 = time.perf_counter()
        yield
        self.timings[name] = round(self.timings.get(name, 0.0) + time.perf_counter() - t0, 4)
        self.memory[name] = round(max(self.memory.get(name, 0.0), _peak_memory() / 2**30), 3)

    @classmethod
    @contextmanager
    def owning_process(cls):
        """Within this block, clocks reset the memory high-water mark per stage (for a program that
        owns its process, such as the command line); the setting is restored afterwards."""
        before, cls.reset_peaks = cls.reset_peaks, True
        try:
            yield
        finally:
            cls.reset_peaks = before

    def memory_report(self) -> dict:
        """The ``memory`` section of ``summary.json``."""
        return {"peak_gib": dict(self.memory), "per_stage": self.per_stage}


def _reset_peak_memory() -> bool:
    """Reset this process's resident-memory high-water mark (Linux); True when it was reset."""
    try:
        with open("/proc/self/clear_refs", "w") as fh:
            fh.write("5")
        return True
    except OSError:
        return False


def _peak_memory() -> int:
    """This process's peak resident memory in bytes (since the last reset, on Linux)."""
    try:
        with open("/proc/self/status") as fh:
            for line in fh:
                if line.startswith("VmHWM:"):
                    return int(line.split()[1]) * 1024
    except OSError:
        pass
    import resource
    import sys

    peak = resource.getrusage(resource.RUSAGE_SELF).ru_maxrss
    return peak if sys.platform == "darwin" else peak * 1024


# --------------------------------------------------------------------------- reading

@dataclass(frozen=True, eq=False)
class Inputs:
    """The inputs of a run in canonical form; ``prior``, ``seeds`` and ``truth`` may be None."""

    network_a: Network
    network_b: Network
    prior: PriorTable | None
    seeds: SeedTable | None
    truth: PairTable | None


def _warn_unknown(table, what: str) -> None:
    if table is not None and table.n_unknown:
        warn(f"{table.source}: {table.n_unknown} of {table.n_rows} {what} rows name a node missing from its "
             f"network and were skipped (for example {', '.join(table.unknown_examples)})")


def _check_weighted(net_a: Network, net_b: Network, weighted: bool, model: str = "agreement",
                    directed: bool = False) -> None:
    """Refuse weighted mode when a network has no weight column, and the ``product`` weight model
    when the product of the two networks' largest node strengths passes the largest number (the
    walk divides each entry w_A w_B by such a product: inf / inf would be NaN)."""
    for net, side in ((net_a, "A"), (net_b, "B")):
        if weighted and net.weights is None:
            lacks = ("edges without a 'weight' attribute (every edge needs one)" if net.source.startswith("<networkx")
                     else "no third column of weights")
            raise InvalidParameterError(f"weighted needs edge weights, but network {side} ({net.source}) has {lacks}",
                                        param="weighted")
    if weighted and model == "product" and net_a.n and net_b.n:
        with np.errstate(over="ignore"):
            top = float(np.max(net_a.strength(directed, True))) * float(np.max(net_b.strength(directed, True)))
        if not np.isfinite(top):
            raise InvalidParameterError("weight model product multiplies the edge weights of A and B, and with "
                                        "these weights the products pass the largest number (about 1.8e308); give "
                                        "smaller weights or use the agreement weight model", param="weight_model")


def read_inputs(network_a, network_b, prior=None, *, seeds=None, truth=None,
                config: AlignConfig | None = None) -> Inputs:
    """Read and check every input (paths, DataFrames, graphs or tables already read).

    Warns about prior and truth rows naming unknown nodes; raises NoCandidatesError when the
    prior has no usable pair left.
    """
    cfg = config or AlignConfig()
    read = {"delimiter": cfg.delimiter, "header": cfg.header}
    net_a = as_network(network_a, name="network_a", directed=cfg.directed, **read)
    release_unused_memory()  # between tables, so the read stage's peak is one table's
    net_b = as_network(network_b, name="network_b", directed=cfg.directed, **read)
    check_networks(net_a, net_b, cfg)
    prior_t = None if prior is None else as_prior(prior, net_a, net_b, cfg.score_kind, cfg.delimiter, cfg.header,
                                                  cfg.prior_columns)
    return finish_inputs(net_a, net_b, prior_t, seeds=seeds, truth=truth, config=cfg)


def check_networks(net_a: Network, net_b: Network, cfg: AlignConfig) -> None:
    """Refuse a network without nodes, and weighted mode on a network without weights."""
    for net, key in ((net_a, "network_a"), (net_b, "network_b")):
        if net.n == 0:  # an empty graph or frame (an empty file is refused by the reader)
            raise InvalidParameterError(f"{key} has no nodes ({net.source}): there is nothing to align; check "
                                        "that the right graph or table was given", param=key)
    _check_weighted(net_a, net_b, cfg.weighted, cfg.weight_model, cfg.directed)


def finish_inputs(net_a: Network, net_b: Network, prior_t: PriorTable | None, *, seeds=None, truth=None,
                  config: AlignConfig) -> Inputs:
    """The inputs of a run from its networks and prior table (read here or elsewhere, such as on a
    cluster): reads the seeds and the truth table, warns about rows naming unknown nodes, and
    raises NoCandidatesError when the prior has no usable pair left."""
    cfg = config
    read = {"delimiter": cfg.delimiter, "header": cfg.header}
    seeds_t = None if seeds is None else as_seeds(seeds, net_a, net_b, **read)
    truth_t = None if truth is None else known_pairs(
        as_pairs(truth, net_a, net_b, "truth table", cfg.delimiter, cfg.header), "truth table")
    release_unused_memory()  # the readers' buffers, no longer needed
    _warn_unknown(prior_t, "prior")
    _warn_unknown(truth_t, "truth")
    if prior_t is not None and prior_t.n_pairs == 0:
        hint = ""
        if prior_t.n_unknown == prior_t.n_rows and prior_t.n_rows:
            hint = (" None of its rows names a node of network A in the first column and a node of network B "
                    "in the second: are the columns swapped, or are these the wrong networks?")
        raise NoCandidatesError(f"{prior_t.source}: no usable prior pair is left.{hint}")
    return Inputs(net_a, net_b, prior_t, seeds_t, truth_t)


# --------------------------------------------------------------------------- candidates

@dataclass(frozen=True, eq=False)
class Candidates:
    """The candidate pairs and where they came from."""

    candidates: CandidateSet
    structural: dict | None = None
    expansion: SeedExpansion | None = None
    #: the candidates there only as seed pairs (indices; None without seeds)
    seed_added: np.ndarray | None = None


def _check_combined_total(scores: np.ndarray, n_pairs: int, weight: float) -> None:
    """Refuse a structural weight so large that the combined prior's scores no longer sum to a finite
    number: the diffusion's h (the prior over its sum) would be all zero, every score 0 and the matching
    arbitrary. Each rescaled score is at most 1, so a weight up to the limit stated keeps the sum finite."""
    limit = np.finfo(np.float64).max / (4.0 * max(n_pairs, 1))
    if weight <= limit and np.isfinite(scores.sum()):
        return
    raise bad_parameter("structural_weight", f"a number in [0, {limit:.3g}] for these candidates (the combined "
                        "prior's scores must sum to a finite number)", weight)


def _structural(inputs: Inputs, cfg: AlignConfig) -> Candidates:
    net_a, net_b, prior_t = inputs.network_a, inputs.network_b, inputs.prior
    k = cfg.top_k or DEFAULT_K
    pairs, scores = structural_candidates(net_a, net_b, k=k)
    info = {"pairs": int(len(pairs)), "k": k, "features": list(FEATURE_NAMES),
            "weight": None if prior_t is None else cfg.structural_weight}
    if prior_t is not None:
        ok = prior_t.scores >= cfg.min_score
        pairs, scores = combine_priors(prior_t.pairs[ok], prior_t.scores[ok], pairs, scores, net_b.n,
                                       weight=cfg.structural_weight)
        _check_combined_total(scores, len(pairs), cfg.structural_weight)
    cand = build_candidates(pairs, scores, net_a.n, net_b.n, top_k=cfg.top_k)
    if cand.m == 0:
        raise NoCandidatesError("no structural candidate pair: one of the networks has no node with an edge")
    return Candidates(cand, structural=info)


def find_candidates(inputs: Inputs, config: AlignConfig) -> Candidates:
    """Candidate pairs from the prior, from structure (no prior and no seeds, or
    ``config.structural``), or grown from the seeds (seeds only); seed pairs always included."""
    cfg, prior_t = config, inputs.prior
    if cfg.structural or (prior_t is None and inputs.seeds is None):
        found = _structural(inputs, cfg)
    elif prior_t is None:
        expansion = expand_from_seeds(inputs.network_a, inputs.network_b, inputs.seeds, top_k=cfg.top_k,
                                      directed=cfg.directed)
        found = Candidates(expansion.candidates, expansion=expansion)
    else:
        cand = build_candidates(prior_t.pairs, prior_t.scores, inputs.network_a.n, inputs.network_b.n,
                                min_score=cfg.min_score, top_k=cfg.top_k)
        check_some_candidate(cand, prior_t, cfg, float(prior_t.scores.max()))
        found = Candidates(cand)
    return with_seed_pairs(found, inputs)


def check_some_candidate(cand: CandidateSet, prior_t: PriorTable, cfg: AlignConfig, best: float) -> None:
    """Refuse a prior none of whose pairs reaches the minimum score (``best``: its highest score)."""
    if cand.m == 0:
        raise NoCandidatesError(f"{prior_t.source}: no prior pair scores at least the minimum score "
                                f"{cfg.min_score:g}; lower --min-score (the highest score is {best:g}).")


def with_seed_pairs(found: Candidates, inputs: Inputs) -> Candidates:
    """The candidates with every seed pair among them."""
    if inputs.seeds is None:
        return found
    cand, added = add_seed_pairs(found.candidates, inputs.seeds, added=True)
    return dataclasses.replace(found, candidates=cand, seed_added=added)


# --------------------------------------------------------------------------- the prepared problem

def _memory_budget(max_memory_gib: float | None) -> float:
    if max_memory_gib is not None:
        return max_memory_gib * 2**30
    try:
        total = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES")
    except (ValueError, OSError, AttributeError):  # pragma: no cover
        total = 8 * 2**30
    return 0.5 * total


def _gib(nbytes: float) -> str:
    """A byte count in GiB, with enough digits to be non-zero."""
    g = nbytes / 2**30
    return f"{g:.2f} GiB" if g >= 0.01 or g == 0 else f"{g:.2g} GiB"


def check_memory(inputs: Inputs, cand: CandidateSet, cfg: AlignConfig) -> int:
    """The product graph's estimated stored entries; MemoryBudgetError when over the budget."""
    a_ip, a_ix, _ = inputs.network_a.walk_adjacency(cfg.directed, cfg.weighted)
    b_ip, b_ix, _ = inputs.network_b.walk_adjacency(cfg.directed, cfg.weighted)
    estimate = estimate_product_edges(a_ip, a_ix, b_ip, b_ix, cand)
    budget = _memory_budget(cfg.max_memory)
    need = estimate * BYTES_PER_PRODUCT_ENTRY + cand.m * 64
    if need > budget:
        raise MemoryBudgetError(
            f"the product graph over {cand.m:,} candidate pairs may have up to {estimate:,} stored entries "
            f"(about {_gib(need)}), over the memory budget of {_gib(budget)}; lower "
            "--top-k, raise --min-score, or raise --max-memory (in GiB)")
    return estimate


def _build_product(inputs: Inputs, cand: CandidateSet, cfg: AlignConfig) -> ProductGraph:
    """The restricted product graph, its entries weighted as ``cfg.weight_model`` says when weighted."""
    if not cfg.weighted:
        a_ip, a_ix, _ = inputs.network_a.walk_adjacency(cfg.directed)
        b_ip, b_ix, _ = inputs.network_b.walk_adjacency(cfg.directed)
        return build_product(a_ip, a_ix, b_ip, b_ix, cand, directed=cfg.directed)
    a_ip, a_ix, a_w = walk_weights(inputs.network_a, cfg.directed, cfg.weight_model)
    b_ip, b_ix, b_w = walk_weights(inputs.network_b, cfg.directed, cfg.weight_model)
    return build_product(a_ip, a_ix, b_ip, b_ix, cand, a_weights=a_w, b_weights=b_w, directed=cfg.directed,
                         agreement=AGREEMENT_FLOOR if cfg.weight_model == "agreement" else None)


@dataclass(frozen=True, eq=False)
class Problem:
    """A prepared alignment problem: what every solve starts from.

    Attributes
    ----------
    config : AlignConfig
    inputs : Inputs
        The networks, prior, seeds and truth in canonical form; the prior keeps its counts but
        not its rows, which :attr:`candidates` hold (see ``PriorTable.without_rows``).
    candidates : CandidateSet
        The candidate pairs L (seed pairs included), with their prior scores.
    h : ndarray of float64, shape (m,)
        The diffusion's source vector (the prior normalised to sum 1, plus seed mass).
    seed_index : ndarray of int64 or None
        Positions of the seed pairs in ``candidates``: fixed in the matching.
    product : ProductGraph or None
        The product graph restricted to L (None when prepared without it, as queries are).
    scale : ndarray of float64 or None
        The column scale of the random walk (see :func:`aligner.core.diffusion.column_scale`).
    origin : Candidates
        Where the candidates came from (structural features, seed expansion, the prior).
    product_estimate : int
        The memory check's bound on the product graph's stored entries.
    """

    config: AlignConfig
    inputs: Inputs
    candidates: CandidateSet
    h: npt.NDArray[np.float64]
    seed_index: npt.NDArray[np.int64] | None
    product: ProductGraph | None
    scale: npt.NDArray[np.float64] | None
    origin: Candidates
    product_estimate: int

    @property
    def network_a(self) -> Network:
        return self.inputs.network_a

    @property
    def network_b(self) -> Network:
        return self.inputs.network_b

    def with_options(self, **options: Any) -> "Problem":
        """The same problem under other solve options (alpha, tol, solver, rounding, refinement,
        permutations); options that would change the candidates or the product graph are refused."""
        fixed = {"delimiter", "header", "prior_columns", "directed", "weighted", "weight_model", "top_k", "min_score",
                 "score_kind", "structural", "structural_weight", "seed_weight", "normalization", "max_memory"}
        changed = sorted(k for k in fixed & set(options) if options[k] != getattr(self.config, k))
        if changed:
            raise InvalidParameterError(f"{changed[0]} changes the prepared candidates or product graph; prepare "
                                        "a new problem instead", param=changed[0])
        return dataclasses.replace(self, config=self.config.replace(**options))


def diffusion_source(cand: CandidateSet, seeds, cfg: AlignConfig):
    """The seed pairs' positions among the candidates (None without seeds) and the diffusion's h:
    the prior normalised to sum 1, plus ``seed_weight`` spread over the seed pairs."""
    seed_idx = None if seeds is None else seed_index(cand, seeds)
    h = prior_vector(cand.prior) if seed_idx is None else seed_vector(cand.prior, seed_idx, cfg.seed_weight)
    return seed_idx, h


@with_options(AlignConfig)
def prepare(network_a, network_b, prior=None, *, seeds=None, truth=None, config: AlignConfig | None = None,
            with_product: bool = True, clock: Clock | None = None, **options: Any) -> Problem:
    """Read the inputs, choose the candidates and build the product graph: a :class:`Problem`.

    ``with_product=False`` skips the product graph (local queries discover it on demand).
    Other arguments as for :func:`align`.
    """
    cfg = from_options(AlignConfig, config, options)
    clock = clock or Clock()
    with clock.stage("read"):
        inputs = read_inputs(network_a, network_b, prior, seeds=seeds, truth=truth, config=cfg)
    with clock.stage("candidates"):
        found = find_candidates(inputs, cfg)
    if inputs.prior is not None:  # the candidates hold what the later stages need of it
        inputs = dataclasses.replace(inputs, prior=inputs.prior.without_rows())
    cand = found.candidates
    seed_idx, h = diffusion_source(cand, inputs.seeds, cfg)
    problem = Problem(cfg, inputs, cand, h, seed_idx, None, None, found, 0)
    return with_product_graph(problem, clock) if with_product else problem


def with_product_graph(problem: Problem, clock: Clock | None = None, *,
                       build: Callable[[], ProductGraph] | None = None) -> Problem:
    """The problem with its product graph and the walk's column scale, after the memory check.

    ``build`` (an update's patch of the previous run's graph) makes the product graph in place of
    :func:`aligner.core.product.build_product`; it must give the same graph."""
    cfg, inputs, cand = problem.config, problem.inputs, problem.candidates
    estimate = check_memory(inputs, cand, cfg)
    with (clock or Clock()).stage("product"):
        product = build() if build is not None else _build_product(inputs, cand, cfg)
        scale = column_scale(product, cfg.normalization, pairs=cand.pairs,
                             deg_a=walk_degree(inputs.network_a, cfg.directed, cfg.weighted, cfg.weight_model),
                             deg_b=walk_degree(inputs.network_b, cfg.directed, cfg.weighted, cfg.weight_model))
    return dataclasses.replace(problem, product=product, scale=scale, product_estimate=estimate)


# --------------------------------------------------------------------------- solve, match, improve

def solve(problem: Problem, *, x0: npt.ArrayLike | None = None) -> DiffusionResult:
    """The diffusion x = alpha P x + (1 - alpha) h on the problem's product graph, to ``config.tol``.

    ``x0`` warm-starts the solver (the sweep passes the solution at the previous alpha).
    """
    if problem.product is None:
        raise InvalidParameterError("this problem was prepared without its product graph (with_product=False); "
                                    "prepare it with the product graph to solve it", param="with_product")
    cfg = problem.config
    return diffuse(problem.product, problem.h, problem.scale, alpha=cfg.alpha, tol=cfg.tol, solver=cfg.solver,
                   x0=x0)


def match(problem: Problem, diffusion: DiffusionResult) -> Matching:
    """The maximum-weight one-to-one matching of the candidates under the diffusion scores,
    with the seed pairs fixed (their nodes out of the competition)."""
    return _round(problem, diffusion.x)


@dataclass(frozen=True, eq=False)
class Improvement:
    """The matching after refinement, the rounded one it started from, and the refinement's record.

    ``refined`` is None when refinement was off (``config.refine`` false or alpha 0) or its
    result was not used (``note`` says why).
    """

    matching: Matching
    rounded: Matching
    refined: RefineResult | None
    note: str | None = None

    @property
    def ran(self) -> bool:
        return self.refined is not None or self.note is not None


#: Refinement starts when ``refine_starts`` is not set: at most AUTO_STARTS, and no more than fit
#: in START_BUDGET candidate pairs refined in all (each start costs about one refinement; see
#: docs/method.md, "Several starts"): 8 up to 125,000 candidates, one from 1,000,000.
AUTO_STARTS, START_BUDGET = 8, 1_000_000


def refine_starts(problem: Problem) -> int:
    """How many starts the refinement runs from (``config.refine_starts``, or the size rule)."""
    cfg = problem.config
    if cfg.refine_starts is not None:
        return cfg.refine_starts
    return int(min(AUTO_STARTS, max(1, START_BUDGET // max(problem.candidates.m, 1))))


def _round(problem: Problem, scores: np.ndarray) -> Matching:
    """The maximum-weight matching of ``scores``, seed pairs fixed."""
    if problem.seed_index is None:
        return round_matching(problem.candidates, scores, method=problem.config.rounding)
    return round_with_fixed(problem.candidates, scores, problem.seed_index, method=problem.config.rounding)


def _starts(problem: Problem, diffusion: DiffusionResult, rounded: Matching, count: int) -> list:
    """The refinement's starts: the rounded diffusion scores, the prior's matching, perturbed scores."""
    starts = [("diffusion", rounded.index)]
    if count > 1:
        starts.append(("prior", _round(problem, problem.candidates.prior).index))
    for k, v in enumerate(perturbed_scores(diffusion.x, max(count - 2, 0)), start=1):
        starts.append((f"perturbed {k}", _round(problem, v).index))
    return starts


def counted_weights(cfg: AlignConfig, prod: ProductGraph):
    """The entry weights the refinement's objective (and the confidence, in its units) counts
    conserved edge pairs by: a weighted run under the agreement model counts each pair (each arc
    pair, when directed: S + S^T keeps each arc's weight) by its agreement, as the walk does;
    otherwise None, each counts 1."""
    return prod.weights if cfg.weighted and cfg.weight_model == "agreement" else None


def improve(problem: Problem, diffusion: DiffusionResult, rounded: Matching) -> Improvement:
    """Refine the rounded matching for conserved edges (see :func:`aligner.core.refine.refine_matching`),
    from :func:`refine_starts` starts, the best kept (:func:`aligner.core.refine.refine_from_starts`).

    Off when ``config.refine`` is false or alpha is 0 (which asks for the prior's own matching).
    A refined matching that moves a seed pair is not used; when every start's does, the starts
    are refined again with the seed pairs held (:func:`aligner.core.refine.refine_from_starts`).
    """
    cfg = problem.config
    if not cfg.refine or cfg.alpha == 0:
        return Improvement(rounded, rounded, None)
    prod = problem.product.symmetrised()  # S + S^T when directed (built once), else S
    starts = _starts(problem, diffusion, rounded, refine_starts(problem))
    refined = refine_from_starts(prod, problem.candidates, diffusion.x, starts, keep=problem.seed_index,
                                 beta=cfg.beta, max_iter=cfg.refine_iter, method=cfg.rounding,
                                 edge_weights=counted_weights(cfg, prod))
    if refined is None:
        return Improvement(rounded, rounded, None, "refinement moved a seed pair, so its matching was not used")
    final = Matching(index=refined.index, method=rounded.method, weight=float(diffusion.x[refined.index].sum()),
                     seconds=rounded.seconds)
    return Improvement(final, rounded, refined)


# --------------------------------------------------------------------------- evaluate

@dataclass(frozen=True, eq=False)
class Evaluation:
    """Scores of the final matching (and of the rounded one when refinement changed it), the
    tables written to the output files, and the significance and seed figures."""

    scores: Scores
    scores_before: Scores | None
    pairs: pd.DataFrame
    conserved_edges: pd.DataFrame
    significance: dict
    seeds: dict | None
    #: rows per direction of the transferred edges (``{"a_to_b": ..., "b_to_a": ...}``)
    transferred: dict | None = None
    #: for each scored edge of A, the row of B's scored edges it is carried onto, or -1
    #: (:func:`aligner.core.scoring.conserved_image`): kept for the transferred edges
    image: np.ndarray | None = None
    #: interchangeable nodes of the final matching (:func:`aligner.core.ambiguity.find_ambiguity`)
    ambiguity: Ambiguity | None = None


def _score(inputs: Inputs, matched: np.ndarray, cfg: AlignConfig, near: tuple | None = None
           ) -> tuple[Scores, np.ndarray, np.ndarray]:
    """Scores, the conserved-edge mask and the image rows of A's scored edges under ``matched``.

    ``near``: (image, matched) of another matching already scored, from which the image is
    carried over where no end's partner differs (:func:`aligner.core.scoring.image_after_moves`)."""
    ea, wa = inputs.network_a.scored_edges(cfg.directed)
    eb, wb = inputs.network_b.scored_edges(cfg.directed)
    truth = None if inputs.truth is None else inputs.truth.pairs
    n1, n2 = inputs.network_a.n, inputs.network_b.n
    f = partner_map(matched, n1)
    image = (conserved_image(ea, eb, f, n2, cfg.directed) if near is None
             else image_after_moves(ea, eb, near[0], partner_map(near[1], n1), f, n2, cfg.directed))
    scores, cons = score_matching(ea, eb, matched, inputs.network_a.n, inputs.network_b.n, truth=truth,
                                  directed=cfg.directed, weights_a=wa if cfg.weighted else None,
                                  weights_b=wb if cfg.weighted else None, image=image)
    return scores, cons, image


def _name_column(net: Network):
    """The network's node names (or its input's own node objects, ``labels``) as a frame column
    would hold them (converted once, then gathered from), or the array itself when they stay
    objects."""
    names = net.names if net.labels is None else net.labels
    col = pd.Series(names, copy=False)
    return names if col.dtype == object else col


def _names_at(column, rows: np.ndarray):
    """``names[rows]`` from :func:`_name_column`'s result, as a frame column."""
    if isinstance(column, np.ndarray) or not len(rows):
        return np.asarray(column, dtype=object)[rows]
    return column.take(rows).array


def _conserved_table(names_a, names_b, edges_a: np.ndarray, f: np.ndarray, cons: np.ndarray) -> pd.DataFrame:
    ce = edges_a[cons]
    return pd.DataFrame({"node_a1": _names_at(names_a, ce[:, 0]), "node_a2": _names_at(names_a, ce[:, 1]),
                         "node_b1": _names_at(names_b, f[ce[:, 0]]), "node_b2": _names_at(names_b, f[ce[:, 1]])})


def conserved_frame(net_a: Network, net_b: Network, matched: np.ndarray, cons: np.ndarray,
                    directed: bool = False) -> pd.DataFrame:
    """The conserved edges of A with their images in B, by name."""
    f = partner_map(matched, net_a.n)
    return _conserved_table(_name_column(net_a), _name_column(net_b), net_a.scored_edges(directed)[0],
                            f, cons)


def _confidence(problem: Problem, diffusion: DiffusionResult, index: np.ndarray, counts=None) -> np.ndarray:
    """The confidence of the matched pairs (:func:`aligner.core.confidence.matching_confidence`):
    the loss of the refinement's objective at the pair's best 2-exchange, as L / (1 + L).
    ``counts``: :func:`_unit_counts` of ``index``, when computed already."""
    cfg = problem.config
    prod = problem.product.symmetrised()  # S + S^T when directed (built once), else S
    weights = counted_weights(cfg, prod)
    return matching_confidence(prod, problem.candidates, diffusion.x, index, beta=cfg.beta, edge_weights=weights,
                               counts=counts if weights is None else None)


def _unit_counts(problem: Problem, index: np.ndarray) -> np.ndarray | None:
    """g = S 1_M, each entry of the (symmetrised) product graph counting 1: what the confidence
    (in an unweighted run) and the ambiguity both start from, made once; None for no pair."""
    return matched_counts(problem.product.symmetrised(), index) if len(index) else None


def _pairs_frame(problem: Problem, diffusion: DiffusionResult, index: np.ndarray, cons: np.ndarray,
                 names_a, names_b, ambiguity: Ambiguity, counts=None) -> pd.DataFrame:
    net_a, cand = problem.network_a, problem.candidates
    matched = cand.pairs[index].astype(np.int64)
    per_node = conserved_per_node(net_a.scored_edges(problem.config.directed)[0], cons, net_a.n)
    return pd.DataFrame({"node_a": _names_at(names_a, matched[:, 0]), "node_b": _names_at(names_b, matched[:, 1]),
                         "score": diffusion.x[index], "prior": cand.prior[index],
                         "conserved": per_node[matched[:, 0]],
                         "confidence": _confidence(problem, diffusion, index, counts),
                         "alternatives": _alternatives_column(problem.network_b, ambiguity)})


def _alternatives_column(net_b: Network, ambiguity: Ambiguity) -> np.ndarray:
    """Each matched node's alternatives as one text field: names of B joined by ';' (empty when none)."""
    ptr = ambiguity.alt_ptr
    out = np.full(len(ptr) - 1, "", dtype=object)
    names = net_b.names if net_b.labels is None else net_b.labels
    for t in np.flatnonzero(np.diff(ptr)):
        out[t] = ";".join(str(names[j]) for j in ambiguity.alternatives(t))
    return out


def _ambiguity(problem: Problem, index: np.ndarray, optima=(), counts=None) -> Ambiguity:
    prod = problem.product.symmetrised()  # S + S^T when directed (built once), else S
    a, b = problem.network_a, problem.network_b
    return find_ambiguity(prod, problem.candidates, index, walk_a=(a.indptr, a.indices),
                          walk_b=(b.indptr, b.indices), optima=optima, counts=counts)


def _nc_up_to_ambiguity(inputs: Inputs, matched: np.ndarray, ambiguity: Ambiguity) -> float | None:
    """Node correctness where a node also counts as right when a true partner is among its
    alternatives (with the denominator of NC: the nodes of A named in the truth table)."""
    if inputs.truth is None:
        return None
    truth = inputs.truth.pairs.astype(np.int64)
    if not len(truth):
        return None
    n2 = inputs.network_b.n
    owner = np.repeat(np.arange(len(matched)), np.diff(ambiguity.alt_ptr))
    ok = unique(np.concatenate([matched[:, 0] * n2 + matched[:, 1], matched[owner, 0] * n2 + ambiguity.alt_nodes]))
    key = truth[:, 0] * n2 + truth[:, 1]
    pos = np.minimum(np.searchsorted(ok, key), max(len(ok) - 1, 0))
    hit = ok[pos] == key if len(ok) else np.zeros(len(key), dtype=bool)
    return share_correct(truth, hit, inputs.network_a.n)[0]


def evaluate(problem: Problem, diffusion: DiffusionResult, improvement: Improvement, *,
             permutation_progress: Callable[[int, int], None] | None = None) -> Evaluation:
    """Score the final matching: EC, ICS, S3, LCCS, NC; the output tables; significance; seed figures."""
    cfg, inputs, cand = problem.config, problem.inputs, problem.candidates
    index = improvement.matching.index
    matched = cand.pairs[index].astype(np.int64)
    scores, cons, image = _score(inputs, matched, cfg)
    before = None
    if improvement.refined is not None:
        rounded = improvement.rounded.index
        before = (scores if np.array_equal(rounded, index)  # the refinement moved nothing
                  else _score(inputs, cand.pairs[rounded].astype(np.int64), cfg, near=(image, matched))[0])
    if cfg.directed:
        sig = {"skipped": "not computed for directed networks: its null model counts undirected edges"}
    else:
        sig = significance(inputs.network_a.edges, inputs.network_b.edges, cand, matched, scores.conserved_edges,
                           permutations=cfg.permutations, seed=cfg.permutation_seed, progress=permutation_progress)
    seeds = None
    if inputs.seeds is not None:
        seeds = seed_summary(inputs.network_a, inputs.network_b, matched, inputs.seeds,
                             truth=None if inputs.truth is None else inputs.truth.pairs, weighted=cfg.weighted)
        seeds["source"] = _source(seeds["source"])  # named absolutely, like the other inputs
        expansion = problem.origin.expansion
        seeds["expansion"] = None if expansion is None else expansion.report()
    names_a, names_b = _name_column(inputs.network_a), _name_column(inputs.network_b)
    f = partner_map(matched, inputs.network_a.n)
    edges_a = inputs.network_a.scored_edges(cfg.directed)[0]
    counts = transfer_counts(edges_a, inputs.network_b.scored_edges(cfg.directed)[0], matched, inputs.network_a.n,
                             inputs.network_b.n, scores.conserved_edges)
    refined = improvement.refined
    g = (refined.neighbours if refined is not None and refined.neighbours is not None and refined.index is index
         else _unit_counts(problem, index))  # the refinement made S 1_M already
    ambiguity = _ambiguity(problem, index, () if refined is None else refined.near_optima, g)
    return Evaluation(scores, before, _pairs_frame(problem, diffusion, index, cons, names_a, names_b, ambiguity, g),
                      _conserved_table(names_a, names_b, edges_a, f, cons), sig, seeds, counts, image, ambiguity)


# --------------------------------------------------------------------------- transfer

#: the columns of :func:`transfer`'s table (and of transferred_edges.tsv); ``weight`` follows
#: them in a weighted run
TRANSFER_COLUMNS = ("direction", "node_a1", "node_a2", "node_b1", "node_b2", "support", "confidence_1",
                    "confidence_2", "score_1", "score_2", "triangles", "common_neighbours")


def transfer(problem: Problem, diffusion: DiffusionResult, improvement: Improvement,
             confidence: npt.NDArray[np.float64] | None = None, image: np.ndarray | None = None) -> pd.DataFrame:
    """The interactions the matching carries across: every edge of A whose two ends are matched
    and whose image is not an edge of B (``A->B``), and every edge of B likewise (``B->A``), best
    first, with their support and its components (:mod:`aligner.core.transfer`).

    Pair 1 is (node_a1, node_b1), pair 2 (node_a2, node_b2); the carried edge is (node_a1,
    node_a2) for ``A->B`` and (node_b1, node_b2) for ``B->A``, arcs keeping their direction.
    In a weighted run a ``weight`` column holds the carried edge's weight in its own network.
    ``confidence`` (of the matched pairs, in the matching's order) and ``image`` (of A's scored
    edges, :attr:`Evaluation.image`) are computed when not given.
    """
    cfg, inputs, cand = problem.config, problem.inputs, problem.candidates
    net_a, net_b = inputs.network_a, inputs.network_b
    index = improvement.matching.index
    (ea, wa), (eb, wb) = net_a.scored_edges(cfg.directed), net_b.scored_edges(cfg.directed)
    t = transferred_edges(ea, eb, (net_a.indptr, net_a.indices), (net_b.indptr, net_b.indices),
                          cand.pairs[index], _confidence(problem, diffusion, index) if confidence is None
                          else confidence, diffusion.x[index],
                          net_a.n, net_b.n, directed=cfg.directed, image=image)
    names_a, names_b = _name_column(net_a), _name_column(net_b)
    frame = pd.DataFrame({
        "direction": np.asarray(DIRECTIONS, dtype=object)[t.direction],
        "node_a1": _names_at(names_a, t.a1), "node_a2": _names_at(names_a, t.a2),
        "node_b1": _names_at(names_b, t.b1), "node_b2": _names_at(names_b, t.b2),
        "support": t.support, "confidence_1": t.confidence_1, "confidence_2": t.confidence_2,
        "score_1": t.score_1, "score_2": t.score_2, "triangles": t.triangles,
        "common_neighbours": t.common_neighbours})
    if cfg.weighted:
        weight = np.empty(len(t))
        ab = t.direction == 0
        weight[ab] = np.asarray(wa, dtype=np.float64)[t.edge_row[ab]]
        weight[~ab] = np.asarray(wb, dtype=np.float64)[t.edge_row[~ab]]
        frame["weight"] = weight
    return frame


# --------------------------------------------------------------------------- summary

def _source(source) -> str:
    """A file named absolutely (so that a report from another directory finds it); an in-memory
    input's description (``<DataFrame prior>``) as it is."""
    text = str(source)
    return text if text.startswith("<") else os.path.abspath(text)


def _network_summary(net: Network) -> dict:
    out = {"source": _source(net.source), "nodes": net.n, "edges": net.n_edges,
           "self_loops_dropped": net.n_self_loops, "duplicate_edges_merged": net.n_duplicate_edges}
    if net.directed:
        out["arcs"] = len(net.arcs)
    if net.weights is not None:
        out["total_weight"] = float(net.weights.sum())
    return out


def _inputs_summary(inputs: Inputs) -> dict:
    p, t = inputs.prior, inputs.truth
    return {
        "network_a": _network_summary(inputs.network_a),
        "network_b": _network_summary(inputs.network_b),
        "prior": None if p is None else {
            "source": _source(p.source), "rows": p.n_rows, "unknown_node_rows": p.n_unknown,
            "unknown_examples": p.unknown_examples, "dropped_by_score_kind": p.n_dropped_kind,
            "duplicate_pairs_merged": p.n_duplicates, "pairs": p.n_pairs},
        "truth": None if t is None else {"source": _source(t.source), "rows": t.n_rows,
                                         "unknown_node_rows": t.n_unknown},
    }


def _refine_summary(improvement: Improvement) -> dict | None:
    if not improvement.ran:
        return None
    if improvement.refined is None:
        return {"skipped": improvement.note}
    r = improvement.refined
    return r.report() | {"objective_per_iteration": r.objective,
                         "conserved_edges_gained": r.conserved_after - r.conserved_before}


def summarize(problem: Problem, diffusion: DiffusionResult, improvement: Improvement, evaluation: Evaluation,
              clock: Clock) -> dict:
    """The run's record, as written to ``summary.json`` (schema in docs/formats.md)."""
    cfg, cand, scores = problem.config, problem.candidates, evaluation.scores
    cov_a, cov_b = cand.coverage()
    match_ = improvement.matching
    est = problem.product_estimate
    summary = {
        "version": __version__,
        "inputs": _inputs_summary(problem.inputs),
        "parameters": cfg.as_dict() | {"refine": improvement.ran,
                                       "structural": problem.origin.structural is not None},
        "sizes": {"candidates": cand.m, "coverage_a": cov_a, "coverage_b": cov_b,
                  "product_edges": problem.product.n_edges,
                  "product_edges_estimate": est if cfg.directed else est // 2, "matched_pairs": scores.n_matched},
        "scores": scores.as_dict() | ({"nc_detail": scores.nc_detail} if scores.nc_detail else {}),
        "transferred_edges": evaluation.transferred,
        "solver": diffusion.report() | {"rounding": match_.method, "matched_weight": match_.weight,
                                        "rounding_seconds": round(match_.seconds, 4)},
        "timings": dict(clock.timings),
        "memory": clock.memory_report(),
        "structural": problem.origin.structural,
        "refine": _refine_summary(improvement),
    }
    if evaluation.ambiguity is not None:
        nc_up = _nc_up_to_ambiguity(problem.inputs, cand.pairs[match_.index].astype(np.int64), evaluation.ambiguity)
        summary["ambiguity"] = evaluation.ambiguity.report() | {"nc_up_to_ambiguity": nc_up}
        if nc_up is not None:
            summary["scores"]["nc_up_to_ambiguity"] = nc_up
    if evaluation.scores_before is not None:
        summary["scores_before_refine"] = evaluation.scores_before.as_dict()
    if evaluation.seeds is not None:
        summary["seeds"] = evaluation.seeds
    summary["significance"] = evaluation.significance
    return summary


# --------------------------------------------------------------------------- align

def _prior_counts(t) -> dict:
    """A prior table's counts, as the run state keeps them (an update that takes the candidates from
    the state rebuilds the table's record and warnings from them)."""
    return {"rows": t.n_rows, "unknown": t.n_unknown, "unknown_examples": list(t.unknown_examples),
            "dropped_by_score_kind": t.n_dropped_kind, "duplicates": t.n_duplicates, "pairs": t.n_pairs}


@dataclass(frozen=True, eq=False)
class AlignmentResult:
    """Everything a run produced.

    Attributes
    ----------
    problem : Problem
        The prepared problem (networks, candidates, product graph, h, options).
    diffusion : DiffusionResult
        Solver figures: steps, edge touches, residual and error bound, and x.
    matching : Matching
        The final one-to-one matching (after refinement when it ran).
    improvement : Improvement
        The rounded matching and the refinement's record.
    scores : Scores
        EC, ICS, S3, largest common connected subgraph, NC (with a truth table).
    pairs : DataFrame
        One row per matched pair: ``node_a``, ``node_b``, ``score`` (diffusion score), ``prior``
        (prior similarity after the score-kind transformation), ``conserved`` (conserved edges at
        the pair), ``confidence`` (in [0, 1]: how much the matching loses at the pair's best
        exchange, :func:`aligner.core.confidence.matching_confidence`).
    conserved_edges : DataFrame
        The conserved edges of A (``node_a1``, ``node_a2``) and their images (``node_b1``, ``node_b2``).
    transferred_edges() : DataFrame
        The edges each network has and the other lacks under the matching, best first (see
        :func:`transfer`); computed on the first call.
    summary : dict
        The run's record as written to ``summary.json``.
    """

    problem: Problem
    diffusion: DiffusionResult
    improvement: Improvement
    evaluation: Evaluation
    summary: dict

    config = property(lambda self: self.problem.config)
    network_a = property(lambda self: self.problem.network_a)
    network_b = property(lambda self: self.problem.network_b)
    candidates = property(lambda self: self.problem.candidates)
    product = property(lambda self: self.problem.product)
    matching = property(lambda self: self.improvement.matching)
    scores = property(lambda self: self.evaluation.scores)
    pairs = property(lambda self: self.evaluation.pairs)
    conserved_edges = property(lambda self: self.evaluation.conserved_edges)

    def state(self) -> tuple[dict, dict]:
        """What ``aligner update`` starts from (:mod:`aligner.io.state`): arrays and a record of the
        options, the input files' fingerprints and the run's cost."""
        from aligner.io.state import file_digest

        p, cfg = self.problem, self.config
        inputs = p.inputs
        arrays = {"names_a": p.network_a.names, "names_b": p.network_b.names,
                  "edges_a": p.network_a.scored_edges(cfg.directed)[0],
                  "edges_b": p.network_b.scored_edges(cfg.directed)[0],
                  "pairs": p.candidates.pairs, "prior": p.candidates.prior, "x": self.diffusion.x,
                  "matched": self.matching.index}
        prod = p.product  # kept for an update to patch (unweighted: the entry weights are not kept)
        kept = prod is not None and prod.weights is None
        arrays["product_degree"] = prod.degree if kept else np.empty(0, dtype=np.int64)
        arrays["product_indices"] = prod.indices if kept else np.empty(0, dtype=np.int32)
        if p.origin.seed_added is not None and inputs.prior is not None:  # the prior's candidates told apart
            arrays["seed_added"] = p.origin.seed_added
        rows = None if inputs.prior is None else inputs.prior.rows
        if rows is not None:  # a prior no file holds (an update edited it): its rows, for the next update
            arrays |= {"prior_a": rows.a, "prior_b": rows.b, "prior_values": rows.values,
                       "prior_extra_a": rows.extra_a, "prior_extra_b": rows.extra_b}
        sources = {"network_a": p.network_a.source, "network_b": p.network_b.source,
                   "prior": None if inputs.prior is None else inputs.prior.source,
                   "seeds": None if inputs.seeds is None else inputs.seeds.source,
                   "truth": None if inputs.truth is None else inputs.truth.source}
        meta = {"options": cfg.as_dict(),
                "inputs": {k: None if v is None else {"source": _source(v), "fingerprint": file_digest(v)}
                           for k, v in sources.items()},
                "networks": {side: {"weighted": net.weights is not None, "self_loops": net.n_self_loops,
                                    "duplicate_edges": net.n_duplicate_edges,
                                    "loop_nodes": None if net.loop_nodes is None else net.loop_nodes.tolist()}
                             for side, net in (("a", p.network_a), ("b", p.network_b))},
                "prior_table": None if inputs.prior is None else _prior_counts(inputs.prior),
                "seconds": round(sum(self.summary["timings"].values()), 4),
                "diffusion": {"steps": self.diffusion.steps, "edge_touches": self.diffusion.edge_touches},
                # the other matchings the refinement's starts reached that name alternatives: an
                # update continues the search from this run's matching only where there were none
                "near_optima": 0 if self.improvement.refined is None else len(self.improvement.refined.near_optima),
                # whether the final matching is the refinement's (not when no start held every seed
                # pair): an update of a run with seeds continues the search only from such a matching
                "refined": self.improvement.refined is not None,
                # whether it was refined with the seed pairs held (every free start gave one up):
                # an update's continued search then holds them too
                "seeds_held": self.improvement.refined is not None and any(
                    r.get("seeds_held", False) for r in self.improvement.refined.starts or ())}
        return arrays, meta

    def transferred_edges(self) -> pd.DataFrame:
        """The interactions carried across the matching, best first (:func:`transfer`); the table
        is computed on the first call and a copy returned each time."""
        table = self.__dict__.get("_transferred")
        if table is None:
            table = transfer(self.problem, self.diffusion, self.improvement,  # what scoring computed, reused
                             confidence=self.evaluation.pairs["confidence"].to_numpy(), image=self.evaluation.image)
            object.__setattr__(self, "_transferred", table)
        return table.copy()


def run_stages(problem: Problem, clock: Clock, *, x0=None, permutation_progress=None,
               improve_from: Callable[[Problem, DiffusionResult, Matching], Improvement | None] | None = None
               ) -> AlignmentResult:
    """Solve, match, improve, evaluate and summarize a prepared problem.

    ``improve_from`` (an update's) may refine in its own way: when it returns None, or is not
    given, :func:`improve` refines."""
    with clock.stage("diffusion"):
        diffusion = solve(problem, x0=x0)
    if problem.product is not None:
        problem.product.release_degree()  # the later stages read the rows' pointers instead
    with clock.stage("rounding"):
        rounded = match(problem, diffusion)
    refining = problem.config.refine and problem.config.alpha > 0
    with clock.stage("refine") if refining else nullcontext():
        improvement = None if improve_from is None or not refining else improve_from(problem, diffusion, rounded)
        if improvement is None:
            improvement = improve(problem, diffusion, rounded)
    with clock.stage("scoring"):
        evaluation = evaluate(problem, diffusion, improvement, permutation_progress=permutation_progress)
    problem.candidates.release_ends()  # the last stage that reads them is done
    return AlignmentResult(problem, diffusion, improvement, evaluation,
                           summarize(problem, diffusion, improvement, evaluation, clock))


@with_options(AlignConfig)
def align(network_a, network_b, prior=None, *, seeds=None, truth=None, config: AlignConfig | None = None,
          progress: Callable[[str], None] | None = None,
          permutation_progress: Callable[[int, int], None] | None = None, **options: Any) -> AlignmentResult:
    """Align two networks: a one-to-one map between their nodes."""
    clock = Clock(progress)
    check_callable(permutation_progress, "permutation_progress")
    problem = prepare(network_a, network_b, prior, seeds=seeds, truth=truth, config=config, clock=clock, **options)
    return run_stages(problem, clock, permutation_progress=permutation_progress)


_DATA_PARAMETERS = """\
    network_a, network_b : path, networkx.Graph, pandas.DataFrame or Network
        The two networks (edge lists: node, node[, weight]).
    prior : path or pandas.DataFrame, optional
        The prior similarity table: node of A, node of B, score. Left out, the candidates and their
        prior come from structure: grown from the ``seeds`` through the wiring when seeds are given,
        else each node's ``top_k`` nearest nodes of the other network in structural-feature space.
    seeds : path, DataFrame or iterable of pairs, optional
        Anchor pairs (node of A, node of B) known to correspond: fixed in the matching, extra
        diffusion sources, reported apart in ``summary["seeds"]``.
    truth : path, DataFrame or iterable of pairs, optional
        Known true pairs, for node correctness.
    config : AlignConfig, optional
        The options as one object; keyword options below override its fields.
    progress : callable, optional
        Called with the name of each stage (:data:`STAGES`) as it starts.
    permutation_progress : callable, optional
        ``permutation_progress(done, total)`` after each random map of ``permutations``."""

align.__doc__ += f"""

    Parameters
    ----------
{_DATA_PARAMETERS}
{describe(AlignConfig)}

    Returns
    -------
    AlignmentResult

    Raises
    ------
    InputFormatError, InvalidParameterError, NoCandidatesError, MemoryBudgetError, ConvergenceError

    Notes
    -----
    The composition of the stages: :func:`prepare` (:func:`read_inputs`, :func:`find_candidates`,
    the product graph), :func:`solve`, :func:`match`, :func:`improve`, :func:`evaluate`,
    :func:`summarize`. Method and references: docs/method.md.

    Examples
    --------
    >>> import networkx as nx, pandas as pd
    >>> g = nx.path_graph(3)
    >>> prior = pd.DataFrame({{"a": ["0", "1", "2"], "b": ["0", "1", "2"], "s": [1.0, 1.0, 1.0]}})
    >>> res = align(g, g, prior)
    >>> res.scores.conserved_edges, res.scores.ec
    (2, 1.0)
    """


#: the options :func:`score` uses: how the inputs are read and what the scores count
SCORE_OPTIONS = ("directed", "weighted", "weight_model", "delimiter", "header")


@with_options(AlignConfig, names=SCORE_OPTIONS)
def score(network_a, network_b, alignment, *, truth=None, config: AlignConfig | None = None,
          **options: Any) -> tuple[Scores, pd.DataFrame]:
    """Score an existing alignment (a table whose first two columns are node_a, node_b).

    Returns the scores and the conserved edges. Raises InputFormatError when a node is in two
    pairs (the map must be one-to-one). Options (``directed``, ``weighted``, ``weight_model``,
    ``delimiter``, ``header``) as for :func:`align`; the others, which no scoring uses, are refused.
    """
    unused = sorted(set(options) & set(specs(AlignConfig)) - set(SCORE_OPTIONS))
    if unused:
        raise InvalidParameterError(f"{unused[0]} is an option of the alignment, which score does not run; score "
                                    f"takes {', '.join(SCORE_OPTIONS)}", param=unused[0])
    cfg = from_options(AlignConfig, config, options)
    inputs = read_inputs(network_a, network_b, None, truth=truth, config=cfg)
    tab = as_alignment(alignment, inputs.network_a, inputs.network_b, cfg.delimiter, cfg.header)
    _warn_unknown(tab, "alignment")
    p = tab.pairs.astype(np.int64)
    sc, cons, _ = _score(inputs, p, cfg)
    return sc, conserved_frame(inputs.network_a, inputs.network_b, p, cons, cfg.directed)
