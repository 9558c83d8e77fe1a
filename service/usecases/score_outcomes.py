"""Scoring the outcomes that new actuals made due, exactly once each.

A (forecast, series version) pair is due when the version observes a target period of the
forecast and no outcomes were recorded against it. Each pair is scored and recorded in a
transaction of its own that holds the store's write lock, so a worker killed part way
leaves every pair either recorded or still due, and two workers never record one twice:
the second finds it recorded (or loses the insert) and moves on.
"""

from __future__ import annotations

import logging
from functools import partial

from sqlalchemy.orm import Session, sessionmaker

from backtest.ledger import LedgerError, score_outcomes
from service.usecases.transactions import write
from storage.errors import ConflictError
from storage.ledger import due_outcomes, get_issued, record_outcomes
from storage.series import load_series

log = logging.getLogger("foldline.worker")


def score_due_outcomes(session_factory: sessionmaker[Session], actor: str) -> int:
    """Score every due pair; return how many outcome sets this call recorded."""
    with session_factory.begin() as session:
        due = due_outcomes(session)
    recorded = 0
    for forecast_id, version_id in due:
        try:
            recorded += write(session_factory, partial(_score, forecast_id=forecast_id,
                                                       version_id=version_id, actor=actor))
        except ConflictError:
            log.info("outcomes of forecast %s on version %s were recorded by another worker",
                     forecast_id, version_id)
        except LedgerError as exc:
            log.warning("outcomes of forecast %s on version %s cannot be scored: %s",
                        forecast_id, version_id, exc)
    if recorded:
        log.info("%s recorded outcomes of %d forecast(s)", actor, recorded)
    return recorded


def _score(session: Session, forecast_id: int, version_id: int, actor: str) -> bool:
    issued = get_issued(session, forecast_id)
    outcomes = score_outcomes(issued.forecast, load_series(session, version_id))
    return record_outcomes(session, forecast_id=forecast_id, series_version_id=version_id,
                           outcomes=outcomes, actor=actor)
