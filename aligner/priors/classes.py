"""Priors built from node annotations rather than from a similarity table."""

from __future__ import annotations

from typing import Mapping

import pandas as pd

__all__ = ["prior_from_classes"]


def prior_from_classes(classes_a: Mapping[str, str] | pd.Series, classes_b: Mapping[str, str] | pd.Series,
                       *, score: float = 1.0) -> pd.DataFrame:
    """Every pair of a node of A and a node of B that share a class, all with the same score.

    For annotations that say which nodes *may* correspond but not which one does: anatomical
    classes of neurons (the left and right members of a bilateral pair share one), cell
    types, gene families. The wiring then has to decide within each class.

    Parameters
    ----------
    classes_a, classes_b : mapping or Series
        Node identifier -> class label, for the nodes of A and of B. Nodes without a class
        get no candidate.
    score : float
        The prior score of every pair.

    Returns
    -------
    DataFrame
        Columns ``node_a``, ``node_b``, ``score``, sorted; usable as the ``prior`` of
        :func:`aligner.align`.

    Examples
    --------
    >>> prior_from_classes({"x1": "X", "x2": "X", "y": "Y"}, {"u": "X", "v": "Y"}).values.tolist()
    [['x1', 'u', 1.0], ['x2', 'u', 1.0], ['y', 'v', 1.0]]
    """
    a = pd.Series(classes_a, dtype=object).rename("cls").rename_axis("node_a").reset_index()
    b = pd.Series(classes_b, dtype=object).rename("cls").rename_axis("node_b").reset_index()
    pairs = a.merge(b, on="cls")[["node_a", "node_b"]].astype(str)
    pairs["score"] = float(score)
    return pairs.sort_values(["node_a", "node_b"], kind="stable").reset_index(drop=True)
