"""Figures of results already computed, drawn headless (matplotlib's Agg backend) and returned as bytes.

:func:`plot_sweep` draws the trade-off of a sweep; the others draw the report's distributions and
the conserved subgraph. matplotlib (and networkx for the drawing) is imported inside each
function, so importing this module costs nothing.
"""

from __future__ import annotations

import io
import warnings
from contextlib import contextmanager
from typing import Iterable, Mapping

__all__ = ["plot_sweep", "sweep_figure", "figure_bytes", "histogram", "degree_plot", "subgraph_drawing",
           "subgraph_labels"]


def _pyplot():
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    return plt


@contextmanager
def _missing_glyphs_allowed():
    """Leave out matplotlib's warning about a character its font lacks (a node name in another
    script, or with a tab): the character is drawn as a box, and the warning would be printed under
    --quiet, which prints nothing but errors."""
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message=r"Glyph \d+ .*missing from (current )?font", category=UserWarning)
        yield


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
            with _missing_glyphs_allowed():
                fig.savefig(buf, format=fmt)
            data[fmt] = buf.getvalue()
    finally:
        plt.close(fig)
    return data


def _alpha_groups(xs, ys, ax, min_px: float = 10.0) -> list[list[int]]:
    """Runs of consecutive points (in α order) lying within ``min_px`` pixels of their run's first
    point: one label each, so coinciding points do not print their labels on top of one another."""
    import numpy as np

    pix = ax.transData.transform(np.column_stack([xs, ys]))
    groups: list[list[int]] = []
    for i, p in enumerate(pix):
        if groups and np.hypot(*(p - pix[groups[-1][0]])) <= min_px:
            groups[-1].append(i)
        else:
            groups.append([i])
    return groups


def _alpha_text(alphas) -> str:
    vals = [f"{a:g}" for a in alphas]
    if len(vals) == 1:
        return f"α={vals[0]}"
    if len(vals) <= 3:
        return "α=" + ", ".join(vals)
    return f"α={vals[0]}–{vals[-1]} ({len(vals)})"


#: where a point's label may go, in points from the point: right, left, above, below and the
#: diagonals, then the same farther out
_OFFSETS = [(dx * k, dy * k) for k in (1, 2.2) for dx, dy in
            ((6, -4), (6, 4), (-6, -4), (-6, 4), (0, 7), (0, -9), (6, 10), (-6, 10), (6, -14), (-6, -14))]


def _place_alpha_labels(fig, ax, xs, ys, labels, anchors, obstacles) -> None:
    """Annotate each anchor point with its label at the first offset of :data:`_OFFSETS` whose text
    stays inside the axes and overlaps no label placed before, no point and no ``obstacles``
    (display-space boxes); failing that, at the offset that overlaps least."""
    import numpy as np

    renderer = fig.canvas.get_renderer()
    inside = ax.get_window_extent(renderer).padded(-2)
    pts = ax.transData.transform(np.column_stack([xs, ys]))
    r = 4.0 * fig.dpi / 72  # half a marker, in pixels
    boxes = list(obstacles) + [_box(x - r, y - r, x + r, y + r) for x, y in pts]
    for text, i in zip(labels, anchors):
        best = None
        for dx, dy in _OFFSETS:
            ha = "left" if dx > 0 else "right" if dx < 0 else "center"
            va = "bottom" if dy > 0 else "top"
            ann = ax.annotate(text, (xs[i], ys[i]), textcoords="offset points", xytext=(dx, dy), fontsize=7.5,
                              color="#333333", ha=ha, va=va)
            bb = ann.get_window_extent(renderer)
            out = 0.0 if _contains(inside, bb) else 1e9
            cost = out + sum(_overlap(bb, o) for o in boxes)
            if best is None or cost < best[0]:
                if best is not None:
                    best[1].remove()
                best = (cost, ann, bb)
            else:
                ann.remove()
            if cost == 0:
                break
        boxes.append(best[2])


def _box(x0, y0, x1, y1):
    from matplotlib.transforms import Bbox

    return Bbox([[x0, y0], [x1, y1]])


def _contains(outer, inner) -> bool:
    return outer.x0 <= inner.x0 and inner.x1 <= outer.x1 and outer.y0 <= inner.y0 and inner.y1 <= outer.y1


def _overlap(a, b) -> float:
    w = min(a.x1, b.x1) - max(a.x0, b.x0)
    h = min(a.y1, b.y1) - max(a.y0, b.y0)
    return w * h if w > 0 and h > 0 else 0.0


def sweep_figure(table, knee: int | None, *, title: str | None = None):
    """Conserved edges against matched prior weight, one labelled point per alpha, the knee ringed.

    ``table`` has the columns ``alpha``, ``prior_weight`` and ``conserved_edges`` (a sweep table);
    ``knee`` is its row of the knee or None. Points that coincide on the page share one label
    (``α=0.3–0.95 (6)``); each label is placed where it overlaps no other label, point or the
    legend and stays inside the axes. A point whose prior weight is not finite (past the largest
    float) cannot be placed: it is left out, and the figure says so. Returns the matplotlib figure
    (the caller closes it).
    """
    import numpy as np

    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(6.4, 4.4), dpi=110)
    xs, ys = table["prior_weight"].to_numpy(dtype=float), table["conserved_edges"].to_numpy(dtype=float)
    alphas = table["alpha"].to_numpy(dtype=float)
    finite, note = np.isfinite(xs) & np.isfinite(ys), None
    if not finite.all():  # and no knee (aligner.analysis.sweep.knee_index): the curve's extent is unknown
        left_out = "every α" if not finite.any() else "α=" + ", ".join(f"{a:g}" for a in alphas[~finite])
        xs, ys, alphas, knee = xs[finite], ys[finite], alphas[finite], None
        note = ax.text(0.5, 0.02, f"not drawn: {left_out} (prior weight past the largest float)",
                       transform=ax.transAxes, ha="center", va="bottom", fontsize=8, color="#a33a1f")
    ax.plot(xs, ys, "-", color="#7a8ca3", lw=1.2, zorder=1)
    ax.scatter(xs, ys, s=28, color="#1f5f8b", zorder=2)
    if knee is not None:
        ax.scatter([xs[knee]], [ys[knee]], s=190, facecolors="none", edgecolors="#d0542c", linewidths=2,
                   zorder=3, label=f"knee: α = {table['alpha'].iloc[knee]:g}")
        ax.plot([xs[0], xs[-1]], [ys[0], ys[-1]], ":", color="#d0542c", lw=1, zorder=0, label="chord")
    ax.margins(x=0.14, y=0.14)  # room for the labels of the outermost points
    ax.set_title(title or "Wiring against prior across α", fontsize=10)
    _finish(fig, ax, "total prior similarity of the matched pairs", "conserved edges", legend=knee is not None)
    fig.canvas.draw()  # lay out the axes and the legend before measuring where labels fit
    obstacles = [] if note is None else [note.get_window_extent(fig.canvas.get_renderer())]
    if knee is not None:  # the ring around the knee (190 points² of marker area: a radius near 8 points)
        kx, ky = ax.transData.transform((xs[knee], ys[knee]))
        r = 8.5 * fig.dpi / 72
        obstacles.append(_box(kx - r, ky - r, kx + r, ky + r))
    leg = ax.get_legend()
    if leg is not None:
        bb = leg.get_window_extent(fig.canvas.get_renderer())
        leg.set_loc(tuple(ax.transAxes.inverted().transform((bb.x0, bb.y0))))  # keep it where it is
        obstacles.append(bb)
    groups = _alpha_groups(xs, ys, ax)
    _place_alpha_labels(fig, ax, xs, ys, [_alpha_text(alphas[g]) for g in groups], [g[0] for g in groups],
                        obstacles)
    return fig


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


#: a drawing of at most this many nodes labels every node; a larger one only its best-connected
#: :data:`LABELLED_HUBS` nodes (more labels would cover one another)
LABEL_ALL_UP_TO = 80
LABELLED_HUBS = 30


def subgraph_labels(sub, mapping: Mapping[str, str]) -> dict:
    """The labels a drawing of ``sub`` shows: node of A over its partner in B, for every node of a
    drawing of at most :data:`LABEL_ALL_UP_TO` nodes, else for the :data:`LABELLED_HUBS` nodes of
    highest degree (ties by name)."""
    nodes = list(sub.nodes)
    if len(nodes) > LABEL_ALL_UP_TO:
        deg = dict(sub.degree)
        nodes = sorted(nodes, key=lambda v: (-deg[v], str(v)))[:LABELLED_HUBS]
    return {v: f"{v}\n{mapping.get(v, '')}".rstrip() for v in nodes}


def subgraph_drawing(sub, mapping: Mapping[str, str]):
    """A spring-layout drawing of networkx graph ``sub``, labelled by :func:`subgraph_labels` in a
    small font on a light halo (so a label stays legible over the edges)."""
    import networkx as nx
    import numpy as np

    plt = _pyplot()
    fig, ax = plt.subplots(figsize=(9.6, 7.0), dpi=110)
    pos = nx.spring_layout(sub, seed=1, k=1.4 / max(np.sqrt(sub.number_of_nodes()), 1))
    deg = dict(sub.degree)
    nx.draw_networkx_edges(sub, pos, ax=ax, width=0.7, edge_color="#9aa7b5")
    nx.draw_networkx_nodes(sub, pos, ax=ax, node_size=[18 + 9 * deg[v] for v in sub.nodes],
                           node_color="#1f5f8b", linewidths=0)
    labels = subgraph_labels(sub, mapping)
    for v, text in labels.items():
        x, y = pos[v]
        ax.annotate(text, (x, y), textcoords="offset points", xytext=(0, 5), ha="center", va="bottom",
                    fontsize=5.5, color="#1d232b", linespacing=0.95,
                    bbox={"boxstyle": "round,pad=0.12", "fc": "white", "ec": "none", "alpha": 0.7})
    ax.set_axis_off()
    with _missing_glyphs_allowed():
        fig.tight_layout()
    return fig
