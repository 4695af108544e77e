"""Writing results: output directories checked before any work, outputs published as one set."""

from __future__ import annotations

import os
import warnings
from pathlib import Path

from aligner.errors import AlignerWarning, InvalidParameterError
from aligner.io.readers import json_text, publish_outputs, recover_interrupted, table_text

__all__ = ["OUTPUT_FILES", "check_outdir", "write_outputs"]

OUTPUT_FILES = ("alignment.tsv", "conserved_edges.tsv", "summary.json")


def check_outdir(outdir: str | os.PathLike, *, force: bool = False) -> Path:
    """Refuse an output path that is a file, cannot be made or written, or holds outputs of an earlier run.

    First puts back what a killed run left half-swapped (see :func:`aligner.io.readers.recover_interrupted`).
    """
    out = Path(outdir)
    if out.exists() and not out.is_dir():
        raise InvalidParameterError(f"The output '{out}' exists and is not a directory; choose another "
                                    "directory with --out.")
    up = out.absolute()
    while not up.exists() and up != up.parent:
        up = up.parent
    if not up.is_dir():
        raise InvalidParameterError(f"The output directory '{out}' cannot be made: '{up}' is a file, not a "
                                    "directory; choose another directory with --out.")
    if not os.access(up, os.W_OK | os.X_OK):
        raise InvalidParameterError(f"The output directory '{out}' cannot be written: permission denied on "
                                    f"'{up}'; choose another directory with --out.")
    try:
        for note in recover_interrupted(out, OUTPUT_FILES):
            warnings.warn(note, AlignerWarning, stacklevel=2)
    except OSError as exc:
        warnings.warn(f"could not tidy up after an interrupted run in '{out}': {exc}", AlignerWarning,
                      stacklevel=2)
    existing = [f for f in OUTPUT_FILES if (out / f).exists()]
    if existing and not force:
        raise InvalidParameterError(f"The output directory '{out}' already holds {', '.join(existing)}; "
                                    "choose another directory or pass --force to replace them.")
    return out


def write_outputs(outdir: str | os.PathLike, result: AlignmentResult, *, force: bool = False) -> list[Path]:
    """Write alignment.tsv, conserved_edges.tsv and summary.json into ``outdir``, as one set.

    The three files appear together or not at all: they are written into a staging directory
    beside ``outdir`` that is then swapped into place by renames (see
    :func:`aligner.io.readers.publish_outputs`), so an interrupted run (Ctrl-C, a killed process)
    leaves the previous outputs or none, never a mix. Other files in ``outdir`` are kept.
    """
    out = check_outdir(outdir, force=force)
    pairs = result.pairs.sort_values(["node_a", "node_b"], kind="stable")
    cons = result.conserved_edges.sort_values(["node_a1", "node_a2"], kind="stable")
    texts = {"alignment.tsv": table_text(pairs), "conserved_edges.tsv": table_text(cons),
             "summary.json": json_text(result.summary)}
    try:
        publish_outputs(out, texts)
    except OSError as exc:
        raise InvalidParameterError(f"The output directory '{out}' cannot be written: "
                                    f"{exc.strerror or exc}; choose another directory with --out.") from None
    return [out / f for f in OUTPUT_FILES]
