"""tdse1d: the time-dependent Schrodinger equation for one-dimensional model atoms in
strong laser fields, with the semiclassical picture laid beside the quantum result.

Everything inside is in Hartree atomic units; :mod:`tdse1d.units` converts.
"""

__version__ = "0.1.0"

from .api import estimate, find_states, load_input, run  # noqa: E402

__all__ = ["__version__", "load_input", "find_states", "estimate", "run"]
