"""tdse1d: the time-dependent Schrodinger equation for one-dimensional model atoms in
strong laser fields, with the semiclassical picture laid beside the quantum result.

Everything inside is in Hartree atomic units; :mod:`tdse1d.units` converts.

The functions below (:mod:`tdse1d.api`) are imported on first use: the command line
imports this package before it can catch a Ctrl-C, so the package itself stays light.
"""

__version__ = "0.1.0"

__all__ = ["__version__", "load_input", "find_states", "estimate", "run"]

_API = ("load_input", "find_states", "estimate", "run")


def __getattr__(name):
    if name in _API:
        from . import api

        return getattr(api, name)
    raise AttributeError(f"module 'tdse1d' has no attribute {name!r}")


def __dir__():
    return sorted(list(globals()) + list(_API))
