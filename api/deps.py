"""FastAPI dependencies: the app's settings, job store, disk reserve, quota and wake-up sender, and the caller.

They are ``async`` on purpose: they only read ``app.state`` (or a cache), and a plain ``def`` would cost every
request a hop through the thread pool.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Annotated

from fastapi import Depends, Request
from fastapi.security import HTTPAuthorizationCredentials, HTTPBearer
from starlette.concurrency import run_in_threadpool

from wakeyard.core.disk import DiskReserve
from wakeyard.core.settings import Settings
from wakeyard.core.store import Store, TokenRefused

from .auth import digest
from .dispatch import Dispatcher
from .problems import Forbidden, Unauthorized
from .quota import Quota

LOCAL_USER = "local"
WORKER = "worker"  # the token kind of compute boxes (``wakeyard token create NAME --worker``)


@dataclass(frozen=True)
class User:
    name: str
    admin: bool
    kind: str = "user"


async def get_settings(request: Request) -> Settings:
    return request.app.state.settings


async def get_store(request: Request) -> Store:
    return request.app.state.store


async def get_reserve(request: Request) -> DiskReserve:
    return request.app.state.reserve


async def get_dispatch(request: Request) -> Dispatcher:
    return request.app.state.dispatch


async def get_quota(request: Request) -> Quota:
    return request.app.state.quota


SettingsDep = Annotated[Settings, Depends(get_settings)]
StoreDep = Annotated[Store, Depends(get_store)]
ReserveDep = Annotated[DiskReserve, Depends(get_reserve)]
DispatchDep = Annotated[Dispatcher, Depends(get_dispatch)]
QuotaDep = Annotated[Quota, Depends(get_quota)]

bearer = HTTPBearer(
    auto_error=False,  # without any token configured the service is single-user: no header is fine then
    description="a token from `wakeyard token create NAME`; needed once any token exists",
)


async def _token_holder(store: Store, token: str) -> User:
    """The live token's holder (almost always from the cache; else the database, from the thread pool)."""
    key = digest(token.strip())
    user = store.known_token_user(key)
    if user is None:
        try:
            user = await run_in_threadpool(store.token_user, key)
        except TokenRefused as refused:  # unknown, expired or revoked
            raise Unauthorized("Authorization", str(refused)) from None
    return User(*user)


async def current_user(
    request: Request, credentials: Annotated[HTTPAuthorizationCredentials | None, Depends(bearer)]
) -> User:
    """The caller; without any token configured the service is single-user (the CLI allows that only on loopback).

    Its answers are almost always cached; when the database must be asked, that happens in the thread pool, never
    on the event loop. A worker token is refused here: a compute box may only use the worker endpoints. The store
    comes from the app, not from a dependency: FastAPI solves each dependency of every request anew (its query,
    header and cookie parameters too), and every route asks for the caller."""
    field, store = "Authorization", request.app.state.store
    if credentials is not None and credentials.credentials:
        user = await _token_holder(store, credentials.credentials)
        if user.kind == WORKER:
            raise Forbidden(field, f"{user.name} holds a worker token: it may only call /api/v1/worker")
        return user
    if request.headers.get("authorization"):
        raise Unauthorized(field, "use the header Authorization: Bearer <token>")
    required = store.tokens_required_cached()
    if required is None:
        required = await run_in_threadpool(store.tokens_required)
    if required:
        raise Unauthorized(field, "this service needs a token: Authorization: Bearer <token>")
    return User(LOCAL_USER, True)


UserDep = Annotated[User, Depends(current_user)]


async def current_worker(
    request: Request, credentials: Annotated[HTTPAuthorizationCredentials | None, Depends(bearer)]
) -> User:
    """A compute box with a worker token: always needed, even on a service that has no user tokens."""
    field = "Authorization"
    if credentials is None or not credentials.credentials:
        raise Unauthorized(field, "the worker endpoints need a worker token: Authorization: Bearer <token>")
    user = await _token_holder(request.app.state.store, credentials.credentials)
    if user.kind != WORKER:
        raise Forbidden(field, f"{user.name} holds a {user.kind} token: only a worker token may call /api/v1/worker")
    return user


WorkerDep = Annotated[User, Depends(current_worker)]
