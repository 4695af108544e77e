"""The Python API: ``align`` validates its inputs and runs the stages in order."""

from __future__ import annotations

import os
import time
import warnings
from dataclasses import dataclass, field
from pathlib import Path
from typing import Callable

import numpy as np
import pandas as pd

from aligner import __version__
from aligner.checks import check_choice, check_int, check_real
from aligner.core.candidates import CandidateSet, build_candidates
from aligner.core.diffusion import NORMALIZATIONS, SOLVERS, DiffusionResult, column_scale, diffuse, prior_vector
from aligner.errors import AlignerWarning, InputFormatError, InvalidParameterError, MemoryBudgetError, NoCandidatesError
from aligner.io.inputs import as_network, as_pairs, as_prior, known_pairs
from aligner.io.outputs import OUTPUT_FILES, check_outdir, write_outputs
from aligner.core.network import Network, network_from_edges
from aligner.core.product import ProductGraph, build_product, estimate_product_edges
from aligner.core.refine import DEFAULT_BETA, DEFAULT_MAX_ITER, refine_matching
from aligner.core.rounding import METHODS, Matching, round_matching
from aligner.core.scoring import Scores, conserved_per_node, score_matching
from aligner.core.confidence import pair_confidence
from aligner.core.significance import significance as _significance
from aligner.priors.structural import FEATURE_NAMES, combine_priors, structural_candidates
from aligner.priors.seeds import (DEFAULT_SEED_WEIGHT, add_seed_pairs, as_seeds, expand_from_seeds, round_with_fixed, seed_index,
                    seed_summary, seed_vector)

__all__ = ["align", "score", "AlignmentResult", "as_network", "OUTPUT_FILES", "check_outdir", "write_outputs"]

SCORE_KINDS = ("similarity", "evalue", "distance")
#: the stages of a run, in order, as named to the ``progress`` callback of :func:`align`
STAGES = ("read", "candidates", "product", "diffusion", "rounding", "refine", "scoring", "writing")
#: bytes per stored product-graph entry while building and solving (index + share of pointers,
#: queue and float work arrays), used by the memory check
BYTES_PER_PRODUCT_ENTRY = 4


# --------------------------------------------------------------------------- coercion

def _memory_budget(max_memory: float | None) -> float:
    if max_memory is not None:
        return check_real(max_memory, "max_memory", low=0.0, closed="neither")
    try:
        total = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES")
    except (ValueError, OSError, AttributeError):  # pragma: no cover
        total = 8 * 2**30
    return 0.5 * total


def _gib(nbytes: float) -> str:
    """A byte count in GiB, with enough digits to be non-zero."""
    g = nbytes / 2**30
    return f"{g:.2f} GiB" if g >= 0.01 or g == 0 else f"{g:.2g} GiB"


# --------------------------------------------------------------------------- result

@dataclass(frozen=True, eq=False)
class AlignmentResult:
    """Everything a run produced.

    Attributes
    ----------
    pairs : DataFrame
        One row per matched pair: ``node_a``, ``node_b``, ``score`` (diffusion score),
        ``prior`` (prior similarity after the score-kind transformation), ``conserved``
        (conserved edges at the pair), ``confidence`` (margin over the best competing
        candidate, see :func:`aligner.core.confidence.pair_confidence`). Sorted by ``node_a``.
    scores : Scores
        EC, ICS, S3, largest common connected subgraph, NC (with a truth table).
    diffusion : DiffusionResult
        Solver figures: steps, edge touches, residual and error bound.
    summary : dict
        Inputs, parameters, sizes, scores, solver figures, stage timings and version, as
        written to ``summary.json``.
    """

    network_a: Network
    network_b: Network
    candidates: CandidateSet
    product: ProductGraph
    diffusion: DiffusionResult
    matching: Matching
    scores: Scores
    pairs: pd.DataFrame
    conserved_edges: pd.DataFrame
    summary: dict = field(default_factory=dict)


def _conserved_frame(net_a: Network, net_b: Network, matched: np.ndarray, cons: np.ndarray,
                     directed: bool = False) -> pd.DataFrame:
    f = np.full(net_a.n, -1, dtype=np.int64)
    f[matched[:, 0]] = matched[:, 1]
    ce = net_a.scored_edges(directed)[0][cons]
    return pd.DataFrame({
        "node_a1": net_a.names[ce[:, 0]], "node_a2": net_a.names[ce[:, 1]],
        "node_b1": net_b.names[f[ce[:, 0]]], "node_b2": net_b.names[f[ce[:, 1]]],
    })


def _network_summary(net: Network) -> dict:
    out = {"source": str(net.source), "nodes": net.n, "edges": net.n_edges,
           "self_loops_dropped": net.n_self_loops, "duplicate_edges_merged": net.n_duplicate_edges}
    if net.directed:
        out["arcs"] = len(net.arcs)
    if net.weights is not None:
        out["total_weight"] = float(net.weights.sum())
    return out


def _check_modes(net_a: Network, net_b: Network, weighted: bool) -> None:
    """Refuse --weighted when a network has no weight column."""
    if weighted:
        for net, side in ((net_a, "A"), (net_b, "B")):
            if net.weights is None:
                raise InvalidParameterError(f"The 'weighted' parameter of align needs edge weights, but network "
                                            f"{side} ({net.source}) has no third column of weights.")


def _scores_of(net_a: Network, net_b: Network, matched, truth_pairs, directed: bool, weighted: bool):
    ea, wa = net_a.scored_edges(directed)
    eb, wb = net_b.scored_edges(directed)
    return score_matching(ea, eb, matched, net_a.n, net_b.n, truth=truth_pairs, directed=directed,
                          weights_a=wa if weighted else None, weights_b=wb if weighted else None)


def align(
    network_a,
    network_b,
    prior=None,
    *,
    alpha: float = 0.9,
    top_k: int | None = 25,
    min_score: float = 0.0,
    score_kind: str = "similarity",
    solver: str = "push",
    tol: float = 1e-6,
    normalization: str = "restricted",
    rounding: str = "auto",
    truth=None,
    delimiter: str | None = None,
    header: str = "auto",
    max_memory: float | None = None,
    progress: Callable[[str], None] | None = None,
    seeds=None,
    seed_weight: float = DEFAULT_SEED_WEIGHT,
    permutations: int = 0,
    permutation_seed: int = 0,
    permutation_progress: Callable[[int, int], None] | None = None,
    refine: bool = True,
    beta: float = DEFAULT_BETA,
    refine_iter: int = DEFAULT_MAX_ITER,
    directed: bool = False,
    weighted: bool = False,
    structural: bool = False,
    structural_weight: float = 0.5,
) -> AlignmentResult:
    """Align two networks: a one-to-one map between their nodes.

    Parameters
    ----------
    network_a, network_b : path, networkx.Graph, pandas.DataFrame or Network
        The two undirected networks (edge lists: node, node[, weight]).
    prior : path or pandas.DataFrame, optional
        The prior similarity table: node of A, node of B, score. Left out, the candidates
        and their prior come from structure: grown from the ``seeds`` through the wiring when
        seeds are given (see :func:`aligner.priors.seeds.expand_from_seeds`), else each node's
        ``top_k`` nearest nodes of the other network in structural-feature space (see
        :func:`aligner.priors.structural.structural_candidates`).
    alpha : float in [0, 1)
        Weight of the wiring against the prior in the diffusion; 0 returns the prior.
    top_k : int >= 1 or None
        Candidates: every node's ``top_k`` best prior pairs on each side (their union).
    min_score : float
        Prior pairs below this score (after the score-kind transformation) are dropped.
    score_kind : {"similarity", "evalue", "distance"}
        How to read the prior scores: similarity (higher is better), E-value (smaller is
        better; -log10, capped at 310 for 0; rows with E > 1 dropped), distance (smaller is
        better; 1 / (1 + d)).
    solver : {"push", "power"}
        Diffusion solver.
    tol : float > 0
        1-norm residual tolerance of the diffusion (the prior sums to 1).
    normalization : {"restricted", "product"}
        Random-walk normalisation of the product graph (see :func:`aligner.core.diffusion.column_scale`).
    rounding : {"auto", "sparse", "dense", "scipy"}
        Linear-assignment solver (see :func:`aligner.core.rounding.round_matching`).
    truth : path, DataFrame or iterable of pairs, optional
        Known true pairs, for node correctness.
    delimiter, header :
        How to read the input files (see :func:`aligner.io.readers.read_network`).
    max_memory : float, optional
        Memory budget in bytes for the product graph; default half the machine's memory.
    progress : callable, optional
        Called with the name of each stage as it starts.
    seeds : path, DataFrame or iterable of pairs, optional
        Anchor pairs (node of A, node of B) known to correspond: fixed in the matching, extra
        diffusion sources, and reported apart in ``summary["seeds"]`` (see :mod:`aligner.priors.seeds`).
    seed_weight : float >= 0
        Total mass of the seed pairs in h relative to the prior's (default 1: as much as the
        whole prior); 0 keeps them out of h (they stay fixed).
    refine : bool
        Refine the rounded matching for conserved edges (on by default): Frank–Wolfe steps
        on β·(normalised diffusion weight) + (conserved edges), then a local search; see
        :func:`aligner.core.refine.refine_matching`. With seeds, a refined matching that moves a
        seed pair is not used. Off when ``alpha = 0``, which returns the prior's own matching.
    beta : float >= 0
        Weight of the normalised diffusion weight of a matched pair against one conserved
        edge in the refinement (default 0.1).
    refine_iter : int >= 0
        Cap on refinement iterations (default 30).
    directed : bool
        Read the edge lists as arcs (first column -> second). The product graph follows the
        arcs, (i, i') -> (j, j') when i -> j and i' -> j', and the walk divides by out-degree
        (a pair with no out-arcs gives a zero column: P is sub-stochastic there); an edge is
        conserved only onto an arc pointing the same way, and EC, ICS and S3 count arcs. The
        refinement counts conserved arcs; the significance figures are not computed.
    weighted : bool
        Use the edge weights (the third column of both edge lists): the product entry of
        (i, i') and (j, j') weighs w_A(i, j) w_B(i', j') and the walk divides by strength
        (summed weights) instead of degree; the scores gain the conserved weight and weighted
        EC (see :class:`aligner.core.scoring.Scores`). The refinement still counts edges.
    structural : bool
        Add structural candidates (as used when there is no prior) to the prior's: the union
        of the pairs, each table rescaled to a maximum of 1, a pair scoring
        prior + ``structural_weight`` * structural (see :func:`aligner.priors.structural.combine_priors`).
        For a weak prior that misses true partners.
    structural_weight : float >= 0
        Weight of the structural similarity against the prior's with ``structural``.
    permutations : int >= 0
        Random candidate maps for the empirical p-value of the conserved edges (0: only the
        closed-form null; see :mod:`aligner.core.significance`), drawn with ``permutation_seed``;
        ``permutation_progress(done, total)`` is called after each.

    Returns
    -------
    AlignmentResult

    Raises
    ------
    InputFormatError, InvalidParameterError, NoCandidatesError, MemoryBudgetError, ConvergenceError

    Examples
    --------
    >>> import networkx as nx, pandas as pd
    >>> g = nx.path_graph(3)
    >>> prior = pd.DataFrame({"a": ["0", "1", "2"], "b": ["0", "1", "2"], "s": [1.0, 1.0, 1.0]})
    >>> res = align(g, g, prior)
    >>> res.scores.conserved_edges, res.scores.ec
    (2, 1.0)
    """
    where = "align"
    alpha = check_real(alpha, "alpha", low=0.0, high=1.0, closed="left")
    if top_k is not None:
        top_k = check_int(top_k, "top_k", low=1)
    min_score = check_real(min_score, "min_score")
    score_kind = check_choice(score_kind, "score_kind", SCORE_KINDS)
    solver = check_choice(solver, "solver", SOLVERS)
    tol = check_real(tol, "tol", low=0.0, closed="neither")
    normalization = check_choice(normalization, "normalization", NORMALIZATIONS)
    rounding = check_choice(rounding, "rounding", METHODS)
    permutations = check_int(permutations, "permutations", low=0)
    beta = check_real(beta, "beta", low=0.0)
    refine_iter = check_int(refine_iter, "refine_iter", low=0)
    seed_weight = check_real(seed_weight, "seed_weight", low=0.0)
    structural_weight = check_real(structural_weight, "structural_weight", low=0.0)
    structural = bool(structural) or (prior is None and seeds is None)
    say = progress or (lambda stage: None)
    timings: dict[str, float] = {}

    def stage(name: str):
        say(name)
        timings[name] = time.perf_counter()

    def done(name: str):
        timings[name] = round(time.perf_counter() - timings[name], 4)

    stage("read")
    net_a = as_network(network_a, delimiter=delimiter, header=header, name="network_a", directed=directed)
    net_b = as_network(network_b, delimiter=delimiter, header=header, name="network_b", directed=directed)
    _check_modes(net_a, net_b, weighted)
    prior_t = None if prior is None else as_prior(prior, net_a, net_b, score_kind, delimiter, header)
    seeds_t = None if seeds is None else as_seeds(seeds, net_a, net_b, delimiter=delimiter, header=header)
    truth_t = None if truth is None else known_pairs(
        as_pairs(truth, net_a, net_b, "truth table", delimiter, header), "truth table")
    done("read")
    if prior_t is not None and prior_t.n_unknown:
        warnings.warn(f"{prior_t.n_unknown} of {prior_t.n_rows} prior rows name a node missing from its network "
                      f"and were skipped (for example {', '.join(prior_t.unknown_examples)})", AlignerWarning,
                      stacklevel=2)
    if truth_t is not None and truth_t.n_unknown:
        warnings.warn(f"{truth_t.n_unknown} of {truth_t.n_rows} truth rows name a node missing from its network "
                      f"and were skipped (for example {', '.join(truth_t.unknown_examples)})", AlignerWarning,
                      stacklevel=2)
    if prior_t is not None and len(prior_t.pairs) == 0:
        hint = ""
        if prior_t.n_unknown == prior_t.n_rows and prior_t.n_rows:
            hint = (" None of its rows names a node of network A in the first column and a node of network B "
                    "in the second: are the columns swapped, or are these the wrong networks?")
        raise NoCandidatesError(f"{prior_t.source}: no usable prior pair is left.{hint}")

    stage("candidates")
    expansion = None
    struct_info = None
    if structural:  # structural nearest neighbours, alone or added to the prior
        s_pairs, s_scores = structural_candidates(net_a, net_b, k=top_k or 25)
        struct_info = {"pairs": int(len(s_pairs)), "k": top_k or 25, "features": list(FEATURE_NAMES),
                       "weight": None if prior_t is None else structural_weight}
        if prior_t is not None:
            ok = prior_t.scores >= min_score
            s_pairs, s_scores = combine_priors(prior_t.pairs[ok], prior_t.scores[ok], s_pairs, s_scores, net_b.n,
                                               weight=structural_weight)
        cand = build_candidates(s_pairs, s_scores, net_a.n, net_b.n, top_k=top_k)
    elif prior_t is None:  # seeds only: candidates grown from them through the wiring
        expansion = expand_from_seeds(net_a, net_b, seeds_t, top_k=top_k)
        cand = expansion.candidates
    else:
        cand = build_candidates(prior_t.pairs, prior_t.scores, net_a.n, net_b.n, min_score=min_score, top_k=top_k)
    done("candidates")
    if cand.m == 0 and struct_info is not None:
        raise NoCandidatesError("no structural candidate pair: one of the networks has no node with an edge")
    if cand.m == 0:
        raise NoCandidatesError(f"{prior_t.source}: no prior pair scores at least the minimum score "
                                f"{min_score:g}; lower --min-score (the highest score is "
                                f"{prior_t.scores.max():g}).")
    if seeds_t is not None:
        cand = add_seed_pairs(cand, seeds_t)
        seed_idx = seed_index(cand, seeds_t)

    a_ip, a_ix, a_w = net_a.walk_adjacency(directed, weighted)
    b_ip, b_ix, b_w = net_b.walk_adjacency(directed, weighted)
    estimate = estimate_product_edges(a_ip, a_ix, b_ip, cand)
    budget = _memory_budget(max_memory)
    need = estimate * BYTES_PER_PRODUCT_ENTRY + cand.m * 64
    if need > budget:
        raise MemoryBudgetError(
            f"the product graph over {cand.m:,} candidate pairs may have up to {estimate:,} stored entries "
            f"(about {_gib(need)}), over the memory budget of {_gib(budget)}; lower "
            "--top-k, raise --min-score, or raise --max-memory (in GiB)")

    stage("product")
    prod = build_product(a_ip, a_ix, b_ip, b_ix, cand, a_weights=a_w if weighted else None,
                         b_weights=b_w if weighted else None, directed=directed)
    done("product")

    stage("diffusion")
    h = prior_vector(cand.prior) if seeds_t is None else seed_vector(cand.prior, seed_idx, seed_weight)
    scale = column_scale(prod, normalization, deg_a=net_a.strength(directed, weighted),
                         deg_b=net_b.strength(directed, weighted), pairs=cand.pairs)
    diff = diffuse(prod, h, scale, alpha=alpha, tol=tol, solver=solver)
    done("diffusion")

    stage("rounding")
    if seeds_t is None:
        match = round_matching(cand, diff.x, method=rounding)
    else:  # seed pairs fixed, their nodes out of the competition
        match = round_with_fixed(cand, diff.x, seed_idx, method=rounding)
    done("rounding")

    refined = None
    refine_note = None
    refine = refine and alpha > 0  # alpha = 0 asks for the prior's own matching
    if refine:
        stage("refine")
        refined = refine_matching(prod.symmetrised() if directed else prod, cand, diff.x, match.index, beta=beta,
                                  max_iter=refine_iter, method=rounding)
        if seeds_t is not None and not np.isin(seed_idx, refined.index).all():
            refine_note = "refinement moved a seed pair, so its matching was not used"
            refined = None
        done("refine")

    stage("scoring")
    truth_pairs = None if truth_t is None else truth_t.pairs
    before = None
    if refined is not None:
        before, _ = _scores_of(net_a, net_b, cand.pairs[match.index].astype(np.int64), truth_pairs, directed,
                               weighted)
        match = Matching(index=refined.index, method=match.method, weight=float(diff.x[refined.index].sum()),
                         seconds=match.seconds)
    matched = cand.pairs[match.index].astype(np.int64)
    scores, cons = _scores_of(net_a, net_b, matched, truth_pairs, directed, weighted)
    per_node = conserved_per_node(net_a.scored_edges(directed)[0], cons, net_a.n)
    pairs_df = pd.DataFrame({
        "node_a": net_a.names[matched[:, 0]],
        "node_b": net_b.names[matched[:, 1]],
        "score": diff.x[match.index],
        "prior": cand.prior[match.index],
        "conserved": per_node[matched[:, 0]],
        "confidence": pair_confidence(cand, diff.x, match.index),
    })
    cons_df = _conserved_frame(net_a, net_b, matched, cons, directed)
    done("scoring")

    cov_a, cov_b = cand.coverage()
    summary = {
        "version": __version__,
        "inputs": {
            "network_a": _network_summary(net_a),
            "network_b": _network_summary(net_b),
            "prior": None if prior_t is None else {
                "source": str(prior_t.source), "rows": prior_t.n_rows, "unknown_node_rows": prior_t.n_unknown,
                "unknown_examples": prior_t.unknown_examples, "dropped_by_score_kind": prior_t.n_dropped_kind,
                "duplicate_pairs_merged": prior_t.n_duplicates, "pairs": int(len(prior_t.pairs))},
            "truth": None if truth_t is None else {"source": str(truth_t.source), "rows": truth_t.n_rows,
                                                    "unknown_node_rows": truth_t.n_unknown},
        },
        "parameters": {"alpha": alpha, "top_k": top_k, "min_score": min_score, "score_kind": score_kind,
                       "solver": solver, "tol": tol, "normalization": normalization, "rounding": rounding,
                       "directed": directed, "weighted": weighted},
        "sizes": {"candidates": cand.m, "coverage_a": cov_a, "coverage_b": cov_b,
                  "product_edges": prod.n_edges, "product_edges_estimate": estimate if directed else estimate // 2,
                  "matched_pairs": scores.n_matched},
        "scores": scores.as_dict(),
        "solver": diff.report() | {"rounding": match.method, "matched_weight": match.weight,
                                   "rounding_seconds": round(match.seconds, 4)},
        "timings": timings,
    }
    if scores.nc_detail:
        summary["scores"]["nc_detail"] = scores.nc_detail
    summary["parameters"] |= {"refine": refine, "beta": beta, "refine_iter": refine_iter, "structural": structural}
    summary["structural"] = struct_info
    summary["refine"] = None if not refine else (
        {"skipped": refine_note} if refined is None else
        refined.report() | {"objective_per_iteration": refined.objective,
                            "conserved_edges_gained": refined.conserved_after - refined.conserved_before})
    if before is not None:
        summary["scores_before_refine"] = before.as_dict()
    if seeds_t is not None:
        summary["parameters"]["seed_weight"] = seed_weight
        summary["seeds"] = seed_summary(net_a, net_b, matched, seeds_t,
                                        truth=None if truth_t is None else truth_t.pairs)
        summary["seeds"]["expansion"] = None if expansion is None else expansion.report()
    summary["significance"] = {"skipped": "not computed for directed networks: its null model counts "
                                          "undirected edges"} if directed else _significance(
        net_a.edges, net_b.edges, cand, matched, scores.conserved_edges, permutations=permutations,
        seed=permutation_seed, progress=permutation_progress)
    return AlignmentResult(net_a, net_b, cand, prod, diff, match, scores, pairs_df, cons_df, summary)


def score(network_a, network_b, alignment, *, truth=None, delimiter: str | None = None,
          header: str = "auto", directed: bool = False, weighted: bool = False) -> tuple[Scores, pd.DataFrame]:
    """Score an existing alignment (a table whose first two columns are node_a, node_b).

    Returns the scores and the conserved edges. Raises InputFormatError when a node is in two
    pairs (the map must be one-to-one). ``directed`` and ``weighted`` as for :func:`align`.
    """
    net_a = as_network(network_a, delimiter=delimiter, header=header, name="network_a", directed=directed)
    net_b = as_network(network_b, delimiter=delimiter, header=header, name="network_b", directed=directed)
    _check_modes(net_a, net_b, weighted)
    tab = known_pairs(as_pairs(alignment, net_a, net_b, "alignment", delimiter, header), "alignment")
    if tab.n_unknown:
        warnings.warn(f"{tab.n_unknown} of {tab.n_rows} alignment rows name a node missing from its network and "
                      f"were skipped (for example {', '.join(tab.unknown_examples)})", AlignerWarning, stacklevel=2)
    p = tab.pairs.astype(np.int64)
    for side, name in ((0, "A"), (1, "B")):
        u, c = np.unique(p[:, side], return_counts=True)
        if (c > 1).any():
            node = (net_a if side == 0 else net_b).names[u[np.argmax(c > 1)]]
            raise InputFormatError(f"node {node!r} of network {name} is in more than one pair; an alignment "
                                   "must be one-to-one", path=str(tab.source))
    truth_t = None if truth is None else known_pairs(
        as_pairs(truth, net_a, net_b, "truth table", delimiter, header), "truth table")
    sc, cons = _scores_of(net_a, net_b, p, None if truth_t is None else truth_t.pairs, directed, weighted)
    return sc, _conserved_frame(net_a, net_b, p, cons, directed)


