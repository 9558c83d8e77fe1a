"""Shared fixtures: the reference data that lives beside the repository in ``shared/``."""

from __future__ import annotations

import os
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from threadpoolctl import threadpool_limits

SHARED_DATA = Path(__file__).resolve().parents[1].parent / "shared" / "data"

# Workers started by tests (in this process or as servers) render no report ahead unless a
# test asks for it: rendering costs seconds per run, and on PostgreSQL stores the default
# report directory is outside the test's temporary directory.
os.environ.setdefault("FOLDLINE_PRERENDER_REPORTS", "false")


@pytest.fixture(scope="session", autouse=True)
def one_blas_thread():
    """Tests that call model code directly get the engine's one-BLAS-thread setting; on two
    cores a multi-threaded BLAS under load makes statsmodels fits many times slower."""
    with threadpool_limits(limits=1):
        yield


@pytest.fixture(scope="session")
def series_g() -> pd.DataFrame:
    """Series G (Box & Jenkins 1976): monthly airline passengers, thousands, 1949-1960."""
    path = SHARED_DATA / "series_g.csv"
    assert path.exists(), f"reference data missing: {path} (shared/ must sit beside the repo)"
    frame = pd.read_csv(path)
    assert len(frame) == 144 and frame.iloc[:, 1].sum() == 40363  # REFERENCES §6 checksum
    return frame


@pytest.fixture(scope="session")
def log_air(series_g: pd.DataFrame) -> np.ndarray:
    return np.log(series_g.iloc[:, 1].to_numpy(float))
