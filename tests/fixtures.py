"""Real parts only: Redis (database WAKEYARD_TEST_REDIS_DB, flushed here and nowhere else), PostgreSQL and
RabbitMQ from tests/servers.py, Celery worker subprocesses, SQLite job stores in temporary folders."""

from __future__ import annotations

import os
from collections.abc import Iterator
from pathlib import Path

import pytest
import redis
import sqlalchemy
from fastapi.testclient import TestClient

from wakeyard.api.app import create_app
from wakeyard.core.migrate import migrate

from .helpers import REDIS_DB, Worker, settings_for


@pytest.fixture(scope="session")
def redis_broker(redis_url: str) -> Iterator[str]:
    """The tests' Redis database as a broker URL, empty at the start and at the end of the session."""
    url = f"{redis_url}/{REDIS_DB}"
    client = redis.Redis.from_url(url)
    client.flushdb()
    yield url
    client.flushdb()
    client.close()


@pytest.fixture(scope="session")
def service(tmp_path_factory: pytest.TempPathFactory, redis_broker: str) -> Iterator[TestClient]:
    """API (in process, with its lease reaper) plus one single-process worker, on Redis."""
    folder = tmp_path_factory.mktemp("service")
    settings = settings_for(folder, "wakeyard-test", redis_broker)
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


@pytest.fixture
def store_url(blank_store_url: str) -> str:
    """A fresh job store on SQLite or on PostgreSQL, migrated to the newest schema."""
    migrate(blank_store_url)
    return blank_store_url


@pytest.fixture(params=["sqlite", "postgresql"])
def blank_store_url(request: pytest.FixtureRequest, tmp_path: Path) -> Iterator[str]:
    """An empty database on SQLite or on PostgreSQL (in a schema of its own, dropped afterwards)."""
    if request.param == "sqlite":
        yield f"sqlite:///{tmp_path}/store.sqlite"
        return
    postgres_url: str = request.getfixturevalue("postgres_url")  # started only when a PostgreSQL test runs
    schema = f"wakeyard_test_{os.getpid()}"
    admin = sqlalchemy.create_engine(postgres_url)
    with admin.begin() as conn:
        conn.execute(sqlalchemy.text(f"CREATE SCHEMA {schema}"))
    try:
        yield f"{postgres_url}?options=-csearch_path%3D{schema}"
    finally:
        with admin.begin() as conn:
            conn.execute(sqlalchemy.text(f"DROP SCHEMA {schema} CASCADE"))
        admin.dispose()
