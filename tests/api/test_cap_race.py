"""The per-user cap under concurrent creations: never a job over it, on SQLite and on a real PostgreSQL."""

from __future__ import annotations

import threading
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import pytest
import sqlalchemy
from fastapi.testclient import TestClient

from tests.api.test_studies import sweep
from tests.helpers import settings_for, tiny
from wakeyard.api.app import create_app
from wakeyard.api.submission import Submission
from wakeyard.core.store import OverCap, Store

CAP, TRIES = 4, 24


def _race(attempt: object, tries: int = TRIES) -> list[object]:
    """Run ``attempt`` from ``tries`` threads released at the same moment; their results or exceptions."""
    start = threading.Barrier(tries)

    def one(_: int) -> object:
        start.wait()
        try:
            return attempt()  # type: ignore[operator]
        except Exception as err:  # the refusals are what is counted
            return err

    with ThreadPoolExecutor(tries) as pool:
        return list(pool.map(one, range(tries)))


def test_concurrent_creations_in_the_store_never_pass_the_cap(store_url: str) -> None:
    store = Store(store_url)
    try:
        store.create("ana", tiny(), [], cap=CAP)  # one already queued
        results = _race(lambda: store.create("ana", tiny(), [], cap=CAP))
        refused = [r for r in results if isinstance(r, OverCap)]
        assert len(results) - len(refused) == CAP - 1, results  # no other errors, and exactly the room left
        assert all(r.active == CAP and r.cap == CAP for r in refused)
        assert store.active_count("ana") == CAP
        assert store.create("bo", tiny(), [], cap=CAP).owner == "bo"  # another owner is not held back
    finally:
        store.engine.dispose()


def test_concurrent_requests_never_pass_the_cap(tmp_path: Path, postgres_url: str) -> None:
    """Through the API, against a real PostgreSQL store: the refused requests are 429 with the limit named."""
    schema = f"wakeyard_cap_{threading.get_native_id()}"
    admin = sqlalchemy.create_engine(postgres_url)
    with admin.begin() as conn:
        conn.execute(sqlalchemy.text(f"CREATE SCHEMA {schema}"))
    try:
        url = f"{postgres_url}?options=-csearch_path%3D{schema}"
        settings = settings_for(tmp_path, "wakeyard-cap", broker="", database_url=url, max_active_per_user=CAP)
        with TestClient(create_app(settings)) as client:
            answers = _race(lambda: client.post("/api/v1/jobs", json=tiny()))
            codes = sorted(a.status_code for a in answers)  # type: ignore[attr-defined]
            assert codes == [202] * CAP + [429] * (TRIES - CAP)
            refused = next(a for a in answers if a.status_code == 429)  # type: ignore[attr-defined]
            assert f"the limit per user is {CAP}" in refused.json()["detail"][0]["message"]
            assert len(client.get("/api/v1/jobs", params={"state": "queued"}).json()["jobs"]) == CAP
    finally:
        with admin.begin() as conn:
            conn.execute(sqlalchemy.text(f"DROP SCHEMA {schema} CASCADE"))
        admin.dispose()


def test_a_study_that_meets_the_cap_midway_cancels_the_points_it_made(
    offline: TestClient, monkeypatch: pytest.MonkeyPatch
) -> None:
    """As when concurrent requests fill the room after the early check: the study's 429 says what was undone."""
    monkeypatch.setattr(Submission, "check_room", lambda *_: None)  # the early check saw room
    r = offline.post("/api/v1/studies", json=sweep("midway", [0.1, 0.2, 0.3, 0.4]))  # the cap is 3
    assert r.status_code == 429, r.text
    message = r.json()["detail"][0]["message"]
    assert "the limit per user is 3" in message and "the 3 points of study" in message
    jobs = offline.get("/api/v1/jobs").json()["jobs"]
    assert len(jobs) == 3 and {j["state"] for j in jobs} == {"cancelled"}
