"""The verdict on one compared quantity: does the quantum value agree with the
semiclassical prediction, given its uncertainty? (:func:`combined_uncertainty`,
:func:`verdict`). Pure numerics.

The rule (``docs/analysis.md``, "Verdicts"):

* the combined uncertainty ``u`` is the quadrature sum of the independent parts the
  row has: the reading uncertainty (half the range of the family of reading rules and
  the sampling step, :class:`tdse1d.spectra.reading.Reading`), the numerical spread
  (companion runs that refine one numerical parameter each) and, where the prediction
  itself holds only to within a width (a line of a pulse of finite bandwidth), that
  width. Quadrature sums independent contributions (GUM, JCGM 100:2008, 5.1.2);
* ``unresolved`` when the quantum value could not be read (below the noise floor, not
  converged), when there is no uncertainty, or when ``u`` is at least the size of the
  effect compared (by default the larger of the predicted and the quantum value: a
  shift predicted at 1 eV and read as 0.5 +- 1 eV says nothing about the shift, while
  a probability predicted at 1e-6 and read as 0.1 +- 0.01 deviates);
* otherwise ``z = (quantum - prediction) / u``; ``agrees`` when ``|z| <= AGREE_WITHIN``,
  ``deviates`` beyond.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

#: |z| up to which a quantum value agrees with its prediction: two combined standard
#: uncertainties, a coverage of about 95 % for a normal distribution (GUM, JCGM
#: 100:2008, 6.3.3; the usual choice, common practice)
AGREE_WITHIN = 2.0

AGREES, DEVIATES, UNRESOLVED = "agrees", "deviates", "unresolved"


@dataclass(frozen=True)
class Verdict:
    """Quantum value against prediction.

    Attributes
    ----------
    word : str
        ``"agrees"``, ``"deviates"``, ``"unresolved"``, or ``""`` when there is no
        prediction to compare with.
    difference : float
        ``quantum - prediction`` (unit of the row; NaN when not compared).
    uncertainty : float
        Combined uncertainty ``u`` of the quantum value (unit of the row).
    z : float
        ``difference / u`` (NaN when not compared).
    reason : str
        Why the word is ``"unresolved"`` (empty otherwise).
    """

    word: str
    difference: float
    uncertainty: float
    z: float
    reason: str = ""


def combined_uncertainty(*parts) -> float:
    """Quadrature sum of the finite parts (NaN when none is finite).

    Parameters
    ----------
    *parts : float
        Independent uncertainties in one unit; NaN or None for a part that does not apply.
    """
    finite = [abs(float(p)) for p in parts if p is not None and math.isfinite(float(p))]
    return math.sqrt(sum(p * p for p in finite)) if finite else math.nan


def verdict(prediction, quantum, uncertainty, *, effect=None, unresolved="", within=AGREE_WITHIN) -> Verdict:
    """The verdict on a quantum value beside a prediction (rule in the module docstring).

    Parameters
    ----------
    prediction, quantum : float
        Same unit; NaN where not available.
    uncertainty : float
        Combined uncertainty of ``quantum`` (same unit; :func:`combined_uncertainty`).
    effect : float, optional
        Size of the effect compared (same unit); default the larger of ``|prediction|``
        and ``|quantum|``. A value read with ``u >= effect`` is unresolved.
    unresolved : str
        Why the quantum value is not a value (below the noise floor, not converged);
        the verdict is then unresolved with this reason.
    within : float
        ``|z|`` up to which the value agrees.

    Returns
    -------
    Verdict
    """
    p, q, u = float(prediction), float(quantum), float(uncertainty)
    if not math.isfinite(p):
        return Verdict("", math.nan, u, math.nan, unresolved)
    if unresolved:
        return Verdict(UNRESOLVED, math.nan, u, math.nan, unresolved)
    if not math.isfinite(q):
        return Verdict(UNRESOLVED, math.nan, u, math.nan, "no quantum value")
    difference = q - p
    if not math.isfinite(u):
        return Verdict(UNRESOLVED, difference, u, math.nan, "no uncertainty for the quantum value")
    size = max(abs(p), abs(q)) if effect is None else abs(float(effect))
    if u >= size:
        return Verdict(UNRESOLVED, difference, u, math.nan,
                       f"uncertainty {u:.3g} not smaller than the effect {size:.3g} (same unit)")
    if u == 0:
        z = 0.0 if difference == 0 else math.copysign(math.inf, difference)
    else:
        z = difference / u
    return Verdict(AGREES if abs(z) <= within else DEVIATES, difference, u, z)
