"""Supervision of real ``wakeyard serve`` processes: signals stop everything and hand the running job back, a kill -9
takes the workers along, a dead worker is started again, and one data folder never gets two pools."""

from __future__ import annotations

import os
import re
import signal
import subprocess
import time
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import httpx
import numpy as np
import pytest

from tests.cli.test_cli import WAKEYARD, _children, _free_port
from tests.helpers import finished, tiny
from wakeyard.core.store import Store

SPEED = {"WAKEYARD_HEARTBEAT_SECONDS": "0.5", "WAKEYARD_REAPER_SECONDS": "0.5"}


class Serve:
    """``wakeyard serve`` (one worker unless told) on the embedded broker, in a session of its own (as a service
    manager would start it)."""

    def __init__(self, data: Path, log: Path, workers: int = 1, **env: str):
        self.data, self.log, self.port = data, log, _free_port()
        self.url = f"http://127.0.0.1:{self.port}"
        self.proc = subprocess.Popen(
            [*WAKEYARD, "serve", "--port", str(self.port), "--data", str(data), "--workers", str(workers)],
            env={**os.environ, **SPEED, **env},
            stdout=log.open("w"),
            stderr=subprocess.STDOUT,
            start_new_session=True,
        )
        until(lambda: self.url in log.read_text(), lambda: self.proc.poll() is None, log.read_text, 90)

    def workers(self) -> list[int]:
        return _children(self.proc.pid)

    def client(self) -> httpx.Client:
        return httpx.Client(base_url=f"{self.url}/api/v1", timeout=10)

    def stop(self) -> None:
        if self.proc.poll() is None:
            self.proc.send_signal(signal.SIGTERM)
            self.proc.wait(30)


def until(
    done: Callable[[], Any],
    alive: Callable[[], bool] = lambda: True,
    why: Callable[[], Any] = lambda: "",
    timeout: float = 60,
) -> Any:
    deadline = time.monotonic() + timeout
    while not (found := done()):
        assert alive() and time.monotonic() < deadline, why()
        time.sleep(0.1)
    return found


def alive(pid: int) -> bool:
    try:
        return Path(f"/proc/{pid}/stat").read_text().split()[2] != "Z"
    except FileNotFoundError:
        return False


@pytest.fixture
def serves(tmp_path: Path) -> Iterator[list[Serve]]:
    started: list[Serve] = []
    yield started
    for serve in started:
        if serve.proc.poll() is None:
            serve.proc.kill()
            serve.proc.wait(10)


def test_sigterm_and_sigint_stop_serve_and_hand_the_running_job_back(tmp_path: Path, serves: list[Serve]) -> None:
    serves.append(first := Serve(tmp_path, tmp_path / "first.log"))
    [worker] = first.workers()
    with first.client() as client:
        spec = tiny(end_time=20.0, output_interval=10.0, checkpoint_interval=50)
        job_id = client.post("/jobs", json=spec).json()["id"]
        checkpoint = tmp_path / "jobs" / job_id / "checkpoint.npz"
        until(lambda: client.get(f"/jobs/{job_id}").json()["progress"]["step"] >= 110 and checkpoint.exists())
    saved = int(np.load(checkpoint)["step"])

    first.proc.send_signal(signal.SIGTERM)  # what systemd, docker and kill send
    assert first.proc.wait(30) == 0
    assert not alive(worker)
    store = Store(f"sqlite:///{tmp_path / 'jobs.sqlite'}")
    job = store.get(job_id)
    assert job.state == "queued" and job.claim is None
    assert job.attempts == 0  # a shutdown is not the job's fault: the attempt does not count
    assert int(np.load(checkpoint)["step"]) >= saved >= 100
    assert "handed back to the queue" in (tmp_path / "first.log").read_text()

    serves.append(second := Serve(tmp_path, tmp_path / "second.log"))
    with second.client() as client:  # started again, the job resumes from its checkpoint
        stale = job.progress_step
        resumed = until(
            lambda: (
                (j := client.get(f"/jobs/{job_id}").json())["state"] == "running"
                and j["progress"]["step"] != stale
                and j
            )
        )
        assert resumed["attempts"] == 1 and resumed["progress"]["step"] > saved
    [worker] = second.workers()
    second.proc.send_signal(signal.SIGINT)  # Ctrl-C
    assert second.proc.wait(30) == 0
    assert not alive(worker)
    job = store.get(job_id)
    assert job.state == "queued" and job.attempts == 0


def test_kill_9_of_serve_takes_its_workers_and_a_data_folder_has_one_pool(tmp_path: Path, serves: list[Serve]) -> None:
    serves.append(first := Serve(tmp_path, tmp_path / "first.log"))
    workers = first.workers()
    assert workers
    refused = subprocess.run(
        [*WAKEYARD, "serve", "--port", str(_free_port()), "--data", str(tmp_path)],
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert refused.returncode == 2
    assert f"another wakeyard serve (pid {first.proc.pid})" in refused.stderr and str(tmp_path) in refused.stderr

    os.kill(first.proc.pid, signal.SIGKILL)
    first.proc.wait(10)
    until(lambda: not any(alive(pid) for pid in workers), timeout=10)  # the kernel's parent-death signal
    serves.append(second := Serve(tmp_path, tmp_path / "second.log"))  # the lock went with the processes
    assert second.workers() and not set(second.workers()) & set(workers)
    second.stop()


def test_a_worker_process_that_dies_is_started_again_with_back_off(tmp_path: Path, serves: list[Serve]) -> None:
    serves.append(serve := Serve(tmp_path, tmp_path / "serve.log"))
    log = tmp_path / "serve.log"
    [first] = serve.workers()
    os.kill(first, signal.SIGKILL)
    second = until(lambda: [p for p in serve.workers() if p != first], timeout=30)[0]
    assert re.search(rf"worker process 0 \(pid {first}\) exited with code -9 .* again in 1 s", log.read_text())
    os.kill(second, signal.SIGKILL)  # dying young again: the next start waits longer
    third = until(lambda: [p for p in serve.workers() if p not in (first, second)], timeout=30)[0]
    assert re.search(rf"worker process 0 \(pid {second}\) exited with code -9 .* again in 2 s", log.read_text())
    with serve.client() as client:
        job_id = client.post("/jobs", json=tiny(end_time=0.05)).json()["id"]
        job = until(lambda: finished(j := client.get(f"/jobs/{job_id}").json()) and j, timeout=120)
        assert job["state"] == "succeeded" and job["worker_host"].endswith(f":{third}")
        health = client.get("/health").json()
        assert health["status"] == "ok" and health["workers_seen"] >= 1
    serve.stop()
    assert not alive(third)


def test_stopped_workers_jobs_go_back_uncounted_or_end_cancelled(store_url: str) -> None:
    """What serve does for workers it had to kill after the grace: their jobs are queued again (the attempt not
    counted), a job with a cancel request ends cancelled, other workers' jobs are left alone."""
    store = Store(store_url)
    ids = [store.create("ana", tiny(), []).id for _ in range(3)]
    held = [store.claim_next(host) for host in ("box:1", "box:2", "box:3")]
    assert [c.id for c in held] == ids
    store.cancel(ids[1])  # asks its worker to stop
    assert store.release_hosts(["box:1", "box:2"]) == [ids[0]]
    first, second, third = (store.get(i) for i in ids)
    assert first.state == "queued" and first.attempts == 0 and first.claim is None
    assert second.state == "cancelled" and "its worker was stopped" in second.error
    assert third.state == "running" and third.attempts == 1
    assert store.release(ids[2], "not-the-claim") is False
    assert store.release(ids[2], held[2].claim) is True and store.get(ids[2]).state == "queued"
