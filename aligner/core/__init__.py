"""The numerical stages, as pure functions over arrays: network, candidates, product graph,
diffusion, rounding, refinement and scoring, with the prior arithmetic (``prior``: score kinds,
the prior table), node identifiers (``identifiers``: interning, look-up, pair tables) and the
text of output tables (``tsv``: columns rendered to tab-separated bytes).

No file access, no printing, no networkx objects: each stage takes numpy arrays or the small
frozen dataclasses of the stage before it and returns its own. Stages import only earlier
stages, ``kernels``, ``checks``, ``config`` and ``errors``.
"""
