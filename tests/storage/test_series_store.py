"""Series versions: identified by fingerprint, numbered, classified, loaded back intact."""

from __future__ import annotations

import numpy as np
import pytest
from sqlalchemy.orm import Session

from backtest.series import make_series
from storage.errors import ConflictError, NotFoundError
from storage.series.versions import (
    find_version,
    get_version,
    list_versions,
    load_series,
    save_series_version,
)
from tests.storage.builders import ACTOR, monthly_series


def test_first_upload_creates_version_one(session: Session):
    series = monthly_series("sales/north")

    outcome = save_series_version(session, series, actor=ACTOR, unit="EUR", tags={"team": "a"})

    assert outcome.created
    version = outcome.version
    assert (version.series_key, version.number, version.change) == ("sales/north", 1, "initial")
    assert version.fingerprint == series.fingerprint()
    assert (version.n_obs, version.first_period, version.last_period) == (48, "2019-01",
                                                                          "2022-12")


def test_same_data_uploaded_again_is_the_same_version(session: Session):
    first = save_series_version(session, monthly_series("sales/north"), actor=ACTOR)

    again = save_series_version(session, monthly_series("sales/north"), actor="someone-else")

    assert not again.created
    assert again.version == first.version
    assert len(list_versions(session, "sales/north")) == 1


def test_appending_actuals_makes_an_append_version(session: Session):
    save_series_version(session, monthly_series("sales/north", 48), actor=ACTOR)

    longer = save_series_version(session, monthly_series("sales/north", 50), actor=ACTOR)

    assert longer.created
    assert (longer.version.number, longer.version.change) == (2, "append")


def test_correcting_history_makes_a_revision(session: Session):
    original = monthly_series("sales/north")
    save_series_version(session, original, actor=ACTOR)
    values = original.values.copy()
    values[3] += 1.0
    corrected = make_series("sales/north", "P1M", zip(original.labels(), values))

    outcome = save_series_version(session, corrected, actor=ACTOR)

    assert (outcome.version.number, outcome.version.change) == (2, "revision")
    assert [v.number for v in list_versions(session, "sales/north")] == [1, 2]


def test_loaded_series_has_the_stored_fingerprint_and_values(session: Session):
    labels = ["2020-01", "2020-02", "2020-04", "2020-05"]
    gappy = make_series("energy", "P1M", zip(labels, [1.5, 2.25, 4.0, 1e-300]), fill="linear")
    version = save_series_version(session, gappy, actor=ACTOR).version

    loaded = load_series(session, version.id)

    assert loaded.fingerprint() == version.fingerprint == gappy.fingerprint()
    np.testing.assert_array_equal(loaded.values, gappy.values)
    assert loaded.filled == ("2020-03",)
    assert loaded.labels() == gappy.labels()
    assert find_version(session, gappy.fingerprint()) == version


def test_changing_a_series_frequency_or_unit_is_refused(session: Session):
    save_series_version(session, monthly_series("sales/north"), actor=ACTOR, unit="EUR")
    quarterly = make_series("sales/north", "P3M", [("2020-Q1", 1.0), ("2020-Q2", 2.0)])

    with pytest.raises(ConflictError, match="frequency"):
        save_series_version(session, quarterly, actor=ACTOR)
    with pytest.raises(ConflictError, match="unit"):
        save_series_version(session, monthly_series("sales/north", 50), actor=ACTOR, unit="USD")


def test_unknown_version_is_not_found(session: Session):
    with pytest.raises(NotFoundError, match="series version 999999"):
        get_version(session, 999999)
    assert list_versions(session, "no/such/series") == []
