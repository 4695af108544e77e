"""What a practitioner asks of a prepared problem or a finished alignment: per-pair confidence,
the significance of the conserved edges, the sweep over alpha, and local counterpart queries.
Imports ``pipeline``, ``core``, ``priors``, ``kernels``; never ``render`` or ``cli``.
"""
