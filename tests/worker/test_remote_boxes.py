"""Remote workers on separate hosts: the service in one network namespace, two ``wakeyard worker --url`` boxes in
two others (veth pairs, their own data folders, no database or broker address, only the service's URL). The box
running a job is killed whole (kill -9 of every process in its namespace); the job resumes on the other box from
the last checkpoint the first one uploaded and ends with the same forces as a run that was never interrupted."""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import shutil
import signal
import subprocess
import sys
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import httpx
import numpy as np
import pytest

from tests.helpers import tiny, wait_until
from wakeyard import solver
from wakeyard.solver.output import read_forces

PORT = 8000
MAIN = "import sys; from wakeyard.cli.main import main; sys.exit(main())"
# long enough for a few checkpoints before the kill and a resumed stretch after it, few snapshots (pictures are slow)
SPEC = tiny(end_time=3.0, output_interval=0.5, checkpoint_interval=10)


def _ip(*args: str) -> None:
    subprocess.run(["ip", *args], check=True, capture_output=True, text=True)


def _sha(path: Path) -> str:
    return hashlib.sha256(path.read_bytes()).hexdigest()


class Hosts:
    """Three namespaces: the service's, linked by one veth pair to this (the root) namespace and by one each to the
    two worker boxes. Addresses 10.N.k.1 (outer end) and 10.N.k.2 (service end) on /30 links."""

    def __init__(self) -> None:
        tag = f"wy{os.getpid() % 100000}"
        self.net = 200 + os.getpid() % 50
        self.service, self.boxes = f"{tag}s", {"box-a": f"{tag}a", "box-b": f"{tag}b"}
        self.procs: list[subprocess.Popen[bytes]] = []

    def create(self) -> None:
        tag = self.service[:-1]
        for ns in (self.service, *self.boxes.values()):
            _ip("netns", "add", ns)
            _ip("-n", ns, "link", "set", "lo", "up")
        self._link(f"{tag}r", None, 0)
        for k, ns in enumerate(self.boxes.values(), start=1):
            self._link(f"{tag}{ns[-1]}", ns, k)

    def _link(self, name: str, outer: str | None, k: int) -> None:
        _ip("link", "add", name, "type", "veth", "peer", "name", f"{name}s")
        _ip("link", "set", f"{name}s", "netns", self.service)
        _ip("-n", self.service, "addr", "add", f"10.{self.net}.{k}.2/30", "dev", f"{name}s")
        _ip("-n", self.service, "link", "set", f"{name}s", "up")
        where = [] if outer is None else ["-n", outer]
        if outer is not None:
            _ip("link", "set", name, "netns", outer)
        _ip(*where, "addr", "add", f"10.{self.net}.{k}.1/30", "dev", name)
        _ip(*where, "link", "set", name, "up")

    def url(self, k: int) -> str:
        """The service as seen over link ``k`` (0: from here, 1 and 2: from the boxes)."""
        return f"http://10.{self.net}.{k}.2:{PORT}"

    def start(self, ns: str, args: list[str], env: dict[str, str], log: Path) -> subprocess.Popen[bytes]:
        proc = subprocess.Popen(
            ["ip", "netns", "exec", ns, sys.executable, "-c", MAIN, *args],
            env=env,
            stdout=log.open("w"),
            stderr=subprocess.STDOUT,
            start_new_session=True,
        )
        self.procs.append(proc)
        return proc

    def kill(self, ns: str) -> list[int]:
        """kill -9 every process in the namespace: the box is gone, as if switched off."""
        pids = [
            int(p) for p in subprocess.run(["ip", "netns", "pids", ns], capture_output=True, text=True).stdout.split()
        ]
        for pid in pids:
            with contextlib.suppress(ProcessLookupError):
                os.kill(pid, signal.SIGKILL)
        return pids

    def close(self) -> None:
        for ns in (*self.boxes.values(), self.service):
            self.kill(ns)
        for proc in self.procs:
            with contextlib.suppress(subprocess.TimeoutExpired):
                proc.wait(10)
        for ns in (*self.boxes.values(), self.service):
            subprocess.run(["ip", "netns", "del", ns], capture_output=True)  # takes its veth pairs along
        subprocess.run(["ip", "link", "del", f"{self.service[:-1]}r"], capture_output=True)  # if left half-made


@pytest.fixture
def hosts() -> Iterator[Hosts]:
    if os.geteuid() != 0:
        pytest.skip("needs root: the hosts are network namespaces (ip netns)")
    if shutil.which("ip") is None:
        pytest.skip("needs the ip command (Debian's iproute2) for the network namespaces")
    made = Hosts()
    try:
        made.create()
        yield made
    finally:  # also after a setup that failed half-way
        made.close()


def _clean_env(**values: str) -> dict[str, str]:
    """No WAKEYARD_* from this test process (no database or broker address reaches a box by accident)."""
    env = {k: v for k, v in os.environ.items() if not k.startswith("WAKEYARD_")}
    return {**env, **values}


def _token(data: Path, name: str, *flags: str) -> str:
    made = subprocess.run(
        [sys.executable, "-c", MAIN, "token", "create", name, *flags, "--data", str(data)],
        capture_output=True,
        text=True,
        env=_clean_env(),
        timeout=120,
        check=True,
    )
    return made.stdout.strip()


def test_a_job_whose_box_vanishes_resumes_on_another_box_from_its_uploaded_checkpoint(
    hosts: Hosts, tmp_path: Path
) -> None:
    service_data = tmp_path / "service"
    admin = _token(service_data, "ana", "--admin")
    service_log = tmp_path / "service.log"
    hosts.start(
        hosts.service,
        ["serve", "--host", "0.0.0.0", "--port", str(PORT), "--data", str(service_data), "--workers", "0"],
        _clean_env(WAKEYARD_LEASE_SECONDS="4", WAKEYARD_REAPER_SECONDS="0.5", WAKEYARD_HEARTBEAT_SECONDS="0.5"),
        service_log,
    )
    api = httpx.Client(base_url=hosts.url(0) + "/api/v1", headers={"Authorization": f"Bearer {admin}"}, timeout=10)

    def answers() -> bool:
        try:
            return api.get("/health").status_code in (200, 503)
        except httpx.TransportError:
            return False

    wait_until("the service", answers, 60, [service_log])
    logs = {name: tmp_path / f"{name}.log" for name in hosts.boxes}
    for k, (name, ns) in enumerate(hosts.boxes.items(), start=1):
        secret = _token(service_data, name, "--worker")
        env = _clean_env(WAKEYARD_WORKER_TOKEN=secret, WAKEYARD_WORKERS="1")
        hosts.start(ns, ["worker", "--url", hosts.url(k), "--data", str(tmp_path / name)], env, logs[name])
    every_log = [service_log, *logs.values()]
    for log in logs.values():
        wait_until(f"{log.stem} polling", lambda log=log: "polling" in log.read_text(), 60, every_log)

    job_id = api.post("/jobs", json=SPEC).json()["id"]
    manifest = service_data / "jobs" / job_id / ".uploads" / "manifest.json"

    def checkpointed() -> dict[str, Any] | None:
        job = api.get(f"/jobs/{job_id}").json()
        files = json.loads(manifest.read_text()) if manifest.exists() else {}
        return job if job["state"] == "running" and "checkpoint.npz" in files else None

    running = wait_until("a checkpoint uploaded", checkpointed, 120, every_log)
    first = running["worker_host"].split("/")[0]
    other = next(name for name in hosts.boxes if name != first)
    assert hosts.kill(hosts.boxes[first])  # the whole box: supervisor and worker process
    job = wait_until(
        "the job to finish on the other box",
        lambda: (j := api.get(f"/jobs/{job_id}").json())["state"] in ("succeeded", "failed", "cancelled") and j,
        240,
        every_log,
    )
    assert job["state"] == "succeeded", job["error"]
    assert job["attempts"] == 2 and job["worker_host"].startswith(f"{other}/")

    # resumed, not restarted: the other box says so, and its summary names the step it went on from
    resumed = job["summary"]["resumed_from_step"]
    assert resumed is not None and resumed > 0
    assert f"resuming from the uploaded checkpoint of step {resumed}" in logs[other].read_text()
    assert "done here" not in logs[first].read_text()  # the vanished box recorded nothing

    # forces.csv is whole and continuous from the first step: the rows before the kill came with the checkpoint
    forces = service_data / "jobs" / job_id / "forces.csv"
    columns, rows = read_forces(forces)
    t, dt = rows[:, 0], rows[:, columns.index("time_step")]
    assert t[0] == pytest.approx(SPEC["analysis"]["time_step"]) and t[-1] == pytest.approx(SPEC["analysis"]["end_time"])
    assert np.allclose(np.diff(t), dt[1:]) and len(t) == job["summary"]["steps"]
    # and nothing was lost or run differently: the same forces as a run on one machine that was never interrupted
    alone = tmp_path / "alone"
    solver.run(SPEC, alone)
    assert forces.read_bytes() == (alone / "forces.csv").read_bytes()

    # every result file arrived whole: the service's copy hashes as the other box's own and as the upload said
    uploaded = json.loads(manifest.read_text())
    kept = tmp_path / other / "jobs" / job_id
    results = [
        p for p in kept.rglob("*") if p.is_file() and not any(s.startswith(".") for s in p.relative_to(kept).parts)
    ]
    assert {"summary.json", "forces.csv", "fields/flow.pvd"} <= {p.relative_to(kept).as_posix() for p in results}
    for path in results:
        rel = path.relative_to(kept).as_posix()
        assert uploaded[rel]["sha256"] == _sha(path) == _sha(service_data / "jobs" / job_id / rel), rel
    pvd = (service_data / "jobs" / job_id / "fields" / "flow.pvd").read_text()
    for name in (part.split('"')[0] for part in pvd.split('file="')[1:]):  # the snapshots from both boxes
        assert (service_data / "jobs" / job_id / "fields" / name).is_file(), name
    assert "checkpoint.npz" not in uploaded  # a finished run's restart state is not kept
