"""API keys as the admin routes show them; the secret appears only in the creation answer."""

from __future__ import annotations

from datetime import datetime
from typing import TYPE_CHECKING, Annotated, Literal

from pydantic import BaseModel, Field, StringConstraints

from service.http.schemas.common import Strict
from service.usecases.keys import KEY_NAME, ROLES

if TYPE_CHECKING:  # the checker cannot read a Literal made from a runtime tuple
    Role = str
else:  # from a runtime tuple: values and docs never drift
    Role = Literal[ROLES]
KeyName = Annotated[str, StringConstraints(pattern=f"^{KEY_NAME.pattern}$")]


class KeyIn(Strict):
    """A key to create: who holds it (names appear in the audit log) and their role."""

    name: KeyName = Field(examples=["bi-dashboard"])
    role: Role
    scope: str | None = Field(None, min_length=1, max_length=200, examples=["sales/north/"],
                              description="submitter keys only: the series-key prefix the "
                              "key's team owns; it writes only series under it (a closing "
                              "/ is added). Omitted: global")


class KeyOut(BaseModel):
    """A key, without its secret."""

    id: str
    name: str
    role: Role
    created_at: datetime
    created_by: str
    revoked_at: datetime | None
    revoked_by: str | None
    scope: str | None = Field(description="the series-key prefix the key writes under; "
                              "null: global")


class KeyCreatedOut(BaseModel):
    """A new key. ``token`` is shown this once; only its hash is stored."""

    key: KeyOut
    token: str = Field(description="send as 'Authorization: Bearer <token>'")


class KeyList(BaseModel):
    """Every key, revoked ones included, oldest first."""

    items: list[KeyOut]
