"""What one request may cost: a study over the cap is refused before its points are checked, checking stops at
a time bound, and a request body that stalls is refused after a timeout (a real ``wakeyard serve``)."""

from __future__ import annotations

import json
import socket
from pathlib import Path

from fastapi.testclient import TestClient

from tests.helpers import TINY
from tests.worker.test_supervision import Serve


def _sweep(path: str, values: list[float]) -> dict:
    return {
        "kind": "sweep",
        "base": {**TINY, "analysis": {"mode": "steady"}},
        "vary": [{"path": path, "values": values}],
    }


def test_the_cap_comes_before_the_points_are_checked(offline: TestClient) -> None:
    """Four points over a cap of three: 429 although point 1 is invalid (checking it would have given 422)."""
    r = offline.post("/api/v1/studies", json=_sweep("bodies.0.radius", [0.05, -0.01, 0.02, 0.03]))
    assert r.status_code == 429 and "would add 4" in r.json()["detail"][0]["message"]
    r = offline.post("/api/v1/studies", json=_sweep("bodies.0.radius", [0.05, -0.01, 0.02]))
    assert r.status_code == 422 and [d["field"] for d in r.json()["detail"]] == ["points.1.bodies.0.radius"]


def test_checking_a_study_stops_at_the_time_bound(offline: TestClient) -> None:
    offline.app.state.settings.max_validation_seconds = 1e-9  # past before the first point is checked
    r = offline.post("/api/v1/studies", json=_sweep("inflow.peak_velocity", [0.1, 0.2]))
    assert r.status_code == 422
    assert r.json()["detail"] == [
        {
            "field": "(body)",
            "message": "checking the study's points took too long "
            "(stopped at point 0 of 2): use fewer points or simpler bodies",
        }
    ]
    assert offline.get("/api/v1/studies").json()["studies"] == []


def _stalled(port: int, head: bytes) -> tuple[str, dict]:
    """Send ``head`` (headers and the start of a body), then nothing: the server must answer on its own."""
    with socket.create_connection(("127.0.0.1", port), timeout=60) as conn:
        conn.sendall(head)
        reply = b""
        while b"\r\n\r\n" not in reply or not reply.rstrip().endswith(b"}"):
            chunk = conn.recv(65536)
            if not chunk:
                break
            reply += chunk
    status, _, rest = reply.partition(b"\r\n")
    return status.decode(), json.loads(rest.partition(b"\r\n\r\n")[2])


def test_a_stalled_body_is_refused_after_the_timeout(tmp_path: Path) -> None:
    serve = Serve(tmp_path, tmp_path / "serve.log", workers=0, WAKEYARD_MAX_BODY_SECONDS="1")
    try:
        start = b"POST /api/v1/jobs HTTP/1.1\r\nHost: localhost\r\nContent-Type: application/json\r\n"
        expected = {"detail": [{"field": "(body)", "message": "request body: not received within 1 s"}]}
        for head in (
            start + b'Content-Length: 500\r\n\r\n{"title": ',
            start + b'Transfer-Encoding: chunked\r\n\r\n9\r\n{"title":\r\n',
        ):
            status, body = _stalled(serve.port, head)
            assert status == "HTTP/1.1 408 Request Timeout" and body == expected
    finally:
        serve.stop()
