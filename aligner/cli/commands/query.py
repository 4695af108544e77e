"""``aligner query``: the best counterparts of a few nodes by a local diffusion."""

from __future__ import annotations

import json

import typer

from aligner.cli.commands.align import NetworkA, NetworkB
from aligner.cli.options import Json, NodeFile, Nodes, Prior, Quiet, Seeds, Use, command
from aligner.cli.runtime import check_inputs, out, say
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
    nodes = list(nodes or []) + (_read_nodes(node_file) if node_file is not None else [])
    if not nodes:
        raise InvalidParameterError("name at least one node to ask about: --node NODE (repeat for several) or "
                                    "--node-file FILE", param="nodes")
    if prior is None and seeds is None:
        raise InvalidParameterError("a query needs a prior similarity table (--prior) or anchor pairs (--seeds)",
                                    param="prior")
    check_inputs(network_a, network_b, prior, seeds)
    from aligner.analysis.query import query as run_query
    from aligner.render.console import query_tables

    res = run_query(network_a, network_b, prior, nodes=nodes, seeds=seeds, config=config, query=query_config)
    if as_json:
        typer.echo(json.dumps(res.as_dict(), indent=2))
    elif not quiet:
        for table, work in query_tables(res.summary, side=query_config.side):
            out.print(table)
            say(work)


def _read_nodes(path) -> list[str]:
    """The nodes of a --node-file: one per line, blank lines and # comments skipped."""
    try:
        with open(path, encoding="utf-8-sig") as fh:
            return [line.strip() for line in fh if line.strip() and not line.lstrip().startswith("#")]
    except OSError as exc:
        raise InvalidParameterError(f"cannot read the node file {str(path)!r}: {exc.strerror or exc}",
                                    param="node_file") from None
    except UnicodeDecodeError:
        raise InvalidParameterError(f"the node file {str(path)!r} is not UTF-8 text", param="node_file") from None
