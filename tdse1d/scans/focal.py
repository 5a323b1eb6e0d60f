"""Focal-volume averaging: a spectrum summed over the peak intensities present in a focus.

A Gaussian beam (TEM00, waist w0, Rayleigh length zR) has the local peak intensity

    I(r, z) = I0 / (1 + z^2/zR^2) * exp(-2 r^2 / w(z)^2),   w(z)^2 = w0^2 (1 + z^2/zR^2).

Each geometry below gives the measure of the region whose local peak intensity is at
least I, ``V(I)``, and its density ``rho(I) = -dV/dI`` (the amount of gas at peak
intensity between I and I + dI), for 0 < I <= I0; with beta = I0 / I:

``thin_jet`` (a gas jet at the waist, thin compared with zR: a disc of area)
    ``V(I) = (pi w0^2 / 2) ln(beta)``,  ``rho(I) = (pi w0^2 / 2) / I``: the usual
    dA ~ dI / I of a Gaussian cross-section (common practice).
``volume`` (the whole 3-D focal volume, gas everywhere)
    ``V(I) = pi w0^2 zR [ 4/3 u + 2/9 u^3 - 4/3 arctan u ]``, u = sqrt(beta - 1), and
    ``rho(I) = (pi w0^2 zR / 3) (beta + 2) sqrt(beta - 1) / I``
    (Augst et al., J. Opt. Soc. Am. B 8, 858 (1991), from memory; derived again in
    docs/scans.md).

Lengths drop out: :meth:`FocalGeometry.volume` and :meth:`FocalGeometry.density` are in
units of ``pi w0^2 / 2`` (thin jet) and ``pi w0^2 zR`` (volume), and intensities in any
one unit.

:func:`focal_weights` turns a scan's intensities into quadrature weights: the spectrum
is taken as piecewise linear in I between the scanned intensities, and each weight is
the exact integral of its hat function against rho from the lowest scanned intensity
to the focus peak, so that ``sum(w) = V(I_min)`` (or 1 when normalised). Gas at lower
intensities is left out: the average is over the region where I >= I_min.

:func:`focal_average` forms the incoherent sum ``sum_k w_k |a_k|^2`` (powers add, for
emitters without phase relation) or the coherent one ``|sum_k w_k a_k|^2`` (complex
amplitudes add, with the intrinsic intensity-dependent dipole phase of each a_k but no
propagation, Gouy or geometric phase: an idealised on-axis far field under perfect phase
matching). Both are normalised by the weights' sum, so a constant spectrum is returned
unchanged.
"""

from __future__ import annotations

import numpy as np
from scipy.integrate import quad

__all__ = ["FocalGeometry", "ThinJet", "FullVolume", "GEOMETRIES", "focal_weights", "focal_average"]


class FocalGeometry:
    """The intensity distribution of a focus.

    Subclasses define :meth:`volume` and :meth:`density` as functions of I and the
    focus peak I0 (same units), in the geometry's own unit of measure, such that
    ``density = -d volume / dI`` and ``volume(I0) = 0``.
    """

    name = "abstract"
    unit = ""

    def volume(self, intensity, peak):  # pragma: no cover - abstract
        raise NotImplementedError

    def density(self, intensity, peak):  # pragma: no cover - abstract
        raise NotImplementedError


class ThinJet(FocalGeometry):
    """A gas jet at the waist, thin compared with the Rayleigh length (area, unit pi w0^2/2)."""

    name = "thin_jet"
    unit = "pi w0^2 / 2"

    def volume(self, intensity, peak):
        return np.log(peak / np.asarray(intensity, float))

    def density(self, intensity, peak):
        return 1.0 / np.asarray(intensity, float)


class FullVolume(FocalGeometry):
    """The whole 3-D focal volume of a Gaussian beam (unit pi w0^2 zR); Augst et al. 1991."""

    name = "volume"
    unit = "pi w0^2 zR"

    def volume(self, intensity, peak):
        u = np.sqrt(np.maximum(peak / np.asarray(intensity, float) - 1.0, 0.0))
        return 4.0 / 3.0 * u + 2.0 / 9.0 * u**3 - 4.0 / 3.0 * np.arctan(u)

    def density(self, intensity, peak):
        i = np.asarray(intensity, float)
        beta = peak / i
        return (beta + 2.0) * np.sqrt(np.maximum(beta - 1.0, 0.0)) / (3.0 * i)


#: geometry name -> FocalGeometry
GEOMETRIES: dict[str, FocalGeometry] = {g.name: g for g in (ThinJet(), FullVolume())}


def _geometry(geometry) -> FocalGeometry:
    if isinstance(geometry, FocalGeometry):
        return geometry
    try:
        return GEOMETRIES[geometry]
    except KeyError:
        raise ValueError(f"unknown focal geometry {geometry!r}; choose one of {', '.join(GEOMETRIES)}") from None


def focal_weights(intensities, geometry="thin_jet", peak=None, normalise=True) -> np.ndarray:
    """Quadrature weights of a scan's intensities for averaging over a focus.

    Parameters
    ----------
    intensities : array_like, shape (m,)
        Scanned peak intensities, positive and distinct, any order, any one unit.
    geometry : str or FocalGeometry
        A key of :data:`GEOMETRIES`.
    peak : float, optional
        Peak intensity I0 of the focus (same unit); default the largest scanned one.
        Must lie within the scanned range; intensities above it get weight 0.
    normalise : bool
        Divide by the sum, ``V(I_min)``, so the weights add up to 1.

    Returns
    -------
    ndarray, shape (m,)
        Weights in the order of ``intensities``; unnormalised they are in the unit of
        the geometry (:attr:`FocalGeometry.unit`) and add up to ``V(I_min)``.
    """
    geo = _geometry(geometry)
    i = np.asarray(intensities, dtype=float)
    if i.ndim != 1 or i.size < 2:
        raise ValueError(f"need at least two intensities in a 1-D array, got shape {i.shape}")
    if not np.all(np.isfinite(i)) or np.any(i <= 0):
        raise ValueError("intensities must be positive and finite")
    order = np.argsort(i)
    nodes = i[order]
    if np.any(np.diff(nodes) <= 0):
        raise ValueError("intensities must be distinct")
    peak = float(nodes[-1]) if peak is None else float(peak)
    if not nodes[0] < peak <= nodes[-1] * (1 + 1e-12):
        raise ValueError(f"the focus peak {peak:g} must lie above the lowest and not above the highest scanned "
                         f"intensity ({nodes[0]:g} .. {nodes[-1]:g})")
    w = np.zeros(nodes.size)
    rho = lambda x: float(geo.density(x, peak))  # noqa: E731
    for j in range(nodes.size - 1):
        a, b = nodes[j], min(nodes[j + 1], peak)
        if a >= b:
            break
        h = nodes[j + 1] - nodes[j]
        # hat functions of the piecewise-linear interpolation on [a, nodes[j+1]]
        w[j] += quad(lambda x: (nodes[j + 1] - x) / h * rho(x), a, b, epsabs=0, epsrel=1e-12, limit=200)[0]
        w[j + 1] += quad(lambda x: (x - nodes[j]) / h * rho(x), a, b, epsabs=0, epsrel=1e-12, limit=200)[0]
    if normalise:
        w /= w.sum()
    out = np.empty_like(w)
    out[order] = w
    return out


def focal_average(intensities, spectra, geometry="thin_jet", peak=None, coherent=False) -> np.ndarray:
    """A spectrum averaged over the intensities of a focus.

    Parameters
    ----------
    intensities : array_like, shape (m,)
        Peak intensities of the scan points.
    spectra : array_like, shape (m, n)
        Incoherent: non-negative powers ``|a_k|^2``. Coherent: complex amplitudes
        ``a_k`` on the same photon-energy grid.
    geometry, peak
        As in :func:`focal_weights`.
    coherent : bool
        ``|sum_k w_k a_k|^2`` instead of ``sum_k w_k |a_k|^2`` (weights normalised).

    Returns
    -------
    ndarray, shape (n,)
        The averaged power.
    """
    s = np.asarray(spectra)
    w = focal_weights(intensities, geometry, peak, normalise=True)
    if s.ndim != 2 or s.shape[0] != w.size:
        raise ValueError(f"spectra must have shape ({w.size}, n), got {s.shape}")
    if coherent:
        return np.abs(np.tensordot(w, s, axes=1)) ** 2
    if np.iscomplexobj(s):
        raise ValueError("an incoherent average takes powers; give |a|^2, or coherent=True for amplitudes")
    return np.tensordot(w, s.astype(float), axes=1)
