"""What a round of the dask engine pays to the scheduler, apart from its work.

Chains ``--rounds`` rounds of one trivial task per worker (each takes the previous round's result
on its worker) on a LocalCluster of ``--workers`` single-threaded worker processes, twice: the
client waiting for every round's results before sending the next (a round trip per round, as
the diffusion did before its rounds were sent ahead), then sending every round at once and
waiting for the last. Prints the milliseconds per round of each.

    python scripts/bench/dask_round_trip.py [--rounds 81] [--workers 2]
"""

from __future__ import annotations

import argparse
import sys
import time


def _same(x):
    return x


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--rounds", type=int, default=81)
    ap.add_argument("--workers", type=int, default=2)
    args = ap.parse_args(argv)
    from distributed import Client, LocalCluster, wait

    with LocalCluster(n_workers=args.workers, threads_per_worker=1, processes=True) as cluster, \
            Client(cluster) as client:
        workers = sorted(client.scheduler_info()["workers"])

        def round_of(prev):
            return [client.submit(_same, p, workers=[w], pure=False) for p, w in zip(prev, workers)]

        state = round_of(list(range(len(workers))))
        wait(state)
        t0 = time.perf_counter()
        for _ in range(args.rounds):
            state = round_of(state)
            client.gather(state)
        waited = (time.perf_counter() - t0) / args.rounds
        t0 = time.perf_counter()
        for _ in range(args.rounds):
            state = round_of(state)
        wait(state)
        ahead = (time.perf_counter() - t0) / args.rounds
    print(f"| client waits for each round | {1000 * waited:.1f} ms per round |")
    print(f"| rounds sent ahead | {1000 * ahead:.1f} ms per round |")
    return 0


if __name__ == "__main__":
    sys.exit(main())
