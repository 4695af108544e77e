"""Test instances for benchmarks and tests: seeded pairs with known truth in the forms the API takes.

One place for what every benchmark needs: a base graph (:data:`GRAPHS`), its noisy relabelled
copy with a prior of decoys (:func:`noisy_relabelled`), node names (:func:`node_names`), and
the pair as networks (:func:`as_networks`), as tables (:func:`as_frames`) or as the four TSV
files the command line reads (:func:`write_instance`). For real data with a known
correspondence, :func:`read_connectome` and :func:`hidden_connectome` hide the names of two
connectomes whose neurons carry the same name in both animals.

Everything is a pure function of its arguments and seeds: equal seeds give equal instances.
"""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pandas as pd

from aligner.checks import check_choice
from aligner.datasets.synthetic import (
    SyntheticPair,
    _relabel,
    _sort_pairs,
    duplication_divergence_graph,
    noisy_prior,
    opaque_names,
    powerlaw_graph,
    relabelled_pair,
)

__all__ = ["GRAPHS", "base_graph", "noisy_relabelled", "node_names", "in_reader_order", "as_networks", "as_frames",
           "write_instance", "read_connectome", "hidden_connectome", "perturb_weights", "CONNECTOME_TASKS",
           "WEIGHT_CHANGES"]

#: base graph models: a power-law graph with clustering, and growth by duplication-divergence
GRAPHS = ("powerlaw", "dupdiv")

#: tasks of :func:`hidden_connectome`
CONNECTOME_TASKS = ("class", "noisy")
#: changes of a weighted network's weights (:func:`perturb_weights`)
WEIGHT_CHANGES = ("none", "scale-0.3", "scale-3", "poisson", "drop-weakest-20%")


def base_graph(graph: str, n: int, *, seed, **options) -> np.ndarray:
    """Canonical edge list of an ``n``-node graph of model ``graph`` (see :data:`GRAPHS`).

    ``options`` go to :func:`~aligner.datasets.synthetic.powerlaw_graph` (``m``, ``p``) or to
    :func:`~aligner.datasets.synthetic.duplication_divergence_graph` (``p_retain``, ...).
    """
    graph = check_choice(graph, "graph", GRAPHS)
    make = powerlaw_graph if graph == "powerlaw" else duplication_divergence_graph
    return make(n, seed=seed, **options)


def noisy_relabelled(n: int, *, graph: str = "powerlaw", graph_options: dict | None = None,
                     noise: float = 0.05, decoys: int = 10, decoy_mode: str = "uniform",
                     true_score: tuple[float, float] = (1.0, 0.25),
                     decoy_score: tuple[float, float] = (0.5, 0.25), seed: int,
                     pair_seed: int | None = None) -> SyntheticPair:
    """A base graph, its relabelled copy with a share ``noise`` of the edges moved, and a prior.

    The base graph is drawn with ``seed`` and the copy and the prior with ``pair_seed``
    (default ``seed + 1``); the remaining options are those of
    :func:`~aligner.datasets.synthetic.relabelled_pair`.

    Parameters
    ----------
    n : int
        Nodes of each network.
    graph : {"powerlaw", "dupdiv"}, default "powerlaw"
        Model of the base graph; ``graph_options`` are its keyword arguments.
    noise, decoys, decoy_mode, true_score, decoy_score
        As in :func:`~aligner.datasets.synthetic.relabelled_pair`.
    seed : int
        Seed of the base graph.
    pair_seed : int, optional
        Seed of the relabelling, the noise and the prior.

    Returns
    -------
    SyntheticPair
    """
    edges = base_graph(graph, n, seed=seed, **(graph_options or {}))
    return relabelled_pair(edges, n, noise=noise, decoys=decoys, decoy_mode=decoy_mode, true_score=true_score,
                           decoy_score=decoy_score, seed=seed + 1 if pair_seed is None else pair_seed)


def node_names(n: int, prefix: str = "", *, pad: bool = True) -> np.ndarray:
    """``prefix`` + decimal index for nodes ``0 .. n - 1``.

    With ``pad`` (the default) the indices are zero-padded to one width, so that the names'
    string order is their numeric order and a reader numbers the nodes as the generator did.
    """
    width = len(str(max(n - 1, 0))) if pad else 0
    return np.array([f"{prefix}{i:0{width}d}" for i in range(n)], dtype=object)


def in_reader_order(pair: SyntheticPair, names_a, names_b) -> tuple[SyntheticPair, np.ndarray, np.ndarray]:
    """``pair`` with its nodes renumbered in the string order of their names, as a reader numbers them.

    Node ``i`` of A is named ``names_a[i]`` (likewise for B). Returns the renumbered pair (edges,
    prior and truth canonical and sorted again) and the names in their new order.
    """
    na, nb = np.asarray(names_a, dtype=object), np.asarray(names_b, dtype=object)
    pos_a, pos_b = (np.argsort(np.argsort(names.astype(str), kind="stable")) for names in (na, nb))

    def pairs(rows):
        return np.stack([pos_a[rows[:, 0]], pos_b[rows[:, 1]]], axis=1)

    prior, scores = _sort_pairs(pairs(pair.prior_pairs), pair.n_b, pair.prior_scores)
    (truth,) = _sort_pairs(pairs(pair.truth), pair.n_b)
    moved = SyntheticPair(n_a=pair.n_a, n_b=pair.n_b, edges_a=_relabel(pair.edges_a, pos_a, pair.n_a),
                          edges_b=_relabel(pair.edges_b, pos_b, pair.n_b), prior_pairs=prior,
                          prior_scores=scores, truth=truth)
    return moved, np.sort(na.astype(str)).astype(object), np.sort(nb.astype(str)).astype(object)


def _names(pair: SyntheticPair, names_a, names_b) -> tuple[np.ndarray, np.ndarray]:
    na = node_names(pair.n_a) if names_a is None else np.asarray(names_a, dtype=object)
    nb = node_names(pair.n_b) if names_b is None else np.asarray(names_b, dtype=object)
    return na, nb


def as_networks(pair: SyntheticPair, names_a=None, names_b=None):
    """Networks A and B (:class:`~aligner.core.network.Network`) of ``pair``; node ``i`` is named
    ``names_a[i]`` (default :func:`node_names`)."""
    from aligner.core.network import network_from_edges

    na, nb = _names(pair, names_a, names_b)
    net_a = network_from_edges(na, pair.edges_a[:, 0], pair.edges_a[:, 1], source="A")
    net_b = network_from_edges(nb, pair.edges_b[:, 0], pair.edges_b[:, 1], source="B")
    return net_a, net_b


def as_frames(pair: SyntheticPair, names_a=None, names_b=None) -> tuple[pd.DataFrame, ...]:
    """Edge tables of A and B, the prior table and the truth table of ``pair``, by node name.

    Columns: ``node_a, node_b`` for the edges and the truth, ``node_a, node_b, score`` for the
    prior. Nodes without an edge do not appear in the edge tables.
    """
    na, nb = _names(pair, names_a, names_b)

    def table(names_u, names_v, rows, **extra):
        return pd.DataFrame({"node_a": names_u[rows[:, 0]], "node_b": names_v[rows[:, 1]], **extra})

    return (table(na, na, pair.edges_a), table(nb, nb, pair.edges_b),
            table(na, nb, pair.prior_pairs, score=pair.prior_scores), table(na, nb, pair.truth))


def write_instance(pair: SyntheticPair, folder: str | os.PathLike, names_a=None, names_b=None) -> Path:
    """Write ``network_a.tsv``, ``network_b.tsv``, ``prior.tsv`` and ``truth.tsv`` of ``pair``.

    Tab-separated with a header line; scores with six significant digits. Each file is written
    under a temporary name and renamed, ``truth.tsv`` last, so a folder with ``truth.tsv`` is
    complete. Returns the folder.
    """
    folder = Path(folder)
    folder.mkdir(parents=True, exist_ok=True)
    ea, eb, prior, truth = as_frames(pair, names_a, names_b)
    for name, df in (("network_a.tsv", ea), ("network_b.tsv", eb), ("prior.tsv", prior), ("truth.tsv", truth)):
        tmp = folder / (name + ".part")
        df.to_csv(tmp, sep="\t", index=False, float_format="%.6g")
        os.replace(tmp, folder / name)
    return folder


def read_connectome(folder: str | os.PathLike) -> tuple[pd.DataFrame, pd.DataFrame, pd.Series]:
    """The two adult connectomes and the neuron classes of the repository's ``tests/data``.

    Returns the edge tables of datasets 7 and 8 (columns ``node_a, node_b, weight``) and the
    class of every neuron (a Series indexed by neuron name); see ``tests/data/README.md``.
    """
    folder = Path(folder)
    a = pd.read_csv(folder / "witvliet2021_adult7.tsv", sep="\t")
    b = pd.read_csv(folder / "witvliet2021_adult8.tsv", sep="\t")
    classes = pd.read_csv(folder / "neuron_classes.tsv", sep="\t").set_index("neuron")["class"]
    return a, b, classes


def perturb_weights(edges: pd.DataFrame, change: str, *, seed: int = 0) -> pd.DataFrame:
    """An edge table (``node_a, node_b, weight``) with its weights changed.

    ``scale-0.3`` / ``scale-3``: every weight times 0.3 / 3 (another reconstruction's scale);
    ``poisson``: every weight replaced by a Poisson draw of that mean (counting noise), edges
    drawn 0 removed; ``drop-weakest-20%``: the fifth of the edges of lowest weight removed
    (ties by row order); ``none``: unchanged. Seeded.
    """
    change = check_choice(change, "change", WEIGHT_CHANGES)
    out = edges.copy()
    w = out["weight"].to_numpy(dtype=np.float64)
    if change.startswith("scale-"):
        out["weight"] = w * float(change.removeprefix("scale-"))
    elif change == "poisson":
        out["weight"] = np.random.default_rng(seed).poisson(w).astype(np.float64)
        out = out[out["weight"] > 0]
    elif change == "drop-weakest-20%":
        weakest = np.argsort(w, kind="stable")[: int(0.2 * len(w))]
        out = out.drop(out.index[weakest])
    return out.reset_index(drop=True)


def hidden_connectome(a: pd.DataFrame, b: pd.DataFrame, classes: pd.Series, task: str, *, seed: int,
                      weighted: bool = False):
    """Two connectomes with every name replaced by a random opaque identifier, a prior and the truth.

    The same neuron has the same name in ``a`` and ``b``, so the names are the truth; hidden,
    no tie-breaking by name order can help an aligner. Task ``class``: every pair of neurons of
    the same class is a candidate, all with score 1. Task ``noisy``: a simulated similarity
    prior, the true partner scored N(1.0, 0.25) and ten uniform decoys N(0.5, 0.25)
    (:func:`~aligner.datasets.synthetic.noisy_prior`, seed ``11 + seed``).

    Returns
    -------
    edges_a, edges_b, prior, truth : DataFrame
        Edge tables (``u, v``, and ``w``, the synapse counts, with ``weighted``), the prior
        (``a, b`` and a score) and the true pairs (``a, b``), all under the hidden names.
    """
    from aligner.priors.classes import prior_from_classes

    task = check_choice(task, "task", CONNECTOME_TASKS)
    names_a = sorted(set(a.node_a) | set(a.node_b))
    names_b = sorted(set(b.node_a) | set(b.node_b))
    ha = dict(zip(names_a, opaque_names(len(names_a), seed=seed, prefix="a")))
    hb = dict(zip(names_b, opaque_names(len(names_b), seed=seed + 1, prefix="b")))
    ea = pd.DataFrame({"u": a.node_a.map(ha), "v": a.node_b.map(ha)})
    eb = pd.DataFrame({"u": b.node_a.map(hb), "v": b.node_b.map(hb)})
    if weighted:
        ea["w"], eb["w"] = a["weight"].to_numpy(), b["weight"].to_numpy()
    shared = sorted(set(names_a) & set(names_b))
    truth = pd.DataFrame({"a": [ha[n] for n in shared], "b": [hb[n] for n in shared]})
    if task == "class":
        prior = prior_from_classes({ha[n]: classes[n] for n in names_a}, {hb[n]: classes[n] for n in names_b})
    else:
        ib = {n: k for k, n in enumerate(names_b)}
        t = np.array([(k, ib[n]) for k, n in enumerate(names_a) if n in ib])
        pairs, scores = noisy_prior(t, len(names_b), decoys=10, seed=11 + seed)
        prior = pd.DataFrame({"a": [ha[names_a[i]] for i in pairs[:, 0]],
                              "b": [hb[names_b[j]] for j in pairs[:, 1]], "s": scores})
    return ea, eb, prior, truth
