"""FFTW plans that compiled code can execute: the libfftw3 that pyfftw loads, called directly.

The compiled time loop (:mod:`tdse1d.physics.time_loop`) runs whole chunks of steps
without returning to Python, so it must call FFTW itself. This module finds the
double-precision FFTW library pyfftw already loaded (same library, so the same wisdom
and, for the same planner flags, the same plans as :class:`~tdse1d.physics.fft.InPlaceFFT`),
makes in-place 1-D plans through ``ctypes``, and exposes ``fftw_execute`` to numba as
an external symbol: the address is registered with LLVM under a fixed name at import,
so numba's on-disk cache never holds a stale address.

If the library cannot be found (another pyfftw build), :data:`AVAILABLE` is False and
the propagator keeps its Python-driven loop, with the same results.
"""

from __future__ import annotations

import ctypes
import ctypes.util
import glob
import os
import threading

import pyfftw

__all__ = ["AVAILABLE", "fftw_execute", "LinePlans", "GridPlans"]

_SYMBOL = "tdse1d_fftw_execute"
# planner flags of fftw3.h (part of FFTW's public interface)
_FLAGS = {"FFTW_MEASURE": 0, "FFTW_ESTIMATE": 1 << 6, "FFTW_PATIENT": 1 << 5, "FFTW_EXHAUSTIVE": 1 << 3}
_DESTROY_INPUT = 1
_FORWARD, _BACKWARD = -1, 1


def _candidates():
    """Paths of the libfftw3 pyfftw uses: the copy bundled with its wheel, then the system's."""
    here = os.path.dirname(os.path.dirname(pyfftw.__file__))
    found = sorted(glob.glob(os.path.join(here, "pyfftw.libs", "libfftw3-*.so*")))
    system = ctypes.util.find_library("fftw3")
    return found + ([system] if system else [])


def _load():
    for path in _candidates():
        try:
            lib = ctypes.CDLL(path)
            lib.fftw_execute, lib.fftw_plan_dft_1d, lib.fftw_destroy_plan  # noqa: B018 (all three must exist)
        except (OSError, AttributeError):
            continue
        return lib, path
    return None, None


_LIB, LIBRARY_PATH = _load()
AVAILABLE = _LIB is not None
fftw_execute = None
if AVAILABLE:
    from llvmlite import binding as _llvm
    from numba import types as _types

    _LIB.fftw_plan_dft_1d.restype = ctypes.c_void_p
    _LIB.fftw_plan_dft_1d.argtypes = [ctypes.c_int, ctypes.c_void_p, ctypes.c_void_p, ctypes.c_int, ctypes.c_uint]
    _LIB.fftw_destroy_plan.argtypes = [ctypes.c_void_p]
    _LIB.fftw_plan_dft.restype = ctypes.c_void_p
    _LIB.fftw_plan_dft.argtypes = [ctypes.c_int, ctypes.c_void_p, ctypes.c_void_p, ctypes.c_void_p, ctypes.c_int,
                                   ctypes.c_uint]
    _llvm.add_symbol(_SYMBOL, ctypes.cast(_LIB.fftw_execute, ctypes.c_void_p).value)
    #: ``fftw_execute(plan)`` callable from numba code; the plan is passed as an integer
    #: (a pointer-sized integer is passed like a pointer on every ABI numba targets)
    fftw_execute = _types.ExternalFunction(_SYMBOL, _types.void(_types.intp))
    try:  # plans made here are single-threaded whatever pyfftw planned last
        _OMP = sorted(glob.glob(os.path.join(os.path.dirname(LIBRARY_PATH), "libfftw3_omp*.so*")))
        _SET_THREADS = ctypes.CDLL(_OMP[0]).fftw_plan_with_nthreads if _OMP else None
    except (OSError, AttributeError, IndexError):
        _SET_THREADS = None
    try:  # pyfftw plans under its own lock, these plans under ours: let FFTW serialise both
        ctypes.CDLL(_OMP[0]).fftw_make_planner_thread_safe()
    except (OSError, AttributeError, IndexError, NameError):
        pass
    _PLAN_LOCK = threading.Lock()


class LinePlans:
    """Forward and backward in-place plans of one aligned 1-D complex array.

    Parameters
    ----------
    data : ndarray of complex128
        The aligned array (``InPlaceFFT.data``); it must outlive the plans.
    effort : str
        FFTW planner flag, as for :class:`~tdse1d.physics.fft.InPlaceFFT`.

    Attributes
    ----------
    forward, backward : int
        The plans' addresses, for :data:`fftw_execute` in compiled code.
    """

    def __init__(self, data, effort="FFTW_MEASURE"):
        if not AVAILABLE:
            raise RuntimeError("the FFTW library pyfftw uses was not found")
        if data.ndim != 1 or data.dtype.kind != "c" or data.itemsize != 16:
            raise ValueError("LinePlans needs a 1-D complex128 array")
        self._data = data  # keep the array alive as long as the plans
        flags = _FLAGS[effort] | _DESTROY_INPUT
        if _SET_THREADS is not None:
            _SET_THREADS(1)
        ptr = data.ctypes.data
        saved = data.copy()  # planning other than ESTIMATE overwrites the array
        with _PLAN_LOCK:
            self.forward = _LIB.fftw_plan_dft_1d(data.size, ptr, ptr, _FORWARD, flags)
            self.backward = _LIB.fftw_plan_dft_1d(data.size, ptr, ptr, _BACKWARD, flags)
        data[:] = saved
        if not self.forward or not self.backward:
            raise RuntimeError(f"FFTW made no plan for {data.size} points")

    def __del__(self):
        for plan in (getattr(self, "forward", None), getattr(self, "backward", None)):
            if plan and _LIB is not None:
                with _PLAN_LOCK:
                    _LIB.fftw_destroy_plan(plan)


class GridPlans(LinePlans):
    """Forward and backward in-place plans over every axis of one aligned complex array,
    on ``threads`` threads (FFTW's OpenMP build; one thread if it is not there).

    Parameters
    ----------
    data : ndarray of complex128, C order
        The aligned array (``InPlaceFFT.data``, any number of axes); it must outlive the plans.
    effort : str
        FFTW planner flag.
    threads : int
        Threads of the plans.
    """

    def __init__(self, data, effort="FFTW_MEASURE", threads=1):  # noqa: D107 (LinePlans' fields)
        if not AVAILABLE:
            raise RuntimeError("the FFTW library pyfftw uses was not found")
        if data.dtype.kind != "c" or data.itemsize != 16 or not data.flags.c_contiguous:
            raise ValueError("GridPlans needs a C-ordered complex128 array")
        self._data = data
        flags = _FLAGS[effort] | _DESTROY_INPUT
        dims = (ctypes.c_int * data.ndim)(*data.shape)
        ptr = data.ctypes.data
        saved = data.copy()
        with _PLAN_LOCK:
            if _SET_THREADS is not None:
                _SET_THREADS(int(threads))
            try:
                self.forward = _LIB.fftw_plan_dft(data.ndim, dims, ptr, ptr, _FORWARD, flags)
                self.backward = _LIB.fftw_plan_dft(data.ndim, dims, ptr, ptr, _BACKWARD, flags)
            finally:
                if _SET_THREADS is not None:
                    _SET_THREADS(1)
        data[:] = saved
        if not self.forward or not self.backward:
            raise RuntimeError(f"FFTW made no plan for shape {data.shape}")
