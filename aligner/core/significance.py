"""How likely is the observed number of conserved edges by chance?

Two nulls:

* :func:`random_bijection_moments` — the exact mean and variance of the conserved edges under a
  uniformly random one-to-one map between the matched node sets, in closed form, and the
  z-score of the observed count;
* :func:`candidate_permutation_test` — an empirical p-value from random one-to-one maps that use
  candidate pairs only (seeded), with the (1 + #{C_null >= C_obs}) / (N + 1) estimate
  (Davison & Hinkley 1997; Phipson & Smyth 2010).
"""

from __future__ import annotations

import math
from collections import deque
from concurrent.futures import ThreadPoolExecutor
from typing import Callable

import numpy as np
import numpy.typing as npt

from aligner.core.candidates import CandidateSet
from aligner.core.rounding import round_matching
from aligner.core.scoring import conserved_mask, partner_map
from aligner.kernels.product import thread_count
from aligner.kernels.scoring import induced_degrees

__all__ = ["random_bijection_moments", "candidate_permutation_test", "significance"]


def _induced(edges: npt.NDArray[np.integer], nodes: npt.NDArray[np.integer], n: int):
    """Edge count and degree sequence of the subgraph induced by ``nodes``."""
    inside = np.zeros(n, dtype=bool)
    inside[nodes] = True
    e = np.asarray(edges, dtype=np.int64).reshape(-1, 2)
    m, deg = induced_degrees(np.ascontiguousarray(e[:, 0]), np.ascontiguousarray(e[:, 1]), inside, n)
    return int(m), deg[nodes].astype(np.float64)


def _falling(k: int, r: int) -> float:
    out = 1.0
    for t in range(r):
        out *= k - t
    return out


def moments_from_degrees(k: int, m_a: int, deg_a, m_b: int, deg_b) -> tuple[float, float]:
    """E[C] and Var[C] for a uniform random bijection between two k-node graphs with m_a, m_b
    edges and degree sequences deg_a, deg_b (see :func:`random_bijection_moments`)."""
    deg_a = np.asarray(deg_a, dtype=np.float64)
    deg_b = np.asarray(deg_b, dtype=np.float64)
    if k < 2 or m_a == 0 or m_b == 0:
        return 0.0, 0.0
    pairs = k * (k - 1) / 2.0
    mean = m_a * m_b / pairs
    s_a, s_b = float((deg_a * (deg_a - 1)).sum()), float((deg_b * (deg_b - 1)).sum())
    d_a, d_b = m_a * (m_a - 1) - s_a, m_b * (m_b - 1) - s_b
    second = mean  # same edge twice
    if k >= 3:
        second += s_a * s_b / _falling(k, 3)
    if k >= 4:
        second += 4.0 * d_a * d_b / _falling(k, 4)
    return mean, max(second - mean * mean, 0.0)


def random_bijection_moments(edges_a, edges_b, matched, n1: int, n2: int, observed: int | None = None) -> dict:
    """Exact mean and variance of the conserved edges under a uniformly random bijection.

    Let V be the k matched nodes of A, W = f(V) their images in B, A' = A[V] and B' = B[W] the
    induced subgraphs with m_A and m_B edges and degrees a_v, b_w. Only edges of A' can be
    conserved, so for a bijection s: V -> W the count is

        C(s) = sum over edges e = {u, v} of A' of 1[{s(u), s(v)} in E(B')].

    With s uniform over the k! bijections:

    * **Mean.** For one edge, {s(u), s(v)} is a uniform unordered pair of W, one of
      N = k(k-1)/2, so P = m_B / N and E[C] = m_A m_B / N.
    * **Second moment.** E[C^2] = sum over ordered pairs (e, e') of edges of A' of
      P(both map onto edges). Three kinds of pair:

      - e = e' (m_A pairs): probability m_B / N.
      - e, e' share one node, e = {u, v}, e' = {u, w}: (s(u), s(v), s(w)) is a uniform
        ordered triple of distinct nodes of W, one of (k)_3 = k(k-1)(k-2); the triples
        (x, y, z) with xy and xz edges of B' number S_B = sum_w b_w (b_w - 1). There are
        S_A = sum_v a_v (a_v - 1) such ordered pairs in A', giving S_A S_B / (k)_3.
      - e, e' disjoint: (s(u), s(v), s(w), s(x)) is a uniform ordered 4-tuple of distinct
        nodes, one of (k)_4; each ordered pair of disjoint edges of B' gives 4 such tuples
        (two orientations each). With D = m(m-1) - S ordered disjoint pairs on each side:
        4 D_A D_B / (k)_4.

      Var[C] = m_A m_B / N + S_A S_B / (k)_3 + 4 D_A D_B / (k)_4 - E[C]^2.

    This is the edge-overlap count of two fixed graphs under a random relabelling (a
    quadratic-assignment statistic; its first two moments follow Mantel 1967 and Hubert &
    Schultz 1976). Returns ``mean``, ``variance``, ``sd``, ``k``, ``edges_a_induced``,
    ``edges_b_induced`` and, when ``observed`` is given, ``observed`` and ``z`` =
    (observed - mean) / sd (None when sd = 0).
    """
    matched = np.asarray(matched, dtype=np.int64).reshape(-1, 2)
    k = len(matched)
    m_a, deg_a = _induced(edges_a, matched[:, 0], n1)
    m_b, deg_b = _induced(edges_b, matched[:, 1], n2)
    mean, var = moments_from_degrees(k, m_a, deg_a, m_b, deg_b)
    sd = math.sqrt(var)
    out = {"k": k, "edges_a_induced": int(m_a), "edges_b_induced": int(m_b), "mean": mean, "variance": var,
           "sd": sd}
    if observed is not None:
        out["observed"] = int(observed)
        out["z"] = (observed - mean) / sd if sd > 0 else None
    return out


def candidate_permutation_test(
    edges_a, edges_b, cand: CandidateSet, observed: int, *, permutations: int = 100, seed: int = 0,
    progress: Callable[[int, int], None] | None = None,
) -> dict:
    """Empirical p-value of ``observed`` conserved edges against random maps over the candidates.

    Each null map is the maximum-weight one-to-one matching of the candidate pairs under
    independent weights 1 + U(0, 1) (numpy's default generator, seeded): a random map that only
    uses candidate pairs and, since every weight is at least 1, tends to match about as many
    nodes as the alignment does. p = (1 + #{C_null >= observed}) / (N + 1), the estimate that
    counts the observed map as one of the N + 1 (Davison & Hinkley 1997; Phipson & Smyth 2010),
    so it is never 0. ``progress(done, total)`` is called after every map.
    """
    n = int(permutations)
    rng = np.random.default_rng(seed)
    edges_a = np.asarray(edges_a, dtype=np.int64).reshape(-1, 2)
    edges_b = np.asarray(edges_b, dtype=np.int64).reshape(-1, 2)
    null = np.zeros(n, dtype=np.int64)
    sizes = np.zeros(n, dtype=np.int64)

    def null_map(w):  # conserved edges and matched pairs of one null map
        match = round_matching(cand, w, method="sparse")
        p = cand.pairs[match.index].astype(np.int64)
        return int(conserved_mask(edges_a, edges_b, partner_map(p, cand.n1), cand.n2).sum()), len(p)

    # the maps are independent: solved on every core (the kernels release the GIL), their weights
    # drawn in order from the one generator, so the result is that of one thread; a few maps in
    # flight at a time, so that memory stays a few weight vectors
    workers = thread_count() if n > 1 else 1
    flight: deque = deque()  # (map, its future), oldest first

    def collect():
        t, future = flight.popleft()
        null[t], sizes[t] = future.result()
        if progress is not None:
            progress(t + 1, n)

    with ThreadPoolExecutor(workers) as pool:
        for t in range(n):
            flight.append((t, pool.submit(null_map, 1.0 + rng.random(cand.m))))
            if len(flight) > workers:
                collect()
        while flight:
            collect()
    ge = int((null >= observed).sum())
    return {"permutations": n, "seed": seed, "observed": int(observed),
            "null_mean": float(null.mean()) if n else None, "null_sd": float(null.std(ddof=1)) if n > 1 else None,
            "null_max": int(null.max()) if n else None, "null_matched_mean": float(sizes.mean()) if n else None,
            "at_least_observed": ge, "p_value": (1 + ge) / (n + 1)}


def significance(edges_a, edges_b, cand: CandidateSet, matched, observed: int, *, permutations: int = 0,
                 seed: int = 0, progress: Callable[[int, int], None] | None = None) -> dict:
    """Both nulls as one dict (the ``significance`` entry of summary.json); the empirical test
    only when ``permutations > 0``."""
    out = {"random_bijection": random_bijection_moments(edges_a, edges_b, matched, cand.n1, cand.n2, observed),
           "candidate_maps": None}
    if permutations > 0:
        out["candidate_maps"] = candidate_permutation_test(edges_a, edges_b, cand, observed,
                                                           permutations=permutations, seed=seed, progress=progress)
    return out
