"""A remote worker (``wakeyard worker --url``) that is stopped hands its running job back to the service at once
(not after the lease), and the next box resumes it from the checkpoint the first one uploaded."""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import httpx

from tests.helpers import tiny, wait_until

MAIN = "import sys; from wakeyard.cli.main import main; sys.exit(main())"
SPEC = tiny(end_time=3.0, output_interval=0.5, checkpoint_interval=10)


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
        for proc in procs:
            if proc.poll() is None:
                os.killpg(proc.pid, signal.SIGTERM)
                try:
                    proc.wait(10)
                except subprocess.TimeoutExpired:
                    os.killpg(proc.pid, signal.SIGKILL)
                    proc.wait()
