"""The result file of a run of the two-electron atom.

The root attributes, ``field/`` and the per-step ``observables/`` are those of every
result file (``grid_points`` and ``grid_spacing`` are per axis; ``observables/dipole``
is <x1 + x2> and the acceleration the total one); what is particular to the atom is in
``two_electron/`` (declared in :mod:`tdse1d.io.layout_tables`, rows ``PAIR``). The
density snapshots are streamed into ``two_electron/snapshots/density`` as the run
makes them; the file is written as ``NAME.h5.part`` and renamed when complete, under
the writer's lock, like a one-electron result.
"""

from __future__ import annotations

import math
import uuid
from pathlib import Path

import h5py
import numpy as np

from .. import __version__, units
from ..errors import OutputError
from .guarded_file import COMPLETE_ATTR, GuardedFile, PART_SUFFIX, WRITER_ATTR, WriterLock, lock_path
from .result_file import GuardedWriting, refuse_reason, write_dataset

__all__ = ["PairResultWriter", "is_pair_result", "read_pair_record", "PAIR_GROUP"]

#: the group that marks a result file as a run of the two-electron atom
PAIR_GROUP = "two_electron"


def is_pair_result(f) -> bool:
    """Whether the open result file ``f`` is a run of the two-electron atom."""
    return PAIR_GROUP in f


def read_pair_record(f):
    """The numbers of a two-electron run file for its report, figures and tables.

    Parameters
    ----------
    f : h5py.File or the view of :func:`tdse1d.io.checked_open.open_result`

    Returns
    -------
    tdse1d.analysis.pair_report.PairRecord
        Atomic units; a dataset the record needs and the file lacks raises (the
        checked view names it in one line).
    """
    from ..analysis.pair_report import KINDS, PairRecord

    g = f[PAIR_GROUP]
    regions = g["regions"]
    sequential = None
    if "sequential" in g:
        sequential = {name: g["sequential"][name][()] for name in ("neutral", "single", "double")}
    knee = g["knee"].attrs if "knee" in g else {}
    omega0 = math.nan
    if "estimates" in f and "photon_energy" in f["estimates"].attrs:
        omega0 = float(f["estimates"].attrs["photon_energy"])
    return PairRecord(
        time=f["observables/time"][()], electric=f["field/electric"][()], radii=regions["radius"][()],
        regions={kind: regions[kind][()] for kind in KINDS}, sequential=sequential,
        ionization_potential=float(g.attrs["ionization_potential"]),
        ion_ionization_potential=float(g.attrs["ion_ionization_potential"]),
        ponderomotive_energy=float(knee.get("ponderomotive_energy", math.nan)),
        return_energy=float(knee.get("return_energy", math.nan)),
        knockout_intensity=float(knee.get("knockout_intensity_W_cm2", math.nan)), omega0=omega0,
        momenta=g["momentum/p"][()], momentum_map=g["momentum/double"][()])


class PairResultWriter(GuardedWriting):
    """Writes one two-electron run's HDF5 file; its :meth:`snapshot` is the run's sink.

    Parameters
    ----------
    path : path
        Final file name.
    problem : PairProblem
    snapshot_times : array_like
        Times (a.u.) of the snapshots the run will hand over.
    snapshot_shape : tuple of int
        Shape of one (decimated) density snapshot.
    """

    def __init__(self, path, problem, snapshot_times, snapshot_shape):
        self.path = Path(path)
        self.part = self.path.with_name(self.path.name + PART_SUFFIX)
        reason = refuse_reason(self.path)
        if reason is not None:
            raise OutputError(reason)
        self.problem = problem
        self.path.parent.mkdir(parents=True, exist_ok=True)
        self.lock = WriterLock(lock_path(self.path), what=str(self.path), purpose="tdse1d run").acquire()
        self.file = self._raw = None
        try:
            self.part.unlink(missing_ok=True)
            self._raw = GuardedFile.create(self.part, exclusive=True)
            self.file = h5py.File(self._raw, "w")
            self.file.attrs[WRITER_ATTR] = uuid.uuid4().hex
            self._header(np.asarray(snapshot_times, float), tuple(snapshot_shape))
        except BaseException:
            self.abort()
            raise

    def _header(self, snapshot_times, shape):
        f, p = self.file, self.problem
        cfg = p.config
        a = f.attrs
        a["input"], a["input_source"], a["tdse1d_version"] = cfg.resolved_toml, cfg.source, __version__
        a["grid_points"], a["grid_spacing"] = p.grid.points, p.grid.spacing
        a["time_step"], a["steps"] = p.time.step, p.time.steps
        a["gauge"], a["splitting_order"] = cfg.propagation.gauge, cfg.propagation.order
        a["absorber"], a["absorber_width"] = cfg.absorber.type, p.absorber_width
        a["potential"], a[COMPLETE_ATTR] = p.atom.describe(), False
        g = f.require_group("two_electron")
        for k in ("charge", "softening", "repulsion_softening", "spin"):
            g.attrs[k] = getattr(p.atom, k)
        g.attrs["ionization_potential"] = p.ionization_potential
        g.attrs["ion_ionization_potential"] = p.ion_ionization_potential
        s = g.require_group("states")
        write_dataset(s, "energy", np.asarray(p.states.energies))
        write_dataset(s, "ion_energy", np.asarray(p.ion_states.energies))
        snaps = g.require_group("snapshots")
        write_dataset(snaps, "time", snapshot_times)
        write_dataset(snaps, "x", p.grid.x[::cfg.output.snapshot_stride])
        chunks = (1,) + shape if len(snapshot_times) else None  # HDF5 refuses chunks of an empty dataset
        self._density = write_dataset(snaps, "density", create=dict(
            shape=(len(snapshot_times),) + shape, dtype="f4", chunks=chunks))

    def snapshot(self, index, time, density):
        """Store one density snapshot (the run's ``snapshot_sink``)."""
        self._density[index] = density

    def write_result(self, result):
        """Write what the run gave (a :class:`~tdse1d.runs.pair_runner.PairRunResult`)."""
        from ..physics.pair_system import region_observable_names

        f, obs = self.file, result.observables
        field = f.require_group("field")
        write_dataset(field, "time", obs.time)
        write_dataset(field, "electric", obs.electric)
        write_dataset(field, "vector_potential", obs.vector_potential)
        o = f.require_group("observables")
        for name in ("time", "dipole", "momentum", "acceleration", "norm", "initial_population"):
            write_dataset(o, name, getattr(obs, name))
        write_dataset(o, "absorbed", 1.0 - obs.norm)
        g = f["two_electron"]
        g.attrs["wall_time"] = result.wall_time
        r = g.require_group("regions")
        write_dataset(r, "radius", np.asarray(result.radii))
        names = region_observable_names(result.radii)
        for j, kind in enumerate(("neutral", "single_ionization", "double_ionization")):
            write_dataset(r, kind, np.array([getattr(obs, names[3 * k + j]) for k in range(len(result.radii))]))
        ratio = g.require_group("ratio")
        low, high = result.ratio_spread
        seq = result.sequential.ratio if result.sequential is not None else math.nan
        ratio.attrs.update({"quantum": result.ratio, "quantum_low": low, "quantum_high": high, "sequential": seq})
        m = g.require_group("momentum")
        write_dataset(m, "p", result.momenta)
        write_dataset(m, "double", result.momentum_map)
        if result.sequential is not None:
            s = g.require_group("sequential")
            for name in ("neutral", "single", "double"):
                write_dataset(s, name, getattr(result.sequential, name))
        if result.knee is not None:
            k = g.require_group("knee")
            k.attrs.update({"ponderomotive_energy": result.knee.ponderomotive_energy,
                            "return_energy": result.knee.return_energy,
                            "knockout_field": result.knee.knockout_field,
                            "knockout_intensity_W_cm2": units.field_to_intensity(result.knee.knockout_field)})
        if result.harmonic is not None:  # the spectrum of the total acceleration, where every run's is
            h = f.require_group("spectra").require_group("harmonic")
            write_dataset(h, "frequency", result.harmonic.frequency)
            write_dataset(h, "order", result.harmonic.order)
            write_dataset(h, "power", result.harmonic.power)
            h.attrs["window"] = self.problem.config.spectra.window
        ion = f.require_group("ionization")  # every run's total: single plus double
        write_dataset(ion, "probability", 1.0 - result.final("neutral"))
        write_dataset(ion, "absorbed", 1.0 - float(obs.norm[-1]))
        self._estimates(result)
        f.attrs["warnings"] = "\n".join(result.warnings)

    def _estimates(self, result):
        """The semiclassical numbers of each pulse for the atom's Ip1 (where every run keeps
        them; the barrier-suppression field of the atom is not computed: NaN)."""
        from ..semiclassical.estimates import as_attributes, pulse_estimate

        p = self.problem
        pulses = [pulse_estimate(q.omega, q.peak_field, p.ionization_potential, math.nan) for q in p.field.pulses]
        if not pulses:
            return
        est = self.file.require_group("estimates")
        est.attrs["units"] = "atomic units unless the name says otherwise"
        est.attrs.update(as_attributes(pulses[0]))
        for i, q in enumerate(pulses):
            est.require_group(f"pulse_{i}").attrs.update(as_attributes(q))

    def close(self):
        """Mark the file complete (last), sync, rename it to its final name, release the lock."""
        self.check()
        self._finish()
