"""Compiled kernels of the dask engine's messages between blocks (see
:mod:`aligner.engines.dask.diffusion`): a block's residual array holds its own pairs, then one
slot per ghost pair; mass pushed to a ghost waits in its slot until it is sent to the ghost's
owner, which adds it to its own entry. Arrays in, arrays out; no checking.
"""

import numba
import numpy as np

from aligner.kernels.options import OUTER


@numba.njit(cache=True, nogil=True, **OUTER)
def add_messages(r, slots, mass):
    """``r[slots[t]] += mass[t]`` for every t, in order: what ``np.add.at(r, slots, mass)`` gives."""
    for t in range(slots.shape[0]):
        r[slots[t]] += mass[t]


@numba.njit(cache=True, nogil=True, **OUTER)
def take_ghosts(r, m_own, ghost_slot):
    """The non-zero ghost slots of ``r`` (entries ``m_own`` on), zeroed as they are taken.

    Returns ``(at, slots, mass)``: the position of each among the ghosts (increasing), the slot
    it has in its owner (``ghost_slot[at]``) and its mass.
    """
    n = r.shape[0] - m_own
    count = 0
    for t in range(n):
        if r[m_own + t] != 0.0:
            count += 1
    at = np.empty(count, dtype=np.int64)
    slots = np.empty(count, dtype=np.int32)
    mass = np.empty(count, dtype=np.float64)
    k = 0
    for t in range(n):
        v = r[m_own + t]
        if v != 0.0:
            at[k] = t
            slots[k] = ghost_slot[t]
            mass[k] = v
            r[m_own + t] = 0.0
            k += 1
    return at, slots, mass
