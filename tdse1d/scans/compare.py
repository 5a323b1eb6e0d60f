"""A computed harmonic spectrum beside a measured one.

:func:`compare_spectra` takes the computed power on a uniform photon-energy grid and a
measured spectrum, and

1. convolves the computed power with a Gaussian of the spectrometer's resolution
   (FWHM in eV; sigma = FWHM / (2 sqrt(2 ln 2)));
2. multiplies it by the response curve (filter transmission times detector
   efficiency), linearly interpolated and zero outside the curve's range;
3. restricts both to the measured energy range and normalises each to its largest
   value there (both peak at 1): a measured spectrum rarely has an absolute scale;
4. reads the cutoff of each with :func:`tdse1d.spectra.read_cutoff` (same rule, same
   omega0 and Ip, on the measured energy range), and reports the difference
   measured - computed. A cutoff whose reading level lies within the noise margin of
   its spectrum's floor is NaN and called "unresolved": for the computed spectrum the
   floor is the larger of the flat floor of the whole computed axis and, for a run
   file, the spectrum of the driving field through the same window (both passed
   through the same broadening, response and normalisation as the spectrum); for the
   measured one it is the median of the top half of the measured range, the
   spectrometer's background beyond the harmonics.

:func:`read_spectrum_csv` reads a two-column file (x, signal). The x unit is given by
a header comment (``# x: photon_energy eV`` or ``# x: wavelength nm``) or by the
caller. A spectrum per unit wavelength is turned into one per unit energy with the
Jacobian ``|d lambda / dE| = lambda^2 / (h c)``; ``h c`` from CODATA (scipy.constants).
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from pathlib import Path

import numpy as np
from scipy import constants

from ..spectra.cutoff import noise_floor, read_cutoff
from ..units import HARTREE_EV

__all__ = ["MeasuredSpectrum", "read_spectrum_csv", "X_UNITS", "Comparison", "compare_spectra",
           "gaussian_broaden", "computed_spectrum", "computed_floor"]

#: h c in eV nm (CODATA via scipy.constants): E [eV] = HC_EV_NM / lambda [nm]
HC_EV_NM = constants.h * constants.c / constants.e * 1e9
FWHM_PER_SIGMA = 2.0 * math.sqrt(2.0 * math.log(2.0))


def _from_ev(x, signal):
    return x, signal


def _from_nm(x, signal):
    energy = HC_EV_NM / x
    # S_E = S_lambda |d lambda / dE| = S_lambda lambda^2 / (h c)
    return energy, signal * x**2 / HC_EV_NM


#: x unit name -> conversion (x, signal) -> (energy in eV, signal per eV)
X_UNITS = {"eV": _from_ev, "nm": _from_nm}
_HEADER = re.compile(r"#\s*x\s*:\s*(?P<what>[A-Za-z_ ]+?)\s+(?P<unit>eV|nm)\b", re.IGNORECASE)


@dataclass(frozen=True)
class MeasuredSpectrum:
    """A spectrum on increasing photon energies (eV), signal per eV."""

    energy_ev: np.ndarray
    signal: np.ndarray
    source: str = ""


def read_spectrum_csv(path, x_unit: str | None = None) -> MeasuredSpectrum:
    """Read a two-column spectrum (x, signal); comma, semicolon or blank separated.

    Parameters
    ----------
    path : path
    x_unit : {"eV", "nm"}, optional
        Unit of the first column; default from a ``# x: ... eV|nm`` header line.

    Raises
    ------
    ValueError
        For a file that cannot be read, a missing x unit, or fewer than 4 rows.
    """
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except OSError as exc:
        raise ValueError(f"cannot read {str(path)!r} ({exc.strerror})") from None
    if x_unit is None:
        m = _HEADER.search(text)
        if m is None:
            raise ValueError(f"{path}: say the unit of the first column in a header line '# x: photon_energy eV' "
                             "or '# x: wavelength nm', or give it as an option")
        x_unit = "eV" if m.group("unit").lower() == "ev" else "nm"
    if x_unit not in X_UNITS:
        raise ValueError(f"unknown x unit {x_unit!r}; choose one of {', '.join(X_UNITS)}")
    rows = []
    names_seen = False
    for n, line in enumerate(text.splitlines(), 1):
        line = line.split("#", 1)[0].strip()
        if not line:
            continue
        parts = [p for p in re.split(r"[,;\s]+", line) if p]
        try:
            values = [float(p) for p in parts]
        except ValueError:
            if not rows and not names_seen:  # one column-name line before the data
                names_seen = True
                continue
            raise ValueError(f"{path}:{n}: cannot read {line!r} as two numbers") from None
        if len(values) != 2:
            raise ValueError(f"{path}:{n}: expected two columns, got {len(values)}")
        rows.append(values)
    if len(rows) < 4:
        raise ValueError(f"{path}: needs at least 4 rows of data, got {len(rows)}")
    data = np.array(rows)
    if not np.all(np.isfinite(data)) or (x_unit == "nm" and np.any(data[:, 0] <= 0)):
        raise ValueError(f"{path}: non-finite values, or non-positive wavelengths")
    energy, signal = X_UNITS[x_unit](data[:, 0], data[:, 1])
    order = np.argsort(energy)
    energy, signal = energy[order], signal[order]
    if np.any(np.diff(energy) <= 0):
        raise ValueError(f"{path}: repeated photon energies")
    return MeasuredSpectrum(energy, signal, str(path))


def gaussian_broaden(energy_ev, power, fwhm_ev) -> np.ndarray:
    """Convolve ``power`` on a uniform energy grid with a unit-area Gaussian of ``fwhm_ev``."""
    e = np.asarray(energy_ev, float)
    p = np.asarray(power, float)
    if fwhm_ev is None or fwhm_ev <= 0:
        return p.copy()
    step = e[1] - e[0]
    if not np.allclose(np.diff(e), step, rtol=1e-6, atol=0):
        raise ValueError("the computed spectrum must be on a uniform energy grid to be convolved")
    sigma = fwhm_ev / FWHM_PER_SIGMA / step
    half = int(math.ceil(6 * sigma))
    kernel = np.exp(-0.5 * (np.arange(-half, half + 1) / sigma) ** 2)
    kernel /= kernel.sum()
    padded = np.pad(p, half, mode="edge")
    return np.convolve(padded, kernel, mode="valid")


@dataclass(frozen=True)
class Comparison:
    """The two spectra on the measured range, normalised, and their cutoffs (eV)."""

    energy_ev: np.ndarray
    computed: np.ndarray
    measured_energy_ev: np.ndarray
    measured: np.ndarray
    cutoff_computed_ev: float
    cutoff_measured_ev: float
    resolution_fwhm_ev: float
    normalisation: str = "each spectrum divided by its largest value within the measured energy range"
    #: empty when the cutoff was read; else why not ("unresolved (within X decades of the noise floor)")
    computed_reason: str = ""
    measured_reason: str = ""
    label: str = "computed"
    """What the computed spectrum is (a run, a scan point, a focal average)."""
    plot: object = None
    """The overlay figure written, if any (path)."""

    def __repr__(self) -> str:
        def cut(x):
            return f"{x:.2f} eV" if math.isfinite(x) else "unresolved"

        return (f"<Comparison {self.label}: cutoff computed {cut(self.cutoff_computed_ev)}, "
                f"measured {cut(self.cutoff_measured_ev)}, "
                f"resolution {self.resolution_fwhm_ev:g} eV>")

    @property
    def difference_ev(self) -> float:
        """Measured cutoff minus computed cutoff (eV)."""
        return self.cutoff_measured_ev - self.cutoff_computed_ev

    def to_json(self) -> dict:
        """The comparison for machines; an unresolved cutoff is null, with its reason beside it."""
        def clean(x):
            return x if math.isfinite(x) else None

        return {
            "cutoff_computed_eV": clean(self.cutoff_computed_ev),
            "cutoff_measured_eV": clean(self.cutoff_measured_ev),
            "difference_eV": clean(self.difference_ev),
            "resolution_fwhm_eV": self.resolution_fwhm_ev,
            "normalisation": self.normalisation,
            **({"computed_unresolved": self.computed_reason} if self.computed_reason else {}),
            **({"measured_unresolved": self.measured_reason} if self.measured_reason else {}),
        }


def compare_spectra(energy_ev, power, measured: MeasuredSpectrum, omega0_ev: float, ip_ev: float, *,
                    resolution_fwhm_ev: float = 0.0, response=None, drop: float = 1.5, floor_power=None) -> Comparison:
    """Broaden, weight and normalise a computed spectrum against a measured one.

    Parameters
    ----------
    energy_ev, power : array_like
        Computed spectrum on a uniform photon-energy grid (eV).
    measured : MeasuredSpectrum
    omega0_ev, ip_ev : float
        Photon energy of the driver and Ip (eV), for the cutoff rule.
    resolution_fwhm_ev : float
        Spectrometer resolution (FWHM, eV); 0 for none.
    response : MeasuredSpectrum, optional
        Response curve (x in eV, relative response), applied to the computed spectrum.
    drop : float
        Decades below the plateau that mark the cutoff (:func:`tdse1d.spectra.read_cutoff`).
    floor_power : array_like, optional
        A companion floor of the computed spectrum on its grid (e.g. the driving
        field's spectrum through the same window, :func:`computed_spectrum`).

    Returns
    -------
    Comparison
    """
    e = np.asarray(energy_ev, float)
    # the floor of the whole computed axis (far beyond the measured range), then
    # through the same broadening as the spectrum
    floor = 10.0 ** noise_floor(e, np.asarray(power, float), companion=floor_power)
    p = gaussian_broaden(e, power, resolution_fwhm_ev)
    floor = gaussian_broaden(e, floor, resolution_fwhm_ev)
    if response is not None:
        weight = np.interp(e, response.energy_ev, response.signal, left=0.0, right=0.0)
        p, floor = p * weight, floor * weight
    lo, hi = measured.energy_ev[0], measured.energy_ev[-1]
    inside = (e >= lo) & (e <= hi)
    if inside.sum() < 4:
        raise ValueError(f"the computed spectrum has fewer than 4 energies in the measured range {lo:g} .. {hi:g} eV")
    e_in, p_in = e[inside], np.maximum(p[inside], 0.0)
    m = np.maximum(measured.signal, 0.0)
    if not p_in.max() > 0 or not m.max() > 0:
        raise ValueError("a spectrum is zero everywhere in the measured range")
    floor_in = floor[inside] / p_in.max()
    p_in, m = p_in / p_in.max(), m / m.max()
    # the plateau region of read_cutoff starts at Ip + 2 omega0, or at the data if higher
    omega0, ip = omega0_ev / HARTREE_EV, ip_ev / HARTREE_EV

    def cutoff(x_ev, y, noise):
        start = max(0.0, (x_ev[0] / HARTREE_EV - ip) / omega0)
        start_orders = max(2.0, start)
        est = read_cutoff(x_ev / HARTREE_EV, y, omega0, ip, start_orders=start_orders, drop=drop, noise=noise)
        return est.frequency * HARTREE_EV, est.reason if not math.isfinite(est.frequency) else ""

    computed_cut, computed_why = cutoff(e_in, p_in, floor_in)
    measured_cut, measured_why = cutoff(measured.energy_ev, m, None)
    return Comparison(
        energy_ev=e_in, computed=p_in, measured_energy_ev=measured.energy_ev, measured=m,
        cutoff_computed_ev=float(computed_cut), cutoff_measured_ev=float(measured_cut),
        resolution_fwhm_ev=float(resolution_fwhm_ev or 0.0), computed_reason=computed_why,
        measured_reason=measured_why,
    )


def computed_spectrum(path, point: int | None = None, average: str | None = None):
    """The computed spectrum of a run file or a scan summary.

    Parameters
    ----------
    path : path
        A run result (``/spectra/harmonic``) or a ``summary.h5``.
    point : int, optional
        For a summary: the point (default 0 unless ``average`` is given).
    average : str, optional
        For a summary of an intensity scan: ``"GEOMETRY/incoherent"`` or
        ``"GEOMETRY/coherent"`` from its ``/focal`` group, e.g. ``"volume/incoherent"``.

    Returns
    -------
    energy_ev, power, omega0_ev, ip_ev, label
    """
    import h5py

    from ..io.layout import find

    with h5py.File(path, "r") as f:
        if f.attrs.get("kind", "") == "scan-summary":
            energy = find(f, "spectra/photon_energy_eV")[()]
            pick = 0 if point is None else int(point)
            omega0 = float(find(f, "estimates/photon_energy_eV")[pick])
            ip = float(find(f, "estimates/ionization_potential_eV")[pick])
            if average is not None:
                key = f"focal/{average}"
                if key not in f:
                    raise ValueError(f"{path} holds no focal average {average!r}")
                return energy, f[key][()], omega0, ip, f"focal average {average}"
            n = f["spectra/power"].shape[0]
            if not 0 <= pick < n:
                raise ValueError(f"point {pick} does not exist: the summary has points 0 to {n - 1}")
            return energy, f["spectra/power"][pick], omega0, ip, f"point {pick}"
        est = f["estimates"].attrs
        w = f["spectra/harmonic/frequency"][()]
        return (w * HARTREE_EV, f["spectra/harmonic/power"][()], float(est["photon_energy"]) * HARTREE_EV,
                float(est["ionization_potential"]) * HARTREE_EV, "computed")


def computed_floor(path, point: int | None = None, average: str | None = None):
    """The companion floor of :func:`computed_spectrum`'s spectrum, or None.

    For a run result: the spectrum of the stored driving field E(t) through the
    run's window, on the harmonic frequency axis (the floor of the acceleration
    spectrum, :func:`tdse1d.spectra.noise_floor`). A scan summary holds no field, so
    its spectra get the flat floor only (None).
    """
    import h5py

    from ..spectra.harmonic import harmonic_spectrum

    with h5py.File(path, "r") as f:
        if f.attrs.get("kind", "") == "scan-summary" or "field/electric" not in f:
            return None
        omega0 = float(f["estimates"].attrs["photon_energy"])
        window = str(f["spectra/harmonic"].attrs.get("window", "hann"))
        floor = harmonic_spectrum(f["field/time"][()], f["field/electric"][()], omega0, window=window)
        w = f["spectra/harmonic/frequency"][()]
    return np.interp(w, floor.frequency, floor.power)


def plot_comparison(comparison: Comparison, path, label="computed"):
    """Overlay the two normalised spectra (log scale) with their cutoffs; write ``path``."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    fig, ax = plt.subplots(figsize=(7, 4.2), constrained_layout=True)
    ax.semilogy(comparison.measured_energy_ev, np.maximum(comparison.measured, 1e-12), color="black", lw=1.2,
                label="measured")
    ax.semilogy(comparison.energy_ev, np.maximum(comparison.computed, 1e-12), color="tab:blue", lw=1.0,
                label=f"{label} (broadened, weighted)")
    ax.axvline(comparison.cutoff_measured_ev, color="black", ls="--", lw=0.8)
    ax.axvline(comparison.cutoff_computed_ev, color="tab:blue", ls="--", lw=0.8)
    ax.set_xlabel("photon energy (eV)")
    ax.set_ylabel("normalised signal")
    ax.set_title(f"cutoff: measured {comparison.cutoff_measured_ev:.1f} eV, computed "
                 f"{comparison.cutoff_computed_ev:.1f} eV", fontsize=10)
    ax.legend(frameon=False, fontsize=9)
    lo = max(min(np.min(comparison.measured[comparison.measured > 0], initial=1.0), 1.0), 1e-8)
    ax.set_ylim(lo / 2, 2.0)
    fig.savefig(path, dpi=120)
    plt.close(fig)
