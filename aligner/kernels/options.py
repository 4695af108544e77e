"""How the kernels are compiled: the entry points numba makes for them.

By default numba wraps every compiled function in two entry points besides its native code: one
that converts Python arguments (unboxing each array), so that Python can call it, and a C entry
point for first-class function values. Each costs compile time on a first run, about 5 ms per
array argument for the Python one. No kernel is used as a first-class function value, so none
gets the C entry point (``OUTER``). A helper that only other kernels call (the body of their
loops) is declared with :func:`inner`: numba compiles it into its callers without an entry point
of its own, and Python calling it runs the plain Python function (slowly, but correctly).

For the same reason the kernels of a default run allocate with ``np.empty`` and fill the array
in a loop where ``np.zeros``, ``np.full``, ``np.ones`` or ``np.arange`` would do: numba compiles
its own implementation of each of those per element type, in every process (0.04 to 0.15 s
each on a first run), while ``np.empty`` is compiled once per type and shared.
Measured (``python scripts/bench/compile_timeline.py``): see docs/benchmarks.md, "First run".
"""

from numba.extending import register_jitable

#: a kernel Python calls: its Python entry point only
OUTER = {"no_cfunc_wrapper": True}

#: a helper only other kernels call: compiled into them, plain Python when Python calls it
inner = register_jitable
