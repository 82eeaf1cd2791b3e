"""A remote worker (``wakeyard worker --url``) that is stopped hands its running job back to the service at once
(not after the lease), and the next box resumes it from the checkpoint the first one uploaded; so does one stopped
while it is still fetching that checkpoint over a slow link."""

from __future__ import annotations

import itertools
import os
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import httpx
import numpy as np
import pytest

from tests.helpers import Relay, served, settings_for, tiny, wait_until
from wakeyard.api.app import create_app
from wakeyard.api.auth import create_token
from wakeyard.solver import Cancelled, run
from wakeyard.solver.restart import FLOW_CHECKPOINT
from wakeyard.worker.service_client import ServiceClient

MAIN = "import sys; from wakeyard.cli.main import main; sys.exit(main())"
SPEC = tiny(end_time=3.0, output_interval=0.5, checkpoint_interval=10)
BLOCK, PAUSE = 2048, 0.2  # the slow link: at most this many bytes per pause from the service, on each connection


def _env(**values: str) -> dict[str, str]:
    return {**{k: v for k, v in os.environ.items() if not k.startswith("WAKEYARD_")}, **values}


def _start(args: list[str], env: dict[str, str], log: Path) -> subprocess.Popen[bytes]:
    return subprocess.Popen(
        [sys.executable, "-c", MAIN, *args],
        env=env,
        stdout=log.open("w"),
        stderr=subprocess.STDOUT,
        start_new_session=True,
    )


def _token(data: Path, name: str, *flags: str) -> str:
    cmd = [sys.executable, "-c", MAIN, "token", "create", name, *flags, "--data", str(data)]
    return subprocess.run(cmd, capture_output=True, text=True, env=_env(), timeout=120, check=True).stdout.strip()


def _stop_all(procs: list[subprocess.Popen[bytes]]) -> None:
    """Stop the worker commands still running (their process groups), killing any that take over 10 s."""
    for proc in procs:
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGTERM)
            try:
                proc.wait(10)
            except subprocess.TimeoutExpired:
                os.killpg(proc.pid, signal.SIGKILL)
                proc.wait()


def test_a_stopped_box_hands_its_job_back_and_the_next_box_resumes_it(tmp_path: Path) -> None:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    data = tmp_path / "service"
    admin, box = _token(data, "ana", "--admin"), _token(data, "box", "--worker")
    procs, logs = [], [tmp_path / "service.log", tmp_path / "box-1.log", tmp_path / "box-2.log"]
    serve = ["serve", "--port", str(port), "--data", str(data), "--workers", "0"]
    service_env = _env(WAKEYARD_LEASE_SECONDS="600", WAKEYARD_HEARTBEAT_SECONDS="0.5")  # only a hand-back re-queues
    procs.append(_start(serve, service_env, logs[0]))
    url = f"http://127.0.0.1:{port}"
    worker_env = _env(WAKEYARD_WORKER_TOKEN=box, WAKEYARD_WORKERS="1")
    api = httpx.Client(base_url=url + "/api/v1", headers={"Authorization": f"Bearer {admin}"}, timeout=10)
    try:

        def answers() -> bool:
            try:
                return api.get("/health").status_code in (200, 503)
            except httpx.TransportError:
                return False

        wait_until("the service", answers, 60, logs[:1])
        first = _start(["worker", "--url", url, "--data", str(tmp_path / "box-1")], worker_env, logs[1])
        procs.append(first)
        job_id = api.post("/jobs", json=SPEC).json()["id"]
        wait_until("a checkpoint uploaded", lambda: "checkpoint of step" in logs[1].read_text(), 120, logs)

        stopped = time.monotonic()
        os.killpg(first.pid, signal.SIGTERM)
        assert first.wait(10) == 0
        job = api.get(f"/jobs/{job_id}").json()
        assert time.monotonic() - stopped < 5 and job["state"] == "queued", job  # back at once, not after the lease
        assert job["attempts"] == 0  # the interrupted attempt is not counted against the job
        assert "handed back to the queue" in logs[1].read_text()

        procs.append(_start(["worker", "--url", url, "--data", str(tmp_path / "box-2")], worker_env, logs[2]))
        done = wait_until(
            "the job on the next box",
            lambda: (j := api.get(f"/jobs/{job_id}").json())["state"] in ("succeeded", "failed") and j,
            240,
            logs,
        )
        assert done["state"] == "succeeded", done["error"]
        resumed = done["summary"]["resumed_from_step"]
        assert resumed and f"resuming from the uploaded checkpoint of step {resumed}" in logs[2].read_text()
    finally:
        _stop_all(procs)


class SlowLink(Relay):
    """The box's requests pass at once, the service's answers at BLOCK per PAUSE (a checkpoint takes seconds)."""

    def to_box(self, src: socket.socket, dst: socket.socket, number: int) -> None:
        while block := src.recv(BLOCK):
            dst.sendall(block)
            time.sleep(PAUSE)


def _partial(folder: Path) -> list[Path]:
    """The downloads under way in a box's data folder (``.NAME.download``, created once the answer's head came)."""
    return list(folder.rglob(".*.download"))


def test_a_box_stopped_while_fetching_the_checkpoint_hands_the_job_back_at_once(tmp_path: Path) -> None:
    spec = tiny(end_time=0.5, output_interval=0.5, checkpoint_interval=10)
    settings = settings_for(tmp_path / "service", "wakeyard-fetch-stop", broker="", lease_seconds=600.0)
    app = create_app(settings)
    store = app.state.store
    job_id = store.create("ana", spec, []).id
    token = create_token(store, "box", kind="worker")
    first = tmp_path / "first"  # an earlier box's run, stopped after its second checkpoint
    checks = itertools.count(1)
    with pytest.raises(Cancelled):
        run(spec, first, should_stop=lambda: next(checks) > 25)
    with np.load(first / FLOW_CHECKPOINT, allow_pickle=False) as ck:
        step, snapshots = int(ck["step"]), [f"fields/step_{int(k):06d}.npz" for k in ck["snapshots"]]
    assert step > 0
    logs = [tmp_path / "box-1.log", tmp_path / "box-2.log"]
    procs: list[subprocess.Popen[bytes]] = []
    worker_env = _env(WAKEYARD_WORKER_TOKEN=token, WAKEYARD_WORKERS="1")

    with served(app) as port:
        earlier = ServiceClient(f"http://127.0.0.1:{port}", token)
        try:
            claimed = earlier.claim("box:0")
            assert claimed is not None and claimed["job_id"] == job_id
            for name in [FLOW_CHECKPOINT, *snapshots]:
                earlier.upload(job_id, claimed["lease"], first / name, name)
            earlier.release(job_id, claimed["lease"])  # that box stopped: the job waits with its checkpoint
        finally:
            earlier.close()
        link = SlowLink(port)
        try:
            box = tmp_path / "box-1"
            procs.append(
                _start(["worker", "--url", f"http://127.0.0.1:{link.port}", "--data", str(box)], worker_env, logs[0])
            )
            partial = wait_until("the checkpoint download under way", lambda: _partial(box), 120, logs[:1])
            assert partial[0].name == f".{FLOW_CHECKPOINT}.download"
            assert (first / FLOW_CHECKPOINT).stat().st_size * PAUSE / BLOCK > 5  # over 5 s on the slow link

            stopped = time.monotonic()
            os.killpg(procs[0].pid, signal.SIGTERM)
            assert procs[0].wait(10) == 0
            took = time.monotonic() - stopped
            job = store.get(job_id)
            assert took < 5 and job.state == "queued", (took, job)  # handed back, not left to the 600 s lease
            assert job.attempts == 0 and job.error is None  # not counted against the job, not failed
            assert "stopped while fetching its checkpoint" in logs[0].read_text()
            assert not _partial(box)  # no partial file left behind
            assert (settings.jobs_dir / job_id / FLOW_CHECKPOINT).read_bytes() == (first / FLOW_CHECKPOINT).read_bytes()

            procs.append(
                _start(
                    ["worker", "--url", f"http://127.0.0.1:{port}", "--data", str(tmp_path / "box-2")],
                    worker_env,
                    logs[1],
                )
            )
            done = wait_until(
                "the job on the next box",
                lambda: (j := store.get(job_id)).state in ("succeeded", "failed") and j,
                240,
                logs,
            )
            assert done.state == "succeeded", done.error
            assert done.summary["resumed_from_step"] == step
            assert f"resuming from the uploaded checkpoint of step {step}" in logs[1].read_text()
        finally:
            link.close()
            _stop_all(procs)
