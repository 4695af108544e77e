"""``aligner query``: the best counterparts of a few nodes by a local diffusion."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Annotated, Optional

import typer

from aligner.cli.options import Json, NodeFile, Nodes, Prior, Quiet, Seeds, Use, command
from aligner.cli.runtime import check_inputs, check_option_combinations, out, say
from aligner.config import AlignConfig, QueryConfig
from aligner.errors import InvalidParameterError

#: the alignment options a query uses (its tolerance is the query's own)
QUERY_ALIGN_OPTIONS = ("delimiter", "header", "prior_columns", "top_k", "min_score", "score_kind",
                       "seed_weight", "alpha", "normalization")


QueryA = Annotated[Optional[Path], typer.Argument(help="Edge list of network A (TSV/CSV, may be gzip-compressed); "
                                                 "not with --run.", show_default=False)]
QueryB = Annotated[Optional[Path], typer.Argument(help="Edge list of network B, the same way.", show_default=False)]
Run = Annotated[Optional[Path], typer.Option(
    "--run", metavar="OUTDIR", help="Ask about a finished run instead of giving its inputs: the output directory of "
    "align, demo or update (it holds state.npz). Its networks, prior, seeds and options are used; the networks "
    "and the prior are rebuilt from the state, not read again.")]


@command(Use(AlignConfig, QUERY_ALIGN_OPTIONS), Use(QueryConfig, into="query_config"))
def query(network_a: QueryA = None, network_b: QueryB = None, nodes: Nodes = None, node_file: NodeFile = None,
          prior: Prior = None, seeds: Seeds = None, run: Run = None, as_json: Json = False, quiet: Quiet = False,
          *, config: AlignConfig, query_config: QueryConfig):
    """Rank the best counterparts of a few nodes by a local diffusion, and give the counterpart the global
    assignment would choose, without aligning everything. Networks are read undirected and unweighted."""
    if not nodes and node_file is None:
        raise InvalidParameterError("name at least one node to ask about: --node NODE (repeat for several) or "
                                    "--node-file FILE", param="nodes")
    if run is not None:
        res = _query_run(run, nodes, node_file, (network_a, network_b, prior, seeds), config, query_config)
    else:
        res = _query_files(network_a, network_b, nodes, node_file, prior, seeds, config, query_config)
    if as_json:
        typer.echo(json.dumps(res.as_dict(), indent=2))
    elif not quiet:
        from aligner.render.console import query_tables

        for table, work in query_tables(res.summary, side=query_config.side):
            out.print(table)
            say(work)


def _query_run(run: Path, nodes, node_file, given: tuple, config: AlignConfig, query_config: QueryConfig):
    """A query about a finished run: its inputs and options from its state (``--run``)."""
    named = [flag for flag, value in zip(("NETWORK_A", "NETWORK_B", "--prior", "--seeds"), given) if value is not None]
    if named:
        raise InvalidParameterError(f"--run takes the run's own inputs; leave out {', '.join(named)}", param="run")
    base = AlignConfig()
    asked = {f: getattr(config, f) for f in QUERY_ALIGN_OPTIONS if getattr(config, f) != getattr(base, f)}
    check_inputs(node_file)
    from aligner.analysis.query import query as run_query
    from aligner.analysis.update import previous_inputs

    inputs, cfg = previous_inputs(run, keeps="a query of a run keeps the run's options (leave the option out)",
                                  **asked)
    for name in ("directed", "weighted"):
        if getattr(cfg, name):
            raise InvalidParameterError(f"the run is {name}; counterpart queries read undirected, unweighted "
                                        "networks: the run's alignment.tsv gives each matched node's partner with "
                                        "its confidence and alternatives", param="run")
    if inputs["prior"] is None and inputs["seeds"] is None:
        raise InvalidParameterError("the run had neither a prior nor seeds (its candidates came from the networks' "
                                    "structure); a query needs one of them", param="run")
    return run_query(inputs["network_a"], inputs["network_b"], inputs["prior"], nodes=nodes, node_file=node_file,
                     seeds=inputs["seeds"], config=cfg, query=query_config)


def _query_files(network_a, network_b, nodes, node_file, prior, seeds, config: AlignConfig,
                 query_config: QueryConfig):
    """A query from input files."""
    if network_a is None or network_b is None:
        raise InvalidParameterError("give the two networks' edge lists (NETWORK_A NETWORK_B), or a finished run "
                                    "with --run OUTDIR", param="run")
    if prior is None and seeds is None:
        raise InvalidParameterError("a query needs a prior similarity table (--prior) or anchor pairs (--seeds)",
                                    param="prior")
    check_inputs(network_a, network_b, prior, seeds, node_file)
    check_option_combinations(config, prior=prior, seeds=seeds, query=query_config)
    from aligner.analysis.query import query as run_query

    return run_query(network_a, network_b, prior, nodes=nodes, node_file=node_file, seeds=seeds, config=config,
                     query=query_config)
