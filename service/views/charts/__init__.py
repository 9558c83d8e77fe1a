"""Server-side charts of backtest results, drawn with matplotlib's object API.

Every chart function returns a :class:`matplotlib.figure.Figure` (never pyplot state);
:func:`render` turns it into SVG or PNG bytes. One module per chart kind; ``style`` holds
the shared visual language (palette, line looks, fonts, axis wording).
"""

from service.views.charts.calibration import calibration_chart
from service.views.charts.fan import ForecastBands, fan_chart
from service.views.charts.monitoring import monitoring_chart
from service.views.charts.overview import score_by_horizon_chart
from service.views.charts.parameters import parameter_path_chart
from service.views.charts.render import render
from service.views.charts.residuals import residual_chart

__all__ = [
    "ForecastBands",
    "calibration_chart",
    "fan_chart",
    "monitoring_chart",
    "parameter_path_chart",
    "render",
    "residual_chart",
    "score_by_horizon_chart",
]
