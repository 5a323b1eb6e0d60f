"""How far the cutoff family reaches: a panel of further cutoff readers, written apart from
the family with scipy, laid beside the family's range on result files.

Informational, not a pass/fail case: no finite family contains every reader, and the
point is to show where this one stops. The panel was written on 2026-12-03 and run once
on the files recorded in docs/analysis.md ("How far the family reaches"); it has not been
changed since, and the family was not changed after it.

Each reader takes "the plateau has fallen one decade" with choices the family does not
make:

* the curve: log10 power smoothed by a Savitzky-Golay filter (quadratic, 2 orders wide),
  by a Gaussian of 0.5 order in log power, or by a Gaussian of 1 order in *linear*
  power; or the local maxima of the raw log power (``scipy.signal.find_peaks``, at least
  1.5 orders apart), which include maxima between the harmonics;
* the plateau: from Ip + 2 photon energies to the classical Ip + 3.17 Up (a reader who
  takes the classical cutoff as the end of the plateau when judging its level);
* the level: its median or its highest value on the smoothed curves; the mean of log10,
  the highest value or log10 of the mean power of the maxima;
* the crossing: the last point at or above the level less one decade, interpolated in
  log10 to the next, or (maxima) that last maximum itself.

Run: python validation/reader_panel.py RESULT.h5 [RESULT.h5 ...]
Prints, per file, Ip + 3.17 Up, the family's range, the panel's range and each reader's
value in eV, marking those outside the family's range.
"""

from __future__ import annotations

import sys

import h5py
import numpy as np
from scipy.ndimage import gaussian_filter1d
from scipy.signal import find_peaks, savgol_filter

from tdse1d.spectra.reading import cutoff_family
from tdse1d.units import HARTREE_EV


def last_crossing(x, y, threshold, interpolate=True):
    """Last x with y >= threshold (interpolated in y to the next sample), NaN if none or at the end."""
    above = np.flatnonzero(y >= threshold)
    if above.size == 0 or above[-1] + 1 >= y.size:
        return np.nan
    i = above[-1]
    if not interpolate:
        return float(x[i])
    return float(x[i] + (y[i] - threshold) / (y[i] - y[i + 1]) * (x[i + 1] - x[i]))


def panel_readings(w, power, omega0, ip, up):
    """Reader name -> cutoff (hartree) of every reader of the module docstring."""
    log_power = np.log10(np.maximum(power, power.max() * 1e-30))
    step = w[1] - w[0]
    start, classical = ip + 2 * omega0, ip + 3.17 * up
    search = w >= start
    plateau = search & (w <= classical)
    out = {}
    smoothed = {
        "Savitzky-Golay, 2 orders": savgol_filter(log_power, int(2 * omega0 / step) | 1, 2),
        "Gaussian 0.5 order, log power": gaussian_filter1d(log_power, 0.5 * omega0 / step),
        "Gaussian 1 order, linear power": np.log10(gaussian_filter1d(power, omega0 / step)),
    }
    for name, curve in smoothed.items():
        for level_name, level in (("median", np.median(curve[plateau])), ("highest", curve[plateau].max())):
            out[f"{name}, {level_name}"] = last_crossing(w[search], curve[search], level - 1.0)
    peaks, _ = find_peaks(log_power, distance=max(1, int(1.5 * omega0 / step)))
    peaks = peaks[w[peaks] >= start]
    x, y = w[peaks], log_power[peaks]
    on_plateau = x <= classical
    levels = {"mean of log10": y[on_plateau].mean(), "highest": y[on_plateau].max(),
              "log10 of mean power": np.log10(np.mean(10.0 ** y[on_plateau]))}
    for level_name, level in levels.items():
        out[f"maxima, {level_name}, interpolated"] = last_crossing(x, y, level - 1.0)
        out[f"maxima, {level_name}, last maximum"] = last_crossing(x, y, level - 1.0, interpolate=False)
    return out


def main(paths):
    for path in paths:
        with h5py.File(path, "r") as f:
            w, power = f["spectra/harmonic/frequency"][()], f["spectra/harmonic/power"][()]
            pulse = f["estimates/pulse_0"].attrs
            omega0, up, ip = (float(pulse[k]) for k in ("photon_energy", "ponderomotive_energy",
                                                       "ionization_potential"))
        family = cutoff_family(w, power, omega0, ip)
        readers = panel_readings(w, power, omega0, ip, up)
        values = np.array([v for v in readers.values() if np.isfinite(v)])
        ev = HARTREE_EV
        print(f"{path}: Ip + 3.17 Up {(ip + 3.17 * up) * ev:.2f} eV; family {family.low * ev:.2f} to "
              f"{family.high * ev:.2f} eV; panel {values.min() * ev:.2f} to {values.max() * ev:.2f} eV")
        for name, value in readers.items():
            outside = "" if family.low - 1e-9 <= value <= family.high + 1e-9 else "  outside"
            print(f"    {name:44s} {value * ev:7.2f}{outside}")


if __name__ == "__main__":
    main(sys.argv[1:])
