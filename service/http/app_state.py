"""What ``create_app`` puts on ``app.state`` for the handlers: settings, sessions, caches.

``app.state`` is untyped (any attribute, of any type); each getter names the type
``create_app`` stored there.

Handlers own their transactions (``with sessions.begin() as session:``), so a response is
sent only after its writes are committed, and an error rolls back everything the request
wrote.
"""

from __future__ import annotations

from typing import Annotated

from fastapi import Depends, Request
from sqlalchemy.orm import Session, sessionmaker

from service.http.ranking_cache import RankingCache
from service.settings import Settings
from service.usecases.audit_verification import Verifier


def get_sessions(request: Request) -> sessionmaker[Session]:
    """The application's session factory."""
    sessions: sessionmaker[Session] = request.app.state.sessions
    return sessions


def get_settings_of_app(request: Request) -> Settings:
    """The settings the application was created with."""
    settings: Settings = request.app.state.settings
    return settings


def get_verifier(request: Request) -> Verifier:
    """The application's audit verifier (one verification at a time)."""
    verifier: Verifier = request.app.state.verifier
    return verifier


def get_ranking_cache(request: Request) -> RankingCache:
    """The application's cache of whole ranking tables."""
    ranking_cache: RankingCache = request.app.state.ranking_cache
    return ranking_cache


Sessions = Annotated[sessionmaker[Session], Depends(get_sessions)]
AppSettings = Annotated[Settings, Depends(get_settings_of_app)]
Rankings = Annotated[RankingCache, Depends(get_ranking_cache)]
Verifications = Annotated[Verifier, Depends(get_verifier)]
