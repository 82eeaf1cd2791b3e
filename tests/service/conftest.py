"""Real parts only: Redis on 127.0.0.1 (DB 5, flushed here and nowhere else), Celery worker subprocesses,
SQLite job stores in temporary folders."""

from __future__ import annotations

import os
from collections.abc import Iterator
from pathlib import Path

import pytest
import redis
import sqlalchemy
from fastapi.testclient import TestClient

from api.app import create_app

from .helpers import REDIS_URL, Worker, settings_for

POSTGRES_URL = "postgresql+psycopg://postgres@127.0.0.1:5432/test"


@pytest.fixture(scope="session", autouse=True)
def _clean_redis() -> Iterator[None]:
    client = redis.Redis.from_url(REDIS_URL)
    client.flushdb()
    yield
    client.flushdb()


@pytest.fixture(scope="session")
def service(tmp_path_factory: pytest.TempPathFactory) -> Iterator[TestClient]:
    """API (in process, with its lease reaper) plus one single-process worker, on Redis."""
    folder = tmp_path_factory.mktemp("service")
    settings = settings_for(folder, "wakeyard-test")
    worker = Worker(settings, folder / "worker.log")
    try:
        with TestClient(create_app(settings)) as client:
            yield client
    finally:
        worker.stop()


@pytest.fixture
def offline(tmp_path: Path) -> Iterator[TestClient]:
    """API on the embedded SQLite broker with no worker: jobs stay queued (validation, auth, limits)."""
    settings = settings_for(tmp_path, "wakeyard-offline", broker="", max_steps=10_000, max_active_per_user=3)
    with TestClient(create_app(settings)) as client:
        yield client


@pytest.fixture(params=["sqlite", "postgresql"])
def store_url(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[str]:
    """A fresh job store on SQLite or on the local PostgreSQL (in a schema of its own, dropped afterwards)."""
    if request.param == "sqlite":
        yield f"sqlite:///{tmp_path}/store.sqlite"
        return
    schema = f"wakeyard_test_{os.getpid()}"
    admin = sqlalchemy.create_engine(POSTGRES_URL)
    with admin.begin() as conn:
        conn.execute(sqlalchemy.text(f"CREATE SCHEMA {schema}"))
    try:
        yield f"{POSTGRES_URL}?options=-csearch_path%3D{schema}"
    finally:
        with admin.begin() as conn:
            conn.execute(sqlalchemy.text(f"DROP SCHEMA {schema} CASCADE"))
        admin.dispose()
