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
from wakeyard.core.store import jobs as store_jobs

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


def test_a_large_cap_is_never_passed_either(store_url: str) -> None:
    """Over FEW_SLOTS a miss counts the held slots before reading them: near the cap, concurrent creations still
    get exactly the room left."""
    store, cap = Store(store_url), store_jobs.FEW_SLOTS + 20
    try:
        for _ in range(cap - 5):
            store.create("ana", tiny(), [], cap=cap)
        results = _race(lambda: store.create("ana", tiny(), [], cap=cap))
        refused = [r for r in results if isinstance(r, OverCap)]
        assert len(results) - len(refused) == 5, results
        assert all(r.active == cap and r.cap == cap for r in refused)
        assert store.active_count("ana") == cap
    finally:
        store.engine.dispose()


class _Picks:
    """Slot picks in a given order, in place of the store's random ones."""

    def __init__(self, *slots: int):
        self.slots = iter(slots)

    def randrange(self, _: int) -> int:
        return next(self.slots)


def test_a_blind_miss_far_below_a_large_cap_tries_another_slot(store_url: str, monkeypatch: pytest.MonkeyPatch) -> None:
    """The slot picked is held: with most of a large cap free the creation picks another (never the same again)
    and succeeds."""
    store, cap = Store(store_url), store_jobs.FEW_SLOTS * 4
    try:
        monkeypatch.setattr(store_jobs, "PICK", _Picks(7))
        store.create("ana", tiny(), [], cap=cap)  # holds slot 7
        picks = _Picks(7, 7, 8)
        monkeypatch.setattr(store_jobs, "PICK", picks)
        assert store.create("ana", tiny(), [], cap=cap).owner == "ana"
        assert next(picks.slots, None) is None and store.active_count("ana") == 2
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


def _refused(store: Store, owner: str, cap: int) -> bool:
    try:
        store.create(owner, tiny(), [], cap=cap)
    except OverCap:
        return True
    return False


def test_every_way_out_of_queued_or_running_frees_a_slot_once(store_url: str) -> None:
    """Finish, failure, cancel (queued or via its stopped worker), the reaper giving up, and delete each make room
    for exactly one more job; a job handed back to the queue keeps its slot."""
    store, cap = Store(store_url), 2
    try:

        def fill() -> None:
            while not _refused(store, "ana", cap):
                pass
            assert store.active_count("ana") == cap

        def running() -> tuple[str, str]:
            claimed = store.claim_next("host:1")
            assert claimed is not None
            return claimed.id, claimed.claim

        def frees_one(way_out: object) -> None:
            fill()
            way_out()  # type: ignore[operator]
            assert store.active_count("ana") == cap - 1
            assert not _refused(store, "ana", cap) and _refused(store, "ana", cap)  # room for one, not two

        def cancel_queued() -> None:
            queued = store.queued_ids()[0]
            assert store.cancel(queued) == "cancelled" and store.cancel(queued) == "cancelled"  # twice: one slot

        frees_one(lambda: store.finish(*running(), "succeeded", {"bodies": []}))
        frees_one(lambda: store.finish(*running(), "failed", error="diverged"))
        frees_one(cancel_queued)
        frees_one(lambda: store.delete(store.queued_ids()[0]))

        def worker_stopped_after_cancel() -> None:
            job_id, _ = running()
            store.cancel(job_id)  # flags it; still running
            assert store.active_count("ana") == cap
            store.release_hosts(["host:1"])

        frees_one(worker_stopped_after_cancel)
        frees_one(lambda: (running(), store.expire_leases(lease_seconds=-1, max_attempts=1)))

        fill()
        job_id, claim = running()
        assert store.release(job_id, claim)  # back in the queue: still holds its slot
        store.expire_leases(lease_seconds=-1, max_attempts=1)  # nothing running to expire
        assert _refused(store, "ana", cap) and store.active_count("ana") == cap
    finally:
        store.engine.dispose()


def test_creations_racing_with_ends_never_pass_the_cap(store_url: str) -> None:
    """Creations from many threads while other threads finish and cancel jobs: at every look, at most the cap."""
    store, cap, rounds = Store(store_url), 3, 12
    seen: list[int] = []
    stop = threading.Event()

    def watch() -> None:
        while not stop.is_set():
            seen.append(store.active_count("ana"))

    def end_some() -> None:
        for _ in range(rounds):
            if claimed := store.claim_next("host:2"):
                store.finish(claimed.id, claimed.claim, "succeeded", {"bodies": []})
            for job_id in store.queued_ids()[:1]:
                store.cancel(job_id)

    watcher = threading.Thread(target=watch)
    watcher.start()
    try:
        for _ in range(3):
            ender = threading.Thread(target=end_some)
            ender.start()
            results = _race(lambda: store.create("ana", tiny(), [], cap=cap), tries=12)
            ender.join()
            assert all(isinstance(r, OverCap) or getattr(r, "owner", None) == "ana" for r in results), results
            assert store.active_count("ana") <= cap
    finally:
        stop.set()
        watcher.join()
        store.engine.dispose()
    assert seen and max(seen) <= cap
    assert max(seen) == cap  # the races did fill the room
