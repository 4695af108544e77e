"""Input paths: a glob pattern names the files of a table written in parts.

Kept apart from the readers (no numpy, pandas or pyarrow here), so that the command line can
check its input paths before it imports the pipeline.
"""

from __future__ import annotations

import glob
import os
import re

from aligner.errors import InputFormatError

__all__ = ["input_files"]

_MAGIC = re.compile(r"[*?[]")


def input_files(path) -> list[str] | None:
    """The files a glob pattern names, sorted (``edges/part-*.tsv``: a table written in parts),
    or None when ``path`` is not a pattern: it has no ``*``, ``?`` or ``[``, or a file of that
    very name exists. A pattern that matches no file is an error naming it."""
    text = os.fspath(path)
    if not isinstance(text, str) or not _MAGIC.search(text) or os.path.exists(text):
        return None
    files = sorted(f for f in glob.glob(os.path.expanduser(text)) if os.path.isfile(f))
    if not files:
        raise InputFormatError("no file matches this pattern; check the path (a pattern such as "
                               "parts/edges-*.tsv reads every file it matches, in name order)", path=text)
    return files
