"""A full disk, for real (a small tmpfs as the data folder): new jobs are refused with 507, cancel and delete keep
working and free space, and a job whose results cannot be written fails with the reason instead of staying
"running"."""

from __future__ import annotations

import errno
import hashlib
import os
import shutil
import subprocess
from collections.abc import Iterator
from pathlib import Path

import pytest
from fastapi.testclient import TestClient

from tests.helpers import TINY, finished, settings_for, tiny
from tests.worker.test_supervision import Serve, until
from wakeyard.api.app import create_app


@pytest.fixture
def small_disk(tmp_path: Path) -> Iterator[Path]:
    """A 48 MiB tmpfs (the tests run as root, as CI does)."""
    mount = tmp_path / "disk"
    mount.mkdir()
    subprocess.run(["mount", "-t", "tmpfs", "-o", "size=48m", "tmpfs", str(mount)], check=True)
    try:
        yield mount
    finally:
        subprocess.run(["umount", "--lazy", str(mount)], check=True)  # gone once open files close


def fill(folder: Path) -> None:
    """Write a file until the disk refuses another byte."""
    with (folder / "filler").open("wb", buffering=0) as f:
        for chunk in (2**20, 4096, 1):
            try:
                while True:
                    f.write(b"\0" * chunk)
            except OSError as err:
                assert err.errno == errno.ENOSPC
    assert shutil.disk_usage(folder).free < 2**16


def test_a_full_disk_refuses_new_jobs_and_cancel_and_delete_still_work(small_disk: Path) -> None:
    settings = settings_for(small_disk, "wakeyard-full", broker="", min_free_mb=8)
    with TestClient(create_app(settings)) as client:
        assert client.get("/api/v1/health").json()["problems"] == []
        queued = client.post("/api/v1/jobs", json=tiny()).json()["id"]
        old = client.post("/api/v1/jobs", params={"fresh": True}, json=tiny()).json()["id"]
        client.post(f"/api/v1/jobs/{old}/cancel")
        (settings.jobs_dir / old).mkdir(parents=True)
        (settings.jobs_dir / old / "forces.csv").write_bytes(b"\0" * 10 * 2**20)  # results worth deleting
        fill(small_disk)

        health = client.get("/api/v1/health")
        assert health.status_code == 503 and "MiB free in the data folder, below 8 MiB" in health.json()["problems"][-1]
        for url, body in (
            ("/api/v1/jobs", TINY),
            ("/api/v1/studies", {"kind": "mesh-convergence", "base": TINY}),
            (f"/api/v1/jobs/{queued}/clone", {}),
        ):
            r = client.post(url, json=body)
            assert r.status_code == 507, url
            assert "new jobs are refused until space is freed" in r.json()["detail"]
        assert client.post(f"/api/v1/jobs/{queued}/cancel").json()["state"] == "cancelled"
        assert client.delete(f"/api/v1/jobs/{old}").status_code == 204
        assert client.get(f"/api/v1/jobs/{old}").status_code == 404 and not (settings.jobs_dir / old).exists()
        assert shutil.disk_usage(small_disk).free > 9 * 2**20
        assert client.post("/api/v1/jobs", json=tiny()).status_code == 202  # space again: new jobs again


def test_a_job_whose_results_cannot_be_written_fails_with_the_reason(
    small_disk: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    monkeypatch.setenv("WAKEYARD_MIN_FREE_MB", "8")
    serve = Serve(small_disk, tmp_path / "serve.log")
    try:
        with serve.client() as client:
            spec = tiny(end_time=20.0, output_interval=0.05, checkpoint_interval=10)  # writes every few steps
            job_id = client.post("/jobs", json=spec).json()["id"]
            until(lambda: client.get(f"/jobs/{job_id}").json()["progress"]["step"] >= 10)
            fill(small_disk)
            job = until(lambda: finished(j := client.get(f"/jobs/{job_id}").json()) and j, timeout=120)
            assert job["state"] == "failed"
            assert "the results could not be written: the data folder's disk is full" in job["error"]
            assert client.get("/health").status_code == 503
            assert client.delete(f"/jobs/{job_id}").status_code == 204
    finally:
        serve.stop()
        os.sync()


def digests(folder: Path) -> dict[str, str]:
    return {
        p.relative_to(folder).as_posix(): hashlib.sha256(p.read_bytes()).hexdigest()
        for p in folder.rglob("*")
        if p.is_file()
    }


def test_below_the_free_space_threshold_running_jobs_finish_and_finished_ones_stay_intact(
    small_disk: Path, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """Low (not yet zero) free space: new jobs get 507, the running job still finishes, earlier results are
    untouched byte for byte; once space is back new jobs are taken again."""
    monkeypatch.setenv("WAKEYARD_MIN_FREE_MB", "24")
    serve = Serve(small_disk, tmp_path / "serve.log")
    try:
        with serve.client() as client:
            done = client.post("/jobs", json=tiny()).json()["id"]
            assert until(lambda: finished(j := client.get(f"/jobs/{done}").json()) and j, timeout=120)["state"] == (
                "succeeded"
            )
            before = digests(small_disk / "jobs" / done)
            # 3000 short steps: still running (seconds on a fast machine) while the disk fills and the refusal comes
            running = client.post("/jobs", json=tiny(end_time=1.5, time_step=5e-4)).json()["id"]
            until(lambda: client.get(f"/jobs/{running}").json()["progress"]["step"] >= 5, timeout=120)
            free = shutil.disk_usage(small_disk).free
            (small_disk / "filler").write_bytes(b"\0" * (free - 16 * 2**20))  # 16 MiB left, under the 24 kept

            refused = client.post("/jobs", json=tiny(end_time=0.2))
            assert refused.status_code == 507 and "below the 24 MiB the service keeps" in refused.json()["detail"]
            assert client.get(f"/jobs/{running}").json()["state"] == "running"  # refused while this one runs
            job = until(lambda: finished(j := client.get(f"/jobs/{running}").json()) and j, timeout=180)
            assert job["state"] == "succeeded", job["error"]
            assert digests(small_disk / "jobs" / done) == before
            (small_disk / "filler").unlink()
            assert client.post("/jobs", json=tiny(end_time=0.2)).status_code == 202
    finally:
        serve.stop()
        os.sync()
