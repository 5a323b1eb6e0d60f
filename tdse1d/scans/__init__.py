"""Parameter scans: the plan (:mod:`~tdse1d.scans.plan`), the cost of a point, the scan
directory, the worker side and the execution on Dask, the summary of a scan, focal
averaging and the comparison with a measured spectrum.
"""
