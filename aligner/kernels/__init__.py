"""Compiled kernels (numba ``njit``, ``cache=True``): loops over CSR arrays that numpy cannot
vectorise. Push (Gauss–Southwell), product-graph passes, sparse assignment, refinement local
search, local query push, label and structural features, the graph generator's loop, the
scores' edge lookups and components, and the text of output tables.

Kernels assume valid input and never check it; the public functions in ``core``, ``priors``
and ``analysis`` validate first. This layer imports numpy and numba only.
"""
