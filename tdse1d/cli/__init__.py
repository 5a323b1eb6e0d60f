"""The ``tdse1d`` command line: :mod:`tdse1d.cli.program` holds the parser, the shared
argument types and the dispatch to one module per command (``tdse1d.cli.<command>``).

Only the standard library is imported here and in :mod:`~tdse1d.cli.program`, so a
Ctrl-C while a command's heavy modules load lands in :func:`main`'s handler.
"""

from .program import entry_point, main

__all__ = ["main", "entry_point"]
