"""The dask engine against the single-machine path: seconds per stage, rounds, messages, edge touches.

    python scripts/bench/bench_dask.py                  # 10^4 and 10^5 nodes, K = 1, 2, 4, 16
    python scripts/bench/bench_dask.py --sizes 10000 --parts 1 4
    python scripts/bench/bench_dask.py --sizes 1000000 --parts 4 --processes --memory-limit 2GB
    python scripts/bench/bench_dask.py --sizes 100000 1000000 --processes --decoys uniform --out bench_out/dask_k
    python scripts/bench/bench_dask.py --sizes 1000000 --parts 4 --processes --files 8

``--files P`` writes each instance as files (each input in P part files, read through a glob
pattern) and gives the engine their paths, so that the dask runs read them and select the
candidates on the cluster (the single-machine run reads the same files); ``read_s`` and
``candidates_s`` are then those stages' seconds, and ``client_peak_gib`` the resident-memory
high-water mark of this process (the client) over the run.

Instances: :func:`aligner.datasets.instances.noisy_relabelled` (power-law graphs, 10 decoys per
node, near-partner decoys). Runs on a LocalCluster of 2 single-threaded workers (threads in this
process; ``--processes``: worker processes, whose resident-memory high-water mark is reset
before each run, so that ``worker_peak_gib`` is the run's). Refinement is off (it runs on the client,
the same code as on one machine). Prints Markdown and writes OUT.csv and OUT.md (``--out``,
default bench_out/bench_dask).
"""

from __future__ import annotations

import argparse
import time
from pathlib import Path

import numpy as np
import pandas as pd

# the pipeline's own high-water-mark helpers (VmHWM, reset through /proc/self/clear_refs), run on
# each worker process; not getrusage's ru_maxrss, which a worker inherits across the exec that
# starts it (a fresh worker would report its parent's peak)
from aligner.pipeline import _peak_memory, _reset_peak_memory


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", type=int, nargs="+", default=[10_000, 100_000])
    ap.add_argument("--parts", type=int, nargs="+", default=[1, 2, 4, 16])
    ap.add_argument("--decoys", default="near", choices=["near", "uniform"])
    ap.add_argument("--workers", type=int, default=2)
    ap.add_argument("--processes", action="store_true",
                    help="workers as separate processes (default: threads in this process)")
    ap.add_argument("--memory-limit", default=None,
                    help="memory limit per worker process, e.g. 2GB (with --processes; dask pauses, then "
                    "restarts, a worker above it)")
    ap.add_argument("--files", type=int, default=0, metavar="P",
                    help="write each instance in P part files per input and align from the files (default: "
                    "frames in memory, read on the client)")
    ap.add_argument("--reading", default="auto", choices=["auto", "client"],
                    help="where the dask runs read files (the engine's reading option; default auto: on the cluster)")
    ap.add_argument("--out", default="bench_out/bench_dask", help="path of the CSV and Markdown, without suffix")
    args = ap.parse_args()

    from dask.distributed import Client, LocalCluster

    from aligner.datasets.instances import as_frames, noisy_relabelled
    from aligner.engines.dask.engine import align as dask_align
    from aligner.pipeline import align

    cluster = LocalCluster(n_workers=args.workers, threads_per_worker=1, processes=args.processes,
                           dashboard_address=None, **({"memory_limit": args.memory_limit} if args.memory_limit else {}))
    client = Client(cluster)
    rows = []
    try:
        for n in args.sizes:
            ea, eb, prior, truth = as_frames(noisy_relabelled(n, decoy_mode=args.decoys, seed=3))
            if args.files:
                ea, eb, prior, truth = _as_files(Path(args.out).parent / f"instance-{n}-{args.decoys}",
                                                 (ea, eb, prior, truth), args.files)
            warm = as_frames(noisy_relabelled(500, decoy_mode=args.decoys, seed=1))[:3]
            align(*warm, refine=False)  # compile (or load the compiled kernels) outside the timings
            dask_align(*warm, client=client, partitions=2, refine=False)
            t0 = time.perf_counter()
            single = align(ea, eb, prior, truth=truth, refine=False)
            t_single = time.perf_counter() - t0
            ref = {tuple(p) for p in single.candidates.pairs[single.matching.index].tolist()}
            x_single, touches_single = single.diffusion.x, single.diffusion.edge_touches
            rows.append({"nodes": n, "K": "local", "read_s": single.summary["timings"]["read"],
                         "candidates_s": single.summary["timings"]["candidates"],
                         "product_s": single.summary["timings"]["product"],
                         "diffusion_s": single.summary["timings"]["diffusion"],
                         "matching_s": single.summary["timings"]["rounding"], "total_s": round(t_single, 2),
                         "edge_touches": single.diffusion.edge_touches, "nc": single.scores.nc})
            del single  # the client's peak memory below is then the dask run's, not this result's
            for k in args.parts:
                if args.processes and not all(client.run(_reset_peak_memory).values()):
                    client.restart()  # no resettable high-water mark: fresh worker processes
                restarts_before = _nanny_restarts(client)
                client_reset = _reset_peak_memory()
                t0 = time.perf_counter()
                res = dask_align(ea, eb, prior, truth=truth, client=client, partitions=k, refine=False,
                                 reading=args.reading)
                total = time.perf_counter() - t0
                client_peak = _peak_memory() if client_reset else None
                peak = max(client.run(_peak_memory).values()) if args.processes else None
                e = res.summary["engine"]
                got = {tuple(p) for p in res.candidates.pairs[res.matching.index].tolist()}
                rows.append({
                    "nodes": n, "K": k, "reading": e["reading"]["where"], "restarts": e["restarts"],
                    "workers_restarted": _nanny_restarts(client) - restarts_before,
                    "read_s": res.summary["timings"]["read"], "candidates_s": res.summary["timings"]["candidates"],
                    "client_peak_gib": None if client_peak is None else round(client_peak / 2**30, 3),
                    "cut_fraction": e["cut_fraction"], "ghost_pairs": e["ghost_pairs"],
                    "largest_block_vs_mean": round(max(e["entries_per_block"]) / np.mean(e["entries_per_block"]), 2),
                    "product_s": res.summary["timings"]["product"], "diffusion_s": e["seconds"]["diffusion"],
                    "matching_s": e["seconds"]["auction"], "total_s": round(total, 2),
                    "mode": e["diffusion"]["mode"], "diffusion_rounds": e["diffusion"]["rounds"],
                    "auction_rounds": e["auction"]["rounds"], "tail_rows": e["auction"]["tail_rows"],
                    "messages": e["messages"], "message_entries": e["diffusion"]["message_entries"],
                    "edge_touches": e["edge_touches"],
                    "touches_vs_local": round(e["edge_touches"] / touches_single, 2),
                    "x_l1_diff": float(np.abs(res.diffusion.x - x_single).sum()),
                    "pairs_differing": len(got ^ ref) // 2, "nc": res.scores.nc,
                    "work_largest_vs_mean": e["balance"]["largest_block_vs_mean"],
                    "block_build_max_s": e["seconds"]["block_build_max"],
                    "pairs_per_block_max": max(e["pairs_per_block"]),
                    "entries_per_block_max": max(e["entries_per_block"]),
                    "message_entries_per_round": round(e["diffusion"]["message_entries"]
                                                       / max(e["diffusion"]["rounds"], 1)),
                    "worker_peak_gib": None if peak is None else round(peak / 2**30, 3)})
                print(rows[-1], flush=True)
    finally:
        client.close()
        cluster.close()
    df = pd.DataFrame(rows)
    out = Path(args.out)
    out.parent.mkdir(parents=True, exist_ok=True)
    df.to_csv(out.with_suffix(".csv"), index=False)
    md = _markdown(df)
    out.with_suffix(".md").write_text(md + "\n")
    print(md)


def _nanny_restarts(client) -> int:
    """How many worker processes the cluster has started so far beyond its first ones (a nanny
    restarts a worker that went above its memory limit): the count of distinct worker addresses
    seen, less the workers now."""
    seen = _SEEN.setdefault(id(client), set())
    seen.update(client.scheduler_info()["workers"])
    return len(seen) - len(client.scheduler_info()["workers"])


_SEEN: dict[int, set] = {}


def _as_files(folder: Path, frames, parts: int) -> list[str]:
    """The four tables as tab-separated files, the networks and the prior in ``parts`` part files
    each (a glob pattern per input), written once per folder; their paths."""
    folder.mkdir(parents=True, exist_ok=True)
    paths = []
    for name, frame in zip(("network_a", "network_b", "prior", "truth"), frames):
        if name == "truth":
            target = folder / "truth.tsv"
            if not target.exists():
                frame.to_csv(target, sep="\t", index=False)
            paths.append(str(target))
            continue
        cuts = np.linspace(0, len(frame), parts + 1, dtype=int)
        for i, (lo, hi) in enumerate(zip(cuts[:-1], cuts[1:])):
            target = folder / f"{name}-{i:03d}.tsv"
            if not target.exists():
                frame.iloc[lo:hi].to_csv(target, sep="\t", index=False)
        paths.append(str(folder / f"{name}-*.tsv"))
    return paths


def _markdown(df: pd.DataFrame) -> str:
    def cell(v):
        if isinstance(v, float):
            return "" if np.isnan(v) else f"{v:.3g}"
        return str(v)
    lines = ["| " + " | ".join(df.columns) + " |", "|" + "---|" * len(df.columns)]
    lines += ["| " + " | ".join(cell(v) for v in row) + " |" for row in df.itertuples(index=False)]
    return "\n".join(lines)


if __name__ == "__main__":
    main()
