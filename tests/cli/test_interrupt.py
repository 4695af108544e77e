"""Nothing half-written: a run killed at any moment leaves the previous outputs or none.

Real ``aligner align`` processes are killed (SIGKILL, and SIGINT as Ctrl-C sends it) at several
moments of a run on inputs big enough that it takes a few seconds, including the moment the
outputs are being written (caught by watching for the staging directory). Afterwards the
output directory must hold the complete previous outputs, byte-identical, or no outputs at
all; never a mix, never a partial file, never a stray temporary file among them; the user's
other files in it are kept (after ``check_outdir`` has tidied up what a SIGKILL left).
"""

import json
import os
import signal
import subprocess
import sys
import time

import numpy as np
import pytest

from aligner.io.outputs import OUTPUT_FILES, check_outdir

pytestmark = pytest.mark.skipif(not hasattr(signal, "SIGKILL"), reason="POSIX signals needed")

# Ctrl-C semantics in the child even when the test runner was started with SIGINT ignored (a
# background job of a non-interactive shell inherits that): restore Python's default handler.
CHILD = ("import signal; signal.signal(signal.SIGINT, signal.default_int_handler); "
         "from aligner.cli.app import app; app()")
N_NODES = 10_000
CANDIDATES = 11  # prior rows per node of A


@pytest.fixture(scope="module")
def inputs(tmp_path_factory):
    """Two random graphs of 10k nodes (mean degree 5) and a prior of 11 candidates per node.

    A run takes a few seconds (half of it importing), so a kill lands at a known stage.
    """
    d = tmp_path_factory.mktemp("big")
    rng = np.random.default_rng(7)
    for name in ("a.tsv", "b.tsv"):
        u, v = rng.integers(0, N_NODES, (2, N_NODES * 5 // 2))
        (d / name).write_text("".join(f"n{x}\tn{y}\n" for x, y in zip(u, v)))
    a = np.repeat(np.arange(N_NODES), CANDIDATES)
    b = np.concatenate([np.arange(N_NODES)[:, None], rng.integers(0, N_NODES, (N_NODES, CANDIDATES - 1))], 1)
    s = rng.random(N_NODES * CANDIDATES) + (np.arange(N_NODES * CANDIDATES) % CANDIDATES == 0)
    (d / "p.tsv").write_text("".join(f"n{x}\tn{y}\t{z:.6f}\n" for x, y, z in zip(a, b.ravel(), s)))
    return d


def _start(inputs, out):
    args = [sys.executable, "-c", CHILD, "align", str(inputs / "a.tsv"), str(inputs / "b.tsv"),
            "-p", str(inputs / "p.tsv"), "-o", str(out), "--force", "--quiet"]
    return subprocess.Popen(args, stdout=subprocess.PIPE, stderr=subprocess.PIPE, cwd=inputs)


def _outputs(out):
    return {f: (out / f).read_bytes() for f in OUTPUT_FILES if (out / f).exists()}


def _staging(parent, out):
    return [e for e in os.listdir(parent) if e.startswith(f".{out.name}.aligner-")]


def _kill_when(proc, parent, out, sig, delay=None):
    """Send ``sig`` after ``delay`` seconds, or (delay None) as soon as staging begins."""
    if delay is not None:
        time.sleep(delay)
    else:
        deadline = time.monotonic() + 60
        while proc.poll() is None and not _staging(parent, out) and time.monotonic() < deadline:
            pass  # busy wait: the outputs take only milliseconds to write
    if proc.poll() is None:
        proc.send_signal(sig)
    _, err = proc.communicate(timeout=60)
    return proc.returncode, err.decode(errors="replace")


def _check_state(out, previous, user_file):
    """The outputs are the previous set, or a complete set of the same (deterministic) run, or none."""
    got = _outputs(out) if out.exists() else {}
    if got:
        assert set(got) == set(OUTPUT_FILES), f"a partial set of outputs: {sorted(got)}"
        # alignment.tsv and conserved_edges.tsv are deterministic: byte-identical to the previous
        # run; summary.json differs only by its timings and must be complete JSON
        for f in ("alignment.tsv", "conserved_edges.tsv"):
            assert got[f] == previous[f], f"{f} differs from the previous outputs"
        json.loads(got["summary.json"])
        kind = "previous" if got == previous else "new"
    else:
        kind = "none"
    if out.exists():
        stray = set(os.listdir(out)) - set(OUTPUT_FILES) - {user_file}
        assert not stray, f"stray files in the output directory: {stray}"
    return kind


def test_killed_runs_leave_previous_outputs_or_none(inputs, tmp_path):
    out = tmp_path / "out"
    t0 = time.monotonic()
    proc = _start(inputs, out)
    _, err = proc.communicate(timeout=120)
    full = time.monotonic() - t0
    assert proc.returncode == 0, err.decode()
    user_file = "my_notes.txt"  # a file of the user's own, which must survive every run
    (out / user_file).write_text("keep me\n")
    previous = _outputs(out)
    assert set(previous) == set(OUTPUT_FILES)

    seen = []
    # (signal, moment as a share of a full run; None = as soon as the outputs are being written)
    plans = [(signal.SIGKILL, 0.6), (signal.SIGKILL, None), (signal.SIGINT, 0.6), (signal.SIGINT, None)]
    for sig, frac in plans:
        rc, err = _kill_when(_start(inputs, out), tmp_path, out, sig, None if frac is None else frac * full)
        kind = _check_state(out, previous, user_file)
        if sig == signal.SIGINT and rc == -signal.SIGINT:
            # on a slow machine the signal can land while Python is still importing the package,
            # before the command line runs: Python's own KeyboardInterrupt exit; nothing was touched.
            # Or it lands after the command has finished, while the interpreter shuts down: Python
            # has put SIGINT back to the system default by then (CPython's signal finalisation), so
            # the process dies without a word, and the outputs are the complete new set.
            assert "KeyboardInterrupt" in err or (err == "" and kind == "new"), (err, kind)
        else:
            assert "Traceback" not in err, err
        if sig == signal.SIGINT and rc not in (0, -signal.SIGINT):
            assert rc == 130 and "interrupted" in err, (rc, err)
            # Ctrl-C cleans up after itself: no staging directory is left behind
            assert not _staging(tmp_path, out), _staging(tmp_path, out)
        # what a SIGKILL left behind is put right before the next run writes anything
        check_outdir(out, force=True)
        assert not _staging(tmp_path, out), _staging(tmp_path, out)
        assert (out / user_file).read_text() == "keep me\n"
        assert _check_state(out, previous, user_file) in ("previous", "new")
        seen.append((signal.Signals(sig).name, frac, rc, kind))
    print(f"full run {full:.1f} s; kills: {seen}")
    # the killed runs did not all finish anyway (else the test would prove nothing)
    assert any(rc != 0 for _, _, rc, _ in seen), seen


def test_killed_first_run_leaves_no_outputs(inputs, tmp_path):
    """Killed while writing into a directory that did not exist: no output directory, or a complete one."""
    out = tmp_path / "fresh"
    rc, err = _kill_when(_start(inputs, out), tmp_path, out, signal.SIGKILL, None)
    assert "Traceback" not in err
    got = _outputs(out) if out.exists() else {}
    assert not got or set(got) == set(OUTPUT_FILES), sorted(got)
    check_outdir(out, force=True)  # removes the staging directory of the killed run
    assert not _staging(tmp_path, out)
