"""``python -m tdse1d.cli``: the ``tdse1d`` command."""

from .program import entry_point

entry_point()
