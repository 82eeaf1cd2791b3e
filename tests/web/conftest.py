"""Fixtures for the browser tests: a real ``wakeyard serve`` (API + one worker) and Debian's chromium via Playwright.

Set ``WAKEYARD_TEST_URL=http://127.0.0.1:PORT`` to run the tests against a service that is already running
instead of starting one (the tests only talk HTTP, so any loopback service works).
"""

from __future__ import annotations

import contextlib
import copy
import os
import shutil
import signal
import socket
import subprocess
import sys
import time
from collections.abc import Iterator
from pathlib import Path

import httpx
import pytest

from tests import helpers

ROOT = Path(__file__).resolve().parents[2]
ARTIFACTS = ROOT / "test-artifacts" / "web"
CHROMIUM = "/usr/bin/chromium"
CHROMIUM_ARGS = [
    "--headless=new",
    "--no-sandbox",
    "--disable-gpu",
    "--disable-quic",
    "--no-first-run",
    "--disable-background-networking",
    "--disable-component-update",
    "--disable-sync",
]

# The small case of the tests (tests/helpers.py), about a second of solving plus the pictures; its own title, and
# no checkpoints every few steps (the page shows what the form submitted)
TINY = copy.deepcopy(helpers.TINY) | {"title": "Cylinder in a shortened 2D-1 channel (browser test)"}
del TINY["analysis"]["checkpoint_interval"]


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture(scope="session")
def base_url(tmp_path_factory: pytest.TempPathFactory) -> Iterator[str]:
    """URL of a running service: ``wakeyard serve`` on a free loopback port with a fresh data folder."""
    given = os.environ.get("WAKEYARD_TEST_URL")
    if given:
        yield given.rstrip("/")
        return
    data = tmp_path_factory.mktemp("wakeyard-data")
    port = _free_port()
    log = open(data / "serve.log", "w+")  # noqa: SIM115 - closed below
    env = {k: v for k, v in os.environ.items() if not k.startswith("WAKEYARD_")}
    proc = subprocess.Popen(
        [
            sys.executable,
            "-m",
            "wakeyard.cli",
            "serve",
            "--host",
            "127.0.0.1",
            "--port",
            str(port),
            "--data",
            str(data),
            "--workers",
            "1",
        ],
        cwd=ROOT,
        env=env,
        stdout=log,
        stderr=subprocess.STDOUT,
        start_new_session=True,
    )
    url = f"http://127.0.0.1:{port}"
    try:
        deadline = time.monotonic() + 60
        while True:
            if proc.poll() is not None:
                log.seek(0)
                pytest.fail(f"wakeyard serve exited with {proc.returncode}:\n{log.read()[-3000:]}")
            with contextlib.suppress(httpx.HTTPError):
                r = httpx.get(f"{url}/api/v1/health", timeout=2)
                if r.status_code == 200 and r.json().get("workers_seen", 0) >= 1:
                    break
            if time.monotonic() > deadline:
                log.seek(0)
                pytest.fail(f"wakeyard serve did not become healthy with a worker in 60 s:\n{log.read()[-3000:]}")
            time.sleep(0.25)
        yield url
    finally:
        # Ctrl-C is how a person stops it; the whole process group goes if it lingers
        with contextlib.suppress(ProcessLookupError):
            proc.send_signal(signal.SIGINT)
        try:
            proc.wait(timeout=15)
        except subprocess.TimeoutExpired:
            with contextlib.suppress(ProcessLookupError):
                os.killpg(proc.pid, signal.SIGKILL)
            proc.wait(timeout=5)
        log.close()


@pytest.fixture(scope="session")
def api(base_url: str) -> Iterator[httpx.Client]:
    with httpx.Client(base_url=f"{base_url}/api/v1", timeout=30) as client:
        yield client


@pytest.fixture(scope="session")
def browser() -> Iterator[object]:
    sync_api = pytest.importorskip("playwright.sync_api", reason="pip install playwright (the test extra)")
    if not (shutil.which("chromium") or Path(CHROMIUM).exists()):
        pytest.fail("Debian's chromium is needed at /usr/bin/chromium: run scripts/setup --test (as root)")
    with sync_api.sync_playwright() as p:
        b = p.chromium.launch(executable_path=CHROMIUM, args=CHROMIUM_ARGS)
        yield b
        b.close()


class PageErrors(list):
    """JavaScript exceptions thrown by the page during a test (each one fails the test)."""


@pytest.fixture
def page(browser, base_url: str, request: pytest.FixtureRequest) -> Iterator[object]:
    context = browser.new_context(base_url=base_url, viewport={"width": 1280, "height": 900})
    pg = context.new_page()
    pg.set_default_timeout(15_000)
    errors = PageErrors()
    pg.on("pageerror", lambda err: errors.append(str(err)))
    pg.errors = errors
    yield pg
    context.close()
    assert not errors, f"the page threw: {errors}"


def shot(page, name: str) -> None:
    """Save a full-page screenshot into test-artifacts/web/."""
    ARTIFACTS.mkdir(parents=True, exist_ok=True)
    page.screenshot(path=str(ARTIFACTS / f"{name}.png"), full_page=True)


def submit(api: httpx.Client, spec: dict) -> str:
    r = api.post("/jobs", json=spec)
    assert r.status_code == 202, r.text
    return r.json()["id"]


def wait_state(api: httpx.Client, job_id: str, states: set[str], timeout: float = 90) -> dict:
    deadline = time.monotonic() + timeout
    while True:
        job = api.get(f"/jobs/{job_id}").json()
        if job["state"] in states:
            return job
        if time.monotonic() > deadline:
            raise AssertionError(f"job {job_id} still {job['state']} after {timeout} s (wanted {states})")
        time.sleep(0.3)


@pytest.fixture(scope="session")
def pair(api: httpx.Client) -> list[str]:
    """Two small jobs queued at once (not awaited here), differing in viscosity: for compare, and to fill the queue."""
    specs = []
    for i, nu in enumerate((0.001, 0.0015)):
        spec = {
            **TINY,
            "title": f"Compare case {i + 1}",
            "fluid": {"viscosity": nu},
            "analysis": {**TINY["analysis"], "output_interval": 0.3},
        }
        specs.append(spec)
    return [submit(api, s) for s in specs]
