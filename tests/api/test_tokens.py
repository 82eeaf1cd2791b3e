"""Token lifecycle: admin-only list, create and revoke; expiry; last use; 401 in the problem shape."""

from __future__ import annotations

import time
from datetime import timedelta

import pytest
from alembic import command
from fastapi.testclient import TestClient

from tests.helpers import tiny
from wakeyard.api.auth import create_token, digest
from wakeyard.core import migrate
from wakeyard.core.store import Store, TokenRefused, TokenTaken, tokens, utcnow


def bearer(token: str) -> dict[str, str]:
    return {"Authorization": f"Bearer {token}"}


def refused(r, status: int) -> str:  # type: ignore[no-untyped-def]
    assert r.status_code == status, r.text
    [problem] = r.json()["detail"]
    return f"{problem['field']}: {problem['message']}"


def test_an_admin_creates_lists_and_revokes_tokens(offline: TestClient) -> None:
    ops = create_token(offline.app.state.store, "ops", admin=True)
    made = offline.post("/api/v1/tokens", json={"name": "alice", "expires_days": 30}, headers=bearer(ops))
    assert made.status_code == 201 and made.headers["cache-control"] == "no-store", made.text
    alice, alice_id = made.json()["token"], made.json()["id"]
    expires = made.json()["expires_at"]
    assert made.json()["state"] == "active" and expires[:10] == (utcnow() + timedelta(days=30)).date().isoformat()

    assert "Authorization: " in refused(offline.get("/api/v1/tokens", headers=bearer(alice)), 403)
    assert offline.post("/api/v1/jobs", json=tiny(), headers=bearer(alice)).status_code == 202
    listed = offline.get("/api/v1/tokens", headers=bearer(ops))
    rows = {t["name"]: t for t in listed.json()["tokens"]}
    assert set(rows) == {"ops", "alice"} and rows["alice"]["last_used_at"] is not None
    assert alice not in listed.text and ops not in listed.text and digest(alice) not in listed.text

    assert "name: " in refused(offline.post("/api/v1/tokens", json={"name": "alice"}, headers=bearer(ops)), 409)
    assert refused(offline.post("/api/v1/tokens", json={"name": "a b"}, headers=bearer(ops)), 422).startswith("name")
    bad_days = offline.post("/api/v1/tokens", json={"name": "bo", "expires_days": 0}, headers=bearer(ops))
    assert refused(bad_days, 422).startswith("expires_days")
    assert "token_id: no token nope" in refused(offline.delete("/api/v1/tokens/nope", headers=bearer(ops)), 404)

    gone = offline.delete(f"/api/v1/tokens/{alice_id}", headers=bearer(ops))
    assert gone.json()["state"] == "revoked" and gone.json()["revoked_at"]
    message = refused(offline.get("/api/v1/jobs", headers=bearer(alice)), 401)
    assert message.startswith("Authorization: ") and f"token {alice_id} (alice) revoked" in message
    again = offline.post("/api/v1/tokens", json={"name": "alice"}, headers=bearer(ops))  # a new one replaces it
    assert again.status_code == 201 and again.json()["id"] != alice_id
    assert offline.get("/api/v1/jobs", headers=bearer(again.json()["token"])).status_code == 200
    assert offline.get("/api/v1/jobs", headers=bearer(alice)).status_code == 401


def test_an_expired_token_is_refused_even_when_remembered(offline: TestClient) -> None:
    store: Store = offline.app.state.store
    create_token(store, "ops", admin=True)
    secret = "wy_soon-expired-token-of-a-test"
    store.add_token("brief", digest(secret), False, utcnow() + timedelta(seconds=1.0))
    assert offline.get("/api/v1/jobs", headers=bearer(secret)).status_code == 200  # now remembered
    time.sleep(1.1)
    assert "(brief) expired at " in refused(offline.get("/api/v1/jobs", headers=bearer(secret)), 401)


def test_a_revocation_by_another_process_takes_effect_after_the_recheck(
    offline: TestClient, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setattr(tokens, "RECHECK_SECONDS", 0.3)
    store: Store = offline.app.state.store
    alice = create_token(store, "alice")
    assert offline.get("/api/v1/jobs", headers=bearer(alice)).status_code == 200
    elsewhere = Store(offline.app.state.settings.db_url)  # as `wakeyard token revoke` does
    elsewhere.revoke_token(next(t.id for t in elsewhere.list_tokens()))
    elsewhere.engine.dispose()
    time.sleep(0.4)
    assert "(alice) revoked at " in refused(offline.get("/api/v1/jobs", headers=bearer(alice)), 401)


def test_token_store_lifecycle(store_url: str, monkeypatch: pytest.MonkeyPatch) -> None:
    """On SQLite and PostgreSQL: refusals name the reason, last use is written at most once a minute."""
    store = Store(store_url)
    try:
        token = store.add_token("ana", digest("s1"), True)
        assert store.token_user(digest("s1")) == ("ana", True, "user")
        first = store.list_tokens()[0].last_used_at
        assert first is not None and abs((utcnow() - first).total_seconds()) < 5
        store.token_user(digest("s1"))
        assert store.list_tokens()[0].last_used_at == first  # within the minute: not written again
        monkeypatch.setattr(tokens, "LAST_USED_EVERY", timedelta(0))
        store.token_user(digest("s1"))
        assert store.list_tokens()[0].last_used_at > first
        with pytest.raises(TokenTaken):
            store.add_token("ana", digest("s2"), False)
        with pytest.raises(TokenRefused, match="unknown token"):
            store.token_user(digest("nobody"))
        assert store.revoke_token(token.id).revoked_at is not None
        assert store.revoke_token("nope") is None
        with pytest.raises(TokenRefused, match="revoked"):
            store.token_user(digest("s1"))
        store.add_token("old", digest("s3"), False, utcnow() - timedelta(seconds=1))
        with pytest.raises(TokenRefused, match="expired"):
            store.token_user(digest("s3"))
        assert {t.name: tokens.token_state(t, utcnow()) for t in store.list_tokens()} == {
            "ana": "revoked",
            "old": "expired",
        }
        assert store.tokens_required()  # revoked and expired tokens still mean the service is not open
    finally:
        store.engine.dispose()


def test_tokens_made_before_ids_get_one(blank_store_url: str) -> None:
    """A store at the baseline revision with a token: the upgrade gives it an id and keeps it working."""
    engine = migrate.make_engine(blank_store_url)
    with engine.begin() as conn:
        config = migrate._config()
        config.attributes["connection"] = conn
        command.upgrade(config, "0001")
        conn.exec_driver_sql(
            "INSERT INTO tokens (name, digest, admin, created_at) VALUES ('ana', 'd1', false, '2026-01-01 00:00:00')"
        )
    engine.dispose()
    assert migrate.migrate(blank_store_url) == ("0001", migrate.head())
    store = Store(blank_store_url)
    [token] = store.list_tokens()
    assert len(token.id) == 12 and token.expires_at is None and store.token_user("d1") == ("ana", False, "user")
    store.engine.dispose()
