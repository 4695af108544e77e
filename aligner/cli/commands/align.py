"""``aligner align`` and ``aligner score``."""

from __future__ import annotations

import json
from contextlib import ExitStack
from pathlib import Path
from typing import Annotated

import typer

from aligner.cli.options import Force, Json, Out, Prior, Quiet, Seeds, Truth, Use, command
from aligner.cli.runtime import check_inputs, check_option_combinations, out, progress, say
from aligner.config import AlignConfig, EngineConfig, OutputConfig
from aligner.errors import InvalidParameterError

NetworkA = Annotated[Path, typer.Argument(help="Edge list of network A (TSV/CSV, optional weight column, may be "
                                          "gzip-compressed).")]
NetworkB = Annotated[Path, typer.Argument(help="Edge list of network B, the same way.")]


def check_engine(engine: EngineConfig) -> None:
    """Refuse engine options that do not fit, and the dask engine when dask is not installed, before any work."""
    if engine.engine == "local":
        for name in ("scheduler", "partitions", "reading", "workers"):  # given: not at its default
            if getattr(engine, name) != getattr(EngineConfig, name):
                raise InvalidParameterError(f"{name} is an option of the dask engine; add --engine dask", param=name)
        return
    if engine.scheduler is not None and engine.workers is not None:
        raise InvalidParameterError("workers sets the size of a local cluster, and --scheduler names a running one; "
                                    "give one of them", param="workers")
    from importlib.util import find_spec

    if find_spec("dask") is None or find_spec("distributed") is None:
        raise InvalidParameterError("engine dask needs the packages dask and distributed, which are not installed; "
                                    "install the extra with: pip install 'aligner[dask]'", param="engine")


def run_align(network_a: Path, network_b: Path, prior: Path | None, outdir: Path | None, *, config: AlignConfig,
              truth: Path | None = None, seeds: Path | None = None, force: bool = False, quiet: bool = False,
              engine: EngineConfig | None = None, output: OutputConfig | None = None):
    """Check the inputs and the output directory, align with a progress line, write, print the summary.

    Shared by ``align`` and ``demo``; returns the :class:`~aligner.pipeline.AlignmentResult`.
    """
    engine, output = engine or EngineConfig(), output or OutputConfig()
    check_inputs(network_a, network_b, prior, truth, seeds)
    check_option_combinations(config, prior=prior, seeds=seeds)
    check_engine(engine)
    with ExitStack() as stack:
        helper = None
        if engine.engine == "local":
            from aligner.engines.ahead import CompileAhead

            # a first run: a second process compiles the later stages' kernels meanwhile, started
            # before this process imports the pipeline and pandas, so that it begins at once
            helper = stack.enter_context(CompileAhead())
        from aligner.io.outputs import check_outdir, output_files, write_outputs
        from aligner.pipeline import STAGES, Clock, align
        from aligner.render.console import summary_table

        if outdir is not None:
            check_outdir(outdir, force=force, files=output_files(output.parquet))  # refuse before any work
        # the process is ours: measure each stage's own peak memory
        stack.enter_context(Clock.owning_process())
        bar = stack.enter_context(progress(quiet, len(STAGES)))
        if helper is None:
            from aligner.engines.dask.engine import align as dask_align

            # a lost cluster raises ClusterError: one line and exit 1 (runtime.user_errors)
            res = dask_align(network_a, network_b, prior, seeds=seeds, truth=truth, config=config,
                             progress=bar.stage, scheduler=engine.scheduler, workers=engine.workers,
                             partitions=engine.partitions, reading=engine.reading, quiet=quiet)
        else:
            def on_stage(name: str) -> None:
                helper.reach(name)
                bar.stage(name)

            res = align(network_a, network_b, prior, seeds=seeds, truth=truth, config=config,
                        progress=on_stage, permutation_progress=bar.count)
            helper.release()  # nothing is compiled ahead for the writing
        bar.stage("writing")
        written = (write_outputs(outdir, res, force=force, parquet=output.parquet, state=output.state)
                   if outdir is not None else [])
    if not quiet:
        out.print(summary_table(res.summary))
        if written:
            say(f"wrote {', '.join(str(p) for p in written)}")
    return res


@command(Use(AlignConfig), Use(EngineConfig, into="engine"), Use(OutputConfig, into="output"))
def align(network_a: NetworkA, network_b: NetworkB, outdir: Out, prior: Prior = None, truth: Truth = None,
          seeds: Seeds = None, force: Force = False, quiet: Quiet = False, *, config: AlignConfig,
          engine: EngineConfig, output: OutputConfig):
    """Align network A to network B; write alignment.tsv, conserved_edges.tsv, transferred_edges.tsv,
    summary.json and the run's state.npz (what update starts from; --no-state leaves it out) to --out."""
    run_align(network_a, network_b, prior, outdir, config=config, truth=truth, seeds=seeds, force=force, quiet=quiet,
              engine=engine, output=output)


@command(Use(AlignConfig, ("delimiter", "header", "directed", "weighted")))
def score(network_a: NetworkA, network_b: NetworkB,
          alignment: Annotated[Path, typer.Argument(help="Alignment table; its first two columns are node_a, "
                                                    "node_b (an alignment.tsv works as it is).")],
          truth: Truth = None, as_json: Json = False, quiet: Quiet = False, *, config: AlignConfig):
    """Score an existing alignment of A to B with the same measures as align."""
    check_inputs(network_a, network_b, alignment, truth)
    from aligner.pipeline import score as score_alignment
    from aligner.render.console import scores_table

    sc, _ = score_alignment(network_a, network_b, alignment, truth=truth, config=config)
    if as_json:
        typer.echo(json.dumps(sc.as_dict(), indent=2))
    elif not quiet:
        out.print(scores_table(sc.as_dict(), title=f"Scores of {alignment}"))
