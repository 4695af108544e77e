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
