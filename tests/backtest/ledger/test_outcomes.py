"""Outcome arithmetic on a small quarterly example worked out by hand.

The data are an invented quarterly toy series (the one in tests/backtest/test_metrics.py):
training y = 12 15 20 14 | 13 17 22 15 | 15 18 24 17 (quarterly, m = 4). The seasonal
naive forecast repeats the last year: 15 18 24 17. Hand arithmetic:

- MASE scale (issuing version): seasonal differences 1 2 2 1 2 1 2 2, mean 13/8 = 1.625
  (the M4 seasonal scaling, Makridakis, Spiliotis & Assimakopoulos 2020); RMSSE scale:
  one-step differences 3 5 -6 -1 4 5 -7 0 3 6 -7, squares sum 255, /11 = 23.181818
  (M5 definition, Makridakis, Spiliotis & Assimakopoulos 2022).
- Residual scale of the seasonal naive: sqrt(mean of squared seasonal differences)
  = sqrt(23/8); every h <= 4 has sd = s, so the 80 % half-width is 1.281552 s.
- Actuals 16 21 25 13: errors 1 3 1 -4; scaled 1/1.625 = 0.615385, 1.846154,
  0.615385, -2.461538; realised MASE = (1+3+1+4)/4/1.625 = 1.384615.
"""

import dataclasses
import math

import numpy as np
import pytest

from backtest.candidates import parse_candidate
from backtest.ledger import LedgerError, issue_forecast, realised_mase, score_outcomes
from backtest.series import make_series

TRAIN = [12.0, 15, 20, 14, 13, 17, 22, 15, 15, 18, 24, 17]
QUARTERS = [f"{2017 + i // 4}-Q{i % 4 + 1}" for i in range(16)]


def quarterly(values, key="toy", fill="reject"):
    rows = [(q, v) for q, v in zip(QUARTERS, values) if v is not None]
    return make_series(key, "P3M", rows, season_length=4, fill=fill)


@pytest.fixture(scope="module")
def issued():
    return issue_forecast(quarterly(TRAIN),
                          parse_candidate({"family": "benchmark", "method": "seasonal_naive"}),
                          horizon=4, levels=(80, 95))


def test_issued_forecast_and_scales_match_the_hand_values(issued):
    assert issued.point == (15.0, 18.0, 24.0, 17.0)
    assert issued.periods == ("2020-Q1", "2020-Q2", "2020-Q3", "2020-Q4")  # as written
    assert issued.scale == pytest.approx(13 / 8, abs=1e-12)
    assert issued.scale_sq == pytest.approx(255 / 11, abs=1e-12)
    half80 = 1.281552 * math.sqrt(23 / 8)  # z_0.90 (normal table) times s
    np.testing.assert_allclose(issued.upper[80], np.array(issued.point) + half80, atol=1e-5)


def test_errors_hits_and_scores_by_hand(issued):
    outcomes = score_outcomes(issued, quarterly(TRAIN + [16, 21, 25, 13]))
    assert [o.horizon for o in outcomes] == [1, 2, 3, 4]
    assert [o.error for o in outcomes] == [1.0, 3.0, 1.0, -4.0]
    np.testing.assert_allclose([o.scaled_error for o in outcomes],
                               [0.615385, 1.846154, 0.615385, -2.461538], atol=1e-6)
    assert realised_mase(outcomes) == pytest.approx(9 / 4 / 1.625, abs=1e-12)
    # sMAPE terms 200|e|/(|y|+|f|): 200/31, 600/39, 200/49, 800/30
    np.testing.assert_allclose([o.smape_term for o in outcomes],
                               [200 / 31, 600 / 39, 200 / 49, 800 / 30], atol=1e-12)
    s = math.sqrt(23 / 8)
    half80, half95 = 1.281552 * s, 1.959964 * s  # 2.172954 and 3.323279
    assert [o.hits[80] for o in outcomes] == [True, False, True, False]  # |e| < 2.17?
    assert [o.hits[95] for o in outcomes] == [True, True, True, False]  # |e| < 3.32?
    # interval score: width + 2/alpha * distance outside (alpha = 0.2 -> 10, 0.05 -> 40)
    width80, width95 = 2 * half80, 2 * half95
    expected80 = [width80, width80 + 10 * (3 - half80), width80, width80 + 10 * (4 - half80)]
    expected95 = [width95, width95, width95, width95 + 40 * (4 - half95)]
    np.testing.assert_allclose([o.interval_scores[80] for o in outcomes], expected80,
                               atol=1e-4)
    np.testing.assert_allclose([o.interval_scores[95] for o in outcomes], expected95,
                               atol=1e-4)


def test_reference_sheet_interval_scores(issued):
    # Invented toy forecast 15 19 26 17, 95 % bounds [14,18] [18,21] [21,24] [18.5,22],
    # actuals 16 20 25 18 -> interval scores (Winkler 1972; Gneiting & Raftery 2007)
    # 4 3 43 23.5 by hand, coverage 0.5, MASE (m = 4) = 1/1.625 = 0.615385.
    sheet = dataclasses.replace(issued, point=(15.0, 19, 26, 17), levels=(95,),
                                lower={95: (14.0, 18, 21, 18.5)}, upper={95: (18.0, 21, 24, 22)})
    outcomes = score_outcomes(sheet, quarterly(TRAIN + [16, 20, 25, 18]))
    assert [o.interval_scores[95] for o in outcomes] == pytest.approx([4, 3, 43, 23.5])
    assert np.mean([o.hits[95] for o in outcomes]) == 0.5
    assert realised_mase(outcomes) == pytest.approx(0.615385, abs=1e-6)


def test_unobserved_and_interpolated_periods_give_no_outcome(issued):
    assert score_outcomes(issued, quarterly(TRAIN)) == ()
    assert [o.period for o in score_outcomes(issued, quarterly(TRAIN + [16, 21]))] == [
        "2020-Q1", "2020-Q2"]
    gap = quarterly(TRAIN + [16, None, 25], fill="linear")  # 2020-Q2 interpolated
    assert [o.horizon for o in score_outcomes(issued, gap)] == [1, 3]


def test_smape_term_is_none_where_undefined(issued):
    zero = dataclasses.replace(issued, point=(0.0, 18, 24, 17))
    (first,) = score_outcomes(zero, quarterly(TRAIN + [0.0]))
    assert first.smape_term is None and first.error == 0.0


def test_other_series_or_frequency_is_refused(issued):
    with pytest.raises(LedgerError, match="actuals are of series 'other'"):
        score_outcomes(issued, quarterly(TRAIN + [16], key="other"))
    # the quarters 2020-Q1, 2020-Q2, ... are months 2020-01, 2020-04, ... on a monthly grid
    months = make_series("toy", "P1M", [(f"2020-{i:02d}", 1.0) for i in range(1, 13)])
    with pytest.raises(LedgerError, match="not consecutive periods of the P1M actuals"):
        score_outcomes(issued, months)
    days = make_series("toy", "P1D", [("2020-01-01", 1.0)])  # no quarter is a day
    with pytest.raises(LedgerError, match="not consecutive periods of the P1D actuals"):
        score_outcomes(issued, days)


def test_an_unbounded_interval_holds_the_actual_and_scores_infinity(issued):
    unbounded = dataclasses.replace(issued, upper={**issued.upper, 95: (math.inf,) * 4})
    (first,) = score_outcomes(unbounded, quarterly(TRAIN + [16]))
    assert first.hits[95] and first.interval_scores[95] == math.inf
    assert first.interval_scores[80] == pytest.approx(2 * 1.281552 * math.sqrt(23 / 8), abs=1e-5)
