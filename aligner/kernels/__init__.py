"""Compiled kernels (numba ``njit``, ``cache=True``): loops over CSR arrays that numpy cannot
vectorise. Push (Gauss–Southwell), product-graph passes, sparse assignment, refinement local
search, local query push, label and structural features, and the graph generator's loop.

Kernels assume valid input and never check it; the public functions in ``core``, ``priors``
and ``analysis`` validate first. This layer imports numpy and numba only.
"""
