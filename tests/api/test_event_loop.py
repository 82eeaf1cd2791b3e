"""A database that waits on a lock stalls only the requests that need it: a real ``wakeyard serve`` on PostgreSQL
keeps answering other requests while a status read waits for a table lock held by another session."""

from __future__ import annotations

import os
import signal
import subprocess
import time
from concurrent.futures import ThreadPoolExecutor
from pathlib import Path

import httpx
import sqlalchemy

from tests.cli.test_cli import WAKEYARD, _free_port
from tests.helpers import tiny


def test_a_table_lock_does_not_stall_other_requests(tmp_path: Path, postgres_url: str) -> None:
    schema = f"wakeyard_lock_{os.getpid()}"
    admin = sqlalchemy.create_engine(postgres_url)
    with admin.begin() as conn:
        conn.execute(sqlalchemy.text(f"CREATE SCHEMA {schema}"))
    port, log = _free_port(), tmp_path / "serve.log"
    env = {**os.environ, "WAKEYARD_DATABASE_URL": f"{postgres_url}?options=-csearch_path%3D{schema}"}
    proc = subprocess.Popen(
        [*WAKEYARD, "serve", "--port", str(port), "--data", str(tmp_path), "--workers", "0"],
        env=env,
        stdout=log.open("w"),
        stderr=subprocess.STDOUT,
        start_new_session=True,
    )
    try:
        deadline = time.monotonic() + 90
        while f":{port}/" not in log.read_text():
            assert proc.poll() is None and time.monotonic() < deadline, log.read_text()
            time.sleep(0.1)
        with (
            httpx.Client(base_url=f"http://127.0.0.1:{port}", timeout=30) as client,
            admin.connect() as locker,
            ThreadPoolExecutor(1) as pool,
        ):
            job_id = client.post("/api/v1/jobs", json=tiny()).json()["id"]
            locker.execute(sqlalchemy.text(f"LOCK TABLE {schema}.jobs IN ACCESS EXCLUSIVE MODE"))
            waiting = pool.submit(client.get, f"/api/v1/jobs/{job_id}")
            deadline = time.monotonic() + 30
            while not locker.scalar(
                sqlalchemy.text(  # the read is now queued behind the lock in the service
                    "SELECT count(*) FROM pg_locks WHERE NOT granted AND relation = :table ::regclass"
                ),
                {"table": f"{schema}.jobs"},
            ):
                assert time.monotonic() < deadline and not waiting.done()
                time.sleep(0.05)
            with httpx.Client(base_url=f"http://127.0.0.1:{port}", timeout=10) as other:
                answers = [other.get(path) for path in ("/openapi.json", "/", "/docs")]
            assert not waiting.done()  # every answer came while the lock was still held
            assert [r.status_code for r in answers] == [200, 200, 200]
            locker.rollback()
            assert waiting.result(timeout=30).json()["id"] == job_id
    finally:
        proc.send_signal(signal.SIGTERM)
        proc.wait(30)
        with admin.begin() as conn:
            conn.execute(sqlalchemy.text(f"DROP SCHEMA {schema} CASCADE"))
        admin.dispose()
