"""``aligner update``: re-align after the inputs change, starting from a previous run's state."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated, Optional

import typer

from aligner.cli.options import Force, Out, Quiet, command
from aligner.cli.runtime import check_inputs, out, progress, say

Previous = Annotated[Path, typer.Argument(help="Output directory of the previous run of align, demo or update (it "
                                          "holds state.npz).")]
NewA = Annotated[Optional[Path], typer.Option("--a", help="The new edge list of network A. Default: the previous "
                                              "run's file, which must be unchanged.")]
NewB = Annotated[Optional[Path], typer.Option("--b", help="The new edge list of network B, the same way.")]
NewPrior = Annotated[Optional[Path], typer.Option("--prior", "-p", help="The new prior similarity table, the same "
                                                  "way.")]
NewSeeds = Annotated[Optional[Path], typer.Option("--seeds", help="The new anchor pairs, the same way.")]
NewTruth = Annotated[Optional[Path], typer.Option("--truth", help="The new true pairs, the same way.")]
AddA = Annotated[Optional[Path], typer.Option("--add-a", help="Instead of --a: edges to add to the previous run's "
                                              "network A (an edge list; unweighted runs).")]
RemoveA = Annotated[Optional[Path], typer.Option("--remove-a", help="Edges to remove from the previous run's "
                                                 "network A; each must be there.")]
AddB = Annotated[Optional[Path], typer.Option("--add-b", help="Edges to add to the previous run's network B.")]
RemoveB = Annotated[Optional[Path], typer.Option("--remove-b", help="Edges to remove from the previous run's "
                                                 "network B; each must be there.")]
AddPrior = Annotated[Optional[Path], typer.Option("--add-prior", help="Instead of --prior: rows (node_a, node_b, "
                                                  "score) to add to the previous run's prior or to rescore in it.")]
RemovePrior = Annotated[Optional[Path], typer.Option("--remove-prior", help="Pairs (node_a, node_b) to take out "
                                                     "of the previous run's prior; each must be there.")]


@command()
def update(previous: Previous, outdir: Out, a: NewA = None, b: NewB = None, prior: NewPrior = None,
           seeds: NewSeeds = None, truth: NewTruth = None, add_a: AddA = None, remove_a: RemoveA = None,
           add_b: AddB = None, remove_b: RemoveB = None, add_prior: AddPrior = None,
           remove_prior: RemovePrior = None, force: Force = False, quiet: Quiet = False):
    """Align the new inputs starting from a previous run (its options, its scores as the start); write the
    same files as align to --out (the Parquet copies too when the previous run has them), with an update
    section in summary.json."""
    check_inputs(*(p for p in (a, b, prior, seeds, truth, add_a, remove_a, add_b, remove_b, add_prior,
                               remove_prior) if p is not None))
    from aligner.analysis.update import update as run_update
    from aligner.io.outputs import PARQUET_FILES, check_outdir, output_files, write_outputs
    from aligner.pipeline import STAGES, Clock
    from aligner.render.console import summary_table

    # the previous run's choice of Parquet copies is kept, as its options are
    parquet = previous.is_dir() and all((previous / name).is_file() for name in PARQUET_FILES)
    check_outdir(outdir, force=force, files=output_files(parquet))  # refuse before any work
    with Clock.owning_process(), progress(quiet, len(STAGES) + 1) as bar:
        res = run_update(previous, a, b, prior, seeds=seeds, truth=truth, add_a=add_a, remove_a=remove_a,
                         add_b=add_b, remove_b=remove_b, add_prior=add_prior, remove_prior=remove_prior,
                         progress=bar.stage)
        bar.stage("writing")
        written = write_outputs(outdir, res, force=force, parquet=parquet)
    if not quiet:
        out.print(summary_table(res.summary))
        u = res.summary["update"]
        c = u["changes"]
        edges_a, edges_b = c["edges_a_added"] + c["edges_a_removed"], c["edges_b_added"] + c["edges_b_removed"]
        weights = " (their weights are not compared)" if res.problem.config.weighted else ""
        say(f"update ({u['mode']}): {_count(edges_a, 'edge')} of A and {edges_b:,} of B changed{weights}, "
            f"{_count(c['candidates_added'], 'candidate pair')} added, {c['candidates_removed']:,} removed, "
            f"{c['candidates_rescored']:,} rescored; {_count(u['pushes'], 'push', 'pushes')} against "
            f"{u['previous_pushes']:,}; {_count(u['matches_changed'], 'match', 'matches')} changed; "
            f"{u['seconds']:.2f} s against {u['previous_seconds']:.2f} s")
        r = u.get("refine")
        if r:
            say("refinement: " + (f"continued from the previous matching over {r['candidates_marked']:,} candidates "
                                  f"the change reached, {r['moves']:,} moves" if r["mode"] == "continued"
                                  else r["reason"]))
        say(f"wrote {', '.join(str(p) for p in written)}")


def _count(n: int, one: str, many: str | None = None) -> str:
    """``n`` with its noun, singular or plural (``1 edge``, ``2 edges``)."""
    return f"{n:,} {one if n == 1 else many or one + 's'}"
