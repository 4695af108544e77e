"""The ``aligner`` command line: parses options (derived from :mod:`aligner.config`), calls the
Python API and hands results to :mod:`aligner.render`. Exit status 2 on a user error."""

from aligner.cli.app import app

__all__ = ["app"]
