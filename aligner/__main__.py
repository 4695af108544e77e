"""The ``aligner`` command (``python -m aligner`` too).

The command line's application (typer, rich) is imported inside a guard, so that Ctrl-C in the
first moments, while those load, exits 130 with one line like a later one (docs/errors.md)
rather than with a traceback. This module imports nothing heavy itself: the entry point loads
it before the guard can act.
"""

from __future__ import annotations

import sys


def main() -> None:
    """Run the ``aligner`` command."""
    try:
        from aligner.cli import app
    except KeyboardInterrupt:
        sys.stderr.write("interrupted; no output was left half-written\n")
        raise SystemExit(130) from None
    app()


if __name__ == "__main__":
    main()
