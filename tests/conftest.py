"""Shared fixtures: the reference data the repository carries in ``tests/data/``."""

from __future__ import annotations

import hashlib
import os
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from threadpoolctl import threadpool_limits

TEST_DATA = Path(__file__).resolve().parent / "data"
SERIES_G_SHA256 = "eda0181c2450975f5ad68556dcf14367541b22553f0c628b9747334cfdc6c96c"

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


def series_g_path() -> Path:
    """The repository's copy of Series G, checked against its recorded SHA-256."""
    path = TEST_DATA / "series_g.csv"
    assert hashlib.sha256(path.read_bytes()).hexdigest() == SERIES_G_SHA256, path
    return path


@pytest.fixture(scope="session")
def series_g() -> pd.DataFrame:
    """Series G (Box & Jenkins 1976): monthly airline passengers, thousands, 1949-1960."""
    frame = pd.read_csv(series_g_path())
    # Box & Jenkins (1976), Series G: 144 monthly values summing to 40,363 (published table).
    assert len(frame) == 144 and frame.iloc[:, 1].sum() == 40363
    return frame


@pytest.fixture(scope="session")
def log_air(series_g: pd.DataFrame) -> np.ndarray:
    return np.log(series_g.iloc[:, 1].to_numpy(float))


#: A model label with its seasonal period in square brackets ("ARIMA(0,1,1)(0,1,1)[12]",
#: "Theta[12]", "Seasonal naive[12]"): not Foldline's notation (backtest/labels.py).
BRACKETED_LABEL = re.compile(r"(\)|Theta|naive|search)\[\d+\]")
