"""Bearer tokens, stored as SHA-256 digests: tokens are long random strings, so a fast hash is enough."""

from __future__ import annotations

import hashlib
import secrets
from dataclasses import dataclass

from fastapi import HTTPException, Request
from starlette.concurrency import run_in_threadpool

from core.store import Store

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

    Async on purpose: it runs on every request and its answers are almost always cached; when the database must be
    asked, that happens in the thread pool, never on the event loop."""
    store: Store = request.app.state.store
    header = request.headers.get("authorization", "")
    scheme, _, token = header.partition(" ")
    if scheme.lower() == "bearer" and token:
        key = digest(token.strip())
        user = store.known_token_user(key) or await run_in_threadpool(store.token_user, key)
        if user is None:
            raise HTTPException(401, "unknown token", headers={"WWW-Authenticate": "Bearer"})
        return User(*user)
    if header:
        raise HTTPException(401, "use the header Authorization: Bearer <token>", headers={"WWW-Authenticate": "Bearer"})
    required = store.tokens_required_cached()
    if required is None:
        required = await run_in_threadpool(store.tokens_required)
    if required:
        raise HTTPException(
            401, "this service needs a token: Authorization: Bearer <token>", headers={"WWW-Authenticate": "Bearer"}
        )
    return User(LOCAL_USER, True)
