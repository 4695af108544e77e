"""Input and output: the only layer that touches files.

``readers`` parses delimited files (edge lists, prior and pair tables) into arrays with
line-accurate errors; ``inputs`` turns whatever a caller holds (a path, a DataFrame, a networkx
graph, an already-read table) into the canonical objects the stages take, in one place;
``outputs`` writes results crash-safely (one atomic writer, outputs published as one set).
Imports ``core.network`` and ``errors``; never a stage, the pipeline or the command line.
"""
