"""Property-based fuzz of every operation in the service's own OpenAPI schema: whatever the generated
request (NUL characters included), the answer is never a server error (5xx). Targeted classes of odd text
(huge and non-ASCII-digit cursors, names over 255 bytes): tests/api/test_odd_input.py."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest
import schemathesis
from fastapi import FastAPI
from hypothesis import HealthCheck, settings

from tests.helpers import settings_for, tiny
from wakeyard.api.app import create_app
from wakeyard.api.auth import digest


def _app(folder: Path, store_url: str) -> FastAPI:
    # the embedded broker and no worker: submitted jobs stay queued, nothing runs
    return create_app(
        settings_for(
            folder, "wakeyard-fuzz", broker="", database_url=store_url, max_steps=10_000, max_active_per_user=10_000
        )
    )


@pytest.fixture
def api_schema(tmp_path_factory: pytest.TempPathFactory, store_url: str) -> Iterator[schemathesis.BaseSchema]:
    """On SQLite and on PostgreSQL (which refuses NUL characters and 64-bit numbers where SQLite takes them)."""
    yield schemathesis.openapi.from_asgi("/openapi.json", _app(tmp_path_factory.mktemp("fuzz"), store_url))


WORKER_TOKEN = "wy_fuzz-worker"  # a worker token's secret, fixed so the generated requests can carry it


@pytest.fixture
def worker_api_schema(tmp_path_factory: pytest.TempPathFactory, store_url: str) -> Iterator[schemathesis.BaseSchema]:
    """The worker endpoints as a worker token sees them, with a job queued for it to claim."""
    app = _app(tmp_path_factory.mktemp("fuzz-worker"), store_url)
    store = app.state.store
    store.create("ana", tiny(), [])
    store.add_token("box", digest(WORKER_TOKEN), admin=False, kind="worker")
    yield schemathesis.openapi.from_asgi("/openapi.json", app).include(path_regex="^/api/v1/worker/")


schema = schemathesis.pytest.from_fixture("api_schema")
worker_schema = schemathesis.pytest.from_fixture("worker_api_schema")


@schema.parametrize()
@settings(max_examples=25, deadline=None, suppress_health_check=list(HealthCheck))
def test_no_server_errors(case: schemathesis.Case) -> None:
    response = case.call()
    if case.path == "/api/v1/health" and response.status_code == 503:  # the documented "degraded" answer
        assert response.json()["status"] == "degraded" and response.json()["problems"]
        return
    assert response.status_code < 500, f"{case.method} {case.formatted_path}: {response.status_code} {response.text}"


@worker_schema.parametrize()
@settings(max_examples=25, deadline=None, suppress_health_check=list(HealthCheck))
def test_no_server_errors_with_a_worker_token(case: schemathesis.Case) -> None:
    response = case.call(headers={"Authorization": f"Bearer {WORKER_TOKEN}"})
    assert response.status_code < 500, f"{case.method} {case.formatted_path}: {response.status_code} {response.text}"
