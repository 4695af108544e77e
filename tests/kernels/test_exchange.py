"""The dask engine's message kernels against numpy (the reference: np.add.at, np.flatnonzero)."""

import numpy as np

from aligner.kernels.exchange import add_messages, take_ghosts


def test_add_messages_is_numpys_add_at(rng):
    r = rng.normal(size=50)
    slots = rng.integers(0, 50, size=200).astype(np.int32)  # repeats: each adds, in order
    mass = rng.normal(size=200)
    ref = r.copy()
    np.add.at(ref, slots, mass)
    add_messages(r, slots, mass)
    assert np.array_equal(r, ref)


def test_take_ghosts_takes_the_nonzero_ghost_slots(rng):
    m_own, n_ghost = 7, 40
    r = rng.normal(size=m_own + n_ghost)
    r[m_own + rng.choice(n_ghost, size=25, replace=False)] = 0.0
    ghost_slot = rng.integers(0, 1000, size=n_ghost).astype(np.int32)
    before = r.copy()
    at, slots, mass = take_ghosts(r, m_own, ghost_slot)
    want = np.flatnonzero(before[m_own:])
    assert np.array_equal(at, want) and np.array_equal(slots, ghost_slot[want])
    assert np.array_equal(mass, before[m_own:][want])
    assert np.all(r[m_own:] == 0.0) and np.array_equal(r[:m_own], before[:m_own])  # own entries untouched
    assert [len(a) for a in take_ghosts(r, m_own, ghost_slot)] == [0, 0, 0]
