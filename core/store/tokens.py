"""API tokens, kept as digests; known tokens are remembered in the process (tokens are never revoked)."""

from __future__ import annotations

import math
import time

from sqlalchemy import func, select

from .base import Repository
from .models import Token
from .values import utcnow


class Tokens(Repository):
    _tokens_checked = -math.inf  # monotonic time of the last "no tokens" answer
    _tokens_exist = False
    _token_users: dict[str, tuple[str, bool]]

    def add_token(self, name: str, digest: str, admin: bool) -> None:
        with self.session.begin() as s:
            s.add(Token(name=name, digest=digest, admin=admin, created_at=utcnow()))

    def find_token(self, digest: str) -> Token | None:
        with self.session() as s:
            return s.scalar(select(Token).where(Token.digest == digest))

    def known_token_user(self, digest: str) -> tuple[str, bool] | None:
        """(name, admin) for a token seen before, without asking the database."""
        return self._token_users.get(digest)

    def token_user(self, digest: str) -> tuple[str, bool] | None:
        """(name, admin) for a token digest; known tokens are remembered (tokens are never revoked)."""
        if digest not in self._token_users:
            row = self.find_token(digest)
            if row is None:
                return None
            self._token_users[digest] = (row.name, row.admin)
        return self._token_users[digest]

    def has_token_named(self, name: str) -> bool:
        with self.session() as s:
            return s.get(Token, name) is not None

    def tokens_required(self) -> bool:
        """Once a token exists, tokens stay required; until then ask the database at most once a second."""
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
