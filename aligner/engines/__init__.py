"""Engines that run the stages of an alignment somewhere else than in this process.

Each engine is an optional subpackage with its own extra (``pip install 'aligner[dask]'`` for
:mod:`aligner.engines.dask`). An engine may import ``core``, ``kernels`` and ``pipeline``; only
the command line imports an engine, and only when asked for it, so the default install never
imports the engine's dependencies.
"""
