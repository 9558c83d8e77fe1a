"""Reading a series' dossier as it stood at a point in time, for the API and the CLI."""

from __future__ import annotations

from datetime import datetime

from sqlalchemy.orm import Session, sessionmaker

from storage.db import utc_now
from storage.ledger import Dossier, ForecastWindow, series_dossier


def read_dossier_of(sessions: sessionmaker[Session], series_key: str, *,
                    as_of: datetime | None, limit: int, issued_from: datetime | None = None,
                    issued_to: datetime | None = None, origin_from: str | None = None,
                    origin_to: str | None = None, target_from: str | None = None,
                    target_to: str | None = None) -> Dossier:
    """The dossier of ``series_key`` as of ``as_of`` (default now), its forecasts limited to
    the window given by issue times, origins and target periods."""
    window = ForecastWindow(issued_from=issued_from, issued_to=issued_to,
                            origin_from=origin_from, origin_to=origin_to,
                            target_from=target_from, target_to=target_to)
    with sessions.begin() as session:
        return series_dossier(session, series_key, as_of=as_of or utc_now(), window=window,
                              limit=limit)
