"""The numerical stages, as pure functions over arrays: network, candidates, product graph,
diffusion, rounding, refinement and scoring.

No file access, no printing, no networkx objects: each stage takes numpy arrays or the small
frozen dataclasses of the stage before it and returns its own. Stages import only earlier
stages, ``kernels``, ``checks`` and ``errors``.
"""
