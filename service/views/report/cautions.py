"""The cautions that frame every report: what a backtest and its intervals can and cannot say."""

from __future__ import annotations

from backtest.results import BacktestResult
from service.views.report.html import Html, element

GENERAL = (
    "A backtest is evidence, not a guarantee. It shows how each candidate would have done "
    "on this history under this plan; a change in the process behind the data (a new "
    "contract, a lost client, a revised series) can make the next periods unlike any the "
    "backtest saw.",
    "Prediction intervals assume the model is right. They account for the model's own "
    "noise, not for the chance that the model, its transform or its parameters are wrong, "
    "so real-world coverage is usually below the nominal level, most of all at long "
    "horizons.",
    "Many comparisons are reported at 5 %: across candidates, horizons and series, some "
    "'significant' results are expected by chance alone.",
    "Calibration tests are formal only at h = 1 with origins one period apart; at longer "
    "horizons successive forecasts share errors and the figures are descriptive.",
    "The diagnostics describe each model fitted to the whole series, including the periods "
    "the backtest forecast; they support the choice of a model, they do not test it "
    "out of sample.",
)


#: The short block on the series and forecast pages.
FORECAST_CAUTIONS = (
    "Prediction intervals assume the model is right: they leave out the chance that the "
    "model, its transform or its parameters are wrong, so real coverage is usually lower, "
    "most of all at long horizons.",
    "With a log or Box-Cox transform the point forecast is the median of the forecast "
    "distribution, not its mean: summed over periods or series it understates the total.",
    "A backtest is evidence, not a guarantee: a change in the process behind the data can "
    "make the next periods unlike any the backtest saw.",
)


def caution_block(items: tuple[str, ...] = FORECAST_CAUTIONS) -> Html:
    """A short "Read with care" box of ``items``."""
    return _box(list(items))


def _box(items: list[str]) -> Html:
    return Html('<aside class="cautions">\n' + element("h2", "Read with care") + "\n<ul>\n"
                + "\n".join(element("li", item) for item in items) + "\n</ul>\n</aside>")


def cautions(result: BacktestResult) -> Html:
    """The cautions box, with a line on how few origins back the figures when that applies."""
    items = list(GENERAL)
    origins = [len({f.fold for f in sr.folds}) for sr in result.series]
    if origins and min(origins) < 20:
        items.insert(2, f"Some series have only {min(origins)} forecast origins: every score, "
                        "test and ranking here rests on few independent errors and can "
                        "change with a few more periods of data.")
    return _box(items)
