"""The validation suite: runs the cases under ``validation/`` and writes a report.

:mod:`~tdse1d.validation.cases`
    What a case is, where the cases are found, the registry of case kinds.
:mod:`~tdse1d.validation.kinds`, :mod:`~tdse1d.validation.scan_kinds`, :mod:`~tdse1d.validation.pair_kinds`
    The case kinds (importing this package registers them all).
:mod:`~tdse1d.validation.suite`
    :func:`run_suite` runs the cases and :func:`write_report` writes ``report.md``.
"""

from . import kinds, pair_kinds, scan_kinds, sfa_kinds  # noqa: F401  (registers the case kinds)
from .cases import (CASE_KINDS, PACKAGED_CASES, Case, CaseReport, Row, case_dirs_searched, default_cases_dir, discover,
                    register_case_kind)
from .kinds import CaseKind
from .suite import Runner, run_suite, write_report

__all__ = [
    "CASE_KINDS",
    "register_case_kind",
    "CaseKind",
    "Case",
    "Row",
    "CaseReport",
    "Runner",
    "discover",
    "run_suite",
    "write_report",
    "default_cases_dir",
    "case_dirs_searched",
    "PACKAGED_CASES",
]
