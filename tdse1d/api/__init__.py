"""The library functions: every command of the ``tdse1d`` program is a thin layer over
one of these, which return objects with a short ``repr`` (a notebook cell stays short)::

    from tdse1d import api
    outcome = api.run("inputs/argon_800nm.toml")              # RunOutcome
    table = api.report(outcome.path)                           # Report: rows, to_json()
    api.plot(outcome.path, "harmonic", "harmonic.png")         # Figures: the written files

=====================  ==========================  ===========================================
command                function                    returns
=====================  ==========================  ===========================================
``tdse1d run``         :func:`run`                 :class:`~.single_run.RunOutcome`
``tdse1d states``      :func:`find_states`         :class:`~.single_run.StatesResult`
``tdse1d estimate``    :func:`estimate`            :class:`~.single_run.EstimateResult`
``tdse1d report``      :func:`report`              :class:`~.results.Report`
``tdse1d plot``        :func:`plot`                :class:`~.figures.Figures`
``tdse1d export``      :func:`export`              :class:`~.results.Table`
``tdse1d scan``        :func:`scan`                :class:`~.campaigns.ScanOutcome`
``tdse1d compare``     :func:`compare`             :class:`~tdse1d.scans.compare.Comparison`
``tdse1d validate``    :func:`validate`            :class:`~.campaigns.ValidationReport`
``tdse1d sfa``         :func:`sfa`                 :class:`~.strong_field.SfaOutcome`
=====================  ==========================  ===========================================

``tdse1d run --certify`` calls :func:`certify`, which returns a
:class:`~tdse1d.scans.certify.CertifiedRun` (the run, its companions, each quantity's
numerical uncertainty).

The modules are loaded on first use, so importing this package is cheap: the command
line imports only the module its command needs. :mod:`~tdse1d.api.single_run` (one
input) sits below the scan and the validation suite, which run through it;
:mod:`~tdse1d.api.results`, :mod:`~tdse1d.api.figures` and :mod:`~tdse1d.api.campaigns` sit above them.
"""

import importlib

#: name -> module of this package that defines it
_WHERE = {
    **dict.fromkeys(("report", "export", "Report", "Table"), "results"),
    **dict.fromkeys(("plot", "Figures"), "figures"),
    **dict.fromkeys(("scan", "certify", "compare", "validate", "ScanOutcome", "ValidationReport"), "campaigns"),
    # the module is not named sfa: importing it would bind tdse1d.api.sfa to the module
    **dict.fromkeys(("sfa", "SfaOutcome", "sfa_scan", "SfaScan"), "strong_field"),
}

__all__ = ["load_input", "find_states", "states", "estimate", "run", "run_problem", "certify", "report", "plot",
           "export", "scan", "compare", "validate", "sfa", "sfa_scan"]


def __getattr__(name):
    if name.startswith("__"):
        raise AttributeError(name)
    module = importlib.import_module(f"{__name__}.{_WHERE.get(name, 'single_run')}")
    try:
        return getattr(module, name)
    except AttributeError:
        raise AttributeError(f"module 'tdse1d.api' has no attribute {name!r}") from None


def __dir__():
    return sorted(set(globals()) | set(__all__))
