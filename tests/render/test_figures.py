"""Figures come back as file contents in the asked formats, and leave no figure open."""

import xml.etree.ElementTree as ET

import pandas as pd

from aligner.render.figures import figure_bytes, plot_sweep, sweep_figure


def _table():
    return pd.DataFrame({"alpha": [0.0, 0.5, 0.9], "prior_weight": [10.0, 9.5, 7.0], "conserved_edges": [5, 40, 48]})


def test_plot_sweep_formats():
    import matplotlib.pyplot as plt

    data = plot_sweep(_table(), 1)
    assert set(data) == {"png", "svg"}
    assert data["png"][:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (PNG specification, section 5.2)
    root = ET.fromstring(data["svg"])
    assert root.tag == "{http://www.w3.org/2000/svg}svg"  # the SVG namespace (SVG 1.1 specification)
    text = data["svg"].decode()
    assert "<!-- knee: α = 0.5 -->" in text  # the legend names the ringed knee (matplotlib notes each text)
    assert "knee" not in plot_sweep(_table(), None, ("svg",))["svg"].decode()
    assert plt.get_fignums() == []  # closed after saving


def test_sweep_figure_without_knee_has_no_legend():
    fig = sweep_figure(_table(), None, title="T")
    ax = fig.axes[0]
    assert ax.get_legend() is None and ax.get_title() == "T"
    assert [t.get_text() for t in ax.texts] == ["α=0", "α=0.5", "α=0.9"]
    assert list(figure_bytes(fig, ("pdf",))) == ["pdf"]


def _demo_like():
    # a sweep whose points above α = 0 nearly coincide (as on the firefly demo) and whose α = 0
    # point sits at the right edge, where its label used to be cut off
    alphas = [0, .1, .2, .3, .4, .5, .6, .7, .8, .9, .95]
    return pd.DataFrame({"alpha": alphas,
                         "prior_weight": [442550.0] + [436210.0 - 10 * k for k in range(10)],
                         "conserved_edges": [2778, 3162, 3162, 3163, 3162, 3161, 3162, 3163, 3163, 3162, 3160]})


def test_sweep_labels_do_not_overlap_and_stay_inside():
    # reference: matplotlib's own window extents of the drawn texts (common practice for label layout)
    for table, knee in ((_demo_like(), 1), (_table(), 1), (_table(), None)):
        fig = sweep_figure(table, knee)
        fig.canvas.draw()
        ax, r = fig.axes[0], fig.canvas.get_renderer()
        boxes = [t.get_window_extent(r) for t in ax.texts]
        inside = ax.get_window_extent(r)
        for i, b in enumerate(boxes):
            assert inside.x0 <= b.x0 and b.x1 <= inside.x1 and inside.y0 <= b.y0 and b.y1 <= inside.y1
            assert not any(b.overlaps(o) for o in boxes[i + 1:])
        if ax.get_legend() is not None:
            leg = ax.get_legend().get_window_extent(r)
            assert not any(b.overlaps(leg) for b in boxes)
        figure_bytes(fig)
    fig = sweep_figure(_demo_like(), 1)
    # the ten nearly coinciding points share one label; α = 0 keeps its own
    assert sorted(t.get_text() for t in fig.axes[0].texts) == ["α=0", "α=0.1–0.95 (10)"]
    figure_bytes(fig)


def test_subgraph_drawing_labels():
    # reference: networkx's degrees; every node labelled in a small drawing, the hubs in a large one
    import networkx as nx

    from aligner.render.figures import LABEL_ALL_UP_TO, LABELLED_HUBS, subgraph_drawing, subgraph_labels

    small = nx.relabel_nodes(nx.cycle_graph(12), lambda v: f"a{v}")
    mapping = {f"a{v}": f"b{v}" for v in range(12)}
    fig = subgraph_drawing(small, mapping)
    assert sorted(t.get_text() for t in fig.axes[0].texts) == sorted(f"a{v}\nb{v}" for v in range(12))
    figure_bytes(fig)
    big = nx.relabel_nodes(nx.barabasi_albert_graph(LABEL_ALL_UP_TO + 40, 2, seed=3), lambda v: f"a{v}")
    labels = subgraph_labels(big, {})
    assert len(labels) == LABELLED_HUBS
    deg = sorted((d for _, d in big.degree), reverse=True)
    assert sorted((big.degree[v] for v in labels), reverse=True) == deg[:LABELLED_HUBS]
    assert all(text == v for v, text in labels.items())  # no partner known: the name of A alone


def test_node_names_the_font_lacks_draw_without_a_warning():
    # Common practice (--quiet prints nothing but errors, docs/commands.md): a node name in a
    # script the default font lacks, or holding a tab, made matplotlib warn "Glyph ... missing
    # from font(s)" on stderr while aligner report -q drew the conserved subgraph.
    import warnings

    import networkx as nx

    from aligner.render.figures import subgraph_drawing

    sub = nx.Graph([("ünï漢", "tab\tin"), ("tab\tin", "c"), ("c", "ünï漢")])
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        data = figure_bytes(subgraph_drawing(sub, {"ünï漢": "B漢", "tab\tin": "B\t", "c": "Bc"}), ("png", "svg"))
    assert data["png"].startswith(b"\x89PNG") and b"<svg" in data["svg"]
    assert [str(w.message) for w in caught if "Glyph" in str(w.message)] == []


def test_sweep_figure_leaves_out_points_past_the_largest_float():
    # A sweep of a prior whose matched scores sum past the largest float has prior weight inf there
    # (aligner.analysis.sweep): numpy's "invalid value" RuntimeWarning came out of the label placement;
    # now those points are left out, the figure saying which (noticed by differential testing)
    import warnings

    table = _table().assign(prior_weight=[float("inf"), 9.5, 7.0])
    with warnings.catch_warnings():
        warnings.simplefilter("error", RuntimeWarning)
        texts = [t.get_text() for t in sweep_figure(table, None).axes[0].texts]
        assert "not drawn: α=0 (prior weight past the largest float)" in texts and "α=0.5" in texts
        texts = [t.get_text() for t in sweep_figure(table.assign(prior_weight=float("inf")), None).axes[0].texts]
        assert texts == ["not drawn: every α (prior weight past the largest float)"]
        assert list(plot_sweep(table, None, ("png",))) == ["png"]
