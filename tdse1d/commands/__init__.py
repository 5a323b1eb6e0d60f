"""One module per ``tdse1d`` command (see :mod:`tdse1d.cli`)."""
