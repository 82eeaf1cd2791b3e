"""``wakeyard serve --api-processes 2``: two real API processes answer on one port, exactly one of them holds the
lead and runs the lease reaper, the lead passes to another process when its holder is killed, and Ctrl-C stops
them all, while a kill -9 of serve takes them along."""

from __future__ import annotations

import os
import signal
import subprocess
import time
from collections.abc import Iterator
from pathlib import Path

import httpx
import pytest
import sqlalchemy
from prometheus_client.parser import text_string_to_metric_families

from tests.cli.test_cli import WAKEYARD, _children, _free_port
from tests.worker.test_supervision import SPEED, alive, until


@pytest.fixture
def serve2(tmp_path: Path, blank_store_url: str) -> Iterator[tuple[subprocess.Popen[bytes], str, str]]:
    port, log = _free_port(), tmp_path / "serve.log"
    env = {**os.environ, **SPEED, "WAKEYARD_DATABASE_URL": blank_store_url}
    proc = subprocess.Popen(
        [*WAKEYARD, "serve", "--port", str(port), "--data", str(tmp_path), "--workers", "0", "--api-processes", "2"],
        env=env,
        stdout=log.open("w"),
        stderr=subprocess.STDOUT,
        start_new_session=True,
    )
    url = f"http://127.0.0.1:{port}"
    until(lambda: url in log.read_text(), lambda: proc.poll() is None, log.read_text, 90)
    assert "2 API processes" in log.read_text()
    try:
        yield proc, url, blank_store_url
    finally:
        if proc.poll() is None:
            os.killpg(proc.pid, signal.SIGKILL)
            proc.wait(10)


def processes(url: str, tries: int = 400) -> dict[int, bool]:
    """pid → leads, as the API processes answer (a new connection each time, so the kernel spreads them)."""
    seen: dict[int, bool] = {}
    for _ in range(tries):
        ASKED.append(1)
        process = httpx.get(f"{url}/api/v1/health", timeout=10).json()["process"]
        seen[process["pid"]] = process["leads"]
        if len(seen) == 2:
            break
    return seen


ASKED: list[int] = []  # health requests sent so far


def health_count(url: str) -> float:
    """Health requests counted by the latency histogram of /metrics (whichever process answers the scrape)."""
    return sum(
        sample.value
        for family in text_string_to_metric_families(httpx.get(f"{url}/metrics", timeout=10).text)
        for sample in family.samples
        if sample.name == "wakeyard_http_request_duration_seconds_count"
        and sample.labels.get("route") == "/api/v1/health"
    )


def leaders(store_url: str) -> int:
    """Sessions holding the lead's advisory lock in this store's schema (PostgreSQL)."""
    engine = sqlalchemy.create_engine(store_url)
    try:
        with engine.connect() as conn:
            return conn.scalar(
                sqlalchemy.text(
                    "SELECT count(*) FROM pg_locks WHERE locktype = 'advisory' AND granted AND classid = 2 "
                    "AND objid = hashtext(current_schema())::oid"
                )
            )
    finally:
        engine.dispose()


def test_two_api_processes_exactly_one_leads_and_the_lead_moves_when_it_dies(
    serve2: tuple[subprocess.Popen[bytes], str, str],
) -> None:
    proc, url, store_url = serve2
    ASKED.clear()
    seen = until(lambda: len(s := processes(url)) == 2 and sum(s.values()) == 1 and s, timeout=30)
    assert set(seen) <= set(_children(proc.pid))  # both are serve's own children
    if store_url.startswith("postgresql"):
        assert leaders(store_url) == 1

    # both processes answered health requests: every scrape counts all of them, whichever process answers it
    assert [health_count(url) for _ in range(6)] == [len(ASKED)] * 6

    [leader] = [pid for pid, leads in seen.items() if leads]
    os.kill(leader, signal.SIGKILL)  # uvicorn's manager starts a new process in its place
    again = until(lambda: len(s := processes(url)) == 2 and leader not in s and sum(s.values()) == 1 and s, timeout=60)
    assert set(again) <= set(_children(proc.pid))
    if store_url.startswith("postgresql"):
        assert leaders(store_url) == 1

    started = time.monotonic()
    os.kill(proc.pid, signal.SIGINT)
    proc.wait(10)
    took = time.monotonic() - started
    assert proc.returncode == 0 and not any(alive(pid) for pid in again), took


def test_a_kill_9_of_serve_takes_its_api_processes_along(serve2: tuple[subprocess.Popen[bytes], str, str]) -> None:
    proc, url, _ = serve2
    seen = until(lambda: len(s := processes(url)) == 2 and s, timeout=30)
    os.kill(proc.pid, signal.SIGKILL)
    proc.wait(10)
    until(lambda: not any(alive(pid) for pid in seen), timeout=10)  # the kernel's parent-death signal
