"""The semiclassical picture beside the quantum result of one run.

Pure numerics on a run's arrays, atomic units; nothing here reads or writes a file
(:mod:`tdse1d.io.analysis_file` analyses a result file and stores the analysis in it).

:mod:`~tdse1d.analysis.emission`
    The Gabor time-frequency map and the quantum emission times read off it, against
    the three-step model's branches.
:mod:`~tdse1d.analysis.photoelectrons`
    Photoelectron edges, the ponderomotive shift of the ATI comb, the field-free
    floor and the streaking shift.
:mod:`~tdse1d.analysis.run_analysis`
    :func:`analyse_run`: all of it for one run, as a :class:`RunAnalysis`.
:mod:`~tdse1d.analysis.readings`
    Families of reading rules for the photoelectron edges, the streaked line and the
    emission times after the field crest.
:mod:`~tdse1d.analysis.sidebands`
    The XUV line in an infrared field: its ponderomotive shift and its sidebands.
:mod:`~tdse1d.analysis.verdict`
    The combined uncertainty and the verdict (agrees, deviates, unresolved).
:mod:`~tdse1d.analysis.report`
    The rows of ``tdse1d report``: prediction | quantum value +- uncertainty | verdict.

The rules are in ``docs/analysis.md``; the names below are re-exported here.
"""

from .emission import (BranchAgreement, BranchCorrelation, EmissionTimes, TimeFrequencyMap, branch_agreement,
                       branch_correlation, emission_times, time_frequency_map)
from .photoelectrons import (PhotoelectronEdges, PonderomotiveShift, StreakingShift, field_free_floor, peak_centroid,
                             photoelectron_edges, ponderomotive_shift, streaking_shift)
from .run_analysis import PHOTOELECTRON_METHOD_ORDER, RunAnalysis, analyse_run
from .sidebands import DressedLine, dressed_line
from .verdict import Verdict, combined_uncertainty, verdict

__all__ = [
    "TimeFrequencyMap",
    "EmissionTimes",
    "PhotoelectronEdges",
    "PonderomotiveShift",
    "StreakingShift",
    "RunAnalysis",
    "time_frequency_map",
    "emission_times",
    "BranchAgreement",
    "branch_agreement",
    "BranchCorrelation",
    "branch_correlation",
    "photoelectron_edges",
    "ponderomotive_shift",
    "peak_centroid",
    "streaking_shift",
    "field_free_floor",
    "analyse_run",
    "PHOTOELECTRON_METHOD_ORDER",
    "DressedLine",
    "dressed_line",
    "Verdict",
    "verdict",
    "combined_uncertainty",
]
