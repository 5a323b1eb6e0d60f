"""Splitting schemes of the split-operator step: symmetric compositions of midpoint Strang steps.

The basic step is the symmetric (Strang) splitting; higher orders are symmetric
compositions S2(w_1 h) ... S2(w_m h) (Yoshida, Phys. Lett. A 150, 262 (1990); Suzuki,
Phys. Lett. A 146, 319 (1990)). Schemes are registered in :data:`SCHEMES` by the name
``propagation.scheme`` uses.
"""

from __future__ import annotations

import numpy as np

from ..registry import registrar

__all__ = ["SplittingScheme", "Strang", "Yoshida4", "Suzuki4", "SCHEMES", "register_scheme",
           "DEFAULT_SCHEME_FOR_ORDER"]

SCHEMES: dict[str, type["SplittingScheme"]] = {}


register_scheme = registrar(SCHEMES)


class SplittingScheme:
    """A symmetric composition of midpoint Strang steps.

    Contract for an implementer: ``weights`` is a palindromic tuple of floats summing
    to 1 (sub-step i lasts ``weights[i] * h``; negative weights step backwards in time),
    and ``order`` is the order of the composition.
    """

    name = "?"
    order: int
    weights: tuple[float, ...]

    @classmethod
    def check(cls):
        w = np.asarray(cls.weights)
        assert abs(w.sum() - 1) < 1e-14 and np.allclose(w, w[::-1]), cls


@register_scheme("strang")
class Strang(SplittingScheme):
    """Strang splitting V/2 T V/2 (Strang, SIAM J. Numer. Anal. 5, 506 (1968)), 2nd order."""

    order = 2
    weights = (1.0,)


_CBRT2 = 2 ** (1 / 3)


@register_scheme("yoshida4")
class Yoshida4(SplittingScheme):
    """Triple jump w1, w0, w1 with w1 = 1/(2 - 2^(1/3)), w0 = 1 - 2 w1 (Yoshida 1990), 4th order."""

    order = 4
    weights = (1 / (2 - _CBRT2), 1 - 2 / (2 - _CBRT2), 1 / (2 - _CBRT2))


_P5 = 1 / (4 - 4 ** (1 / 3))


@register_scheme("suzuki4")
class Suzuki4(SplittingScheme):
    """Five-stage fractal p, p, 1 - 4p, p, p with p = 1/(4 - 4^(1/3)) (Suzuki 1990), 4th order.

    Smaller error constant than the triple jump for the same order, at 5/3 of the cost.
    """

    order = 4
    weights = (_P5, _P5, 1 - 4 * _P5, _P5, _P5)


for _cls in SCHEMES.values():
    _cls.check()

#: scheme used for each ``propagation.order`` when ``propagation.scheme`` is not given
#: (inputs written before that key existed give the same results)
DEFAULT_SCHEME_FOR_ORDER = {2: "strang", 4: "yoshida4"}
