"""Shared pieces of the service tests: the tiny case, settings, a real worker subprocess, polling."""

from __future__ import annotations

import contextlib
import copy
import itertools
import os
import signal
import socket
import subprocess
import sys
import threading
import time
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

import pytest
import uvicorn
from fastapi import FastAPI
from fastapi.testclient import TestClient

from wakeyard.core.migrate import migrate
from wakeyard.core.settings import Settings

from .hold import Hold

# WAKEYARD_TEST_REDIS_DB lets two checkouts run the service tests at once on one Redis (default 5, 6)
REDIS_DB = int(os.environ.get("WAKEYARD_TEST_REDIS_DB", "5"))

# The cylinder and fluid of the 2D-1 benchmark (Schäfer & Turek 1996) in a channel shortened to 1.0: a cheap,
# well-known Re-20 case for the service tests (no published value is checked here).
TINY: dict[str, Any] = {
    "title": "cylinder in a shortened 2D-1 channel (test)",
    "channel": {"length": 1.0, "height": 0.41},
    "bodies": [{"name": "pipe", "shape": "circle", "center": [0.2, 0.2], "radius": 0.05}],
    "fluid": {"density": 1.0, "viscosity": 1e-3},
    "inflow": {"peak_velocity": 0.3, "ramp_time": 0.2},
    "mesh": {"preset": "coarse", "scale": 2.0},
    "analysis": {
        "mode": "transient",
        "scheme": "bdf2-imex",
        "time_step": 0.01,
        "end_time": 0.3,
        "output_interval": 0.1,
        "checkpoint_interval": 5,
    },
}


def interrupted_then_resumed(spec: dict[str, Any], folder: Path, steps: int) -> dict[str, Any]:
    """Run ``spec`` into ``folder``, cancel it after ``steps`` steps, then run it again (it resumes from its last
    checkpoint); the resumed run's summary."""
    from wakeyard.solver import Cancelled, run

    checks = itertools.count(1)
    with pytest.raises(Cancelled):
        run(spec, folder, should_stop=lambda: next(checks) > steps)
    return run(spec, folder)


def tiny(end_time: float = 0.3, **analysis: Any) -> dict[str, Any]:
    spec = copy.deepcopy(TINY)
    spec["analysis"].update(end_time=end_time, **analysis)
    return spec


def settings_for(folder: Path, queue: str, broker: str, **extra: Any) -> Settings:
    values: dict[str, Any] = {
        "data_dir": folder,
        "broker_url": broker,
        "queue": queue,
        "heartbeat_seconds": 0.5,
        "reaper_seconds": 0.5,
        "lease_seconds": 30.0,
        "workers": 1,
    }
    values.update(extra)
    settings = Settings(**values)
    settings.data_dir.mkdir(parents=True, exist_ok=True)
    migrate(settings.db_url)  # as `wakeyard serve` does before it starts the API
    return settings


def environment(settings: Settings) -> dict[str, str]:
    """The same settings for a worker subprocess, as WAKEYARD_* variables."""
    env = dict(os.environ)
    for name, value in settings.model_dump().items():
        env[f"WAKEYARD_{name.upper()}"] = str(value)
    return env


class Worker:
    """A real Celery worker process group on the settings' queue, started by ``wakeyard worker``."""

    def __init__(self, settings: Settings, log: Path, hold: Hold | None = None):
        self.log = log
        env = environment(settings)
        if hold is not None:  # park the solver mid-run for the test (see hold.py)
            env.update(hold.environment())
        self.proc = subprocess.Popen(
            [sys.executable, "-c", "import sys; from wakeyard.cli.main import main; sys.exit(main())", "worker"],
            env=env,
            stdout=log.open("w"),
            stderr=subprocess.STDOUT,
            start_new_session=True,
        )
        deadline = time.monotonic() + 60
        while "ready." not in log.read_text():
            if self.proc.poll() is not None or time.monotonic() > deadline:
                raise RuntimeError(f"worker did not start:\n{log.read_text()}")
            time.sleep(0.2)

    def kill(self) -> None:
        """kill -9 of the whole worker: main process and pool children."""
        os.killpg(self.proc.pid, signal.SIGKILL)
        self.proc.wait(10)

    def stop(self) -> None:
        if self.proc.poll() is None:
            os.killpg(self.proc.pid, signal.SIGTERM)
            try:
                self.proc.wait(10)
            except subprocess.TimeoutExpired:
                self.kill()


@contextmanager
def served(app: FastAPI) -> Iterator[int]:
    """``app`` behind a real HTTP server (uvicorn in a thread, its lifespan and reaper running); yields its port."""
    server = uvicorn.Server(uvicorn.Config(app, host="127.0.0.1", port=0, log_level="warning"))
    thread = threading.Thread(target=server.run, daemon=True)
    thread.start()
    while not server.started:
        time.sleep(0.05)
    try:
        yield server.servers[0].sockets[0].getsockname()[1]
    finally:
        server.should_exit = True
        thread.join(10)


def wait_for(
    client: TestClient, job_id: str, until: Callable[[dict[str, Any]], bool], timeout: float = 60.0
) -> dict[str, Any]:
    deadline = time.monotonic() + timeout
    while True:
        job = client.get(f"/api/v1/jobs/{job_id}").json()
        if until(job):
            return job
        if time.monotonic() > deadline:
            raise AssertionError(f"timed out waiting; job is {job}")
        time.sleep(0.2)


def wait_until(what: str, check: Callable[[], Any], timeout: float, logs: list[Path]) -> Any:
    """``check()``'s first truthy answer; on timeout fail with the tails of ``logs`` (the processes' own words)."""
    deadline = time.monotonic() + timeout
    while time.monotonic() < deadline:
        if found := check():
            return found
        time.sleep(0.1)
    shown = "\n".join(f"--- {log.name}\n{log.read_text()[-3000:]}" for log in logs)
    raise AssertionError(f"timed out waiting for {what}\n{shown}")


def finished(job: dict[str, Any]) -> bool:
    return job["state"] in ("succeeded", "failed", "cancelled")


class Relay:
    """A TCP relay on a free loopback port to the service at ``upstream``, as a network link between a box and the
    service would be; subclasses say how each direction passes (``to_service``, ``to_box``: plain copies here)."""

    def __init__(self, upstream: int):
        self.upstream, self.connections = upstream, 0
        self.listener = socket.create_server(("127.0.0.1", 0))
        self.port = self.listener.getsockname()[1]
        threading.Thread(target=self._accept, daemon=True).start()

    def _accept(self) -> None:
        while True:
            try:
                client, _ = self.listener.accept()
            except OSError:
                return
            self.connections += 1
            server = socket.create_connection(("127.0.0.1", self.upstream))
            for pass_on, src, dst in ((self.to_service, client, server), (self.to_box, server, client)):
                threading.Thread(target=self._pipe, args=(pass_on, src, dst, self.connections), daemon=True).start()

    @staticmethod
    def _pipe(
        pass_on: Callable[[socket.socket, socket.socket, int], None],
        src: socket.socket,
        dst: socket.socket,
        number: int,
    ) -> None:
        with contextlib.suppress(OSError):
            pass_on(src, dst, number)
        for s in (src, dst):
            with contextlib.suppress(OSError):
                s.shutdown(socket.SHUT_RDWR)
            s.close()

    def to_service(self, src: socket.socket, dst: socket.socket, number: int) -> None:
        """Pass the box's bytes of connection ``number`` (1 the first) on to the service."""
        while block := src.recv(65536):
            dst.sendall(block)

    def to_box(self, src: socket.socket, dst: socket.socket, number: int) -> None:
        """Pass the service's answers back to the box."""
        while block := src.recv(65536):
            dst.sendall(block)

    def close(self) -> None:
        self.listener.close()
