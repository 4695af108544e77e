"""``aligner prior-from-labels``: a prior table from node names or attribute text."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from aligner.cli.options import Force, Quiet, Use, command, out_option
from aligner.cli.runtime import check_inputs, progress, say
from aligner.config import AlignConfig, LabelConfig
from aligner.errors import InvalidParameterError, NoCandidatesError

Labels = Annotated[Path, typer.Argument(help="Labels of one network's nodes: identifier, a tab, the label text (a "
                                        "line without a tab: the identifier is its own label); with "
                                        "--label-columns, a CSV/TSV table of records (identifier first); with "
                                        "--from-networks, an edge list.")]
OutFile = Annotated[Path, out_option("--out", "-o", help="Prior table to write (TSV: node_a, node_b, score).")]
FromNetworks = Annotated[bool, typer.Option("--from-networks", help="The two arguments are edge lists: the node "
                                            "identifiers themselves are the labels.", metavar="")]


def _labels(path: Path, from_networks: bool, config: AlignConfig, labels: LabelConfig):
    """The labels of one side: read from a label file or a table of records (the fields of
    --label-columns joined), or a network's identifiers as their own labels."""
    from aligner.priors.labels import read_label_table, read_labels

    if labels.label_columns is not None:
        if from_networks:
            raise InvalidParameterError("label_columns picks fields of a table of records, but --from-networks "
                                        "reads edge lists; give one or the other", param="label_columns")
        return read_label_table(path, labels.label_columns, delimiter=config.delimiter, header=config.header)
    if not from_networks:
        for name in ("delimiter", "header"):
            if getattr(config, name) != getattr(AlignConfig(), name):  # read_labels has its own fixed format
                raise InvalidParameterError(
                    f"{name} applies to tables of records (--label-columns) and edge lists (--from-networks), and "
                    "a label file is an identifier, a tab, then the label; for a table of identifier and label "
                    "such as a CSV, give --label-columns 2", param=name)
        return read_labels(path)
    import pandas as pd

    from aligner.io.readers import read_network

    ids = [str(n) for n in read_network(path, delimiter=config.delimiter, header=config.header).names]
    return pd.Series(ids, index=ids, dtype=object)


@command(Use(LabelConfig, into="labels"), Use(AlignConfig, ("delimiter", "header")))
def prior_from_labels(labels_a: Labels, labels_b: Labels, output: OutFile, from_networks: FromNetworks = False,
                      force: Force = False, quiet: Quiet = False, *, labels: LabelConfig, config: AlignConfig):
    """Build a prior from node names or attribute text (or records' fields joined, --label-columns): character
    n-gram TF-IDF cosine similarity.

    A label file without data lines, and labels of which no pair reaches --min-similarity (no pair
    to write), are errors: exit status 2, nothing written. The search takes time about in
    proportion to the product of the two label counts (tens of seconds for 20,000 per side): its
    steps are shown as they run (off a terminal, one line each as it ends)."""
    check_inputs(labels_a, labels_b)
    from aligner.io.outputs import check_output_file, write_prior_table
    from aligner.priors.labels import label_prior
    from aligner.render.console import prior_message

    check_output_file(output, force=force, inputs=(labels_a, labels_b))  # before the search, which can take minutes
    with progress(quiet, 5) as bar:  # reading, n-grams, the two searches, writing
        bar.stage("reading")
        la, lb = _labels(labels_a, from_networks, config, labels), _labels(labels_b, from_networks, config, labels)
        table = label_prior(la, lb, top_k=labels.top_k, min_similarity=labels.min_similarity, progress=bar.stage)
        if len(table) == 0:  # a prior of no pair: align would refuse it, so it is not written
            raise NoCandidatesError(f"no pair of labels is similar enough: none of the {len(la)} labels of "
                                    f"{labels_a} reaches --min-similarity {labels.min_similarity:g} with any of the "
                                    f"{len(lb)} labels of {labels_b}, so there is no pair to write and {output} was "
                                    "not written; lower --min-similarity, or check that the two files label the "
                                    "same things")
        bar.stage("writing")
        path = write_prior_table(table, output, force=force)
    if not quiet:
        say(prior_message(len(table), len(la), len(lb), labels.top_k, labels.min_similarity, path))
