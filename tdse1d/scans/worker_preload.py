"""Loaded by every worker process of the scan's local cluster as it starts (Dask's worker
``preload``, :func:`tdse1d.scans.execute.local_cluster`): the worker loads the numerics
and runs a tiny problem (:func:`tdse1d.scans.worker.warm_up`) before it joins the
scheduler, so the workers warm up while the cluster is still starting and the scan's
own process solves the shared problems (:mod:`tdse1d.scans.presolve`), instead of after.
"""

from __future__ import annotations

import logging


def dask_setup(worker) -> None:
    """Dask's preload hook: warm the worker for time-dependent runs. A failure here is
    logged and otherwise ignored: the worker starts, and its first point pays the loading."""
    from .worker import warm_up

    try:
        warm_up(("run",))
    except Exception:  # noqa: BLE001 - never stop a worker from starting
        logging.getLogger(__name__).warning("tdse1d worker warm-up failed", exc_info=True)
