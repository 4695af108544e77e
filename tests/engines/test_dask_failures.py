"""The dask engine's outputs through the command line, and what it does when the cluster fails.

- two runs with the same number of blocks write byte-identical alignment.tsv and
  conserved_edges.tsv (compared byte for byte: the bytes are the reference);
- a worker killed mid-run (SIGKILL of its process, sent at a fixed point of the run: when the
  diffusion starts) is recovered from, with the x and matching of an undisturbed run on the same
  cluster; with recovery turned off the run ends in one line, exit status 1, and no output;
- a worker killed while the inputs are read on the cluster: the run recovers (dask runs the lost
  reads again) with the undisturbed run's alignment, or ends in one line, exit 1, no output;
- the mapping of distributed's exceptions to :class:`aligner.errors.ClusterError`, and an
  unreachable scheduler as a user error (exit 2, one line).

One LocalCluster of 2 worker processes is shared by the module (a worker must be a process of its
own to be killed; its nanny starts a new one after a kill, and the tests wait for it). The command
line reaches that cluster with ``--scheduler`` instead of starting one per run, which is the same
engine code path as ``--workers 2`` after the connection.
"""

import json
import logging
import os
import signal

import numpy as np
import pytest
from typer.testing import CliRunner

pytest.importorskip("distributed")

from aligner.cli import app  # noqa: E402
from aligner.datasets.instances import as_frames, noisy_relabelled, write_instance  # noqa: E402
from aligner.engines.dask import engine  # noqa: E402
from aligner.errors import ClusterError  # noqa: E402

runner = CliRunner()


@pytest.fixture(scope="module")
def cluster():
    from dask.distributed import Client, LocalCluster

    lc = LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None)
    c = Client(lc)
    yield lc, c
    c.close()
    lc.close()


@pytest.fixture(scope="module")
def pair():
    return noisy_relabelled(800, decoy_mode="near", seed=5)


@pytest.fixture(scope="module")
def folder(pair, tmp_path_factory):
    return write_instance(pair, tmp_path_factory.mktemp("inst"))


def _args(folder, out, *extra):
    return ["align", str(folder / "network_a.tsv"), str(folder / "network_b.tsv"), "-p", str(folder / "prior.tsv"),
            "-o", str(out), "-q", "--engine", "dask", *extra]


def _two_workers(c):
    c.wait_for_workers(2, timeout=60)  # after a kill the nanny starts a new worker process
    return c


def _kill_one_worker(c):
    """SIGKILL the process of the first worker (by address): what the OOM killer or a lost node does."""
    pids = c.run(os.getpid)
    os.kill(pids[sorted(pids)[0]], signal.SIGKILL)


def test_same_partitions_give_byte_identical_outputs(cluster, folder, tmp_path):
    lc, c = cluster
    _two_workers(c)
    for k in (4,):
        outs = [tmp_path / f"k{k}-{i}" for i in range(2)]
        for out in outs:
            res = runner.invoke(app, _args(folder, out, "--scheduler", lc.scheduler_address, "--partitions", str(k)))
            assert res.exit_code == 0, res.output
        for name in ("alignment.tsv", "conserved_edges.tsv"):
            first, second = ((o / name).read_bytes() for o in outs)
            assert len(first) > 100 and first == second, (k, name)
    # the engine section of summary.json carries what issue 15 asks for (keys in docs/formats.md)
    eng = json.loads((outs[0] / "summary.json").read_text())["engine"]
    assert eng["reading"]["where"] == "cluster"  # the files were read by the workers
    assert eng["partitions"] == 4 and 0 < eng["cut_fraction"] < 1 and eng["ghost_pairs"] > 0
    assert eng["rounds"] == eng["diffusion"]["rounds"] + eng["auction"]["rounds"] > 0
    assert eng["messages"] > 0 and eng["edge_touches"] == eng["diffusion"]["edge_touches"] > 0
    assert set(eng["seconds"]) == {"partition", "slice", "build", "gather_product", "diffusion", "auction",
                                   "block_build_max"}
    assert 0 < eng["seconds"]["block_build_max"] <= eng["seconds"]["build"]
    assert all(v >= 0 for v in eng["seconds"].values())
    assert eng["restarts"] == 0 and eng["lost_worker_in"] == [] and eng["balance"]["largest_block_vs_mean"] <= 1.5


def test_a_killed_worker_is_recovered_from_with_the_same_result(cluster, pair):
    _, c = cluster
    _two_workers(c)
    ea, eb, prior, _ = as_frames(pair)
    ref = engine.align(ea, eb, prior, client=c, partitions=4, refine=False)
    assert ref.summary["engine"]["restarts"] == 0
    killed = []

    def on_stage(name):
        if name == "diffusion" and not killed:
            _kill_one_worker(c)
            killed.append(name)

    res = engine.align(ea, eb, prior, client=c, partitions=4, refine=False, progress=on_stage)
    assert killed
    eng = res.summary["engine"]
    assert eng["restarts"] == 1 and eng["lost_worker_in"] == ["the diffusion rounds"]
    # blocks compute the same whatever worker holds them: the undisturbed run is the reference
    assert np.array_equal(res.diffusion.x, ref.diffusion.x)
    assert np.array_equal(res.matching.index, ref.matching.index)
    assert res.diffusion.residual <= res.config.tol


def test_a_killed_worker_without_recovery_fails_in_one_line_and_writes_nothing(cluster, folder, tmp_path,
                                                                               monkeypatch):
    lc, c = cluster
    _two_workers(c)
    monkeypatch.setattr(engine, "RECOVERY_ATTEMPTS", 0)
    real = engine.diffusion.run_rounds

    def kill_then_run(*args, **kw):  # a real kill, at the start of the diffusion rounds
        _kill_one_worker(c)
        return real(*args, **kw)

    monkeypatch.setattr(engine.diffusion, "run_rounds", kill_then_run)
    out = tmp_path / "o"
    res = runner.invoke(app, _args(folder, out, "--scheduler", lc.scheduler_address, "--partitions", "4"))
    assert res.exit_code == 1, res.output
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in res.output
    assert lines[0].startswith("error: the dask cluster lost a worker during the diffusion rounds and could not "
                               "recover; no output was written;")
    assert not out.exists() or not any(out.iterdir())


def test_a_worker_killed_while_reading_recovers_or_fails_in_one_line(cluster, folder, tmp_path, monkeypatch):
    """Killed between the files' reading and the prior's selection (the files' frames live on the
    workers then): dask recomputes what it can, or the run ends in one line, exit 1, no output."""
    lc, c = cluster
    _two_workers(c)
    real = engine.reading.select_on_cluster

    def kill_then_select(*args, **kw):
        _kill_one_worker(c)
        return real(*args, **kw)

    monkeypatch.setattr(engine.reading, "select_on_cluster", kill_then_select)
    out = tmp_path / "o"
    res = runner.invoke(app, _args(folder, out, "--scheduler", lc.scheduler_address, "--partitions", "2"))
    if res.exit_code == 0:  # recovered: the alignment of an undisturbed run
        monkeypatch.setattr(engine.reading, "select_on_cluster", real)
        _two_workers(c)
        ref = runner.invoke(app, _args(folder, tmp_path / "ref", "--scheduler", lc.scheduler_address,
                                       "--partitions", "2"))
        assert ref.exit_code == 0, ref.output
        assert (out / "alignment.tsv").read_bytes() == (tmp_path / "ref" / "alignment.tsv").read_bytes()
        return
    assert res.exit_code == 1, res.output
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in res.output
    assert lines[0].startswith("error: the dask cluster lost a worker during the reading on the cluster")
    assert not out.exists() or not any(out.iterdir())


def test_a_moment_without_workers_is_waited_out(cluster, pair, monkeypatch):
    # the scheduler may list no worker for a moment (all of them restarting): the blocks cannot be
    # dealt then; that is a lost worker (WorkerLost), so the run starts its distributed stages
    # again once a worker is there, with the undisturbed run's result (common practice: a
    # transient state of the cluster injected by a stand-in answer)
    _, c = cluster
    _two_workers(c)
    ea, eb, prior, _ = as_frames(pair)
    ref = engine.align(ea, eb, prior, client=c, partitions=4, refine=False)
    real, calls = c.nthreads, []

    def none_at_first(*args, **kw):
        info = real(*args, **kw)
        calls.append(1)
        return {} if len(calls) == 2 else info  # the first call sizes the run

    monkeypatch.setattr(c, "nthreads", none_at_first)
    res = engine.align(ea, eb, prior, client=c, partitions=4, refine=False)
    assert res.summary["engine"]["restarts"] == 1
    assert np.array_equal(res.matching.index, ref.matching.index)
    assert np.array_equal(res.diffusion.x, ref.diffusion.x)


def test_distributed_failures_map_to_cluster_errors(cluster):
    from distributed import KilledWorker
    from distributed.client import FutureCancelledError
    from distributed.comm.core import CommClosedError

    _, c = cluster
    assert engine.cluster_failure(KilledWorker("k", "w", None), c) == "killed"
    assert engine.cluster_failure(CommClosedError("closed"), c) == "worker"
    assert engine.cluster_failure(FutureCancelledError("k", "lost dependencies"), c) == "worker"
    assert engine.cluster_failure(engine.WorkerLost("gone"), c) == "worker"
    # an error of the computation itself is not the cluster's: raised as it is
    assert engine.cluster_failure(ValueError("bad"), c) is None
    assert engine.cluster_failure(FileNotFoundError("x"), c) is None
    for kind in ("worker", "killed", "scheduler"):
        text = engine.failure_message(kind, "the matching auction", 1)
        assert "\n" not in text and "the matching auction" in text and "no output was written" in text
    assert ClusterError("x").exit_status == 1 and isinstance(ClusterError("x"), RuntimeError)


def test_a_cluster_failure_on_the_command_line_exits_1(cluster, folder, tmp_path, monkeypatch):
    # dask's own exception injected (a task whose workers kept dying): deterministic, no kill needed
    from distributed import KilledWorker

    lc, _ = cluster

    def die(*args, **kw):
        raise KilledWorker("_group_call-0", "tcp://127.0.0.1:1", None)

    monkeypatch.setattr(engine.auction, "run_auction", die)
    out = tmp_path / "o"
    res = runner.invoke(app, _args(folder, out, "--scheduler", lc.scheduler_address, "--partitions", "2"))
    assert res.exit_code == 1, res.output
    lines = res.stderr.strip().splitlines()
    assert len(lines) == 1 and "Traceback" not in res.output
    assert "while running a task of the matching auction" in lines[0] and "more memory" in lines[0]
    assert not out.exists() or not any(out.iterdir())


def test_unreachable_scheduler_exits_2_in_one_line(folder, tmp_path, monkeypatch):
    monkeypatch.setattr(engine, "CONNECT_TIMEOUT", "1s")
    out = tmp_path / "o"
    res = runner.invoke(app, _args(folder, out, "--scheduler", "tcp://127.0.0.1:1"))
    assert res.exit_code == 2, res.output
    lines = res.stderr.strip().splitlines()
    assert lines == ["error: cannot reach the dask scheduler at tcp://127.0.0.1:1 within 1s; check the address and "
                     "that the scheduler is running"]
    assert not out.exists() or not any(out.iterdir())


class _Lines(logging.Handler):
    def __init__(self):
        super().__init__(logging.DEBUG)
        self.lines = []

    def emit(self, record):
        self.lines.append(record.getMessage())


def test_quiet_keeps_dask_log_lines_below_errors_unprinted(cluster, folder, tmp_path, monkeypatch):
    # docs/commands.md: --quiet prints nothing but errors. Dask's own warnings during a run (a
    # task rescheduled after a worker was lost, a worker restarted) come through its loggers, so
    # one is logged the way dask logs it, mid-run: with -q no handler sees it, without -q it is
    # printed as before (errors are still printed either way)
    lc, c = cluster
    _two_workers(c)
    real = engine.reading.select_on_cluster

    def noisy(*args, **kw):
        logging.getLogger("distributed.scheduler").warning("probe: rescheduling 1 key")
        logging.getLogger("distributed.scheduler").error("probe: an error")
        return real(*args, **kw)

    monkeypatch.setattr(engine.reading, "select_on_cluster", noisy)
    seen = _Lines()
    logging.getLogger("distributed.scheduler").addHandler(seen)
    try:
        for quiet in (True, False):
            args = _args(folder, tmp_path / f"o{quiet}", "--scheduler", lc.scheduler_address)
            if not quiet:
                args.remove("-q")
            seen.lines.clear()
            res = runner.invoke(app, args)
            assert res.exit_code == 0, res.output
            assert ("probe: rescheduling 1 key" in seen.lines) != quiet
            assert "probe: an error" in seen.lines
    finally:
        logging.getLogger("distributed.scheduler").removeHandler(seen)
    assert logging.getLogger("distributed").level < logging.ERROR  # the levels are restored after the run
