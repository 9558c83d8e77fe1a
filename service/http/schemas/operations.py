"""Liveness and readiness answers."""

from __future__ import annotations

from typing import Literal

from pydantic import BaseModel


class Liveness(BaseModel):
    """The process is up and answering."""

    status: Literal["alive"]


class Readiness(BaseModel):
    """The store is reachable and its schema is the one this code needs."""

    status: Literal["ready"]
    schema_revision: str
