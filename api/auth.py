"""Bearer tokens, stored as SHA-256 digests: tokens are long random strings, so a fast hash is enough."""

from __future__ import annotations

import hashlib
import secrets

from wakeyard.core.store import Store


def digest(token: str) -> str:
    return hashlib.sha256(token.encode()).hexdigest()


def create_token(store: Store, name: str, admin: bool = False) -> str:
    """Store a new token for ``name`` and return it: the only time it is ever shown."""
    token = "wy_" + secrets.token_urlsafe(32)
    store.add_token(name, digest(token), admin)
    return token
