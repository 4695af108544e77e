"""``aligner prior-from-classes``: a prior table from node classes (cell types, gene families)."""

from __future__ import annotations

from pathlib import Path
from typing import Annotated

import typer

from aligner.cli.commands.labels import OutFile
from aligner.cli.options import Force, Quiet, Use, command
from aligner.cli.runtime import check_inputs, say
from aligner.config import AlignConfig, ClassConfig
from aligner.errors import NoCandidatesError

Classes = Annotated[Path, typer.Argument(help="Classes of one network's nodes: node, class (TSV/CSV). A node of "
                                         "several classes: several rows, or one row with --class-separator.")]


@command(Use(ClassConfig, into="classes"), Use(AlignConfig, ("delimiter", "header")))
def prior_from_classes(classes_a: Classes, classes_b: Classes, output: OutFile, force: Force = False,
                       quiet: Quiet = False, *, classes: ClassConfig, config: AlignConfig):
    """Build a prior from node classes (neuron classes, cell types, gene families): every pair of a node of A
    and a node of B that share a class, all with one score.

    A class table without data rows, and tables that share no class (no pair to write), are errors: exit
    status 2, nothing written."""
    check_inputs(classes_a, classes_b)
    from aligner.io.outputs import check_output_file, write_prior_table
    from aligner.priors.classes import prior_from_classes as build, read_classes

    check_output_file(output, force=force, inputs=(classes_a, classes_b))  # before any reading, as prior-from-labels
    read = {"separator": classes.class_separator, "delimiter": config.delimiter, "header": config.header}
    ca, cb = read_classes(classes_a, **read), read_classes(classes_b, **read)
    table = build(ca, cb, score=classes.score)
    if len(table) == 0:  # a prior of no pair: align would refuse it, so it is not written
        na, nb = ca["cls"].nunique(), cb["cls"].nunique()
        raise NoCandidatesError(f"no class is shared: the {na} class{'es' if na != 1 else ''} of {classes_a} and "
                                f"the {nb} class{'es' if nb != 1 else ''} of {classes_b} have none in common, so "
                                f"there is no pair to write and {output} was not written; check the class names "
                                "(compared exactly, case included) and --class-separator")
    path = write_prior_table(table, output, force=force)
    if not quiet:
        shared = sorted(set(ca["cls"]) & set(cb["cls"]))
        na, nb = ca.groupby("cls").size(), cb.groupby("cls").size()
        big = max(shared, key=lambda c: (na[c] * nb[c], c), default=None)
        largest = "" if big is None else f"; the largest, {big!r}, gives {na[big]} x {nb[big]} pairs"
        # the nodes in a shared class (a node whose classes B lacks has no pair)
        in_a, in_b = (t.loc[t["cls"].isin(shared), "node"].nunique() for t in (ca, cb))
        say(f"{len(table)} pairs from {len(shared)} classes shared by {in_a} nodes of A and "
            f"{in_b} nodes of B{largest}; wrote {path}")
