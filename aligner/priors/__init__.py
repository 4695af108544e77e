"""Where candidate pairs and their prior scores come from besides a prior table: label
similarity (character n-gram TF-IDF), structural features, anchor pairs (seeds) and their
expansion, and class-based priors. Imports ``core``, ``kernels``, ``io`` and ``errors``.
"""
