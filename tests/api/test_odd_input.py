"""Odd input never gets a 5xx, on SQLite and on PostgreSQL: NUL characters, names over 255 bytes, symlink loops,
huge and non-ASCII-digit cursors, and request bodies in every size shape."""

from __future__ import annotations

from collections.abc import Iterator
from pathlib import Path
from urllib.parse import quote

import pytest
from fastapi.testclient import TestClient
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tests.helpers import TINY, settings_for, tiny
from wakeyard.api.app import create_app


@pytest.fixture
def client(tmp_path: Path, store_url: str) -> Iterator[TestClient]:
    app = create_app(
        settings_for(tmp_path, "wakeyard-odd", broker="", database_url=store_url, max_active_per_user=10**6)
    )
    with TestClient(app) as c:
        yield c


def fields(r) -> list[str]:  # noqa: ANN001
    return [d["field"] for d in r.json()["detail"]]


def test_nul_anywhere_is_422_naming_where(client: TestClient) -> None:
    job_id = client.post("/api/v1/jobs", json=tiny()).json()["id"]
    assert fields(client.post("/api/v1/jobs", json={**TINY, "title": "pier\x00"})) == ["title"]
    named = {**TINY, "bodies": [{**TINY["bodies"][0], "name": "p\x00ipe"}]}
    assert fields(client.post("/api/v1/jobs", json=named)) == ["bodies.0.name"]
    assert fields(client.post(f"/api/v1/jobs/{job_id}/clone", json={"title": "\x00"})) == ["title"]
    sweep = {"kind": "sweep", "title": "a\x00", "base": TINY, "vary": [{"path": "inflow.peak_velocity", "values": [1]}]}
    assert fields(client.post("/api/v1/studies", json=sweep)) == ["title"]
    # with other problems, all at once
    assert fields(
        client.post("/api/v1/studies", json={"kind": "sweep", "title": "a\x00", "base": TINY, "vary": []})
    ) == ["(spec)", "title"]
    for url in (
        "/api/v1/jobs?tag=%00",
        "/api/v1/jobs?owner=a%00b",
        "/api/v1/jobs/ab%00cd",
        f"/api/v1/jobs/{job_id}/files/forces%00.csv",
        "/api/v1/studies/%00",
    ):
        r = client.get(url)
        assert r.status_code == 422 and r.json()["detail"][0]["message"].endswith("(U+0000)"), url
    r = client.post("/api/v1/jobs", params={"tags": ["duct\x00"]}, json=tiny())
    assert r.status_code == 422 and fields(r) == ["(query)"]


def test_file_names_too_long_and_symlink_loops_are_404(client: TestClient) -> None:
    job_id = client.post("/api/v1/jobs", json=tiny()).json()["id"]
    folder = client.app.state.settings.jobs_dir / job_id
    (folder / "fields").mkdir(parents=True)
    (folder / "forces.csv").write_text("time,fx\n0,1\n")
    (folder / "loop").symlink_to(folder / "loop")
    (folder / "fields" / "a.vtu").symlink_to(folder / "fields" / "b.vtu")
    (folder / "fields" / "b.vtu").symlink_to(folder / "fields" / "a.vtu")
    base = f"/api/v1/jobs/{job_id}/files"
    for path in ("x" * 256, f"fields/{'y' * 300}.vtu", "loop", "loop/deeper", "fields/a.vtu", "fields.zip"):
        assert client.get(f"{base}/{path}").status_code == 404, path
    assert [f["path"] for f in client.get(base).json()["files"]] == ["forces.csv"]


@pytest.mark.parametrize("cursor", [str(2**31), "9" * 30, "\u0661\u0662", "\u00b2", "-1", " 5", "5 "])
def test_cursor_out_of_range_or_not_ascii_digits_is_422(client: TestClient, cursor: str) -> None:
    r = client.get("/api/v1/jobs", params={"cursor": cursor})
    assert r.status_code == 422 and fields(r) == ["cursor"]


def test_largest_cursor_is_a_page(client: TestClient) -> None:
    job_id = client.post("/api/v1/jobs", json=tiny()).json()["id"]
    r = client.get("/api/v1/jobs", params={"cursor": str(2**31 - 1)})
    assert r.status_code == 200 and [j["id"] for j in r.json()["jobs"]] == [job_id]


def test_413_has_one_shape_with_and_without_content_length(client: TestClient) -> None:
    limit = client.app.state.settings.max_body_bytes
    body = b'{"title": "' + b"x" * limit + b'"}'
    declared = client.post("/api/v1/jobs", content=body, headers={"content-type": "application/json"})

    def chunks() -> Iterator[bytes]:  # no Content-Length: chunked transfer encoding
        yield from (body[i : i + 4096] for i in range(0, len(body), 4096))

    streamed = client.post("/api/v1/jobs", content=chunks(), headers={"content-type": "application/json"})
    assert declared.status_code == streamed.status_code == 413
    assert (
        declared.json()
        == streamed.json()
        == {"detail": [{"field": "(body)", "message": f"request body: over the limit of {limit:,} bytes"}]}
    )


odd_text = st.one_of(
    st.text(st.characters(codec="utf-8"), max_size=20).map(lambda s: s[:10] + "\x00" + s[10:]),
    st.text(st.characters(categories=["Nd"]), min_size=1, max_size=12),  # digits of every script
    st.integers(2**31, 10**40).map(str),
    st.text(st.characters(codec="utf-8", exclude_characters="/\x00"), min_size=256, max_size=600),
)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(value=odd_text)
def test_fuzzed_odd_text_never_gives_500(client: TestClient, value: str) -> None:
    job_id = client.post("/api/v1/jobs", json=tiny()).json()["id"]
    responses = [
        client.get("/api/v1/jobs", params={"cursor": value}),
        client.get("/api/v1/jobs", params={"tag": value, "owner": value}),
        client.get(f"/api/v1/jobs/{job_id}/files/{quote(value, safe='/')}"),
        client.get(f"/api/v1/studies/{quote(value, safe='')}"),
        client.post("/api/v1/jobs", json={**TINY, "title": value[:200]}),
        client.post("/api/v1/jobs", params={"tags": [value[:64]]}, json=tiny()),
    ]
    for r in responses:
        assert r.status_code < 500, f"{r.request.method} {r.request.url}: {r.status_code} {r.text[:300]}"
