"""Token management for admins: list (never the secrets), create (the secret shown once), revoke."""

from __future__ import annotations

from typing import Annotated, Any

from fastapi import APIRouter, Depends
from fastapi.responses import JSONResponse

from wakeyard.core.store import Token, TokenTaken, token_state, utcnow

from .auth import TokenRequest, issue_token
from .deps import StoreDep, User, UserDep
from .problems import Conflict, Forbidden, NotFound

router = APIRouter(prefix="/api/v1/tokens", tags=["tokens"])


async def admin_only(user: UserDep) -> User:
    if not user.admin:
        raise Forbidden("Authorization", f"{user.name} is not an admin: only an admin token may manage tokens")
    return user


AdminDep = Annotated[User, Depends(admin_only)]


def view(token: Token) -> dict[str, Any]:
    """What a list shows of a token: everything but its digest."""
    stamp = {k: getattr(token, k) for k in ("created_at", "expires_at", "last_used_at", "revoked_at")}
    return {
        "id": token.id,
        "name": token.name,
        "admin": token.admin,
        "kind": token.kind,
        "state": token_state(token, utcnow()),
        **{k: v.isoformat() if v is not None else None for k, v in stamp.items()},
    }


@router.get("", summary="List the tokens (never their secrets)")
def list_tokens(store: StoreDep, _: AdminDep) -> dict[str, Any]:
    return {"tokens": [view(t) for t in store.list_tokens()]}


@router.post("", status_code=201, summary="Create a token; its secret is in this answer only")
def create_token(store: StoreDep, _: AdminDep, wanted: TokenRequest) -> JSONResponse:
    try:
        token, secret = issue_token(store, wanted)
    except TokenTaken as taken:
        raise Conflict("name", str(taken)) from None
    # the secret is in this answer only: no cache on the way may keep it
    return JSONResponse({**view(token), "token": secret}, status_code=201, headers={"Cache-Control": "no-store"})


@router.delete("/{token_id}", summary="Revoke a token: requests with it get 401 from then on")
def revoke_token(store: StoreDep, _: AdminDep, token_id: str) -> dict[str, Any]:
    token = store.revoke_token(token_id)
    if token is None:
        raise NotFound("token_id", f"no token {token_id}")
    return view(token)
