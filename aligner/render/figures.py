"""Figures of results already computed, drawn headless (matplotlib's Agg backend) and returned as bytes.

:func:`plot_sweep` draws the trade-off of a sweep; the others draw the report's distributions and
the conserved subgraph. matplotlib (and networkx for the drawing) is imported inside each
function, so importing this module costs nothing.
"""

from __future__ import annotations

import io
from typing import Iterable, Mapping

__all__ = ["plot_sweep", "sweep_figure", "figure_bytes", "histogram", "degree_plot", "subgraph_drawing"]


def _pyplot():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


def _finish(fig, ax, xlabel: str, ylabel: str, *, legend: bool = False):
    """Label the axes, add the legend and a light grid, tighten the layout; return ``fig``."""
    ax.set_xlabel(xlabel)
    ax.set_ylabel(ylabel)
    if legend:
        ax.legend(loc="best", fontsize=8, frameon=False)
    ax.grid(alpha=0.25)
    fig.tight_layout()
    return fig


def figure_bytes(fig, formats: Iterable[str] = ("png",)) -> dict[str, bytes]:
    """The contents of ``fig`` saved in each format; the figure is closed afterwards.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
    formats : iterable of str
        Formats matplotlib can save ("png", "svg", "pdf", ...).

    Returns
    -------
    dict of str to bytes
        ``{format: file content}``.
    """
    plt = _pyplot()
    data = {}
    try:
        for fmt in formats:
            buf = io.BytesIO()
            fig.savefig(buf, format=fmt)
            data[fmt] = buf.getvalue()
    finally:
        plt.close(fig)
    return data


def sweep_figure(table, knee: int | None, *, title: str | None = None):
    """Conserved edges against matched prior weight, one labelled point per alpha, the knee ringed.

    ``table`` has the columns ``alpha``, ``prior_weight`` and ``conserved_edges`` (a sweep table);
    ``knee`` is its row of the knee or None. Returns the matplotlib figure (the caller closes it).
    """
    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(6.4, 4.4), dpi=110)
    xs, ys = table["prior_weight"].to_numpy(), table["conserved_edges"].to_numpy()
    ax.plot(xs, ys, "-", color="#7a8ca3", lw=1.2, zorder=1)
    ax.scatter(xs, ys, s=28, color="#1f5f8b", zorder=2)
    for a, px, py in zip(table["alpha"], xs, ys):
        ax.annotate(f"α={a:g}", (px, py), textcoords="offset points", xytext=(5, -11), fontsize=7.5,
                    color="#333333")
    if knee is not None:
        ax.scatter([xs[knee]], [ys[knee]], s=190, facecolors="none", edgecolors="#d0542c", linewidths=2,
                   zorder=3, label=f"knee: α = {table['alpha'].iloc[knee]:g}")
        ax.plot([xs[0], xs[-1]], [ys[0], ys[-1]], ":", color="#d0542c", lw=1, zorder=0, label="chord")
    ax.set_title(title or "Wiring against prior across α", fontsize=10)
    return _finish(fig, ax, "total prior similarity of the matched pairs", "conserved edges", legend=knee is not None)


def plot_sweep(table, knee: int | None, formats: Iterable[str] = ("png", "svg"), *,
               title: str | None = None) -> dict[str, bytes]:
    """The trade-off figure of a sweep, saved in each format.

    Parameters
    ----------
    table : pandas.DataFrame
        A sweep table (``alpha``, ``prior_weight``, ``conserved_edges``).
    knee : int or None
        Row of the knee, ringed when given.
    formats : iterable of str
        Formats to save (default PNG and SVG).
    title : str, optional
        The figure's title.

    Returns
    -------
    dict of str to bytes
        ``{format: file content}`` (see :func:`sweep_figure` for what is drawn).
    """
    return figure_bytes(sweep_figure(table, knee, title=title), formats)


def histogram(values, xlabel: str, color: str, *, log: bool = False, ylabel: str = "pairs"):
    """A histogram of the finite ``values`` (log-spaced bins over the positive ones when ``log``)."""
    import numpy as np

    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(5.2, 3.4), dpi=100)
    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    if log:
        v = v[v > 0]
        bins = np.logspace(np.log10(v.min()), np.log10(v.max()), 40) if len(v) and v.max() > v.min() else 20
        ax.set_xscale("log")
    else:
        bins = 40
    ax.hist(v, bins=bins, color=color, edgecolor="white", linewidth=0.4)
    return _finish(fig, ax, xlabel, ylabel)


def degree_plot(pairs, degree: Mapping[str, int]):
    """Each matched pair: the degree of its node in A against its conserved edges (jittered)."""
    import numpy as np

    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(5.2, 3.4), dpi=100)
    d = pairs["node_a"].map(degree).to_numpy(dtype=float)
    c = pairs["conserved"].to_numpy(dtype=float)
    jitter = np.random.default_rng(0).uniform(-0.2, 0.2, len(d))
    ax.scatter(d + jitter, c, s=7, alpha=0.45, color="#1f5f8b", linewidths=0)
    top = max(d.max() if len(d) else 1, 1)
    ax.plot([0, top], [0, top], ":", color="#d0542c", lw=1, label="all edges conserved")
    return _finish(fig, ax, "degree of the node in A", "conserved edges at the pair", legend=True)


def subgraph_drawing(sub, mapping: Mapping[str, str]):
    """A spring-layout drawing of networkx graph ``sub``; labels (node over partner) up to 60 nodes."""
    import networkx as nx
    import numpy as np

    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(9.6, 7.0), dpi=100)
    pos = nx.spring_layout(sub, seed=1, k=1.4 / max(np.sqrt(sub.number_of_nodes()), 1))
    deg = dict(sub.degree)
    nx.draw_networkx_edges(sub, pos, ax=ax, width=0.7, edge_color="#9aa7b5")
    nx.draw_networkx_nodes(sub, pos, ax=ax, node_size=[18 + 9 * deg[v] for v in sub.nodes],
                           node_color="#1f5f8b", linewidths=0)
    if sub.number_of_nodes() <= 60:
        labels = {v: f"{v}\n{mapping.get(v, '')}" for v in sub.nodes}
        nx.draw_networkx_labels(sub, pos, labels=labels, ax=ax, font_size=6)
    ax.set_axis_off()
    fig.tight_layout()
    return fig
