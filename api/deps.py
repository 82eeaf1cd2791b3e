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
from .problems import Unauthorized
from .quota import Quota

LOCAL_USER = "local"


@dataclass(frozen=True)
class User:
    name: str
    admin: bool


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


async def current_user(
    request: Request,
    store: StoreDep,
    credentials: Annotated[HTTPAuthorizationCredentials | None, Depends(bearer)],
) -> User:
    """The caller; without any token configured the service is single-user (the CLI allows that only on loopback).

    Its answers are almost always cached; when the database must be asked, that happens in the thread pool, never
    on the event loop."""
    field = "Authorization"
    if credentials is not None and credentials.credentials:
        key = digest(credentials.credentials.strip())
        user = store.known_token_user(key)
        if user is None:
            try:
                user = await run_in_threadpool(store.token_user, key)
            except TokenRefused as refused:  # unknown, expired or revoked
                raise Unauthorized(field, str(refused)) from None
        return User(*user)
    if request.headers.get("authorization"):
        raise Unauthorized(field, "use the header Authorization: Bearer <token>")
    required = store.tokens_required_cached()
    if required is None:
        required = await run_in_threadpool(store.tokens_required)
    if required:
        raise Unauthorized(field, "this service needs a token: Authorization: Bearer <token>")
    return User(LOCAL_USER, True)


UserDep = Annotated[User, Depends(current_user)]
