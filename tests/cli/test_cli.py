"""``wakeyard serve`` on the embedded broker (SQLite transport), ``token create``, and the refusal to go open."""

from __future__ import annotations

import os
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import httpx

from tests.helpers import finished, tiny

WAKEYARD = [sys.executable, "-c", "import sys; from wakeyard.cli.main import main; sys.exit(main())"]


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _children(pid: int) -> list[int]:
    out = subprocess.run(["ps", "-o", "pid=", "--ppid", str(pid)], capture_output=True, text=True).stdout
    return [int(p) for p in out.split()]


def test_serve_embedded_runs_a_job_and_ctrl_c_stops_children(tmp_path: Path) -> None:
    port = _free_port()
    log = tmp_path / "serve.log"
    proc = subprocess.Popen(
        [*WAKEYARD, "serve", "--port", str(port), "--data", str(tmp_path), "--workers", "1"],
        stdout=log.open("w"),
        stderr=subprocess.STDOUT,
        cwd=tmp_path,
    )
    try:
        deadline = time.monotonic() + 60
        while f"http://127.0.0.1:{port}/" not in log.read_text():
            assert proc.poll() is None and time.monotonic() < deadline, log.read_text()
            time.sleep(0.2)
        children = _children(proc.pid)
        children += [grandchild for pid in children for grandchild in _children(pid)]
        assert len(children) >= 1  # the worker process
        with httpx.Client(base_url=f"http://127.0.0.1:{port}", timeout=10) as client:
            job_id = client.post("/api/v1/jobs", json=tiny(end_time=0.1)).json()["id"]
            deadline = time.monotonic() + 60
            while not finished(job := client.get(f"/api/v1/jobs/{job_id}").json()):
                assert time.monotonic() < deadline, job
                time.sleep(0.2)
            assert job["state"] == "succeeded", job["error"]
            assert client.get(f"/api/v1/jobs/{job_id}/files/forces.csv").status_code == 200
        assert (tmp_path / "broker.sqlite").exists() and (tmp_path / "jobs.sqlite").exists()
        proc.send_signal(signal.SIGINT)
        assert proc.wait(30) == 0
        deadline = time.monotonic() + 10  # pool processes are reaped just after serve returns
        while (left := [pid for pid in children if Path(f"/proc/{pid}").exists()]) and time.monotonic() < deadline:
            time.sleep(0.1)
        assert left == []
    finally:
        if proc.poll() is None:
            proc.kill()


def test_open_address_needs_a_token_and_token_create_prints_one(tmp_path: Path) -> None:
    refused = subprocess.run(
        [*WAKEYARD, "serve", "--host", "0.0.0.0", "--data", str(tmp_path)], capture_output=True, text=True, timeout=60
    )
    assert refused.returncode == 2 and "without API tokens" in refused.stderr
    assert "\\n" not in refused.stderr and "\nCreate one first" in refused.stderr  # two lines, no literal \n
    made = subprocess.run(
        [*WAKEYARD, "token", "create", "ana", "--data", str(tmp_path)], capture_output=True, text=True, timeout=60
    )
    token = made.stdout.strip()
    assert made.returncode == 0 and token.startswith("wy_") and len(token) > 30
    assert token not in (tmp_path / "jobs.sqlite").read_bytes().decode("latin-1")
    again = subprocess.run(
        [*WAKEYARD, "token", "create", "ana", "--data", str(tmp_path)], capture_output=True, text=True, timeout=60
    )
    assert again.returncode == 2 and "exists already" in again.stderr


def test_token_list_and_revoke(tmp_path: Path) -> None:
    """Tokens are listed with id, state and expiry (never the secret), revoked by id; bad input is exit 2."""

    def token(*args: str) -> subprocess.CompletedProcess[str]:
        cmd = [*WAKEYARD, "token", *args, "--data", str(tmp_path)]
        return subprocess.run(cmd, capture_output=True, text=True, timeout=60)

    made = token("create", "ana", "--expires", "7")
    secret = made.stdout.strip()
    assert made.returncode == 0 and secret.startswith("wy_") and "until " in made.stderr
    assert token("create", "ops", "--admin").returncode == 0
    assert token("create", "box-2", "--worker").returncode == 0
    both = token("create", "box-3", "--worker", "--admin")
    assert both.returncode == 2 and "--worker: " in both.stderr and "admin" in both.stderr
    listed = token("list")
    header, *rows = listed.stdout.splitlines()
    assert header.split()[:4] == ["ID", "NAME", "ADMIN", "STATE"] and secret not in listed.stdout
    assert header.split()[-1] == "KIND"
    ana = next(r.split() for r in rows if r.split()[1] == "ana")
    assert ana[2:4] == ["no", "active"] and ana[-1] == "user" and len(rows) == 3
    assert next(r.split() for r in rows if r.split()[1] == "box-2")[-1] == "worker"
    revoked = token("revoke", ana[0])
    assert revoked.returncode == 0 and f"revoked the token {ana[0]} of 'ana'" in revoked.stderr
    assert next(r.split() for r in token("list").stdout.splitlines() if " ana " in r)[3] == "revoked"
    unknown = token("revoke", "nope")
    assert unknown.returncode == 2 and "no token nope" in unknown.stderr
    bad = token("create", "bo", "--expires", "0")
    assert bad.returncode == 2 and "--expires: " in bad.stderr
    assert token("create", "ana").returncode == 0  # a revoked token's name can be given a new one


def test_first_admin_token_lets_serve_listen_openly_without_a_restart(tmp_path: Path) -> None:
    """The compose API's case: no token exists yet, and serve on 0.0.0.0 makes the first admin token itself."""
    port = _free_port()
    env = {**os.environ, "WAKEYARD_FIRST_ADMIN": "ops", "WAKEYARD_WORKERS": "0"}
    run = [*WAKEYARD, "serve", "--host", "0.0.0.0", "--port", str(port), "--data", str(tmp_path)]
    proc = subprocess.Popen(run, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
    try:
        deadline, answer = time.monotonic() + 60, None
        while answer is None and time.monotonic() < deadline and proc.poll() is None:
            try:
                answer = httpx.get(f"http://127.0.0.1:{port}/api/v1/jobs", timeout=2)
            except httpx.TransportError:
                time.sleep(0.2)
        assert answer is not None and answer.status_code == 401, proc.poll()
        saved = tmp_path / "first-admin-token"
        token = saved.read_text().strip()
        assert saved.stat().st_mode & 0o777 == 0o600 and token.startswith("wy_")
        mine = httpx.get(f"http://127.0.0.1:{port}/api/v1/jobs", headers={"Authorization": f"Bearer {token}"})
        assert mine.status_code == 200
    finally:
        proc.send_signal(signal.SIGINT)
        _, err = proc.communicate(timeout=30)
    assert "created the admin token 'ops'" in err and token not in err
