"""The self-contained HTML report of a run: provenance, rankings, calibration, diagnostics,
warnings and cautions, with every chart embedded as inline SVG.

:func:`render_run_report` builds the page from a result and the run's facts;
:func:`load_report_inputs` reads all three of its arguments (result, run facts, series
data) from the store, for the ``foldline report`` command and web routes alike.
"""

from service.views.report.builder import render_run_report
from service.views.report.inputs import ReportInputs, load_report_inputs
from service.views.report.residuals import FitResiduals, full_fit_residuals

__all__ = [
    "FitResiduals",
    "ReportInputs",
    "full_fit_residuals",
    "load_report_inputs",
    "render_run_report",
]
