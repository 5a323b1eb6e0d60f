"""tdse1d: the time-dependent Schrodinger equation for one-dimensional model atoms in
strong laser fields, with the semiclassical picture laid beside the quantum result.

Everything inside is in Hartree atomic units; :mod:`tdse1d.units` converts.

The library functions (:mod:`tdse1d.api`: run, certify, states, estimate, report, plot, export,
scan, compare, validate, sfa) are imported on first use: the command line imports this
package before it can catch a Ctrl-C, so the package itself stays light. ``tdse1d.runs``,
``tdse1d.scans`` and ``tdse1d.validation`` are also the names of subpackages (once one of
them is imported, the name is the subpackage), so call those three as ``tdse1d.api.run``,
``tdse1d.api.scan`` and ``tdse1d.api.validate``.
"""

__version__ = "0.1.0"

_API = ("load_input", "find_states", "states", "estimate", "run", "certify", "report", "plot", "export", "scan", "compare",
        "validate", "sfa")

__all__ = ["__version__", "api", *_API]


def __getattr__(name):
    if name == "api":
        import importlib

        return importlib.import_module(".api", __name__)
    if name in _API:
        from . import api

        return getattr(api, name)
    raise AttributeError(f"module 'tdse1d' has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(__all__))
