"""The conserved subgraph the report draws: the largest connected component of a run's conserved
edges, cut to a breadth-first ball around its best-connected node."""

from __future__ import annotations

import numpy as np
import pandas as pd

__all__ = ["conserved_ball"]


def conserved_ball(cons: pd.DataFrame, cap: int):
    """The largest connected component of the conserved edges (on A's names), capped to ``cap``
    nodes by a breadth-first ball around its highest-degree node; and its full size.

    Found on integer ids (components by :func:`aligner.core.arrays.components`, then a
    breadth-first search that stops at ``cap`` nodes), so a run with millions of conserved edges
    costs a few array passes: only the drawn ball becomes a networkx graph. Ties: of the
    components of most nodes, the one with most edges (as the scores' LCCS), then the one whose
    smallest name comes first; the hub with the largest name, neighbours visited in name order.
    """
    import networkx as nx

    from aligner.core.arrays import components

    m = len(cons)
    if m == 0:
        return nx.Graph(), 0, 0
    # the names numbered in sorted (code point) order, by pandas' hash table on the columns as read
    codes, names = pd.factorize(pd.concat([cons["node_a1"], cons["node_a2"]], ignore_index=True).astype(str),
                                sort=True)
    n = len(names)
    u, v = codes[:m], codes[m:]
    label = components(u, v, n)
    sizes = np.bincount(label, minlength=n)
    edges = np.bincount(label[u], minlength=n)
    # of the components of most nodes, the one with most edges (the scores' LCCS rule); labels are
    # smallest members, so argmax leaves the remaining ties to the smallest name
    big = int(np.argmax(np.where(sizes == sizes.max(), edges, -1)))
    inside = label[u] == big
    u, v = u[inside], v[inside]
    full_n, full_e = int(sizes[big]), len(u)
    keep = np.flatnonzero(label == big)
    if full_n > cap:
        src, dst = np.concatenate([u, v]), np.concatenate([v, u])
        order = np.argsort(src, kind="stable")
        dst = dst[order]
        indptr = np.zeros(n + 1, dtype=np.int64)
        np.cumsum(np.bincount(src, minlength=n), out=indptr[1:])
        deg = np.diff(indptr)
        hub = int(np.flatnonzero(deg == deg.max())[-1])
        seen, ball, head = {hub}, [hub], 0
        while head < len(ball) and len(ball) < cap:  # each visited node's neighbours in name order
            for w in np.sort(dst[indptr[ball[head]]:indptr[ball[head] + 1]]).tolist():
                if w not in seen:
                    seen.add(w)
                    ball.append(w)
                    if len(ball) == cap:
                        break
            head += 1
        keep = np.asarray(ball, dtype=np.int64)
    mine = np.zeros(n, dtype=bool)
    mine[keep] = True
    both = mine[u] & mine[v]
    g = nx.Graph()
    g.add_nodes_from(names[keep].tolist())
    g.add_edges_from(zip(names[u[both]].tolist(), names[v[both]].tolist()))  # at most a ball's edges when capped
    return g, full_n, full_e
