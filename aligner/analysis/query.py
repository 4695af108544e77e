"""Counterpart queries: which nodes of B best correspond to a node of A, without a global solve.

A query solves the same diffusion as :func:`aligner.align`, x = alpha P x + (1 - alpha) h on
the product graph of A and B restricted to the candidate pairs L, but with h seeded at the
asked node's candidate pairs only, by push (Andersen, Chung & Lang 2006) from those pairs. The
product graph is never built: a pair's neighbours are discovered when the push first needs
them, from the two adjacency lists and the candidate index, and kept for the rest of the
query (see :mod:`aligner.kernels.query`). Work and memory depend on the part of the product
graph the push reaches, not on the size of the networks.
"""

from __future__ import annotations

import math
import os
import time
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import numpy.typing as npt
import pandas as pd

from aligner.kernels.query import _local_push, _reset_slots
from aligner.kernels.utils import stable_order
from aligner.checks import check_choice, check_int, check_real, warn
from aligner.core.candidates import CandidateSet
from aligner.errors import ConvergenceError, InputFormatError, InvalidParameterError
from aligner.core.network import Network
from aligner.config import NORMALIZATIONS, SIDES, AlignConfig, QueryConfig, describe, from_options, specs, with_options
from aligner.io.readers import read_node_list
from aligner.pipeline import prepare
from aligner.priors.seeds import SeedTable, seed_index, seed_vector

__all__ = ["query", "ANSWER_COLUMNS", "QueryEngine", "QueryResult", "LocalSolution", "DEFAULT_QUERY_TOL", "SIDES"]

#: Default push tolerance of a query, relative to the mass of its h (which is 1): an entry is
#: pushed while its residual exceeds tol * deg_S, so every score is certified to within
#: tol * deg_S / (1 - alpha) (see :class:`LocalSolution`).
DEFAULT_QUERY_TOL = QueryConfig.tol
TABLE_COLUMNS = ["query", "side", "rank", "counterpart", "score", "error_bound", "prior", "support", "fixed"]
#: columns of :attr:`QueryResult.answers`
ANSWER_COLUMNS = ["query", "side", "counterpart", "certified", "margin", "score", "runner_up", "rival", "fixed",
                  "region_rows", "region_pairs", "layers", "pairs_touched", "pushes", "seconds"]
WORK_COLUMNS = ["query", "side", "candidates", "seeds_near", "excluded_by_seeds", "pairs_touched", "pairs_expanded",
                "degrees_counted", "product_edges_scanned", "search_probes", "pushes", "residual_l1", "eps",
                "seconds"]


#: the largest push count the compiled kernels hold (an int64)
_INT64_MAX = int(np.iinfo(np.int64).max)


@dataclass(frozen=True, eq=False)
class LocalSolution:
    """A local solve of x = alpha P x + (1 - alpha) h over the pairs it reached.

    Attributes
    ----------
    pairs : ndarray of int64
        Global candidate indices of the pairs touched (held with a residual or a score); x
        and r are zero on every other candidate.
    x, r, h : ndarray of float64
        Scores, exact residual r = (1 - alpha) h - (I - alpha P) x, and personalization, on
        ``pairs``.
    degree : ndarray of int64
        deg_S of each touched pair (its number of product-graph neighbours), -1 where it was
        never needed.
    expanded : ndarray of bool
        Whether the pair's neighbour list was discovered and kept (the pairs pushed from).
    weight : ndarray of float64
        The threshold weight v of each pair: deg_S (restricted normalisation; a lower bound
        where not expanded) or deg_A deg_B (product normalisation).
    eps, alpha : float
        Push threshold (entry l pushed while |r_l| > eps v_l) and the wiring weight.
    pushes, edges_scanned, probes, rounds : int
        Pushes made; neighbour-list entries read by them (product edges scanned); binary
        searches made while counting and discovering neighbour lists; queue rounds.
    residual_l1 : float
        ||r||_1, recomputed exactly from x at the end.
    seconds : float

    Notes
    -----
    **What is certified.** Let x* be the exact solution over the whole candidate set L
    (what :func:`aligner.core.diffusion.diffuse` with the same h converges to). With
    G = (I - alpha P)^-1 >= 0 entrywise, x* - x = G r. At exit |r_l| <= eps v_l for every
    pair of L (pairs never touched have r = 0), and P v <= v (with equality for the
    restricted walk, P[k, l] = 1/deg_S(l): (P deg_S)_k = deg_S(k)), so
    |x*_k - x_k| <= eps G v <= eps v_k / (1 - alpha) for **every** pair k of L. Also
    ||x* - x||_1 <= ||r||_1 / (1 - alpha), so each entry is within that too.
    :meth:`error_bound` gives the smaller of the two. Since h >= 0 the residual stays >= 0
    and x_k <= x*_k: a score can only rise towards the exact one. The bounds are exact
    arithmetic statements; the double-precision rounding of the sums is below 1e-12 here.
    """

    pairs: npt.NDArray[np.int64]
    x: npt.NDArray[np.float64]
    r: npt.NDArray[np.float64]
    h: npt.NDArray[np.float64]
    degree: npt.NDArray[np.int64]
    expanded: npt.NDArray[np.bool_]
    weight: npt.NDArray[np.float64]
    eps: float
    alpha: float
    pushes: int
    edges_scanned: int
    probes: int
    rounds: int
    residual_l1: float
    seconds: float

    @property
    def pairs_touched(self) -> int:
        return len(self.pairs)

    @property
    def pairs_expanded(self) -> int:
        return int(self.expanded.sum())

    @property
    def degrees_counted(self) -> int:
        return int((self.degree >= 0).sum())

    def error_bound(self, local: npt.ArrayLike | None = None) -> npt.NDArray[np.float64]:
        """Certified bound on |x*_k - x_k| for the touched pairs at local positions ``local``.

        min(eps v_k, ||r||_1) / (1 - alpha), with v_k = deg_S(k) (restricted) for an expanded
        pair whose deg_S was counted; for any other pair only ||r||_1 / (1 - alpha) is used.
        """
        idx = np.arange(len(self.pairs)) if local is None else np.asarray(local, dtype=np.int64)
        glob = np.full(len(idx), self.residual_l1)
        known = self.degree[idx] >= 0
        glob[known] = np.minimum(self.eps * self.weight[idx][known], self.residual_l1)
        return glob / (1.0 - self.alpha)


class QueryEngine:
    """Answers counterpart queries on two networks and a candidate set, one node at a time.

    Building it costs O(m) once (a B-side index of the candidates and one int64 slot per
    candidate, reset entry by entry after each query); each query then touches only the part
    of the product graph its push reaches.

    Parameters
    ----------
    net_a, net_b : Network
    cand : CandidateSet
        The candidate pairs; with seeds, they must include the seed pairs
        (:func:`aligner.priors.seeds.add_seed_pairs`).
    alpha : float in [0, 1)
    tol : float in (0, 1)
        Push tolerance relative to the mass of h (see :data:`DEFAULT_QUERY_TOL`).
    normalization : {"restricted", "product"}
    seeds : SeedTable, optional
    seed_weight : float >= 0
    max_pushes : int, optional
        Cap on the pushes of one query (default 10^8).
    """

    def __init__(self, net_a: Network, net_b: Network, cand: CandidateSet, *, alpha: float = AlignConfig.alpha,
                 tol: float = DEFAULT_QUERY_TOL, normalization: str = AlignConfig.normalization,
                 seeds: SeedTable | None = None, seed_weight: float = AlignConfig.seed_weight,
                 max_pushes: int | None = None):
        self.alpha = check_real(alpha, "alpha", low=0.0, high=1.0, closed="left")
        self.tol = check_real(tol, "tol", low=0.0, high=1.0, closed="neither")  # as QueryConfig.tol
        self.normalization = check_choice(normalization, "normalization", NORMALIZATIONS)
        self.seed_weight = check_real(seed_weight, "seed_weight", low=0.0)
        # a cap past the largest int64 is never reached: held as that largest value, which the compiled push takes
        self.max_pushes = 10**8 if max_pushes is None else min(check_int(max_pushes, "max_pushes", low=0), _INT64_MAX)
        self.net_a, self.net_b, self.cand = net_a, net_b, cand
        self.seeds = seeds
        self._c_a, self._c_b = cand.ends
        self._b_order = stable_order(self._c_b, cand.n2)  # argsort(kind="stable") by counting, O(m + n2)
        self._b_indptr = np.zeros(cand.n2 + 1, dtype=np.int64)
        np.cumsum(np.bincount(self._c_b, minlength=cand.n2), out=self._b_indptr[1:])
        self._slot = np.full(cand.m, -1, dtype=np.int64)
        self._deg_a = net_a.degree.astype(np.int64)
        self._deg_b = net_b.degree.astype(np.int64)
        self._seed_idx = np.empty(0, dtype=np.int64) if seeds is None else seed_index(cand, seeds)
        self._h = seed_vector(cand.prior, self._seed_idx, self.seed_weight)
        self._answer_index = None
        self._mate_a = np.full(cand.n1, -1, dtype=np.int64)
        self._mate_b = np.full(cand.n2, -1, dtype=np.int64)
        if seeds is not None and seeds.n:
            self._mate_a[seeds.pairs[:, 0]] = self._seed_idx
            self._mate_b[seeds.pairs[:, 1]] = self._seed_idx

    @classmethod
    def from_problem(cls, problem, query: QueryConfig | None = None) -> "QueryEngine":
        """An engine over a prepared problem (:func:`aligner.pipeline.prepare`), with its options."""
        cfg, q = problem.config, query or QueryConfig()
        return cls(problem.network_a, problem.network_b, problem.candidates, alpha=cfg.alpha, tol=q.tol,
                   normalization=cfg.normalization, seeds=problem.inputs.seeds, seed_weight=cfg.seed_weight,
                   max_pushes=q.max_pushes)

    def answer_index(self):
        """The :class:`~aligner.analysis.answer.AnswerIndex` every answer of this engine shares (one
        pass over the product graph's rows, counted and not stored), built on the first call."""
        from aligner.analysis.answer import AnswerIndex

        if self._answer_index is None:
            self._answer_index = AnswerIndex(self)
        return self._answer_index

    def answer(self, node: int, side: str = "a", *, max_pairs: int | None = None):
        """The counterpart the global assignment gives ``node``, solved on a region around it, with
        whether it is certified (:func:`aligner.analysis.answer.answer`)."""
        from aligner.analysis.answer import DEFAULT_MAX_PAIRS, answer

        return answer(self, self.answer_index(), node, check_choice(side, "side", SIDES),
                      max_pairs=DEFAULT_MAX_PAIRS if max_pairs is None else max_pairs)

    def warm_up(self) -> None:
        """Load (or compile) the push kernel, so that the first query's timing is its own."""
        none_i = np.empty(0, dtype=np.int64)
        _local_push(self.net_a.indptr, self.net_a.indices, self.net_b.indptr, self.net_b.indices,
                    self.cand.a_indptr, self._c_a, self._c_b, self._deg_a, self._deg_b,
                    self.normalization == "restricted", self._slot, none_i, np.empty(0, dtype=np.float64), none_i,
                    self.alpha, self.tol, 0)
        _reset_slots(self._slot, none_i)

    # ----------------------------------------------------------------- the pieces of a query

    def candidates_of(self, node: int, side: str = "a") -> npt.NDArray[np.int64]:
        """Global candidate indices of the pairs of ``node`` (of A for side a, of B for side b)."""
        if side == "a":
            return np.arange(self.cand.a_indptr[node], self.cand.a_indptr[node + 1], dtype=np.int64)
        return np.sort(self._b_order[self._b_indptr[node]:self._b_indptr[node + 1]])

    def seeds_near(self, node: int, side: str = "a") -> npt.NDArray[np.int64]:
        """Candidate indices of the seed pairs next to ``node``: (s, s') with s in N_A(node) (side a)."""
        if not len(self._seed_idx):
            return np.empty(0, dtype=np.int64)
        net, mate = (self.net_a, self._mate_a) if side == "a" else (self.net_b, self._mate_b)
        nb = net.indices[net.indptr[node]:net.indptr[node + 1]]
        got = mate[nb]
        return np.unique(got[got >= 0])

    def personalization(self, node: int, side: str = "a") -> tuple[npt.NDArray[np.int64], npt.NDArray[np.float64]]:
        """The query's h: align's h restricted to the node's candidates and the seeds next to it.

        align's h is ``seed_vector(prior, seeds, seed_weight)`` (the prior normalised to sum 1,
        plus ``seed_weight`` spread over the seed pairs). The query keeps its entries on the
        asked node's candidate pairs and on the seed pairs next to the node, and normalises
        them to sum 1 (uniform over the node's candidates when they are all 0).
        """
        own = self.candidates_of(node, side)
        near = self.seeds_near(node, side)
        idx = np.unique(np.concatenate([own, near]))
        h = self._h[idx].copy()
        if h.sum() <= 0:
            h = np.isin(idx, own).astype(np.float64)
        total = h.sum()
        return idx, (h / total if total > 0 else h)

    def solve(self, node: int, side: str = "a", *, idx=None, h=None) -> LocalSolution:
        """The local push from the node's h (or from a given sparse ``idx``, ``h``)."""
        side = check_choice(side, "side", SIDES)
        if idx is None:
            idx, h = self.personalization(node, side)
        own = self.candidates_of(node, side)
        idx = np.ascontiguousarray(idx, dtype=np.int64)
        h = np.ascontiguousarray(h, dtype=np.float64)
        mass = float(h.sum())
        eps = self.tol * mass
        t0 = time.perf_counter()
        try:
            ints, floats, pool, pushes, scanned, probes, rounds, res, capped = _local_push(
                self.net_a.indptr, self.net_a.indices, self.net_b.indptr, self.net_b.indices, self.cand.a_indptr,
                self._c_a, self._c_b, self._deg_a, self._deg_b, self.normalization == "restricted", self._slot,
                idx, h, own, self.alpha, eps, self.max_pushes)
        except BaseException:
            self._slot[:] = -1  # rare: leave the engine usable
            raise
        _reset_slots(self._slot, ints[:, 0])
        seconds = time.perf_counter() - t0
        if capped:
            raise ConvergenceError(f"the query's push reached its cap of {self.max_pushes:,} pushes before the "
                                   "tolerance", iterations=int(pushes), residual=float(res),
                                   advice=(("raise {}", "max_pushes", None), ("raise {}", "tol", None),
                                           ("lower {}", "alpha", None)))
        return LocalSolution(pairs=ints[:, 0].copy(), x=floats[:, 0].copy(), r=floats[:, 1].copy(),
                             h=floats[:, 2].copy(), degree=ints[:, 2].copy(), expanded=ints[:, 1] >= 0,
                             weight=floats[:, 4].copy(),
                             eps=eps, alpha=self.alpha, pushes=int(pushes), edges_scanned=int(scanned),
                             probes=int(probes), rounds=int(rounds), residual_l1=float(res), seconds=seconds)

    def counterparts(self, node: int, side: str = "a", top: int | None = 10) -> tuple[pd.DataFrame, dict]:
        """The node's best counterparts by score, and the work of the query.

        Returns a table with columns ``rank, counterpart, score, error_bound, prior, support,
        fixed`` (counterparts as node indices) and a dict of work figures. With seeds, a node
        in a seed pair gets its seed partner only (``fixed`` True); candidates whose partner
        is fixed to another node by a seed are left out (``excluded_by_seeds`` counts them),
        as in the rounding of :func:`aligner.align`.
        """
        side = check_choice(side, "side", SIDES)
        own = self.candidates_of(node, side)
        idx, h = self.personalization(node, side)
        sol = self.solve(node, side, idx=idx, h=h)
        order = np.argsort(sol.pairs)
        loc = order[np.searchsorted(sol.pairs[order], own)]  # every own pair is touched (expanded first)
        other_col = 1 if side == "a" else 0
        mate_self = self._mate_a if side == "a" else self._mate_b
        mate_other = self._mate_b if side == "a" else self._mate_a
        fixed = np.zeros(len(own), dtype=bool)
        keep = np.ones(len(own), dtype=bool)
        if mate_self[node] >= 0:
            fixed = own == mate_self[node]
            keep = fixed
        elif len(self._seed_idx):
            keep = mate_other[self.cand.pairs[own, other_col]] < 0
        score = sol.x[loc]
        prior = self.cand.prior[own]
        other = self.cand.pairs[own, other_col].astype(np.int64)
        tab = pd.DataFrame({"counterpart": other, "score": score, "error_bound": sol.error_bound(loc),
                            "prior": prior, "support": sol.degree[loc], "fixed": fixed})[keep]
        tab = tab.sort_values(["score", "prior", "counterpart"], ascending=[False, False, True], kind="stable")
        if top is not None:
            tab = tab.head(top)
        tab.insert(0, "rank", np.arange(1, len(tab) + 1))
        work = {"candidates": int(len(own)), "seeds_near": int(len(self.seeds_near(node, side))),
                "excluded_by_seeds": int((~keep).sum()) if mate_self[node] < 0 else 0,
                "pairs_touched": sol.pairs_touched, "pairs_expanded": sol.pairs_expanded,
                "degrees_counted": sol.degrees_counted,
                "product_edges_scanned": sol.edges_scanned, "search_probes": sol.probes, "pushes": sol.pushes,
                "residual_l1": sol.residual_l1, "eps": sol.eps, "seconds": round(sol.seconds, 6)}
        return tab.reset_index(drop=True), work


@dataclass(frozen=True, eq=False)
class QueryResult:
    """The answer to a counterpart query.

    Attributes
    ----------
    table : DataFrame
        One row per (asked node, counterpart): ``query`` (the asked node), ``side`` (a: the
        asked node is in A and counterparts in B; b: the reverse), ``rank``, ``counterpart``,
        ``score`` (diffusion score x), ``error_bound`` (certified bound on |x - x*|, see
        :class:`LocalSolution`), ``prior`` (prior similarity after the score-kind
        transformation; the derived seed score without a prior), ``support`` (conserved-edge
        support: the number of product-graph neighbours of the pair, i.e. of candidate pairs
        (j, j') with (node, j) an edge of A and (counterpart, j') an edge of B -- each an edge
        that matching both pairs would conserve), ``fixed`` (the pair is a seed).
    work : DataFrame
        One row per asked node: its candidates, the seeds next to it, pairs touched and
        expanded, product edges scanned, binary-search probes, pushes, final residual, eps and
        seconds.
    summary : dict
        Parameters and sizes, plus ``queries``: the same figures as JSON-ready records (with an
        ``answer`` record each when answers were asked for).
    answers : DataFrame
        One row per asked node (with ``answer`` on): ``counterpart``, the node the global
        assignment of the diffusion scores gives it as solved on a region around it (None:
        unmatched); ``certified``, whether every maximum-weight assignment of the exact scores
        provably agrees (:func:`aligner.analysis.answer.certify`); ``margin``, the certificate's
        least exchange cost in score units (> 0 when certified); ``score``, the pair's point
        estimate; ``runner_up`` (the node's best other counterpart) and ``rival`` (the best other
        claimant of the counterpart), by point estimate; ``fixed`` (a seed pair); the work:
        ``region_rows``, ``region_pairs``, ``layers``, ``pairs_touched`` (held by its push),
        ``pushes``, ``seconds``.
    """

    table: pd.DataFrame
    work: pd.DataFrame
    summary: dict = field(default_factory=dict)
    answers: pd.DataFrame = field(default_factory=lambda: pd.DataFrame(columns=ANSWER_COLUMNS))

    def as_dict(self) -> dict:
        return self.summary


def _node_index(net: Network, name: str, side: str, origin: tuple[str, int] | None = None) -> int:
    """The index of an asked node; ``origin`` (file, line) is where a node file names it, for the message."""
    from aligner.core.identifiers import lookup

    i = int(lookup(net.names, np.array([str(name)], dtype=object))[0])
    if i < 0:
        here, there = ("A", "b") if side == "a" else ("B", "a")
        text = (f"{name!r} is not a node of network {here}; check the name (for a node of network "
                f"{'B' if there == 'b' else 'A'}, ask with --side {there}).")
        if origin is not None:
            raise InputFormatError(text, path=origin[0], line=origin[1])
        raise InvalidParameterError(text)
    return i


def _node_list(nodes, node_file=None) -> tuple[list[str], list[tuple[str, int] | None]]:
    """The asked nodes (``nodes``, then those of ``node_file``) and where each was named: None for
    ``nodes``, (file, line) for a node file's."""
    if nodes is None:
        nodes = []
    elif isinstance(nodes, (str, os.PathLike)) or not hasattr(nodes, "__iter__"):
        nodes = [nodes]
    nodes = [str(v) for v in nodes]
    origins: list[tuple[str, int] | None] = [None] * len(nodes)
    if node_file is not None:
        path = os.fspath(node_file)
        names, lines = read_node_list(path)
        if not names and not nodes:
            raise InputFormatError("holds no node: give one node identifier per line (blank lines and lines "
                                   "starting with # are skipped)", path=path)
        nodes += names
        origins += [(path, line) for line in lines]
    if not nodes:
        raise InvalidParameterError("nodes must name at least one node; got none", param="nodes")
    return nodes, origins


def _labels(net: Network):
    """The node names to report: the input's own node objects where it had them (a graph's
    integers, say), else the names."""
    return net.names if net.labels is None else net.labels


def _split_options(config, query_config, options: dict) -> tuple[AlignConfig, QueryConfig]:
    """Keyword options to the two configuration objects: the query's own first (its ``tol`` is
    relative to the query's mass), the alignment's for the rest."""
    own = {k: v for k, v in options.items() if k in specs(QueryConfig)}
    rest = {k: v for k, v in options.items() if k not in own}
    cfg = from_options(AlignConfig, config, rest)
    if cfg.directed or cfg.weighted:
        raise InvalidParameterError("counterpart queries read undirected, unweighted networks; drop "
                                    f"{'directed' if cfg.directed else 'weighted'}",
                                    param="directed" if cfg.directed else "weighted")
    return cfg, from_options(QueryConfig, query_config, own)


def _answer_row(name: str, side: str, got, own_names, other_names) -> dict:
    """One row of the answers table from an :class:`aligner.analysis.answer.Answer`."""
    def other(i):
        return other_names[i] if i >= 0 else None

    return {"query": name, "side": side, "counterpart": other(got.counterpart), "certified": got.certified,
            "margin": got.margin, "score": got.score, "runner_up": other(got.runner_up),
            "rival": own_names[got.rival] if got.rival >= 0 else None, "fixed": got.fixed,
            "region_rows": got.rows, "region_pairs": got.pairs, "layers": got.layers,
            "pairs_touched": got.pairs_touched, "pushes": got.pushes, "seconds": round(got.seconds, 6)}


def _answer(engine: QueryEngine, name: str, node: int, qcfg: QueryConfig, other_names) -> tuple:
    """One asked node's table, work figures and JSON record."""
    side = qcfg.side
    tab, work = engine.counterparts(node, side, qcfg.top)
    if work["candidates"] == 0:
        warn(f"{name!r} has no candidate pairs (no prior row, or none above the minimum score); "
             "it has no counterparts to rank")
    tab["counterpart"] = other_names[tab["counterpart"].to_numpy()] if len(tab) else pd.Series(dtype=object)
    tab.insert(0, "side", side)
    tab.insert(0, "query", name)
    record = {"query": name, "side": side, "counterparts": tab.drop(columns=["query", "side"])
              .to_dict(orient="records"), "work": work}
    return tab, {"query": name, "side": side} | work, record


@with_options(QueryConfig, AlignConfig, names=("side", "top", "tol", "max_pushes", "answer", "max_region_pairs",
                                               "alpha", "top_k", "min_score", "score_kind", "normalization",
                                               "seed_weight", "delimiter", "header", "prior_columns"))
def query(network_a, network_b, prior=None, *, nodes=None, node_file=None, seeds=None,
          config: AlignConfig | None = None, query: QueryConfig | None = None, **options: Any) -> QueryResult:
    """Which nodes of B best correspond to these nodes of A (or the reverse), without a global solve.

    Parameters
    ----------
    network_a, network_b, prior, seeds, config :
        As for :func:`aligner.align`; the prior may be left out when ``seeds`` are given (the
        candidates are then grown from the seeds, a global step).
    nodes : str or iterable of str
        The asked nodes (of A for side "a", of B for side "b").
    node_file : path, optional
        A file of further nodes to ask about, one per line (``#`` comments and blank lines
        skipped, gzip allowed; :func:`aligner.io.readers.read_node_list`), asked after ``nodes``.
        A node it names that is not in the network is an error naming the file and line.
    query : QueryConfig, optional
        The query's own options; keyword options override it.
{options}

    Returns
    -------
    QueryResult

    Notes
    -----
    The query starts from the same prepared problem as :func:`aligner.align`
    (:func:`aligner.pipeline.prepare`, without the product graph). Its h is align's h restricted
    to the asked node's candidate pairs (and to the seed pairs next to the node) and normalised to
    sum 1; the push runs to the tolerance ``tol`` relative to that mass. The scores are those of
    the exact solution of x = alpha P x + (1 - alpha) h over the whole candidate set, to within
    the certified bound; the product graph is not built.
    """
    cfg, qcfg = _split_options(config, query, options)
    nodes, origins = _node_list(nodes, node_file)
    if prior is None and seeds is None:
        raise InvalidParameterError("query needs a prior or seeds: give a prior similarity table (--prior), or "
                                    "anchor pairs (--seeds)", param="prior")
    t0 = time.perf_counter()
    problem = prepare(network_a, network_b, prior, seeds=seeds, config=cfg, with_product=False)
    net_a, net_b = problem.network_a, problem.network_b
    for net in (net_a, net_b):
        if net.weighted:
            warn(f"{net.source}: counterpart queries read networks undirected and unweighted; its weight column is "
                 "not used (aligner align --weighted uses it)")
    asked = [_node_index(net_a if qcfg.side == "a" else net_b, v, qcfg.side, origin)
             for v, origin in zip(nodes, origins)]
    engine = QueryEngine.from_problem(problem, qcfg)
    engine.warm_up()
    prep = time.perf_counter() - t0
    # a graph's own node objects (integers, say) come back in the tables, as in align's
    own_names, other_names = (_labels(net_a), _labels(net_b)) if qcfg.side == "a" else (_labels(net_b), _labels(net_a))
    own_net = net_a if qcfg.side == "a" else net_b
    if own_net.labels is not None:
        nodes = [own_names[node] for node in asked]
    answers = [_answer(engine, name, node, qcfg, other_names) for name, node in zip(nodes, asked)]
    tables, works, records = zip(*answers)
    table = pd.concat(tables, ignore_index=True)[TABLE_COLUMNS]
    index_seconds = None
    rows = []
    if qcfg.answer:
        t1 = time.perf_counter()
        engine.answer_index()  # built once for every answer; timed apart
        index_seconds = time.perf_counter() - t1
        for name, node, record in zip(nodes, asked, records):
            got = engine.answer(node, qcfg.side, max_pairs=qcfg.max_region_pairs)
            row = _answer_row(name, qcfg.side, got, own_names, other_names)
            record["answer"] = {k: v for k, v in row.items() if k not in ("query", "side")}
            rows.append(row)
    answer_table = pd.DataFrame(rows, columns=ANSWER_COLUMNS)
    for col in ("query", "counterpart", "runner_up", "rival"):  # nodes, None where there is none
        answer_table[col] = pd.Series([row[col] for row in rows], dtype=object)
    summary = {
        "parameters": {"side": qcfg.side, "top": qcfg.top, "alpha": cfg.alpha, "tol": qcfg.tol, "top_k": cfg.top_k,
                       "min_score": cfg.min_score, "score_kind": cfg.score_kind, "normalization": cfg.normalization,
                       "seed_weight": cfg.seed_weight if problem.inputs.seeds is not None else None},
        "sizes": {"nodes_a": net_a.n, "nodes_b": net_b.n, "candidates": problem.candidates.m,
                  "seeds": 0 if problem.inputs.seeds is None else problem.inputs.seeds.n},
        "preparation_seconds": round(prep, 4),
        "answer_index_seconds": None if index_seconds is None else round(index_seconds, 4),
        "queries": list(records),
    }
    return QueryResult(table=table, work=pd.DataFrame(list(works)), summary=_jsonable(summary), answers=answer_table)


query.__doc__ = query.__doc__.format(options=describe(QueryConfig) + "\n" + describe(
    AlignConfig, ["alpha", "top_k", "min_score", "score_kind", "normalization", "seed_weight", "delimiter", "header"]))


def _jsonable(obj):
    if isinstance(obj, dict):
        return {k: _jsonable(v) for k, v in obj.items()}
    if isinstance(obj, (list, tuple)):
        return [_jsonable(v) for v in obj]
    if isinstance(obj, np.generic):
        obj = obj.item()
    if isinstance(obj, float) and not math.isfinite(obj):
        return None
    return obj
