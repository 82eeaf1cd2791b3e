"""Property-based fuzz of every operation in the service's own OpenAPI schema: whatever the generated
request (NUL characters included), the answer is never a server error (5xx). Targeted classes of odd text
(huge and non-ASCII-digit cursors, names over 255 bytes): tests/api/test_odd_input.py."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path

import pytest
import schemathesis
from hypothesis import HealthCheck, settings

from tests.helpers import settings_for
from wakeyard.api.app import create_app


@pytest.fixture
def api_schema(tmp_path_factory: pytest.TempPathFactory, store_url: str) -> Iterator[schemathesis.BaseSchema]:
    """On SQLite and on PostgreSQL (which refuses NUL characters and 64-bit numbers where SQLite takes them)."""
    folder: Path = tmp_path_factory.mktemp("fuzz")
    # the embedded broker and no worker: submitted jobs stay queued, nothing runs
    app = create_app(
        settings_for(
            folder, "wakeyard-fuzz", broker="", database_url=store_url, max_steps=10_000, max_active_per_user=10_000
        )
    )
    yield schemathesis.openapi.from_asgi("/openapi.json", app)


schema = schemathesis.pytest.from_fixture("api_schema")


@schema.parametrize()
@settings(max_examples=25, deadline=None, suppress_health_check=list(HealthCheck))
def test_no_server_errors(case: schemathesis.Case) -> None:
    response = case.call()
    if case.path == "/api/v1/health" and response.status_code == 503:  # the documented "degraded" answer
        assert response.json()["status"] == "degraded" and response.json()["problems"]
        return
    assert response.status_code < 500, f"{case.method} {case.formatted_path}: {response.status_code} {response.text}"
