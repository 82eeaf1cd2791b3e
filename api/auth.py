"""Bearer tokens, stored as SHA-256 digests: tokens are long random strings, so a fast hash is enough."""

from __future__ import annotations

import hashlib
import secrets
from datetime import timedelta
from typing import Literal, Self

from pydantic import BaseModel, ConfigDict, Field, model_validator

from wakeyard.core.settings import TOKEN_NAME
from wakeyard.core.store import Store, Token, utcnow

MAX_EXPIRY_DAYS = 3650


class TokenRequest(BaseModel):
    """A token to create: the same rules in the API and in ``wakeyard token create``."""

    model_config = ConfigDict(extra="forbid")

    name: str = Field(
        min_length=1,
        max_length=100,
        pattern=TOKEN_NAME,
        description="the user the token stands for (jobs are owned by this name)",
    )
    admin: bool = Field(False, description="may change anyone's jobs and manage tokens")
    expires_days: int | None = Field(
        None, ge=1, le=MAX_EXPIRY_DAYS, description="days until the token stops working (none: never)"
    )
    kind: Literal["user", "worker"] = Field(
        "user",
        description="user: the jobs API; worker: a compute box's token, good only for /api/v1/worker (claim jobs, "
        "report on them, upload their files)",
    )

    @model_validator(mode="after")
    def _worker_not_admin(self) -> Self:
        if self.kind == "worker" and self.admin:
            raise ValueError("a worker token cannot be an admin token")
        return self


def digest(token: str) -> str:
    return hashlib.sha256(token.encode()).hexdigest()


def issue_token(store: Store, request: TokenRequest) -> tuple[Token, str]:
    """Store a new token and return its row and its secret: the only time the secret is ever shown."""
    secret = "wy_" + secrets.token_urlsafe(32)
    expires = utcnow() + timedelta(days=request.expires_days) if request.expires_days else None
    return store.add_token(request.name, digest(secret), request.admin, expires, request.kind), secret


def create_token(store: Store, name: str, admin: bool = False, kind: Literal["user", "worker"] = "user") -> str:
    """A new token's secret (for the first admin and for tests)."""
    return issue_token(store, TokenRequest(name=name, admin=admin, kind=kind))[1]
