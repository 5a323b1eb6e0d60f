"""Files: the result file and its contract (:mod:`~tdse1d.io.result_file`), writer locks
and the guarded HDF5 file (:mod:`~tdse1d.io.guarded_file`), the analysis of a result
file (:mod:`~tdse1d.io.analysis_file`), the numerical uncertainties of a certified run
(:mod:`~tdse1d.io.certification_file`), the checks of a file given to a reading command
(:mod:`~tdse1d.io.checked_open`) and FFTW wisdom (:mod:`~tdse1d.io.wisdom`).
"""
