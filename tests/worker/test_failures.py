"""What the service records when part of a run cannot be done: a null with a reason, or the failed stage."""

from __future__ import annotations

import threading
from pathlib import Path

from fastapi.testclient import TestClient

from tests.helpers import finished, settings_for, tiny, wait_for
from tests.solver.test_post_processing import TANDEM
from wakeyard.core.store import Store
from wakeyard.worker.attempt import Attempt


def test_tandem_tubes_succeed_with_the_undefined_wake_length_explained(service: TestClient) -> None:
    job_id = service.post("/api/v1/jobs", json=TANDEM).json()["id"]
    job = wait_for(service, job_id, finished, timeout=180)
    assert job["state"] == "succeeded", job["error"]
    upstream, downstream = job["summary"]["bodies"]
    assert upstream["recirculation_length"] is None and downstream["recirculation_length"] > 0
    assert "reaches downstream" in job["summary"]["unavailable"]["bodies.0.recirculation_length"]


def test_an_unexpected_failure_is_recorded_with_its_stage(tmp_path: Path) -> None:
    settings = settings_for(tmp_path, "wakeyard-failures", broker="")
    store = Store(settings.db_url)
    job_id = store.create("ana", tiny(end_time=0.05), []).id
    claimed = store.claim_next("here")
    assert claimed is not None and claimed.id == job_id
    folder = settings.jobs_dir / job_id
    folder.mkdir(parents=True)
    (folder / "fields").write_text("a file where the snapshot folder should go")
    Attempt(store, settings, claimed, threading.Event()).run()
    job = store.get(job_id)
    assert job is not None and job.state == "failed"
    assert job.error.startswith("writing result files failed: FileExistsError")
