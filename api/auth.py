"""Bearer tokens, stored as SHA-256 digests: tokens are long random strings, so a fast hash is enough."""

from __future__ import annotations

import hashlib
import secrets
from dataclasses import dataclass

from fastapi import HTTPException, Request

from .store import Store

LOCAL_USER = "local"


@dataclass(frozen=True)
class User:
    name: str
    admin: bool


def digest(token: str) -> str:
    return hashlib.sha256(token.encode()).hexdigest()


def create_token(store: Store, name: str, admin: bool = False) -> str:
    """Store a new token for ``name`` and return it: the only time it is ever shown."""
    token = "wy_" + secrets.token_urlsafe(32)
    store.add_token(name, digest(token), admin)
    return token


async def current_user(request: Request) -> User:
    """The caller; without any token configured the service is single-user (the CLI allows that only on loopback).

    Async on purpose: it runs on every request, and both store look-ups are cached, so a thread hop would cost
    more than the work."""
    store: Store = request.app.state.store
    header = request.headers.get("authorization", "")
    scheme, _, token = header.partition(" ")
    if scheme.lower() == "bearer" and token:
        user = store.token_user(digest(token.strip()))
        if user is None:
            raise HTTPException(401, "unknown token", headers={"WWW-Authenticate": "Bearer"})
        return User(*user)
    if header:
        raise HTTPException(401, "use the header Authorization: Bearer <token>", headers={"WWW-Authenticate": "Bearer"})
    if store.tokens_required():
        raise HTTPException(401, "this service needs a token: Authorization: Bearer <token>",
                            headers={"WWW-Authenticate": "Bearer"})
    return User(LOCAL_USER, True)
