"""Honest health: degraded (503) with the reason when the broker or the job store does not answer or the disk is
short; /metrics carries the same facts. (Queued jobs without a worker: tests/api/test_validation.py.)"""

from __future__ import annotations

import re
import socket
import subprocess
from pathlib import Path

from fastapi.testclient import TestClient
from sqlalchemy import text

from tests.cli.test_cli import WAKEYARD
from tests.helpers import environment, settings_for
from wakeyard.api.app import create_app
from wakeyard.core.store import Store


def test_a_broker_that_does_not_answer_is_degraded(tmp_path: Path) -> None:
    settings = settings_for(tmp_path, "wakeyard-nobroker", broker="redis://127.0.0.1:1/0")  # nothing listens there
    with TestClient(create_app(settings)) as client:
        r = client.get("/api/v1/health")
        assert r.status_code == 503 and r.json()["broker"].startswith("error:")
        assert r.json()["problems"] == ["the broker does not answer (OperationalError)"]
        metrics = client.get("/metrics")
        assert metrics.status_code == 200 and 'wakeyard_up{component="broker"} 0' in metrics.text


def test_a_job_store_that_fails_is_degraded_and_metrics_still_answer(tmp_path: Path, store_url: str) -> None:
    settings = settings_for(tmp_path, "wakeyard-nostore", broker="", database_url=store_url)
    with TestClient(create_app(settings)) as client:
        assert client.get("/api/v1/health").status_code == 200
        store: Store = client.app.state.store
        with store.engine.begin() as conn:  # the store answers every query on jobs with an error
            conn.execute(text("ALTER TABLE jobs RENAME TO jobs_elsewhere"))
        try:
            r = client.get("/api/v1/health")
            assert r.status_code == 503 and r.json()["database"].startswith("error:")
            assert r.json()["problems"][0].startswith("the job store does not answer")
            metrics = client.get("/metrics")
            assert metrics.status_code == 200 and 'wakeyard_up{component="database"} 0' in metrics.text
            assert "wakeyard_jobs" not in metrics.text  # no numbers rather than wrong ones
        finally:
            with store.engine.begin() as conn:
                conn.execute(text("ALTER TABLE jobs_elsewhere RENAME TO jobs"))


def test_free_disk_below_the_threshold_is_degraded(tmp_path: Path) -> None:
    settings = settings_for(tmp_path, "wakeyard-disk", broker="", min_free_mb=1e9)  # more than any disk has
    with TestClient(create_app(settings)) as client:
        r = client.get("/api/v1/health")
        assert r.status_code == 503 and r.json()["free_disk_bytes"] > 0
        assert "MiB free in the data folder, below 1000000000 MiB" in r.json()["problems"][0]
        metrics = client.get("/metrics").text
        shown = float(re.search(r"^wakeyard_free_disk_bytes (\S+)$", metrics, re.MULTILINE).group(1))
        assert abs(shown - r.json()["free_disk_bytes"]) < 2**30 and "wakeyard_healthy 0" in metrics  # others write


def test_worker_check_for_container_health(tmp_path: Path) -> None:
    settings = settings_for(tmp_path, "wakeyard-check", broker="")
    store = Store(settings.db_url)

    def check() -> int:
        return subprocess.run(
            [*WAKEYARD, "worker", "--check"], env=environment(settings), capture_output=True, timeout=60
        ).returncode

    store.worker_alive("another-host:17")
    assert check() == 1
    store.worker_alive(f"{socket.gethostname()}:17")
    assert check() == 0
