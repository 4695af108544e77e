"""Compile ahead: the kernels each pipeline stage calls, by the signatures a default run uses.

A first run after installation compiles every kernel it calls (numba's on-disk cache then makes
later runs load them). The command line uses this module to compile the later stages' kernels
in a second process while the first process reads, builds and solves, so the two cores share
the compilation (:mod:`aligner.engines.ahead` runs the helper process). Compiled code lands in
numba's cache, where the main process finds it when it reaches the stage.

Run as ``python -m aligner.kernels.ahead KERNEL ...`` (names as ``module.function``): compiles
the kernels in the order given, printing ``begin KERNEL`` and ``end KERNEL`` on stdout; a line
``skip KERNEL`` on its stdin drops one not yet begun (the run took it), and the end of its
stdin stops it between kernels.

The table below lists signatures as numba type expressions (``int64[::1]`` is a contiguous
1-D int64 array). A kernel called with other types (another option, another dtype) is simply
compiled where it is called; ``tests/kernels/test_ahead_table.py`` checks that a default run's
signatures are all in the table, so it cannot fall silently out of date.
"""

from __future__ import annotations

import importlib
import os
import select
import sys

_I64, _I32, _F64 = "int64[::1]", "int32[::1]", "float64[::1]"

#: stage -> [(kernel module, function, argument types)] in the order the stage calls them
STAGE_KERNELS: dict[str, list[tuple[str, str, str]]] = {
    "read": [
        ("tables", "sort_rows", f"{_I64}, {_I64}, int64"),
        ("tables", "merge_sorted", f"{_I64}, {_I64}, {_I64}, {_F64}, int64"),
        ("tables", "fill_symmetric", f"{_I64}, {_I64}, int64, {_F64}, boolean"),
    ],
    "candidates": [
        ("candidates", "row_pointer", "int32[:, ::1], int64"),
        ("candidates", "pairs_order", "int32[:, ::1], int64, int64"),
    ],
    "product": [
        ("product", "product_bound", f"{_I64}, {_I32}, {_I64}, {_I32}, {_I64}, {_I32}"),
        ("product", "product_rows",
         f"{_I64}, {_I64}, {_I32}, {_I64}, {_I32}, {_I64}, {_I32}, {_I64}, {_I32}, {_F64}, {_F64}, float64, {_I64}"),
    ],
    "diffusion": [
        ("push", "_residual", f"{_I64}, {_I32}, {_F64}, {_F64}, float64, {_F64}, {_F64}, {_F64}"),
        ("push", "_push_pass", f"{_I64}, {_I32}, {_F64}, {_F64}, float64, {_F64}, {_F64}, {_F64}, {_I64}, int64"),
        ("push", "_sub_rows", f"{_I64}, {_I32}, {_F64}, {_I64}, {_I32}"),
        ("push", "_push", f"{_I64}, {_I32}, {_F64}, {_F64}, float64, {_F64}, {_F64}, {_F64}, int64"),
    ],
    "rounding": [
        ("assign", "pack_positive", f"int32[:, ::1], {_F64}, int64, int64"),
        ("assign", "_row_reduction_pass", f"{_I64}, float64[:, ::1], {_I64}, int64, int64, {_F64}, float64[:, ::1], "
                                          f"{_I64}, {_F64}"),
        ("assign", "_insert_rows", f"{_I64}, int64, {_I64}, float64[:, ::1], {_F64}, float64[:, ::1], {_I64}, {_F64}, "
                                   f"int8[::1], {_I64}, {_F64}, {_I64}, {_I64}, {_I64}, {_I64}"),
        ("assign", "matched_packed", f"{_I64}, float64[:, ::1], {_I64}, {_I64}"),
    ],
    "refine": [
        ("utils", "stable_order", f"{_I64}, int64"),
        ("refine", "_max_entry", f"{_I64}, {_I32}"),
        ("refine", "_matched_neighbours", f"{_I64}, {_I32}, {_F64}, {_I64}, {_F64}"),
        ("refine", "_local_search", f"{_I64}, {_I32}, {_F64}, {_I64}, {_I64}, {_I64}, {_I64}, {_I64}, {_F64}, {_F64}, "
                                    f"{_I64}, {_I64}, int64, boolean, float64, float64, none"),
    ],
    "scoring": [
        ("scoring", "mapped_edge_rows", f"{_I64}, {_I64}, {_I64}, {_I64}, {_I64}, boolean"),
        ("scoring", "largest_component", f"{_I64}, {_I64}, bool[::1], int64"),
        ("scoring", "induced_degrees", f"{_I64}, {_I64}, bool[::1], int64"),
        ("refine", "exchange_losses", f"{_I64}, {_I32}, {_F64}, {_I64}, {_I64}, {_I64}, {_F64}, {_I64}, {_I64}, "
                                      f"int64, int64, {_F64}"),
        ("refine", "neutral_exchanges", f"{_I64}, {_I32}, {_I64}, {_I64}, {_I64}, {_F64}, {_F64}, {_I64}, {_I64}, "
                                        "float64"),
    ],
}

#: the stages that call kernels, in the pipeline's order (:data:`aligner.pipeline.STAGES` less the
#: writing; a test keeps the two in step): the command line starts the helper with them before it
#: imports the pipeline
KERNEL_STAGES = tuple(STAGE_KERNELS)


#: the kernels the helper process takes first: the two largest of the stages after diffusion
#: (between them about a quarter of all compilation; the run compiles reading to diffusion meanwhile).
#: It then takes the others from the last stage backwards, and the run, when it would wait,
#: takes work from the back of the helper's list.
HELPER_FIRST = ("refine._local_search", "assign._row_reduction_pass")

#: kernels a run calls only on some inputs: the assignment's shortest-path phase runs only for
#: rows its first phase leaves free (none in default runs on the demo pair and on generated pairs
#: of 2*10^4 and 10^5 nodes; some in the demo's permutation null). The helper takes them right
#: after :data:`HELPER_FIRST` (taking them last, or when the run reaches the stage that needs
#: them, measured no better on the demo); the run never compiles them ahead itself (only when it
#: calls one).
ON_DEMAND = ("assign._insert_rows",)


def helper_queue(stages) -> list[str]:
    """The kernels of ``stages`` after the first, in the helper's order, less those cached."""
    later = [k for s in reversed(list(stages)[1:]) for k in stage_kernels(s)]
    first = [k for k in (*HELPER_FIRST, *ON_DEMAND) if k in later]
    order = first + [k for k in later if k not in first]
    return [k for k in order if not cached(k)]


def stage_kernels(stage: str) -> list[str]:
    """Names (``module.function``) of the kernels ``stage`` calls."""
    return [f"{module}.{name}" for module, name, _ in STAGE_KERNELS.get(stage, [])]


_SIGNATURES = {f"{module}.{name}": args for entries in STAGE_KERNELS.values() for module, name, args in entries}


def _kernel(key: str):
    """(dispatcher, argument types) of the kernel named ``module.function``."""
    from numba.core import types

    module, name = key.split(".")
    dispatcher = getattr(importlib.import_module(f"aligner.kernels.{module}"), name)
    return dispatcher, eval(f"({_SIGNATURES[key]},)", {"__builtins__": {}}, vars(types))  # noqa: S307 (our table)


def cached(key: str) -> bool:
    """Whether the kernel named ``key`` is in numba's on-disk cache, fresh for its source.

    Reads numba's cache index (not a public interface: any surprise counts as cached, so the
    worst case is a run that compiles as it always did).
    """
    try:
        dispatcher, sig = _kernel(key)
        cache = dispatcher._cache
        return cache._index_key(sig, dispatcher.targetctx.codegen()) in cache._cache_file._load_index()
    except Exception:  # noqa: BLE001 (numba internals moved: behave as before)
        return True


def compile_kernel(key: str) -> None:
    """Compile the kernel named ``key`` for its signature (or load it from the cache)."""
    dispatcher, sig = _kernel(key)
    dispatcher.compile(sig)


def main(keys: list[str]) -> None:
    """Compile ``keys`` in order; stdin lines ``skip KEY`` drop one, end of input stops.

    The input is read (without waiting) before each kernel, so a line written before a kernel
    is begun always counts.
    """
    fd = sys.stdin.fileno()
    skip: set[str] = set()
    pending = b""

    def still_wanted() -> bool:
        nonlocal pending
        while select.select([fd], [], [], 0)[0]:
            chunk = os.read(fd, 4096)
            if not chunk:
                return False  # the run closed our input: stop
            *lines, pending = (pending + chunk).split(b"\n")
            for line in lines:
                word, _, key = line.decode().strip().partition(" ")
                if word == "skip":
                    skip.add(key)
        return True

    for key in keys:
        if not still_wanted():
            break
        if key in skip:
            continue
        print("begin", key, flush=True)
        compile_kernel(key)
        print("end", key, flush=True)


if __name__ == "__main__":
    main(sys.argv[1:])
