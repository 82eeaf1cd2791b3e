"""What a worker token can make the service store and for how long it can hold an upload open: a file over the
per-file limit and uploads past the per-job total are refused with 413 naming the limit, a body that stalls or
trickles past the time limit with 408 (a real HTTP server); a refused upload leaves no part behind and the file
already stored under its name stays as it was."""

from __future__ import annotations

import json
import select
import socket
import time
from pathlib import Path

import httpx
from fastapi.testclient import TestClient

from tests.helpers import served, settings_for, tiny
from tests.worker.test_remote_api import bearer, problem, setup, sha
from wakeyard.api.app import create_app
from wakeyard.api.auth import create_token
from wakeyard.api.uploads import Uploads
from wakeyard.core.settings import Settings

MB = 2**20


def _settings(client: TestClient) -> Settings:
    return client.app.state.settings  # type: ignore[attr-defined,no-any-return]


def test_a_file_over_the_per_file_limit_is_refused_naming_it(offline: TestClient) -> None:
    _settings(offline).max_upload_mb = 1000 / MB
    _, box, job_id = setup(offline)
    lease = box.claim().json()["lease"]
    data = b"x" * 1001
    field, message = problem(box.put(job_id, lease, "forces.csv", data, sha(data)), 413)
    assert field == "Content-Length" and message == "1,001 bytes: over the per-file upload limit of 1,000 bytes"
    field, message = problem(box.put(job_id, lease, "forces.csv", data[:10], sha(data), (0, len(data))), 413)
    assert field == "Content-Range" and "per-file upload limit of 1,000 bytes" in message
    assert box.received(job_id, lease, "forces.csv") == 0
    assert not (_settings(offline).jobs_dir / job_id / "forces.csv").exists()
    fits = data[:1000]
    assert box.put(job_id, lease, "forces.csv", fits, sha(fits)).status_code == 201


def test_uploads_past_the_per_job_total_are_refused_and_leave_the_stored_files_alone(offline: TestClient) -> None:
    settings = _settings(offline)
    settings.max_job_upload_mb = 3500 / MB
    _, box, job_id = setup(offline)
    lease = box.claim().json()["lease"]
    a, b, c, e = (bytes([k]) * n for k, n in ((1, 1000), (2, 1000), (3, 1000), (5, 400)))
    assert box.put(job_id, lease, "fields/a.npz", a, sha(a)).status_code == 201
    assert box.put(job_id, lease, "fields/b.npz", b, sha(b)).status_code == 201
    assert box.put(job_id, lease, "fields/c.npz", c[:500], sha(c), (0, len(c))).status_code == 202
    a = bytes([9]) * 1000  # a new version replaces the stored one: it is not counted twice
    assert box.put(job_id, lease, "fields/a.npz", a, sha(a)).status_code == 201
    assert box.put(job_id, lease, "fields/c.npz", c[500:], sha(c), (500, len(c))).status_code == 201
    assert box.put(job_id, lease, "fields/e.npz", e[:100], sha(e), (0, len(e))).status_code == 202

    settings.max_job_upload_mb = 3300 / MB
    field, message = problem(box.put(job_id, lease, "fields/e.npz", e[100:], sha(e), (100, len(e))), 413)
    assert field == "Content-Range"
    held = f"400 bytes beside the 3,000 job {job_id} holds or is receiving"
    assert message == f"{held}: over the per-job upload limit of 3,300 bytes"
    assert box.received(job_id, lease, "fields/e.npz") == 0  # what had arrived of it is gone
    d = b"d" * 600
    field, message = problem(box.put(job_id, lease, "fields/d.npz", d, sha(d)), 413)
    assert field == "Content-Length" and "per-job upload limit of 3,300 bytes" in message
    folder = settings.jobs_dir / job_id / "fields"
    assert sorted(p.name for p in folder.iterdir()) == ["a.npz", "b.npz", "c.npz"]
    assert [(folder / n).read_bytes() for n in ("a.npz", "b.npz", "c.npz")] == [a, b, c]
    small = b"s" * 300  # still within the total
    assert box.put(job_id, lease, "fields/d.npz", small, sha(small)).status_code == 201


def _answer(port: int, head: bytes, trickle: float | None) -> tuple[str, dict]:
    """Send ``head`` (headers and the start of a body), then one more byte every ``trickle`` seconds, or nothing
    (None), until the server answers on its own."""
    with socket.create_connection(("127.0.0.1", port), timeout=60) as conn:
        conn.sendall(head)
        conn.settimeout(trickle or 60)
        reply = b""
        while b"\r\n\r\n" not in reply or not reply.rstrip().endswith(b"}"):
            try:
                chunk = conn.recv(65536)
            except TimeoutError:
                conn.sendall(b"x")
                continue
            if not chunk:
                break
            reply += chunk
    status, _, rest = reply.partition(b"\r\n")
    return status.decode(), json.loads(rest.partition(b"\r\n\r\n")[2])


def test_a_stalled_or_endless_upload_is_refused_and_its_part_removed(tmp_path: Path) -> None:
    settings = settings_for(tmp_path, "wakeyard-upload-time", broker="", upload_idle_seconds=1, max_upload_seconds=3)
    app = create_app(settings)
    store = app.state.store
    job_id = store.create("ana", tiny(), []).id
    token = create_token(store, "box", kind="worker")
    with served(app) as port, httpx.Client(base_url=f"http://127.0.0.1:{port}/api/v1/worker") as http:
        http.headers.update(bearer(token))
        lease = http.post("/claim", json={"worker": "box:1"}).json()["lease"]
        stored = b"time,fx\n0,1\n"
        url = f"/jobs/{job_id}/files/forces.csv"
        put = http.put(url, content=stored, headers={"Lease": lease, "Content-SHA256": sha(stored)})
        assert put.status_code == 201, put.text
        head = (
            f"PUT /api/v1/worker{url} HTTP/1.1\r\nHost: localhost\r\nAuthorization: Bearer {token}\r\n"
            f"Lease: {lease}\r\nContent-SHA256: {sha(b'y' * 1000)}\r\nContent-Length: 1000\r\n\r\n"
        ).encode() + b"y" * 100
        for trickle, message in (
            (None, "no bytes arrived for 1 s, the upload idle limit"),
            (0.3, "the upload took over 3 s, the upload time limit"),
        ):
            status, body = _answer(port, head, trickle)
            assert status == "HTTP/1.1 408 Request Timeout" and body == {
                "detail": [{"field": "(body)", "message": message}]
            }
            received = http.get(f"/jobs/{job_id}/uploads/forces.csv", headers={"Lease": lease}).json()["received"]
            assert received == 0  # nothing of it stays
        assert (settings.jobs_dir / job_id / "forces.csv").read_bytes() == stored


def _upload_parked(port: int, token: str, lease: str, url: str, data: bytes) -> socket.socket:
    """Start a PUT of ``data`` and send only the first half of its body: the upload stays in progress."""
    conn = socket.create_connection(("127.0.0.1", port), timeout=30)
    conn.sendall(
        (
            f"PUT /api/v1/worker{url} HTTP/1.1\r\nHost: localhost\r\nAuthorization: Bearer {token}\r\n"
            f"Lease: {lease}\r\nContent-SHA256: {sha(data)}\r\nContent-Length: {len(data)}\r\n\r\n"
        ).encode()
        + data[: len(data) // 2]
    )
    return conn


def _reply(conn: socket.socket) -> tuple[int, dict]:
    """The status and JSON body of the one answer on ``conn``."""
    reply = b""
    while b"\r\n\r\n" not in reply or len(reply.partition(b"\r\n\r\n")[2]) < _length(reply):
        chunk = conn.recv(65536)
        assert chunk, f"connection closed before the whole answer: {reply!r}"
        reply += chunk
    return int(reply.split(b" ", 2)[1]), json.loads(reply.partition(b"\r\n\r\n")[2])


def _length(reply: bytes) -> int:
    head = reply.partition(b"\r\n\r\n")[0].decode().lower()
    return next(int(line.split(":")[1]) for line in head.split("\r\n") if line.startswith("content-length:"))


def test_uploads_at_once_never_take_a_job_past_its_total(tmp_path: Path) -> None:
    """Six uploads into one job, all in progress at once through two API servers sharing the data folder (as two
    API processes of one box): only as many as fit the per-job total are taken, the rest are refused at once."""
    size, limit = 3000, 10_000  # three fit, a fourth would not
    settings = settings_for(tmp_path, "wakeyard-upload-race", broker="", max_job_upload_mb=limit / MB)
    first, second = create_app(settings), create_app(settings)
    store = first.state.store
    job_id = store.create("ana", tiny(), []).id
    token = create_token(store, "box", kind="worker")
    with served(first) as port_a, served(second) as port_b, httpx.Client(base_url=f"http://127.0.0.1:{port_a}") as http:
        http.headers.update(bearer(token))
        lease = http.post("/api/v1/worker/claim", json={"worker": "box:1"}).json()["lease"]
        files = {f"fields/f{k}.npz": bytes([k]) * size for k in range(6)}
        urls = {path: f"/jobs/{job_id}/files/{path}" for path in files}
        conns = {
            path: _upload_parked((port_a, port_b)[k % 2], token, lease, urls[path], data)
            for k, (path, data) in enumerate(files.items())
        }

        def settled() -> bool:  # each upload was refused or took its part file: all went through the check
            return all(
                select.select([conn], [], [], 0)[0] or Uploads(settings.jobs_dir).part(job_id, lease, path).exists()
                for path, conn in conns.items()
            )

        deadline = time.monotonic() + 30
        while not settled():
            assert time.monotonic() < deadline, "the uploads did not all reach the service"
            time.sleep(0.05)
        taken, refused = [], []
        for path, conn in conns.items():
            with conn:
                if not select.select([conn], [], [], 0)[0]:
                    conn.sendall(files[path][size // 2 :])
                status, body = _reply(conn)
            if status == 201:
                taken.append(path)
            else:
                assert status == 413, body
                [found] = body["detail"]
                assert found["field"] == "Content-Length" and "per-job upload limit of 10,000 bytes" in found["message"]
                refused.append(path)
        assert len(taken) == limit // size and len(refused) == len(files) - len(taken)
        folder = settings.jobs_dir / job_id
        stored = {
            p.relative_to(folder).as_posix() for p in folder.rglob("*") if p.is_file() and ".uploads" not in p.parts
        }
        assert stored == set(taken) and sum(len(files[p]) for p in taken) <= limit
        received = [http.get(f"/api/v1/worker/jobs/{job_id}/uploads/{p}", headers={"Lease": lease}) for p in refused]
        assert [r.json()["received"] for r in received] == [0] * len(refused)  # nothing partial of them stays
        # every reservation went with its upload: what is left of the total can be taken
        rest = b"r" * (limit - size * len(taken))
        put = http.put(
            f"/api/v1/worker{urls[refused[0]]}", content=rest, headers={"Lease": lease, "Content-SHA256": sha(rest)}
        )
        assert put.status_code == 201, put.text
