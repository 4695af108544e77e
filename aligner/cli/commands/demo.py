"""``aligner demo``: a bundled example end to end, then the commands to try next."""

from __future__ import annotations

import tempfile
from pathlib import Path
from typing import Annotated

import typer

from aligner.checks import check_choice
from aligner.cli.commands.align import run_align
from aligner.cli.options import Force, OptionalOut, Quiet, command
from aligner.cli.runtime import say
from aligner.config import AlignConfig
from aligner.datasets.demo import SCENARIOS

#: what the demo changes from the defaults: a permutation null, which is cheap at this size
DEMO_CONFIG = AlignConfig(permutations=100)

Scenario = Annotated[str, typer.Option(
    "--scenario", help="firefly: two invented firefly protein-interaction maps with a sequence-similarity prior; "
    "registry: two invented trade registries' records of the same companies, with a prior from their names "
    f"(aligner prior-from-labels). Choices: {', '.join(SCENARIOS)}.", metavar="CHOICE")]


@command()
def demo(outdir: OptionalOut = None, scenario: Scenario = "firefly", force: Force = False, quiet: Quiet = False):
    """Run a bundled example end to end (default: two invented firefly interaction maps)."""
    from aligner.datasets.demo import scenario_dir

    check_choice(scenario, "scenario", SCENARIOS)
    d = scenario_dir(scenario)
    files = {n: d / f"{n}.tsv" for n in ("network_a", "network_b", "prior", "truth", "labels_a", "labels_b")}
    files = {n: p for n, p in files.items() if p.is_file()}
    target = Path(outdir) if outdir is not None else Path(tempfile.mkdtemp(prefix="aligner-demo-"))
    if not quiet:
        say(f"demo: aligning {files['network_a']} to {files['network_b']} with prior {files['prior']}")
    res = run_align(files["network_a"], files["network_b"], files["prior"], target, config=DEMO_CONFIG,
                    truth=files["truth"], force=force, quiet=quiet)
    if not quiet:
        from aligner.render.console import next_steps

        node = str(res.pairs.sort_values("score", ascending=False, kind="stable")["node_a"].iloc[0])
        for line in next_steps(target, files, node=node):
            say(line)
