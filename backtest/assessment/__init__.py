"""Model-assessment statistics: residual diagnostics, fit reports, stability across folds,
interval calibration and forecast comparison. Pure functions returning JSON-ready dicts."""

from backtest.assessment.calibration import (
    calibration_report,
    calibration_zone,
    christoffersen,
    kupiec_pof,
    zone_thresholds,
)
from backtest.assessment.comparison import (
    compare_to_benchmark,
    diebold_mariano,
    model_confidence_set,
    pairwise,
)
from backtest.assessment.fit_report import fit_report, fold_fit_summary
from backtest.assessment.insample import one_step_errors
from backtest.assessment.residual_tests import (
    acf_report,
    arch_lm,
    default_lags,
    jarque_bera,
    ljung_box,
)
from backtest.assessment.stability import summarise_folds

__all__ = [
    "acf_report",
    "arch_lm",
    "calibration_report",
    "calibration_zone",
    "christoffersen",
    "compare_to_benchmark",
    "default_lags",
    "diebold_mariano",
    "fit_report",
    "fold_fit_summary",
    "jarque_bera",
    "kupiec_pof",
    "ljung_box",
    "model_confidence_set",
    "one_step_errors",
    "pairwise",
    "summarise_folds",
    "zone_thresholds",
]
