"""The compile-ahead table: the signatures a default run calls each kernel with.

The helper process (aligner.engines.ahead) compiles what this table lists; a signature that
differs from the run's would be compiled for nothing, so the table is checked against what a
run really calls, read from numba's dispatchers (``Dispatcher.signatures``, numba's documented
attribute) in fresh processes.
"""

import json
import os
import subprocess
import sys
from pathlib import Path

from aligner.kernels import ahead

DEMO = Path(__file__).resolve().parents[2] / "demo_pairs" / "firefly"

_RUN = """
import importlib, json, pkgutil, sys
import aligner, aligner.kernels as K
from numba.core.registry import CPUDispatcher
d = sys.argv[1]
aligner.align(f"{d}/network_a.tsv", f"{d}/network_b.tsv", f"{d}/prior.tsv", truth=f"{d}/truth.tsv")
used = {}
for m in pkgutil.iter_modules(K.__path__):
    mod = importlib.import_module("aligner.kernels." + m.name)
    for name, obj in vars(mod).items():
        if isinstance(obj, CPUDispatcher) and obj.py_func.__module__ == mod.__name__ and obj.signatures:
            used[f"{m.name}.{name}"] = sorted(str(s) for s in obj.signatures)
print(json.dumps(used))
"""


def _used_by_a_default_run():
    """Kernel -> signatures called from Python by a default run on the demo pair.

    Run twice: the first fills numba's cache; in the second every kernel called from Python is
    loaded from it and kernels called only by other kernels are never touched.
    """
    for _ in range(2):
        out = subprocess.run([sys.executable, "-c", _RUN, str(DEMO)], capture_output=True, text=True, check=True)
    return json.loads(out.stdout.strip().splitlines()[-1])


def test_table_lists_what_a_default_run_calls():
    used = _used_by_a_default_run()
    listed = {}
    for key in ahead._SIGNATURES:
        dispatcher, sig = ahead._kernel(key)
        listed[key] = [str(sig)]
    # every kernel a run calls is listed with the signature it is called with; a listed kernel a
    # run may skip is one of ahead.ON_DEMAND (the demo's assignment needs no shortest paths)
    assert {k: v for k, v in listed.items() if k in used} == used
    assert set(listed) - set(used) <= set(ahead.ON_DEMAND)


def test_every_stage_of_the_table_is_a_pipeline_stage():
    from aligner.pipeline import STAGES

    assert set(ahead.STAGE_KERNELS) <= set(STAGES)
    assert ahead.stage_kernels("writing") == []
    # the command line starts the helper with these before importing the pipeline: the same
    # stages in the same order (the helper leaves the first to the run)
    assert ahead.KERNEL_STAGES == tuple(s for s in STAGES if s != "writing")


def test_helper_queue_takes_the_largest_first_then_from_the_back(monkeypatch):
    monkeypatch.setattr(ahead, "cached", lambda key: False)
    stages = ["read", "candidates", "product", "diffusion", "rounding", "refine", "scoring", "writing"]
    queue = ahead.helper_queue(stages)
    first = [*ahead.HELPER_FIRST, *ahead.ON_DEMAND]
    assert queue[:len(first)] == first
    scoring = ahead.stage_kernels("scoring")
    assert queue[len(first):len(first) + len(scoring)] == scoring
    assert not set(queue) & set(ahead.stage_kernels("read"))  # the run starts it at once
    assert sorted(queue) == sorted(k for s in stages[1:] for k in ahead.stage_kernels(s))
    monkeypatch.setattr(ahead, "cached", lambda key: key.startswith("assign"))
    assert not [k for k in ahead.helper_queue(stages) if k.startswith("assign")]


def test_on_demand_kernels_are_listed_with_the_signature_they_are_called_with():
    # the demo never needs the assignment's shortest-path phase; a budget of 0 for the first
    # phase sends every row to it (the call the pipeline makes when rows are left free)
    import numpy as np

    from aligner.kernels import assign

    assert ahead.ON_DEMAND == ("assign._insert_rows",)
    indptr, indices, weights = np.array([0, 2, 4]), np.array([0, 1, 0, 1]), np.array([1.0, 2.0, 3.0, 1.0])
    assert assign._solve(indptr, indices, weights, 2, 0.0).tolist() == [1, 0]
    dispatcher, sig = ahead._kernel("assign._insert_rows")
    assert [str(s) for s in dispatcher.signatures] == [str(sig)]


def test_compiled_kernel_is_seen_as_cached():
    key = "utils.stable_order"
    ahead.compile_kernel(key)  # compiles, or loads what an earlier run cached
    assert ahead.cached(key)


def test_helper_process_compiles_in_order_and_stops_at_end_of_input():
    keys = ["utils.stable_order", "refine._max_entry"]
    proc = subprocess.Popen([sys.executable, "-m", "aligner.kernels.ahead", *keys], stdin=subprocess.PIPE,
                            stdout=subprocess.PIPE, text=True)
    lines = [proc.stdout.readline().split() for _ in range(4)]
    proc.stdin.close()
    assert proc.wait(timeout=60) == 0
    assert lines == [["begin", keys[0]], ["end", keys[0]], ["begin", keys[1]], ["end", keys[1]]]


def test_helper_process_skips_what_it_is_told():
    # the skip line is in the pipe before the helper starts, so it is read before the first kernel
    keys = ["utils.stable_order", "refine._max_entry", "refine._matched_neighbours"]
    read_end, write_end = os.pipe()
    os.write(write_end, f"skip {keys[1]}\n".encode())
    proc = subprocess.Popen([sys.executable, "-m", "aligner.kernels.ahead", *keys], stdin=read_end,
                            stdout=subprocess.PIPE, text=True)
    os.close(read_end)
    lines = [proc.stdout.readline().split() for _ in range(4)]
    os.close(write_end)  # end of input: the helper stops (here, after its last kernel)
    assert proc.wait(timeout=60) == 0
    assert lines == [["begin", keys[0]], ["end", keys[0]], ["begin", keys[2]], ["end", keys[2]]]


def test_helper_process_stops_when_its_input_ends():
    keys = ["utils.stable_order", "refine._max_entry"]
    out = subprocess.run([sys.executable, "-m", "aligner.kernels.ahead", *keys], stdin=subprocess.DEVNULL,
                         capture_output=True, text=True, timeout=60)
    assert out.returncode == 0 and out.stdout == ""
