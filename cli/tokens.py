"""``wakeyard token create | list | revoke``: manage API tokens in the job store directly (no service needed).

Exit codes: 0 done, 2 refused (a bad name or expiry, a live token of that name, no token with that id)."""

from __future__ import annotations

import sys
from typing import Any

from pydantic import ValidationError


def _store() -> Any:
    from wakeyard.core.settings import Settings
    from wakeyard.core.store import Store

    from .service import migrate_store

    settings = Settings()
    settings.data_dir.mkdir(parents=True, exist_ok=True)
    migrate_store(settings.db_url, quiet=True)  # the first token may come before the first serve
    return Store(settings.db_url)


def create(name: str, admin: bool, expires_days: int | None, worker: bool = False) -> int:
    """The secret alone on stdout (the only time it is shown), what it is on stderr."""
    from wakeyard.api.auth import TokenRequest, issue_token
    from wakeyard.core.store import TokenTaken

    try:
        wanted = TokenRequest(name=name, admin=admin, expires_days=expires_days, kind="worker" if worker else "user")
    except ValidationError as err:
        for e in err.errors():
            where = str(e["loc"][0]) if e["loc"] else "--worker"  # a worker token that is also an admin token
            field = {"expires_days": "--expires"}.get(where, where)
            print(f"error: {field}: {e['msg']}", file=sys.stderr)
        return 2
    try:
        token, secret = issue_token(_store(), wanted)
    except TokenTaken as taken:
        print(f"error: {taken}", file=sys.stderr)
        return 2
    until = f"until {token.expires_at:%Y-%m-%d %H:%M} UTC" if token.expires_at else "without expiry"
    kind = "admin token" if admin else "worker token" if worker else "token"
    print(f"created the {kind} {token.id} for {name!r}, {until}: it is shown only now", file=sys.stderr)
    print(secret)
    return 0


def show() -> int:
    """One line per token: id, name, admin, state, times (UTC) and kind; never the secret or its digest."""
    from wakeyard.core.store import token_state, utcnow

    now = utcnow()
    rows = [("ID", "NAME", "ADMIN", "STATE", "CREATED", "EXPIRES", "LAST USED", "REVOKED", "KIND")]
    for t in _store().list_tokens():
        times = (t.created_at, t.expires_at, t.last_used_at, t.revoked_at)
        state = token_state(t, now)
        shown = (f"{v:%Y-%m-%d %H:%M}" if v else "-" for v in times)
        rows.append((t.id, t.name, "yes" if t.admin else "no", state, *shown, t.kind))
    widths = [max(len(r[i]) for r in rows) for i in range(len(rows[0]))]
    for r in rows:
        print("  ".join(v.ljust(w) for v, w in zip(r, widths, strict=True)).rstrip())
    return 0


def revoke(token_id: str) -> int:
    token = _store().revoke_token(token_id)
    if token is None:
        print(f"error: ID: no token {token_id} (see `wakeyard token list`)", file=sys.stderr)
        return 2
    print(
        f"revoked the token {token.id} of {token.name!r} at {token.revoked_at:%Y-%m-%d %H:%M:%S} UTC", file=sys.stderr
    )
    return 0
