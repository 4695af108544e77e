"""From whatever a caller holds to the canonical objects the stages take.

Every input of the pipeline can be a path, a pandas DataFrame, a networkx graph (networks only),
an iterable of pairs (pair tables), or an object already read; each ``as_*`` function here is
the one place that decides which, so the readers only parse and the stages only compute.
"""

from __future__ import annotations

import os
import warnings

import numpy as np
import pandas as pd

from aligner.core.network import Network, network_from_edges
from aligner.errors import AlignerWarning, InputFormatError, InvalidParameterError, NoCandidatesError
from aligner.io.readers import PairTable, PriorTable, _lookup, prior_from_columns, read_network, read_pairs, read_prior

__all__ = ["as_network", "as_prior", "as_pairs", "known_pairs"]


def as_network(obj, *, delimiter: str | None = None, header: str = "auto", name: str = "network",
               directed: bool = False) -> Network:
    """A :class:`Network` from a path, a networkx graph, an edge DataFrame or a Network.

    ``directed``: rows (or a networkx DiGraph's edges) are arcs; a Network given must then be
    a directed one.
    """
    if isinstance(obj, Network):
        if directed and not obj.directed:
            raise InvalidParameterError(f"The '{name}' parameter of align is an undirected Network, but directed "
                                        "alignment was asked for; build it with directed=True.")
        return obj
    if isinstance(obj, (str, os.PathLike)):
        return read_network(obj, delimiter=delimiter, header=header, directed=directed)
    try:
        import networkx as nx
    except ImportError:  # pragma: no cover - networkx is a dependency
        nx = None
    if nx is not None and isinstance(obj, nx.Graph):
        if obj.is_directed() != directed:
            raise InvalidParameterError(
                f"The '{name}' parameter of align must be an undirected graph; got a directed one (pass "
                "directed=True to align by direction, or use graph.to_undirected())." if not directed else
                f"The '{name}' parameter of align must be a directed graph when directed=True; got an "
                "undirected one (use graph.to_directed(), which gives each edge both directions).")
        nodes = [str(v) for v in obj.nodes()]
        if len(set(nodes)) != len(nodes):
            raise InvalidParameterError(f"The '{name}' parameter of align has nodes whose string forms clash.")
        names = np.array(sorted(nodes), dtype=object)
        pos = {v: i for i, v in enumerate(names)}
        edges = [(pos[str(u)], pos[str(v)]) for u, v in obj.edges()]
        e = np.array(edges, dtype=np.int64).reshape(-1, 2)
        w = None
        if obj.number_of_edges() and all("weight" in d for _, _, d in obj.edges(data=True)):
            w = np.array([float(d["weight"]) for _, _, d in obj.edges(data=True)])
        return network_from_edges(names, e[:, 0], e[:, 1], w, source=f"<networkx {name}>", directed=directed)
    if isinstance(obj, pd.DataFrame):
        if obj.shape[1] < 2:
            raise InvalidParameterError(f"The '{name}' parameter of align must have at least two columns "
                                        f"(node, node[, weight]). Got {obj.shape[1]} instead.")
        a = obj.iloc[:, 0].astype(str).to_numpy(dtype=object)
        b = obj.iloc[:, 1].astype(str).to_numpy(dtype=object)
        w = None
        if obj.shape[1] >= 3:
            w = pd.to_numeric(obj.iloc[:, 2], errors="coerce").to_numpy(dtype=np.float64)
            if not np.isfinite(w).all() or (w < 0).any():
                raise InvalidParameterError(f"The '{name}' parameter of align has a weight that is not a "
                                            "finite non-negative number.")
        codes, names = pd.factorize(np.concatenate([a, b]), sort=True)
        return network_from_edges(np.asarray(names, dtype=object), codes[: len(a)], codes[len(a):], w,
                                  source=f"<DataFrame {name}>", directed=directed)
    raise InvalidParameterError(f"The '{name}' parameter of align must be a path, a networkx graph, a pandas "
                                f"DataFrame or a Network. Got {type(obj).__name__} instead.")


def as_prior(obj, net_a: Network, net_b: Network, kind: str, delimiter, header) -> PriorTable:
    if isinstance(obj, PriorTable):
        return obj
    if isinstance(obj, (str, os.PathLike)):
        return _prior_notes(read_prior(obj, net_a, net_b, kind=kind, delimiter=delimiter, header=header))
    if isinstance(obj, pd.DataFrame):
        if obj.shape[1] < 3:
            raise InvalidParameterError("The 'prior' parameter of align must have three columns "
                                        f"(node_a, node_b, score). Got {obj.shape[1]} instead.")
        values = pd.to_numeric(obj.iloc[:, 2], errors="coerce").to_numpy(dtype=np.float64)
        return _prior_notes(prior_from_columns(obj.iloc[:, 0].astype(str).to_numpy(dtype=object),
                                               obj.iloc[:, 1].astype(str).to_numpy(dtype=object), values, net_a,
                                               net_b, kind=kind, source="<DataFrame prior>", line_of=lambda r: None))
    raise InvalidParameterError("The 'prior' parameter of align must be a path or a pandas DataFrame. "
                                f"Got {type(obj).__name__} instead.")


def _prior_notes(t: PriorTable) -> PriorTable:
    """Warn about merged duplicate pairs and rows dropped by the score kind; refuse a prior they empty."""
    if t.n_duplicates:
        warnings.warn(f"{t.source}: {t.n_duplicates} prior rows repeat a pair given on another row; each pair "
                      "keeps its highest score", AlignerWarning, stacklevel=3)
    if t.n_dropped_kind:
        known = t.n_rows - t.n_unknown
        if len(t.pairs) == 0 and t.n_dropped_kind == known:
            raise NoCandidatesError(f"{t.source}: every one of the {known} prior rows naming known nodes has an "
                                    "E-value above 1, and --score-kind evalue drops such rows as no evidence of "
                                    "similarity; if the third column is a similarity score, use --score-kind "
                                    "similarity")
        warnings.warn(f"{t.source}: {t.n_dropped_kind} of {t.n_rows} prior rows have an E-value above 1 and were "
                      "dropped as no evidence of similarity", AlignerWarning, stacklevel=3)
    return t


def known_pairs(t: PairTable, what: str) -> PairTable:
    """Refuse a pair table none of whose rows names a node of A and a node of B."""
    if t.n_rows and len(t.pairs) == 0:
        raise InputFormatError(f"none of its {t.n_rows} rows names a node of network A in the first column and "
                               f"a node of network B in the second, so the {what} is of no use; are the columns "
                               "swapped, or are these the wrong networks?", path=str(t.source))
    return t


def as_pairs(obj, net_a: Network, net_b: Network, what: str, delimiter, header) -> PairTable:
    if isinstance(obj, PairTable):
        return obj
    if isinstance(obj, (str, os.PathLike)):
        return read_pairs(obj, net_a, net_b, delimiter=delimiter, header=header, what=what)
    if isinstance(obj, pd.DataFrame):
        df = pd.DataFrame({"a": obj.iloc[:, 0].astype(str), "b": obj.iloc[:, 1].astype(str)})
    else:
        df = pd.DataFrame(list(obj), columns=["a", "b"]).astype(str)
    a = df["a"].to_numpy(dtype=object)
    b = df["b"].to_numpy(dtype=object)
    ia, ib = _lookup(net_a.names, a), _lookup(net_b.names, b)
    ok = (ia >= 0) & (ib >= 0)
    ex = [f"{a[r]} / {b[r]}" for r in np.flatnonzero(~ok)[:3]]
    return PairTable(np.stack([ia[ok], ib[ok]], 1).astype(np.int32), len(a), int((~ok).sum()), ex, f"<{what}>")
