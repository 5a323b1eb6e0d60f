"""One run: the runner that drives the propagator (:mod:`~tdse1d.runs.runner`), its
checkpoints, health checks and the memory and disk estimate made before it starts.
"""
