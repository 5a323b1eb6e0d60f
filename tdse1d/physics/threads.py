"""Thread counts of the libraries under the numerics (BLAS and LAPACK, via threadpoolctl)."""

from __future__ import annotations

import functools

__all__ = ["one_blas_thread"]


@functools.lru_cache(maxsize=1)
def _blas_controller():
    from threadpoolctl import ThreadpoolController

    return ThreadpoolController()


def one_blas_thread():
    """A context in which BLAS and LAPACK run on one thread.

    The products and solves inside a run are small (a few thousand rows): on shared
    cores a multi-threaded BLAS was measured 10-100 times *slower* for them (threads
    waiting for a core: 3.9 ms against 0.2-0.6 ms for the health check's products at
    4096 points), and a run gains nothing from them. Entering costs about 10 us.

    Returns
    -------
    context manager
        threadpoolctl's limit, restoring the previous counts on exit.
    """
    return _blas_controller().limit(limits=1, user_api="blas")
