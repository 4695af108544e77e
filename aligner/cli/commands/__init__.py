"""One module per command (or pair of close commands); each parses, calls the Python API and hands the
result to :mod:`aligner.render`. Heavy modules are imported inside the command bodies."""
