"""The worker's whole job for one (series, candidate): its folds, a diagnostic report of
its fit to the full series, and a summary of the fits at the folds that re-estimated.

With the plan's ``assessment: "lean"`` the full-series report is left out (``None``) and
the summary holds parameter paths only (the folds then carry no standard errors). A
diagnostic step that raises becomes a :class:`Report` with its ``error`` (``{"error":
reason}`` in JSON); the folds are kept."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from backtest.assessment import fit_report, summarise_folds
from backtest.candidates import Candidate
from backtest.captured_warnings import capturing_warnings, warning_line
from backtest.evidence_types import Report
from backtest.folds import Origin
from backtest.models.base import Estimator
from backtest.models.combination import CombinationSpec
from backtest.models.fast_fallback import ESTIMATOR_KEY
from backtest.plan import Plan
from backtest.results import FoldResult
from backtest.runner import run_candidate
from backtest.series import Series


@dataclass(frozen=True)
class CandidateOutcome:
    """Folds plus the full-series diagnostics and the fold-stability summary."""

    folds: tuple[FoldResult, ...]
    diagnostics: Report | None
    stability: Report | None


def evaluate_candidate(series: Series, candidate: Candidate, plan: Plan,
                       origins: Sequence[Origin]) -> CandidateOutcome:
    """Backtest one candidate on one series and diagnose its fits."""
    folds = run_candidate(series, candidate, plan, origins)
    return candidate_outcome(candidate, folds, candidate_diagnostics(series, candidate, plan))


def candidate_diagnostics(series: Series, candidate: Candidate, plan: Plan) -> Report | None:
    """The full-series report the plan asks for (none under ``assessment: "lean"`` or for a
    combination, whose members' fits are theirs to assess)."""
    if plan.assessment != "full" or isinstance(candidate.spec, CombinationSpec):
        return None
    return full_series_diagnostics(series, candidate, plan.estimator)


def candidate_outcome(candidate: Candidate, folds: tuple[FoldResult, ...],
                      diagnostics: Report | None) -> CandidateOutcome:
    """The outcome of a candidate's folds and full-series report, with the summary of its
    fits at the folds that re-estimated."""
    if isinstance(candidate.spec, CombinationSpec):
        return CandidateOutcome(folds, None, None)
    stability = None
    if not candidate.spec.closed_form:
        refits = [f for f in folds if f.reestimated]
        try:
            stability = Report(summarise_folds([f.fit_summary for f in refits],
                                               [_estimates(f) for f in refits]))
        except Exception as exc:  # a failed summary is left out, never the run
            stability = Report(error=f"{type(exc).__name__}: {exc}")
    return CandidateOutcome(folds, diagnostics, stability)


def _estimates(fold: FoldResult) -> dict[str, Any] | None:
    """The fold's coefficient estimates as the diagnostics name them (without the
    ``estimator`` record)."""
    if fold.fit_summary and fold.fit_summary.get("params"):
        return {k: v["estimate"] for k, v in fold.fit_summary["params"].items()}
    if fold.params is None:
        return None
    return {k: v for k, v in fold.params.items() if k != ESTIMATOR_KEY}


def full_series_diagnostics(series: Series, candidate: Candidate,
                            estimator: Estimator = "reference") -> Report:
    """Fit the candidate to every observation and report coefficients and residual tests;
    ``estimator`` as in the plan (for ``fast_estimable`` families). A fast fit is made
    without statsmodels' results object and reported from the compiled likelihood (a fit
    that fell back to the reference estimator keeps its results object and is reported
    from it).

    This describes the model as it would be used today; it is not a forecast evaluation,
    so using all the data involves no look-ahead.
    """
    spec, m = candidate.spec, series.season_length
    z = spec.transform.forward(np.asarray(series.values, dtype=float))
    options: dict[str, Any] = {"estimator": estimator} if spec.fast_estimable else {}
    if estimator == "fast" and spec.fast_estimable and spec.raw_optional:
        options["keep_raw"] = False
    with capturing_warnings() as caught:
        try:
            fit = spec.fit(z, m, **options)
        except Exception as exc:  # a model that cannot be fitted is reported, not raised
            return Report(error=f"{type(exc).__name__}: {exc}")
    fit_warnings = [warning_line(w) for w in caught]  # each occurrence, as always reported
    assessed_spec, assessed_fit = spec.assessed(fit)
    try:
        report = fit_report(assessed_spec, assessed_fit, z, m, fit_warnings=fit_warnings)
    except Exception as exc:  # a failed report is recorded, never the run
        return Report(error=f"{type(exc).__name__}: {exc}")
    if assessed_spec is not spec:
        report["chosen"] = assessed_spec.label(m)
    return Report(report)
