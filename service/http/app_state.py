"""What ``create_app`` puts on ``app.state`` for the handlers: settings, sessions, caches.

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


def get_sessions(request: Request) -> sessionmaker[Session]:
    """The application's session factory."""
    return request.app.state.sessions


def get_settings_of_app(request: Request) -> Settings:
    """The settings the application was created with."""
    return request.app.state.settings


def get_ranking_cache(request: Request) -> RankingCache:
    """The application's cache of whole ranking tables."""
    return request.app.state.ranking_cache


Sessions = Annotated[sessionmaker[Session], Depends(get_sessions)]
AppSettings = Annotated[Settings, Depends(get_settings_of_app)]
Rankings = Annotated[RankingCache, Depends(get_ranking_cache)]
