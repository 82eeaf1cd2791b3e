"""The transfers before and after a remote box's solve. A box that resumes a job fetches its checkpoint first; on a
slow link that takes longer than the lease, and the box keeps the job only because it goes on sending heartbeats
meanwhile (a real service with its lease reaper, reached through a relay that throttles what the service sends).
Result files the service refuses (its upload limits) fail the job with the reason."""

from __future__ import annotations

import io
import os
import socket
import time
from pathlib import Path

import numpy as np

from tests.helpers import Relay, served, settings_for, tiny
from wakeyard.api.app import create_app
from wakeyard.api.auth import create_token
from wakeyard.core.store import Claimed
from wakeyard.worker.remote import RemoteLedger, Uploader, fetch
from wakeyard.worker.service_client import ServiceClient

BLOCK, PAUSE = 32 * 1024, 0.2  # at most this many bytes per pause from the service, on each connection


class SlowLink(Relay):
    """The box's requests pass at once, the service's answers at BLOCK per PAUSE."""

    def to_box(self, src: socket.socket, dst: socket.socket, number: int) -> None:
        while block := src.recv(BLOCK):
            dst.sendall(block)
            time.sleep(PAUSE)


def test_a_slow_checkpoint_download_keeps_the_lease(tmp_path: Path) -> None:
    lease_seconds = 1.5
    settings = settings_for(
        tmp_path / "service", "wakeyard-fetch", broker="", lease_seconds=lease_seconds, reaper_seconds=0.2
    )
    app = create_app(settings)
    store = app.state.store
    job_id = store.create("ana", tiny(), []).id
    token = create_token(store, "box", kind="worker")
    buffer = io.BytesIO()
    np.savez(buffer, step=7, snapshots=np.array([], dtype=int), state=np.frombuffer(os.urandom(2**19), np.uint8))
    checkpoint = tmp_path / "checkpoint.npz"
    checkpoint.write_bytes(buffer.getvalue())  # half a MiB: 16 blocks, over three seconds on the slow link

    with served(app) as port:
        first = ServiceClient(f"http://127.0.0.1:{port}", token)
        old = first.claim("box:1")
        assert old is not None and old["job_id"] == job_id
        first.upload(job_id, old["lease"], checkpoint, "checkpoint.npz")
        first.close()
        assert store.expire_leases(lease_seconds=0.0, max_attempts=3) == [job_id]  # that box went silent

        link = SlowLink(port)
        box = ServiceClient(f"http://127.0.0.1:{link.port}", token)
        try:
            claimed = box.claim("box:2")
            assert claimed is not None and claimed["job_id"] == job_id
            job = Claimed(job_id, claimed["lease"], claimed["spec"], claimed["attempts"])
            out = tmp_path / "box" / job_id
            started = time.monotonic()
            step = fetch(box, job, claimed["files"], out, claimed["heartbeat_seconds"])
            took = time.monotonic() - started
        finally:
            box.close()
            link.close()
        assert took > 2 * lease_seconds  # the download outlasted the lease: only the heartbeats kept the job
        assert step == 7 and (out / "checkpoint.npz").read_bytes() == checkpoint.read_bytes()
        assert store.lease_held(job_id, job.claim)  # still this box's: not re-queued, not given to another box
        assert store.get(job_id).attempts == 2


def test_results_over_the_services_upload_limit_fail_the_job_saying_so(tmp_path: Path) -> None:
    settings = settings_for(tmp_path / "service", "wakeyard-refused", broker="", max_upload_mb=1000 / 2**20)
    app = create_app(settings)
    store = app.state.store
    job_id = store.create("ana", tiny(), []).id
    with served(app) as port:
        box = ServiceClient(f"http://127.0.0.1:{port}", create_token(store, "box", kind="worker"))
        try:
            claimed = box.claim("box:1")
            assert claimed is not None
            job = Claimed(job_id, claimed["lease"], claimed["spec"], claimed["attempts"])
            out = tmp_path / "box" / job_id
            (out / "fields").mkdir(parents=True)
            (out / "summary.json").write_text("{}")
            (out / "fields" / "step_000010.vtu").write_bytes(b"v" * 1001)
            ledger = RemoteLedger(box, Uploader(box, job, out))
            assert ledger.finish(job_id, job.claim, "succeeded", summary={})
        finally:
            box.close()
    done = store.get(job_id)
    assert done.state == "failed" and done.summary is None
    assert "fields/step_000010.vtu: 413" in done.error and "per-file upload limit of 1,000 bytes" in done.error
