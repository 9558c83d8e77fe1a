"""Series validation: every rejection says what is wrong and where."""

import math

import numpy as np
import pytest

from backtest.errors import SeriesError
from backtest.frequency import parse_frequency
from backtest.series import make_series

MONTHS = [("2024-01", 1.0), ("2024-02", 2.0), ("2024-03", 3.0), ("2024-04", 4.0)]


@pytest.mark.parametrize(("duration", "season"), [("P1D", 7), ("P1W", 52), ("P1M", 12),
                                                  ("P3M", 4), ("P1Y", 1)])
def test_default_season_length_follows_the_frequency(duration, season):
    assert parse_frequency(duration).default_season_length == season


def test_season_length_can_be_overridden():
    assert make_series("a", "P1M", MONTHS, season_length=3).season_length == 3


@pytest.mark.parametrize(("rows", "message"), [
    ([("2024-01", 1), ("2024-01", 2)], r"period '2024-01' appears twice \(rows 1 and 2\)"),
    ([("2024-02", 1), ("2024-01", 2)], r"period '2024-01' \(row 2\) comes after '2024-02'"),
    ([("2024-01-15", 1)], r"row 1: period '2024-01-15' is off the monthly grid"),
    ([("2024-01", 1), ("2024-02", float("nan"))], r"'2024-02' \(row 2\) is not finite"),
    ([("2024-01", 1), ("2024-02", math.inf)], r"'2024-02' \(row 2\) is not finite"),
    ([("2024-01", 1), ("2024-02", "abc")], r"value 'abc' at period '2024-02' \(row 2\)"),
    ([("2024-01", 1), ("2024-04", 2)], r"2 period\(s\) missing: 2024-02, 2024-03"),
    ([("January", 1)], r"row 1: period 'January' is not a month"),
    ([], r"has no observations"),
])
def test_monthly_rejections_name_the_period_and_row(rows, message):
    with pytest.raises(SeriesError, match=message):
        make_series("revenue", "P1M", rows)


def test_quarterly_periods_off_the_quarter_grid_are_rejected():
    rows = [("2024-01", 1), ("2024-04", 2), ("2024-08", 3)]
    with pytest.raises(SeriesError, match=r"'2024-08' \(row 3\) is off the P3M grid"):
        make_series("q", "P3M", rows)


def test_weekly_dates_must_keep_the_weekday():
    rows = [("2024-01-01", 1), ("2024-01-08", 2), ("2024-01-16", 3)]
    with pytest.raises(SeriesError, match=r"'2024-01-16' \(row 3\) is off the P1W grid"):
        make_series("w", "P1W", rows)


def test_unknown_frequency_is_rejected():
    with pytest.raises(SeriesError, match=r"frequency 'monthly' is not a supported ISO 8601"):
        make_series("a", "monthly", MONTHS)


def test_linear_fill_interpolates_and_is_recorded():
    series = make_series("a", "P1M", [("2024-01", 1.0), ("2024-04", 4.0)], fill="linear")
    np.testing.assert_allclose(series.values, [1, 2, 3, 4])
    assert series.filled == ("2024-02", "2024-03")
    assert series.summary()["filled_periods"] == ["2024-02", "2024-03"]


def test_alternative_labels_map_to_canonical_periods():
    quarterly = make_series("q", "P3M", [("2023-Q4", 1), ("2024-Q1", 2), ("2024-04-01", 3)])
    assert quarterly.labels() == ["2023-10", "2024-01", "2024-04"]
    weekly = make_series("w", "P1W", [("2024-W01", 1), ("2024-01-08", 2)])
    assert weekly.labels() == ["2024-01-01", "2024-01-08"]
    yearly = make_series("y", "P1Y", [("2020", 1), ("2021-01-01", 2)])
    assert yearly.labels() == ["2020", "2021"]


def test_fingerprint_identifies_the_same_data_only():
    a = make_series("a", "P1M", MONTHS)
    same = make_series("a", "P1M", [("2024-01-01", 1), ("2024-02", 2.0), ("2024-03", 3),
                                    ("2024-04", 4)])
    changed = make_series("a", "P1M", MONTHS[:3] + [("2024-04", 4.000001)])
    assert a.fingerprint() == same.fingerprint()
    assert a.fingerprint() != changed.fingerprint()
    assert len(a.fingerprint()) == 64


def test_absurdly_long_durations_are_rejected():
    with pytest.raises(SeriesError, match=r"frequency 'P99999M' is not a supported"):
        make_series("a", "P99999M", MONTHS)
