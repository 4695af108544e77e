"""Write the demo scenarios of demo_pairs/ from their fixed seeds, or check that they are current.

Usage::

    python scripts/data/make_demo.py                       # (re)write every scenario
    python scripts/data/make_demo.py --scenario registry   # one scenario
    python scripts/data/make_demo.py --check               # exit 1 if a file differs from what would be written

The text comes from :func:`aligner.datasets.demo.scenario_files` (generators
``aligner.datasets.firefly`` and ``aligner.datasets.registry``); a rerun writes byte-identical
files. The data are entirely synthetic.
"""

from __future__ import annotations

import argparse
import sys
from pathlib import Path

from aligner.datasets.demo import SCENARIOS, stale_files, write_scenario

ROOT = Path(__file__).resolve().parents[2]


def main(argv: list[str] | None = None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("--scenario", choices=SCENARIOS, action="append",
                    help="the scenario to write (repeatable; default: all)")
    ap.add_argument("--check", action="store_true",
                    help="do not write; exit 1 if any file differs from what would be written")
    args = ap.parse_args(argv)
    stale = []
    for name in args.scenario or SCENARIOS:
        folder = ROOT / "demo_pairs" / name
        if args.check:
            stale += [folder.relative_to(ROOT) / f for f in stale_files(name, folder)]
            continue
        for path in write_scenario(name, folder):
            print(f"wrote {path.relative_to(ROOT)}")
    for path in stale:
        print(f"out of date: {path}")
    return 1 if stale else 0


if __name__ == "__main__":
    sys.exit(main())
