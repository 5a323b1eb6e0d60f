"""Figures (matplotlib): of one run (:mod:`~tdse1d.plots.run_figures`) and of a scan
(:mod:`~tdse1d.plots.scan_figures`).
"""
