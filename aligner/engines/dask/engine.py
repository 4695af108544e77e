"""The dask engine: read the inputs and select the candidates, build the product graph, diffuse
and match on the cluster; refine and score on the client through the pipeline's own stage
functions.

:class:`BlockCluster` holds the blocks on the workers (one future each, every task of a block
pinned to the worker that holds it, so no block's arrays move after it is built) and the one
exchange the rounds use: each message is picked out of its sender's result on the sender's
worker, then moved to its receiver.

A lost worker takes its blocks with it (they are pinned to it and their inputs were scattered to
it alone), so the engine does not wait for dask to recompute them: every wait watches the
workers (:meth:`BlockCluster.wait`), a lost one raises :class:`WorkerLost`, and :func:`align`
starts the distributed stages again, from the partition, on the workers left
(:data:`RECOVERY_ATTEMPTS` times). Blocks compute the same whatever worker holds them, so a
recovered run gives the same result. Past that, or when the scheduler is lost, the run stops
with :class:`aligner.errors.ClusterError`; nothing is written (the client writes the outputs
only at the end).
"""

from __future__ import annotations

import logging
import time
from collections import deque
from contextlib import contextmanager
from collections.abc import Iterable, Iterator
from typing import Any

import numpy as np

from aligner.checks import warn
from aligner.config import DASK_READING, AlignConfig, EngineConfig, from_options
from aligner.core.diffusion import DiffusionResult
from aligner.core.product import ProductGraph
from aligner.core.rounding import Matching
from aligner.errors import ClusterError, InvalidParameterError
from aligner.engines.dask import auction, blocks, diffusion, reading
from aligner.engines.dask.reading import on_cluster  # align's own keyword ``reading`` hides the module
from aligner.pipeline import (AlignmentResult, Candidates, Clock, Problem, check_memory, check_networks,
                              check_some_candidate, diffusion_source, evaluate, find_candidates, finish_inputs,
                              improve, read_inputs, summarize, with_seed_pairs)

__all__ = ["BlockCluster", "WorkerLost", "connect", "align", "CONNECT_TIMEOUT", "RECOVERY_ATTEMPTS", "POLL_SECONDS",
           "block_imbalance"]

#: how long to try to reach a scheduler before giving up
CONNECT_TIMEOUT = "10s"
#: how many times a run whose worker was lost starts its distributed stages again
RECOVERY_ATTEMPTS = 1
#: worker processes of a LocalCluster started when no number is given (``--workers``)
LOCAL_WORKERS = 2
#: how often a wait checks that the blocks' workers are still in the cluster
POLL_SECONDS = 1.0
#: rounds (of the diffusion, of the auction) the client sends ahead of the last one whose tally it has seen
ROUNDS_AHEAD = 4


def block_imbalance(cluster: "BlockCluster") -> float:
    """The largest block's work over the mean: own pairs plus their stored product entries (what a
    block stores and a sweep reads; ghost pairs not counted)."""
    work = np.array(cluster.m_own, dtype=np.float64) + np.array(cluster.entries, dtype=np.float64)
    return float(work.max() / work.mean()) if work.sum() > 0 else 1.0


class WorkerLost(RuntimeError):
    """A worker that holds blocks left the cluster during a wait (internal: :func:`align` recovers
    or turns it into :class:`~aligner.errors.ClusterError`)."""


class BlockCluster:
    """The blocks of one problem on a dask cluster.

    Blocks are dealt to the workers once (largest first, round-robin) and never move. The blocks
    of one worker form its group, and every step runs as one task per group that loops over the
    group's blocks: the scheduler sees a handful of tasks per round whatever the number of blocks.
    A :class:`Group` result is a list of futures, one per group, each holding the list of its
    blocks' results.
    """

    def __init__(self, client, inputs: Iterable[blocks.BlockInput], node_bounds: np.ndarray,
                 sizes: np.ndarray | None = None):
        self.client = client
        self.k = len(node_bounds) - 1
        self.node_bounds = node_bounds
        if sizes is None:  # the inputs themselves, already sliced
            inputs = list(inputs)
            sizes = np.array([len(i.c_b) + len(i.a_indices) for i in inputs])
        workers = worker_addresses(client)
        if not workers:  # none at this moment (e.g. all restarting): align starts again once one is back
            raise WorkerLost("the cluster has no worker to hold the blocks")
        order = np.argsort(-np.asarray(sizes), kind="stable")
        worker_of = {}
        for rank, b in enumerate(order):
            worker_of[int(b)] = workers[rank % len(workers)]
        self.groups = [(w, [b for b in range(self.k) if worker_of[b] == w]) for w in workers]
        self.groups = [(w, members) for w, members in self.groups if members]
        self.group_of = {b: g for g, (_, members) in enumerate(self.groups) for b in members}
        self.worker = [worker_of[b] for b in range(self.k)]
        futs = {}
        for inp in inputs:  # each block shipped to its worker as soon as it is sliced, and let go
            futs[inp.index] = client.scatter(inp, workers=[worker_of[inp.index]], hash=False)
            del inp  # before the next block is sliced
        self.blocks = [self._submit(g, _build_group, [futs[b] for b in members])
                       for g, (_, members) in enumerate(self.groups)]
        meta = self.collect(self.run(_meta))
        del futs
        self.m_own = [m[0] for m in meta]
        self.entries = [m[1] for m in meta]
        self.cut = [m[2] for m in meta]
        self.ghosts = [m[3] for m in meta]
        self.build_seconds = [m[5] for m in meta]
        self.senders = [[s for s in range(self.k) if r in meta[s][4]] for r in range(self.k)]

    def _submit(self, g: int, fn, *args):
        return self.client.submit(fn, *args, workers=[self.groups[g][0]], allow_other_workers=False, pure=False)

    def run(self, fn, *args, mails=None, gate=None) -> list:
        """``fn(block, *per_block_args[, inbox])`` for every block, one task per group. An argument
        that is a group result (a list of one future per group) is read block by block; any other
        is passed to every block. ``mails`` (from :meth:`exchange`) adds each block's inbox: the
        messages addressed to it, in increasing order of their senders. ``gate`` (a future of a
        tally, or None): the tasks wait for it, and when it says stop (``go`` false) ``fn`` is not
        called: each block's first argument is its result, as it is."""
        out = []
        for g in range(len(self.groups)):
            per = [a[g] if _is_group(a, self) else _Shared(a) for a in args]
            out.append(self._submit(g, _group_call, fn, self.blocks[g], per, None if mails is None else mails[g],
                                    gate))
        return _Group(out)

    def rounds(self, states, cap: int, fns: tuple, step_args: tuple, tally_args: tuple, count, senders=None):
        """Rounds from ``states`` with :data:`ROUNDS_AHEAD` of them in flight: the client does not
        wait for a round's tally before sending the next.

        ``fns`` is ``(step, figures, tally, outbox)``: a round is ``step(block, state,
        *step_args, inbox)`` on every block, the messages picked by ``outbox`` for the next round
        (``senders``: as for :meth:`exchange`), and ``tally(figures of every block, *tally_args,
        gate)`` made on a worker, where ``gate`` is the previous round's tally (None first). A
        tally has ``ran`` (the round did work: the one before it said go on) and ``go``; a round
        gated by a tally that says stop keeps every block's state as it is (:meth:`run`), so the
        rounds after the last change nothing. ``count(tally)`` is called for each round that ran,
        in order. Returns the states after the last round that ran and its tally
        (None when ``cap`` is 0): what waiting for each round's tally gives.
        """
        step, figures, tally, outbox = fns
        pending = deque()
        gate = None
        sent = 0
        last = (states, None)
        while True:
            while len(pending) < ROUNDS_AHEAD and sent < cap:
                mails = self.exchange(states, outbox, senders) if sent else [[] for _ in self.groups]
                states = self.run(step, states, *step_args, mails=mails, gate=gate)
                gate = self.reduce(tally, self.run(figures, states), *tally_args, gate)
                pending.append((gate, states))
                sent += 1
            if not pending:
                return last
            ahead, done = pending.popleft()
            t = self.wait([ahead])[0]
            if t.ran:
                count(t)
                last = (done, t)
            if not t.go:
                return last

    def reduce(self, fn, result, *args):
        """``fn(per_block_values, *args)`` once, on the first group's worker, over a group result
        (the blocks' values in block order); a future of its value (nothing waits for it here)."""
        return self._submit(0, _reduce_call, fn, list(result), [m for _, m in self.groups], self.k, *args)

    def exchange(self, results, pick, senders=None) -> list:
        """Mail between the groups: for every receiving group, one mail from each sending group,
        ``{receiver: [(sender, pick(state_of_sender, receiver)), ...]}``, made on the sender's
        worker; a message crosses the network once, and the scheduler sees one task per pair of
        groups."""
        senders = self.senders if senders is None else senders
        n = len(self.groups)
        out = [[] for _ in range(n)]
        for gs in range(n):
            for gr in range(n):
                wanted = {r: [s for s in senders[r] if self.group_of[s] == gs] for r in self.groups[gr][1]}
                wanted = {r: ss for r, ss in wanted.items() if ss}
                if wanted:
                    out[gr].append(self._submit(gs, _mail, pick, self.groups[gs][1], results[gs], wanted))
        return out

    def wait(self, futures: list) -> list:
        """The values of ``futures``, checking every :data:`POLL_SECONDS` that the workers holding
        blocks are still in the cluster (a task pinned to a lost worker would wait for it for
        ever). Raises :class:`WorkerLost` when one has left."""
        from distributed import wait

        while True:
            try:
                wait(futures, timeout=POLL_SECONDS)
                break
            except TimeoutError:
                self.check_workers()
        return self.client.gather(futures)

    def check_workers(self) -> None:
        """Raise :class:`WorkerLost` when a worker holding blocks has left the cluster."""
        alive = set(worker_addresses(self.client))
        gone = sorted({w for w, _ in self.groups} - alive)
        if gone:
            raise WorkerLost(f"worker {gone[0]} left the cluster")

    def collect(self, result) -> list:
        """The per-block results of a group result, gathered to the client in block order."""
        return _by_block(self.wait(list(result)), [m for _, m in self.groups], self.k)

    def on_block(self, b: int, fn, *args):
        """``fn(*args)`` once, on the worker of block ``b``; its value."""
        return self.wait([self._submit(self.group_of[b], fn, *args)])[0]

    @property
    def cut_fraction(self) -> float:
        total = sum(self.entries)
        return sum(self.cut) / total if total else 0.0

    def product_graph(self, m: int, directed: bool, weighted: bool) -> ProductGraph:
        """The union of the blocks' rows in global ids (the single-machine product graph)."""
        rows = self.collect(self.run(blocks.gather_rows))
        indptr = np.zeros(m + 1, dtype=np.int64)
        np.cumsum(np.concatenate([r[0] for r in rows]), out=indptr[1:])
        indices = np.concatenate([r[1] for r in rows]).astype(np.int32)
        weights = np.concatenate([r[2] for r in rows]) if weighted else None
        return ProductGraph(indptr=indptr, indices=indices, directed=directed, weights=weights)


class _Group(list):
    """A group result: one future per group."""


class _Shared:
    def __init__(self, value):
        self.value = value


def _is_group(a, cluster) -> bool:
    return isinstance(a, _Group)


def _build_group(inputs):
    return [blocks.build_block(i) for i in inputs]


def _group_call(fn, group_blocks, per, mails, gate=None):
    out = []
    for t, blk in enumerate(group_blocks):
        args = [p.value if isinstance(p, _Shared) else p[t] for p in per]
        if gate is not None and not gate.go:  # a round after the last: the state as it is
            out.append(args[0])
            continue
        if mails is not None:
            got = sorted((s, msg) for mail in mails for s, msg in mail.get(blk.index, ()))
            args.append([msg for _, msg in got])
        out.append(fn(blk, *args))
    return out


def _by_block(values, members, k) -> list:
    """The per-group lists ``values`` (group g's blocks are ``members[g]``) as one list in block order."""
    flat = [None] * k
    for group, got in zip(members, values):
        for b, v in zip(group, got):
            flat[b] = v
    return flat


def _reduce_call(fn, values, members, k, *args):
    return fn(_by_block(values, members, k), *args)


def _mail(pick, members, states, wanted):
    """On the sender's worker: what each of its blocks sends to each wanted receiver."""
    state_of = dict(zip(members, states))
    return {r: [(s, m) for s in ss if (m := pick(state_of[s], r)) is not None] for r, ss in wanted.items()}


def _own_h(block: blocks.Block) -> np.ndarray:
    return block.h


def _meta(block: blocks.Block):
    return block.m_own, block.entries, block.cut_entries, block.m_local - block.m_own, \
        {owner for owner, _, _ in block.links}, block.seconds


def _missing_dask() -> InvalidParameterError:
    return InvalidParameterError("the dask engine needs dask and distributed, which this install lacks; install "
                                 "them with: pip install 'aligner[dask]'", param="engine")


@contextmanager
def _dask_logs(level: int):
    """Dask's own log lines below ``level`` not printed by this process meanwhile (its scheduler
    and nannies when it started a LocalCluster, its client): the ``distributed`` logger and those
    of its children that set a level of their own, restored on exit."""
    names = ["distributed"] + [n for n, lg in logging.Logger.manager.loggerDict.items()
                               if n.startswith("distributed.") and isinstance(lg, logging.Logger)
                               and lg.level != logging.NOTSET]
    before = {n: logging.getLogger(n).level for n in names}
    for n in names:
        logging.getLogger(n).setLevel(max(level, before[n]))
    try:
        yield
    finally:
        for n, lvl in before.items():
            logging.getLogger(n).setLevel(lvl)


@contextmanager
def connect(client=None, *, scheduler: str | None = None, workers: int = LOCAL_WORKERS, quiet: bool = False):
    """A dask client: ``client`` as it is, or one connected to ``scheduler`` (an address), or a new
    LocalCluster of ``workers`` single-threaded worker processes, closed on exit. ``quiet``: dask's
    own log lines below errors are not printed meanwhile, by this process (its client, and the
    scheduler and nannies of a LocalCluster started here) nor by that LocalCluster's workers."""
    with _dask_logs(logging.ERROR if quiet else logging.NOTSET):
        if client is not None:
            yield client
            return
        try:
            from dask.distributed import Client, LocalCluster
        except ImportError:
            raise _missing_dask() from None
        # the scheduler's note on every shuffle of the reading (a LocalCluster's scheduler runs here)
        logging.getLogger("distributed.shuffle").setLevel(logging.ERROR)
        if scheduler:
            try:
                c = Client(scheduler, timeout=CONNECT_TIMEOUT)
            except (OSError, TimeoutError):
                raise InvalidParameterError(f"cannot reach the dask scheduler at {scheduler} within "
                                            f"{CONNECT_TIMEOUT}; check the address and that the scheduler is "
                                            "running", param="scheduler") from None
            try:
                yield c
            finally:
                c.close()
            return
        # the scheduler's web server on a free port (None means dask's default port, 8787: a second run
        # beside the first warned that it was taken); silence_logs: the workers' own level
        cluster = LocalCluster(n_workers=workers, threads_per_worker=1, processes=True, dashboard_address=":0",
                               silence_logs=logging.ERROR if quiet else logging.WARNING)
        c = Client(cluster)
        try:
            yield c
        finally:
            c.close()
            cluster.close()


def align(network_a, network_b, prior=None, *, truth=None, seeds=None, client=None, scheduler: str | None = None,
          workers: int | None = LOCAL_WORKERS, partitions: int | None = None, diffusion_mode: str = "auto",
          reading: str = "auto", config: AlignConfig | None = None, progress=None, quiet: bool = False,
          **options: Any) -> AlignmentResult:
    """Align two networks with the product graph, the diffusion and the matching on a dask cluster.

    Parameters
    ----------
    network_a, network_b, prior, truth, config, progress
        As for :func:`aligner.align`.
    client : dask.distributed.Client, optional
        A client to run on (left open). Default: connect to ``scheduler``, or start a LocalCluster
        of ``workers`` single-threaded worker processes (closed at the end).
    partitions : int, optional
        Blocks of nodes of A (default: ``workers``).
    diffusion_mode : {"auto", "block", "sweep"}
        Block push, sweeps, or the choice by cut fraction (see :mod:`aligner.engines.dask.diffusion`).
    quiet : bool, default False
        Dask's own log lines below errors (a task rescheduled after a worker was lost, a worker
        restarted) are not printed during the run (the command line's ``--quiet``).
    reading : {"auto", "client"}
        ``"auto"``: when both networks and the prior are files (or glob patterns of part files)
        and the candidates come from the prior, read them and select the candidates on the
        cluster (:mod:`aligner.engines.dask.reading`; the paths must be readable by the
        workers); otherwise, and with ``"client"``, on the client as :func:`aligner.align` does.
    **options
        The options of :class:`aligner.AlignConfig`.

    Returns
    -------
    AlignmentResult
        As from :func:`aligner.align`, with ``summary["engine"]``.

    Notes
    -----
    Refinement and scoring run on the client, on the product graph and x gathered back; so do
    the seeds and the truth table.
    """
    cfg = from_options(AlignConfig, config, options)
    if diffusion_mode not in diffusion.MODES:
        raise InvalidParameterError(f"diffusion_mode must be one of {', '.join(diffusion.MODES)}; got "
                                    f"{diffusion_mode!r}", param="diffusion_mode")
    # checked by their declarations, as the command line checks --scheduler, --workers and --partitions: a
    # LocalCluster of no worker waited for ever, one of 10**23 workers never started, and an empty address
    # started a LocalCluster instead of reaching a scheduler
    sizes = EngineConfig(scheduler=scheduler, workers=workers, partitions=partitions)
    workers = LOCAL_WORKERS if sizes.workers is None else sizes.workers
    parts = workers if sizes.partitions is None else sizes.partitions
    if reading not in DASK_READING:
        raise InvalidParameterError(f"reading must be one of {', '.join(DASK_READING)}; got {reading!r}",
                                    param="reading")
    clock = Clock(progress)
    with connect(client, scheduler=scheduler, workers=workers, quiet=quiet) as c:
        if reading != "client" and on_cluster(network_a, network_b, prior, cfg):
            inputs, found, read_report = _read_on_cluster(c, network_a, network_b, prior, seeds, truth, cfg, parts,
                                                          clock)
        else:
            with clock.stage("read"):
                inputs = read_inputs(network_a, network_b, prior, seeds=seeds, truth=truth, config=cfg)
            with clock.stage("candidates"):
                found = find_candidates(inputs, cfg)
            read_report = {"where": "client"}
        lost: list[str] = []
        while True:
            where = ["starting the blocks"]
            try:
                return _run(c, inputs, found, cfg, parts, diffusion_mode, clock, where, lost, read_report=read_report)
            except Exception as exc:
                kind = cluster_failure(exc, c)
                if kind is None:
                    raise
                lost.append(where[0])
                if kind != "worker" or len(lost) > RECOVERY_ATTEMPTS or not _some_worker(c):
                    raise ClusterError(failure_message(kind, where[0], len(lost) - 1), stage=where[0]) from exc


def _read_on_cluster(client, network_a, network_b, prior, seeds, truth, cfg: AlignConfig, parts: int, clock: Clock):
    """Reading and the candidates on the cluster (:mod:`aligner.engines.dask.reading`), then the
    seeds and the truth table on the client; a failure of the cluster stops the run with
    :class:`~aligner.errors.ClusterError` (nothing is held on the blocks yet to recover)."""
    stage = "the reading on the cluster"
    try:
        with clock.stage("read"):
            got = reading.read_on_cluster(client, network_a, network_b, prior, cfg, parts=parts)
            check_networks(got.network_a, got.network_b, cfg)
        with clock.stage("candidates"):
            prior_t, best, cand = reading.select_on_cluster(client, got, cfg, parts=parts)
            inputs = finish_inputs(got.network_a, got.network_b, prior_t, seeds=seeds, truth=truth, config=cfg)
            check_some_candidate(cand, prior_t, cfg, best)
            found = with_seed_pairs(Candidates(cand), inputs)
    except Exception as exc:
        kind = cluster_failure(exc, client)
        if kind is None:
            raise
        raise ClusterError(failure_message(kind, stage, 0), stage=stage) from exc
    return inputs, found, got.report


def cluster_failure(exc: BaseException, client) -> str | None:
    """What ``exc``, raised while the blocks ran, says of the cluster: ``"worker"`` (a worker
    holding blocks was lost), ``"killed"`` (dask gave up on a task whose workers kept dying),
    ``"scheduler"`` (the client lost its scheduler), or None (not a failure of the cluster:
    an error of the computation itself, raised as it is)."""
    from concurrent.futures import CancelledError

    from distributed import KilledWorker
    from distributed.comm.core import CommClosedError

    if isinstance(exc, KilledWorker):
        return "killed"
    if isinstance(exc, (WorkerLost, CancelledError, CommClosedError, OSError, TimeoutError)):
        if not _scheduler_reachable(client):
            return "scheduler"
        if isinstance(exc, (WorkerLost, CancelledError, CommClosedError)):
            return "worker"
    return None


def worker_addresses(client) -> list[str]:
    """The addresses of the cluster's workers at this moment, sorted, asked of the scheduler.
    (``Client.scheduler_info()`` returns a cached record that the client's periodic refresh
    overwrites with one listing no worker: read just after a refresh, it showed an empty cluster
    in a clean-clone test run.)"""
    return sorted(client.nthreads())


def _scheduler_reachable(client) -> bool:
    if client.status != "running":
        return False
    try:
        client.scheduler_info()
    except Exception:  # any failure to ask is an answer
        return False
    return True


def _some_worker(client) -> bool:
    """Whether the cluster has a worker to start again on (waits for one up to CONNECT_TIMEOUT)."""
    try:
        client.wait_for_workers(1, timeout=CONNECT_TIMEOUT)
    except Exception:  # a timeout, or the scheduler gone meanwhile
        return False
    return True


def failure_message(kind: str, stage: str, restarts: int) -> str:
    """The one line a failed run of the cluster ends with (see :func:`cluster_failure`)."""
    if kind == "killed":
        return (f"the dask workers kept dying while running a task of {stage} and dask gave up on it; no output "
                "was written; the usual cause is a worker running out of memory: give the workers more memory or "
                "use more partitions")
    if kind == "scheduler":
        return (f"the connection to the dask scheduler was lost during {stage}; no output was written; check that "
                "the scheduler is running and reachable, then run again")
    tried = f" ({restarts} restart{'s' if restarts != 1 else ''} tried)" if restarts else ""
    return (f"the dask cluster lost a worker during {stage} and could not recover{tried}; no output was written; "
            "check the workers' logs (a memory limit is the usual cause) and run again")


def _run(client, inputs, found: Candidates, cfg: AlignConfig, parts: int, mode: str, clock: Clock,
         where: list[str] | None = None, lost: list[str] | None = None, *, read_report: dict):
    where = where if where is not None else [""]
    cand = found.candidates
    # seeds as on one machine: extra diffusion sources, fixed in the matching
    seed_idx, h = diffusion_source(cand, inputs.seeds, cfg)
    a_ip, a_ix, _ = inputs.network_a.walk_adjacency(cfg.directed, cfg.weighted)
    b_ip, b_ix, _ = inputs.network_b.walk_adjacency(cfg.directed, cfg.weighted)
    # the memory budget of one machine (--max-memory): the client gathers the whole product graph back
    estimate = check_memory(inputs, cand, cfg)
    # a block owns at least one node of A with candidates: more blocks would be empty ones, each
    # still a task of every round and a table of every block's bounds (thousands of them made a
    # small run take minutes and gigabytes)
    busy = int(np.count_nonzero(np.diff(cand.a_indptr)))
    engine: dict[str, Any] = {"partitions": min(parts, max(busy, 1)), "workers": len(worker_addresses(client)),
                              "reading": read_report}
    if engine["partitions"] < parts:
        engine["partitions_asked"] = parts
        nodes = "1 node of A has" if busy == 1 else f"{busy} nodes of A have"
        warn(f"{parts} partitions asked for, but only {nodes} candidate pairs: the run uses {engine['partitions']} "
             f"block{'s' if engine['partitions'] != 1 else ''}, one node or more each")
        parts = engine["partitions"]
    with clock.stage("product"):
        where[0] = "the product graph's build"
        t0 = time.perf_counter()
        bounds = blocks.partition(a_ip, a_ix, b_ip, b_ix, cand, parts)  # by exact work: one build, no recut
        tp = time.perf_counter()
        ins = blocks.block_inputs(inputs.network_a, inputs.network_b, cand, h, bounds, directed=cfg.directed,
                                  weighted=cfg.weighted, normalization=cfg.normalization,
                                  weight_model=cfg.weight_model)
        t1 = time.perf_counter()
        slicing = [0.0]
        cluster = BlockCluster(client, _timed(ins, slicing), bounds, blocks.block_sizes(a_ip, cand, bounds))
        del ins
        engine["balance"] = {"largest_block_vs_mean": round(block_imbalance(cluster), 4)}
        t2 = time.perf_counter()
        product = cluster.product_graph(cand.m, cfg.directed, cfg.weighted)
        scale = None  # the blocks hold it; the client's refinement and scoring do not use it
        engine["seconds"] = {"partition": round(tp - t0, 4), "slice": round(slicing[0], 4),
                             "build": round(t2 - t1 - slicing[0], 4),
                             "gather_product": round(time.perf_counter() - t2, 4),
                             "block_build_max": round(max(cluster.build_seconds), 4)}
    engine |= {"cut_fraction": round(cluster.cut_fraction, 6), "ghost_pairs": int(sum(cluster.ghosts)),
               "pairs_per_block": cluster.m_own, "entries_per_block": cluster.entries}
    problem = Problem(cfg, inputs, cand, h, seed_idx, product, scale, found, estimate)
    with clock.stage("diffusion"):
        where[0] = "the diffusion rounds"
        rep = None
        if cfg.alpha == 0.0:  # the prior's own matching, as on one machine
            x = h.copy()
            x_parts = cluster.run(_own_h)
        else:
            chosen = "sweep" if cfg.solver == "power" else diffusion.choose_mode(mode, cluster.cut_fraction)
            x, rep, x_parts = diffusion.run_rounds(cluster, cfg.alpha, cfg.tol, chosen, power=cfg.solver == "power")
        # the solver asked for, as one machine reports it: sweeps are the power iteration's (steps: rounds)
        steps = 0 if rep is None else rep.rounds if cfg.solver == "power" else rep.pushes
        diff = DiffusionResult(x, cfg.solver, cfg.alpha, cfg.tol, steps,
                               0 if rep is None else rep.edge_touches, 0.0 if rep is None else rep.residual,
                               0.0 if rep is None else rep.residual / (1 - cfg.alpha),
                               0.0 if rep is None else rep.seconds)
    with clock.stage("rounding"):
        where[0] = "the matching auction"
        t0 = time.perf_counter()
        x_match = x
        if seed_idx is not None:  # the seeds' nodes leave the competition (priors.seeds.round_with_fixed)
            busy_a = np.zeros(cand.n1, dtype=bool)
            busy_b = np.zeros(cand.n2, dtype=bool)
            busy_a[cand.pairs[seed_idx, 0]] = True
            busy_b[cand.pairs[seed_idx, 1]] = True
            x_parts = cluster.run(auction.without_fixed, x_parts, busy_a, busy_b)
            x_match = np.where(busy_a[cand.pairs[:, 0]] | busy_b[cand.pairs[:, 1]], 0.0, x)
        index, arep = auction.run_auction(cluster, x_parts, cand, x_match, method=cfg.rounding)
        index = auction.certified_or_exact(cand, x_match, index, arep, diff.error_bound, method=cfg.rounding)
        if seed_idx is not None:
            index = np.sort(np.concatenate([index, seed_idx]))
        rounded = Matching(index=index, method="auction", weight=float(x[index].sum()),
                           seconds=time.perf_counter() - t0)
    where[0] = "the refinement on the client"
    refining = cfg.refine and cfg.alpha > 0
    with clock.stage("refine") if refining else _nothing():
        improvement = improve(problem, diff, rounded)
    with clock.stage("scoring"):
        evaluation = evaluate(problem, diff, improvement)
    engine["diffusion"] = None if rep is None else rep.as_dict()
    engine["auction"] = arep.as_dict()
    engine["rounds"] = (0 if rep is None else rep.rounds) + arep.rounds
    engine["messages"] = (0 if rep is None else rep.messages) + arep.messages
    engine["edge_touches"] = 0 if rep is None else rep.edge_touches
    engine["seconds"] |= {"diffusion": clock.timings.get("diffusion"), "auction": round(arep.seconds, 4)}
    engine["restarts"] = len(lost or ())
    engine["lost_worker_in"] = list(lost or ())
    summary = summarize(problem, diff, improvement, evaluation, clock)
    summary["engine"] = {"name": "dask"} | engine
    return AlignmentResult(problem, diff, improvement, evaluation, summary)


def _timed(items: Iterator, seconds: list[float]) -> Iterator:
    """The items of ``items``, adding the time spent making each to ``seconds[0]``."""
    while True:
        t0 = time.perf_counter()
        try:
            item = next(items)
        except StopIteration:
            return
        finally:
            seconds[0] += time.perf_counter() - t0
        yield item


@contextmanager
def _nothing():
    yield
