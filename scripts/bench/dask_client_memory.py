"""Peak resident memory of the client (the process that runs ``aligner``) per stage of a dask run.

Aligns the part files of an instance written by ``bench_dask.py --files P`` on a fresh
LocalCluster of 2 worker processes, in a process that holds nothing else, with the high-water mark
reset at each stage start (as the command line does); prints the seconds and peak GiB of each
stage, and the largest worker's peak. Run it once with the inputs read on the cluster and once
read on the client to compare:

    python scripts/bench/dask_client_memory.py bench_out/instance-1000000-uniform --reading auto
    python scripts/bench/dask_client_memory.py bench_out/instance-1000000-uniform --reading client

The client process also runs the LocalCluster's scheduler.
"""

from __future__ import annotations

import argparse
import logging
import time


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("folder", help="a folder of network_a-*.tsv, network_b-*.tsv, prior-*.tsv part files")
    ap.add_argument("--reading", default="auto", choices=["auto", "client"])
    ap.add_argument("--partitions", type=int, default=4)
    args = ap.parse_args()

    from dask.distributed import Client, LocalCluster

    from aligner.engines.dask.engine import align
    from aligner.pipeline import Clock, _peak_memory, _reset_peak_memory

    logging.getLogger("distributed.shuffle").setLevel(logging.ERROR)
    cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None)
    client = Client(cluster)
    try:
        client.run(_reset_peak_memory)
        d = args.folder.rstrip("/")
        t0 = time.perf_counter()
        with Clock.owning_process():
            res = align(f"{d}/network_a-*.tsv", f"{d}/network_b-*.tsv", f"{d}/prior-*.tsv", client=client,
                        partitions=args.partitions, refine=False, reading=args.reading)
        wall = time.perf_counter() - t0
        workers = max(client.run(_peak_memory).values()) / 2**30
    finally:
        client.close()
        cluster.close()
    peaks, secs = res.summary["memory"]["peak_gib"], res.summary["timings"]
    print(f"reading {args.reading} ({res.summary['engine']['reading']['where']}), K = {args.partitions}: "
          f"{wall:.1f} s in all, largest worker peak {workers:.2f} GiB")
    print("| stage | s | client peak GiB |")
    print("|---|---:|---:|")
    for stage in secs:
        print(f"| {stage} | {secs[stage]:.1f} | {peaks.get(stage, float('nan')):.2f} |")


if __name__ == "__main__":
    main()
