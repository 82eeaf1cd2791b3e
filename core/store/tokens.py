"""API tokens, kept as digests (never the secret), with an optional expiry, a revocation time and the last use.

A checked token is remembered in the process for :data:`RECHECK_SECONDS`, so that a request rarely asks the
database: a revocation made elsewhere (the CLI, another API process) takes effect within that time, one made by
this process at once. The last-use time is written at most once a minute per token.
"""

from __future__ import annotations

import math
import secrets
import time
from dataclasses import dataclass
from datetime import datetime, timedelta

from sqlalchemy import func, or_, select, update

from .base import Repository
from .models import Token
from .values import utcnow

RECHECK_SECONDS = 5.0
LAST_USED_EVERY = timedelta(minutes=1)


class TokenRefused(Exception):
    """The token is unknown, expired or revoked (the message says which)."""


class TokenTaken(Exception):
    """A live (neither expired nor revoked) token has this name already."""


@dataclass(frozen=True)
class _Checked:
    name: str
    admin: bool
    kind: str
    expires_at: datetime | None
    checked: float  # monotonic time of the database check


def token_state(token: Token, now: datetime) -> str:
    """active, expired or revoked."""
    if token.revoked_at is not None:
        return "revoked"
    if token.expires_at is not None and token.expires_at <= now:
        return "expired"
    return "active"


class Tokens(Repository):
    _tokens_checked = -math.inf  # monotonic time of the last "no tokens" answer
    _tokens_exist = False
    _token_users: dict[str, _Checked]

    def add_token(
        self, name: str, digest: str, admin: bool, expires_at: datetime | None = None, kind: str = "user"
    ) -> Token:
        """A new token (``kind`` "user" or "worker"); it replaces an expired or revoked one of the same name, never a
        live one (TokenTaken)."""
        now = utcnow()
        with self.session.begin() as s:
            old = s.get(Token, name, with_for_update=True)
            if old is not None and token_state(old, now) == "active":
                raise TokenTaken(f"a token named {name!r} exists already (id {old.id}): revoke it first")
            if old is not None:
                s.delete(old)
                s.flush()
            token = Token(
                name=name,
                id=secrets.token_hex(6),
                digest=digest,
                admin=admin,
                kind=kind,
                created_at=now,
                expires_at=expires_at,
            )
            s.add(token)
        return token

    def list_tokens(self) -> list[Token]:
        with self.session() as s:
            return list(s.scalars(select(Token).order_by(Token.created_at, Token.name)))

    def revoke_token(self, token_id: str) -> Token | None:
        """Revoke the token (at once in this process); None if there is no such token. Revoking twice keeps the
        first time."""
        with self.session.begin() as s:
            s.execute(update(Token).where(Token.id == token_id, Token.revoked_at.is_(None)).values(revoked_at=utcnow()))
            token = s.scalar(select(Token).where(Token.id == token_id))
        if token is not None:
            self._token_users.pop(token.digest, None)
        return token

    def known_token_user(self, digest: str) -> tuple[str, bool, str] | None:
        """(name, admin, kind) for a token checked in the last few seconds and not expired since, without the
        database."""
        seen = self._token_users.get(digest)
        if seen is None or time.monotonic() - seen.checked > RECHECK_SECONDS:
            return None
        if seen.expires_at is not None and seen.expires_at <= utcnow():
            return None
        return seen.name, seen.admin, seen.kind

    def token_user(self, digest: str) -> tuple[str, bool, str]:
        """(name, admin, kind) for a live token, after a look in the database (which records its use); else
        :class:`TokenRefused`."""
        now = utcnow()
        with self.session.begin() as s:
            token = s.scalar(select(Token).where(Token.digest == digest))
            state = "unknown" if token is None else token_state(token, now)
            if token is None or state != "active":
                self._token_users.pop(digest, None)
                raise TokenRefused(_refusal(token, state))
            if token.last_used_at is None or now - token.last_used_at >= LAST_USED_EVERY:
                stale = or_(Token.last_used_at.is_(None), Token.last_used_at <= now - LAST_USED_EVERY)
                s.execute(update(Token).where(Token.digest == digest, stale).values(last_used_at=now))
        self._token_users[digest] = _Checked(token.name, token.admin, token.kind, token.expires_at, time.monotonic())
        return token.name, token.admin, token.kind

    def tokens_required(self) -> bool:
        """Once a token exists (even revoked or expired), tokens stay required; until then ask the database at
        most once a second."""
        cached = self.tokens_required_cached()
        if cached is None:
            self._tokens_exist, self._tokens_checked = self.has_tokens(), time.monotonic()
            return self._tokens_exist
        return cached

    def tokens_required_cached(self) -> bool | None:
        """The answer of :meth:`tokens_required` if it needs no database query, else None."""
        if self._tokens_exist or time.monotonic() - self._tokens_checked <= 1.0:
            return self._tokens_exist
        return None

    def has_tokens(self) -> bool:
        with self.session() as s:
            return (s.scalar(select(func.count()).select_from(Token)) or 0) > 0


def _refusal(token: Token | None, state: str) -> str:
    if token is None:
        return "unknown token"
    when = token.revoked_at if state == "revoked" else token.expires_at
    assert when is not None
    return f"token {token.id} ({token.name}) {state} at {when.isoformat(timespec='seconds')}"
