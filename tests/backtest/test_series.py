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
    ([("2024-01", 1), ("2024-01", 2)],
     r"period '2024-01' appears twice \(observation 1 and observation 2\)"),
    ([("2024-03", 1), ("2024-01", 2), ("2024-03", 3)],
     r"period '2024-03' appears twice \(observation 1 and observation 3\)"),
    ([("2024-01-15", 1)], r"observation 1: period '2024-01-15' is off the monthly grid"),
    ([("2024-01", 1), ("2024-02", float("nan"))],
     r"observation 2: value at period '2024-02' is not finite"),
    ([("2024-01", 1), ("2024-02", math.inf)], r"observation 2: value at .* is not finite"),
    ([("2024-01", 1), ("2024-02", "abc")], r"observation 2: value 'abc' at period '2024-02'"),
    ([("2024-01", 1), ("2024-04", 2)], r"2 period\(s\) missing: 2024-02, 2024-03"),
    ([("January", 1)], r"observation 1: period 'January' is not a month"),
    ([], r"has no observations"),
])
def test_monthly_rejections_name_the_period_and_row(rows, message):
    with pytest.raises(SeriesError, match=message):
        make_series("revenue", "P1M", rows)


def test_quarterly_periods_off_the_quarter_grid_are_rejected():
    rows = [("2024-01", 1), ("2024-04", 2), ("2024-08", 3)]
    with pytest.raises(SeriesError, match=r"observation 3: period '2024-08' is off the P3M grid"):
        make_series("q", "P3M", rows)


def test_weekly_dates_must_keep_the_weekday():
    rows = [("2024-01-01", 1), ("2024-01-08", 2), ("2024-01-16", 3)]
    with pytest.raises(SeriesError, match=r"observation 3: period '2024-01-16' is off the P1W"):
        make_series("w", "P1W", rows)


def test_places_name_where_each_observation_came_from():
    rows = [("2024-02", 1), ("2024-01", 2), ("2024-02", 3)]
    with pytest.raises(SeriesError, match=r"series 'a': period '2024-02' appears twice "
                                          r"\(line 2 and line 4\)"):
        make_series("a", "P1M", rows, places=["line 2", "line 3", "line 4"])


def test_unsorted_observations_are_sorted_by_period():
    series = make_series("a", "P3M", [("2024-Q3", 3.0), ("2024-Q1", 1.0), ("2024-Q2", 2.0)])
    assert series.labels() == ["2024-Q1", "2024-Q2", "2024-Q3"]
    np.testing.assert_array_equal(series.values, [1.0, 2.0, 3.0])


def test_unknown_frequency_is_rejected():
    with pytest.raises(SeriesError, match=r"frequency 'monthly' is not a supported ISO 8601"):
        make_series("a", "monthly", MONTHS)


def test_linear_fill_interpolates_and_is_recorded():
    series = make_series("a", "P1M", [("2024-01", 1.0), ("2024-04", 4.0)], fill="linear")
    np.testing.assert_allclose(series.values, [1, 2, 3, 4])
    assert series.filled == ("2024-02", "2024-03")
    assert series.summary()["filled_periods"] == ["2024-02", "2024-03"]


@pytest.mark.parametrize(("duration", "rows", "labels"), [
    ("P3M", ["2023-Q4", "2024-Q1", "2024-04-01"], ["2023-Q4", "2024-Q1", "2024-Q2"]),
    ("P3M", ["2023-10", "2024-Q1"], ["2023-10", "2024-01"]),
    ("P1W", ["2024-W01", "2024-01-08"], ["2024-W01", "2024-W02"]),
    ("P1W", ["2020-W52", "2020-W53", "2021-W01"], ["2020-W52", "2020-W53", "2021-W01"]),
    ("P1W", ["2024-01-01", "2024-W02"], ["2024-01-01", "2024-01-08"]),
    ("P1Y", ["2020", "2021-01-01"], ["2020", "2021"]),
    ("P1Y", ["2020-01", "2021"], ["2020-01", "2021-01"]),
    ("P1M", ["2024-01-01", "2024-02"], ["2024-01-01", "2024-02-01"]),
    ("P1M", ["2024-Q1", "2024-02", "2024-03", "2024-04"], ["2024-Q1", "2024-02", "2024-03",
                                                          "2024-Q2"]),
])
def test_labels_keep_the_notation_of_the_first_period(duration, rows, labels):
    series = make_series("s", duration, [(label, 1.0) for label in rows])
    assert series.labels() == labels
    assert series.label(len(series)) == parse_frequency(duration).written_as(rows[0]).label(
        series.start + len(series) * series.frequency.step)


def test_fingerprint_identifies_the_same_data_only():
    a = make_series("a", "P1M", MONTHS)
    same = make_series("a", "P1M", [("2024-02", 2.0), ("2024-01", 1), ("2024-03", 3),
                                    ("2024-04", 4)])
    changed = make_series("a", "P1M", MONTHS[:3] + [("2024-04", 4.000001)])
    written_otherwise = make_series("a", "P1M", [(f"{label}-01", v) for label, v in MONTHS])
    assert a.fingerprint() == same.fingerprint()
    assert a.fingerprint() != changed.fingerprint()
    assert a.fingerprint() != written_otherwise.fingerprint()  # the labels are kept too
    assert len(a.fingerprint()) == 64


def test_absurdly_long_durations_are_rejected():
    with pytest.raises(SeriesError, match=r"frequency 'P99999M' is not a supported"):
        make_series("a", "P99999M", MONTHS)
