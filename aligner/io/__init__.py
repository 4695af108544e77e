"""Input and output: the only layer that touches files.

``paths`` says which files a glob pattern names (a table written in parts); ``readers`` parses
delimited files (edge lists, prior, pair and seed tables) into columns with line-accurate errors; ``identifiers`` looks node identifiers up and maps pairs of them onto two
networks; ``inputs`` turns whatever a caller holds (a path, a DataFrame, rows, a mapping, a
networkx graph, an already-read table) into the canonical objects the stages take, through one
helper (``as_table``); ``outputs`` writes results crash-safely (one atomic writer, a set of
outputs published together). Imports ``core.network``, ``checks``, ``errors`` and
``priors.scores`` (what a prior score means, a module that imports nothing above ``io``);
never a stage, the pipeline or the command line.
"""
