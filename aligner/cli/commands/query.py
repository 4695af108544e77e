"""``aligner query``: the best counterparts of a few nodes by a local diffusion."""

from __future__ import annotations

import json

import typer

from aligner.cli.commands.align import NetworkA, NetworkB
from aligner.cli.options import Json, NodeFile, Nodes, Prior, Quiet, Seeds, Use, command
from aligner.cli.runtime import check_inputs, check_option_combinations, out, say
from aligner.config import AlignConfig, QueryConfig
from aligner.errors import InvalidParameterError

#: the alignment options a query uses (its tolerance is the query's own)
QUERY_ALIGN_OPTIONS = ("delimiter", "header", "prior_columns", "top_k", "min_score", "score_kind",
                       "seed_weight", "alpha", "normalization")


@command(Use(AlignConfig, QUERY_ALIGN_OPTIONS), Use(QueryConfig, into="query_config"))
def query(network_a: NetworkA, network_b: NetworkB, nodes: Nodes = None, node_file: NodeFile = None,
          prior: Prior = None, seeds: Seeds = None, as_json: Json = False, quiet: Quiet = False, *,
          config: AlignConfig, query_config: QueryConfig):
    """Rank the best counterparts of a few nodes by a local diffusion, and give the counterpart the global
    assignment would choose, without aligning everything."""
    if not nodes and node_file is None:
        raise InvalidParameterError("name at least one node to ask about: --node NODE (repeat for several) or "
                                    "--node-file FILE", param="nodes")
    if prior is None and seeds is None:
        raise InvalidParameterError("a query needs a prior similarity table (--prior) or anchor pairs (--seeds)",
                                    param="prior")
    check_inputs(network_a, network_b, prior, seeds, node_file)
    check_option_combinations(config, prior=prior, seeds=seeds, query=query_config)
    from aligner.analysis.query import query as run_query
    from aligner.render.console import query_tables

    res = run_query(network_a, network_b, prior, nodes=nodes, node_file=node_file, seeds=seeds, config=config,
                    query=query_config)
    if as_json:
        typer.echo(json.dumps(res.as_dict(), indent=2))
    elif not quiet:
        for table, work in query_tables(res.summary, side=query_config.side):
            out.print(table)
            say(work)
