"""A remote worker's upload that a broken connection cuts off goes on from the bytes the service already has (it is
not sent again from the start); one whose body stalls until the service times it out (408, its part dropped) is sent
again from the start. Either way the file that lands in the job's folder is the whole file, by its hash."""

from __future__ import annotations

import hashlib
import logging
import os
import socket
import time
from collections.abc import Iterator
from pathlib import Path

import pytest

from tests.helpers import Relay, served, settings_for, tiny
from wakeyard.api.app import create_app
from wakeyard.api.auth import create_token
from wakeyard.core.store import Store
from wakeyard.worker.service_client import ServiceClient


class CuttingProxy(Relay):
    """Breaks its first connection after ``cut`` bytes from the box, as a dropped link would; counts every byte
    the box sends."""

    def __init__(self, upstream: int, cut: int):
        self.cut, self.sent = cut, 0
        super().__init__(upstream)

    def to_service(self, src: socket.socket, dst: socket.socket, number: int) -> None:
        limit = self.cut if number == 1 else None
        passed = 0
        while block := src.recv(65536):
            if limit is not None and passed + len(block) >= limit:
                dst.sendall(block[: limit - passed])
                self.sent += limit - passed
                time.sleep(0.3)  # let the service take in what arrived before the line goes dead
                return
            dst.sendall(block)
            passed += len(block)
            self.sent += len(block)


@pytest.fixture
def service(tmp_path: Path) -> Iterator[tuple[int, Store, Path]]:
    """A real HTTP server (uvicorn in a thread) with the API, on the embedded broker, no worker."""
    settings = settings_for(tmp_path / "service", "wakeyard-upload", broker="")
    app = create_app(settings)
    with served(app) as port:
        yield port, app.state.store, settings.jobs_dir


def test_a_cut_upload_continues_from_what_arrived(service: tuple[int, Store, Path], tmp_path: Path) -> None:
    port, store, jobs = service
    job_id = store.create("ana", tiny(), []).id
    size = 6 * 2**20
    proxy = CuttingProxy(port, cut=size // 2)
    client = ServiceClient(f"http://127.0.0.1:{proxy.port}", create_token(store, "box", kind="worker"))
    try:
        claimed = client.claim("box:1")
        assert claimed is not None and claimed["job_id"] == job_id
        local = tmp_path / "big.npz"
        local.write_bytes(os.urandom(size))
        digest = client.upload(job_id, claimed["lease"], local, "fields/step_000010.npz")
    finally:
        client.close()
        proxy.close()
    landed = jobs / job_id / "fields" / "step_000010.npz"
    assert digest == hashlib.sha256(local.read_bytes()).hexdigest() == hashlib.sha256(landed.read_bytes()).hexdigest()
    assert proxy.connections >= 2  # the first one was cut
    # sent again from the start it would be half the file more: 1.5 times its size; continued, about its size
    assert proxy.sent < 1.2 * size, proxy.sent


class StallingRelay(Relay):
    """Its first connection passes ``cut`` bytes from the box, then holds back the rest (read, never passed on), as a
    link that stalls would; later connections pass everything."""

    def __init__(self, upstream: int, cut: int):
        self.cut = cut
        super().__init__(upstream)

    def to_service(self, src: socket.socket, dst: socket.socket, number: int) -> None:
        passed = 0
        while block := src.recv(65536):
            if number == 1:
                block = block[: max(0, self.cut - passed)]
            if block:
                dst.sendall(block)
                passed += len(block)


def test_an_upload_the_service_timed_out_is_sent_again(tmp_path: Path, caplog: pytest.LogCaptureFixture) -> None:
    settings = settings_for(tmp_path / "service", "wakeyard-upload-stall", broker="", upload_idle_seconds=1)
    app = create_app(settings)
    store: Store = app.state.store
    job_id = store.create("ana", tiny(), []).id
    token = create_token(store, "box", kind="worker")
    local = tmp_path / "forces.csv"
    local.write_bytes(os.urandom(256 * 1024))
    with served(app) as port:
        claimer = ServiceClient(f"http://127.0.0.1:{port}", token)
        claimed = claimer.claim("box:1")
        claimer.close()
        assert claimed is not None and claimed["job_id"] == job_id
        relay = StallingRelay(port, cut=64 * 1024)  # headers and part of the body, then nothing for over a second
        client = ServiceClient(f"http://127.0.0.1:{relay.port}", token)
        try:
            with caplog.at_level(logging.WARNING, logger="wakeyard.worker.service_client"):
                digest = client.upload(job_id, claimed["lease"], local, "forces.csv")
        finally:
            client.close()
            relay.close()
    landed = settings.jobs_dir / job_id / "forces.csv"
    assert digest == hashlib.sha256(local.read_bytes()).hexdigest() == hashlib.sha256(landed.read_bytes()).hexdigest()
    assert relay.connections == 2  # the stalled one, then the one that carried the whole file again
    # sent again once, for the 408, on a new connection (the service closed the stalled one with its answer)
    [warned] = [r.getMessage() for r in caplog.records if r.name == "wakeyard.worker.service_client"]
    assert ": 408 (body): no bytes arrived for 1 s, the upload idle limit; sending it again" in warned
