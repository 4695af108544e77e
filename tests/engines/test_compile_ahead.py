"""The compile-ahead helper's controller: waits, takes work from the back, lets the helper go.

A stand-in helper process (same line protocol as ``python -m aligner.kernels.ahead``) replaces
the real one so the order of events is known; compiling is recorded, not done. Common practice:
a controller of another process tested against a scripted peer.
"""

import sys
import time

import pytest

from aligner.engines import ahead as controller
from aligner.kernels import ahead

# begins its first kernel, holds it for HOLD seconds, ends it, then echoes its input to a log
# until the input ends; with DIE set it exits while "compiling" instead
FAKE = """
import os, sys, time
keys = sys.argv[1:]
print("begin", keys[0], flush=True)
if os.environ.get("FAKE_DIE"):
    sys.exit(1)
time.sleep(float(os.environ["FAKE_HOLD"]))
print("end", keys[0], flush=True)
with open(os.environ["FAKE_LOG"], "a") as log:
    for line in sys.stdin:
        log.write(line)
"""


class Scripted(controller.CompileAhead):
    def _command(self, queue):
        return [sys.executable, "-c", FAKE, *queue]


@pytest.fixture
def scripted(monkeypatch, tmp_path):
    compiled = []
    monkeypatch.setattr(ahead, "compile_kernel", compiled.append)
    monkeypatch.setenv("FAKE_LOG", str(tmp_path / "log"))
    monkeypatch.setenv("FAKE_HOLD", "1.0")

    def start(queue):
        monkeypatch.setattr(ahead, "helper_queue", lambda stages: list(queue))
        helper = Scripted(["read", "candidates", "product", "diffusion", "rounding", "refine", "scoring"],
                          enabled=True).__enter__()
        proc = helper._proc
        deadline = time.monotonic() + 30
        while queue[0] not in helper._began and time.monotonic() < deadline:
            time.sleep(0.01)
        assert queue[0] in helper._began
        return helper, proc

    return start, compiled, tmp_path / "log"


def test_waiting_run_takes_kernels_from_the_back_then_lets_the_helper_go(scripted):
    start, compiled, log = scripted
    queue = ["assign._row_reduction_pass", "scoring.best_two", "scoring.induced_degrees"]
    helper, proc = start(queue)
    helper.reach("rounding")  # its kernel is the helper's: the run takes the others meanwhile
    assert "assign._row_reduction_pass" in helper._ended
    assert compiled == ["scoring.induced_degrees", "scoring.best_two"]
    assert not helper.started  # everything done: the helper was let go (its input closed)
    assert proc.wait(timeout=30) == 0
    assert log.read_text().split("\n")[:2] == ["skip scoring.induced_degrees", "skip scoring.best_two"]


def test_run_compiles_what_the_helper_has_not_begun(scripted):
    start, compiled, log = scripted
    queue = ["assign._row_reduction_pass", "refine._local_search"]
    helper, proc = start(queue)
    t0 = time.monotonic()
    helper.reach("refine")  # the helper is on the assignment: the run compiles local search itself
    assert time.monotonic() - t0 < 0.5  # no waiting for the helper
    assert compiled == ["refine._local_search"]
    assert helper.started  # the assignment is still the helper's
    helper.reach("rounding")
    assert not helper.started and compiled == ["refine._local_search"]
    proc.wait(timeout=30)
    assert log.read_text() == "skip refine._local_search\n"


def test_run_goes_on_when_the_helper_dies(scripted, monkeypatch):
    start, compiled, log = scripted
    monkeypatch.setenv("FAKE_DIE", "1")
    helper, proc = start(["assign._row_reduction_pass"])
    helper.reach("rounding")  # returns: the helper is gone; the run will compile as it calls
    proc.wait(timeout=30)
    assert compiled == [] and not helper.started


def test_nothing_starts_when_every_kernel_is_cached(monkeypatch):
    monkeypatch.setattr(ahead, "helper_queue", lambda stages: [])
    with Scripted(["read", "rounding"], enabled=True) as helper:
        assert not helper.started
        helper.reach("rounding")  # a no-op


def test_switched_off_by_environment(monkeypatch):
    monkeypatch.setenv("ALIGNER_COMPILE_AHEAD", "0")
    monkeypatch.setattr(ahead, "helper_queue", lambda stages: pytest.fail("must not look"))
    with controller.CompileAhead(["read", "rounding"]) as helper:
        assert not helper.started


def test_run_leaves_a_kernel_it_may_never_call_to_the_helper(scripted):
    # the shortest-path phase of the assignment (ahead.ON_DEMAND) is called only when rows are
    # left free: the run neither compiles it on reaching its stage nor takes it as spare work
    start, compiled, log = scripted
    queue = ["assign._row_reduction_pass", *ahead.ON_DEMAND]
    helper, proc = start(queue)
    helper.reach("rounding")  # waits for the helper's kernel; the on-demand one is not spare work
    assert compiled == []
    assert "assign._row_reduction_pass" in helper._ended
    assert helper.started  # the on-demand kernel is still the helper's to compile
    helper.release()
    proc.wait(timeout=30)


def test_a_failed_run_stops_the_helper_at_once(scripted):
    # the command line starts the helper before it checks the output directory: a run refused
    # there (or failing later) must not leave the helper compiling on after it
    start, compiled, log = scripted
    helper, proc = start(["assign._row_reduction_pass", "refine._local_search"])
    t0 = time.monotonic()
    helper.__exit__(RuntimeError, RuntimeError("refused"), None)  # leaving its block by an error
    assert proc.wait(timeout=30) != 0  # killed while "compiling" (it holds FAKE_HOLD = 1 s)
    assert time.monotonic() - t0 < 0.9
    assert not helper.started and compiled == []


def test_helper_compiles_this_package_whatever_the_working_directory(monkeypatch, tmp_path):
    # a directory named aligner in the working directory (a source checkout beside the installed
    # copy) would be what ``python -m aligner.kernels.ahead`` imports if the helper ran there
    decoy = tmp_path / "aligner"
    (decoy / "kernels").mkdir(parents=True)
    (decoy / "__init__.py").write_text("")
    (decoy / "kernels" / "__init__.py").write_text("")
    (decoy / "kernels" / "ahead.py").write_text("import sys\nsys.exit(3)\n")
    monkeypatch.chdir(tmp_path)
    key = "utils.stable_order"  # small: compiled (or loaded) by the real helper in a second or two
    monkeypatch.setattr(ahead, "helper_queue", lambda stages: [key])
    helper = controller.CompileAhead(["read", "refine"], enabled=True).__enter__()
    proc = helper._proc
    proc.wait(timeout=120)
    with helper._cond:  # the listener has read all the helper said
        assert helper._cond.wait_for(lambda: helper._gone, timeout=30)
    assert key in helper._ended  # the decoy would have exited at once, beginning nothing
    helper.release()
