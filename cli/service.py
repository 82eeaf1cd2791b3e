"""``wakeyard serve``, ``worker`` and ``token create``: start the service's processes on one machine."""

from __future__ import annotations

import ipaddress
import os
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path


def configure(data: Path | None, workers: int | None) -> None:
    """Command-line options become WAKEYARD_* variables, so worker children see the same settings."""
    if data is not None:
        os.environ["WAKEYARD_DATA_DIR"] = str(data.resolve())
    if workers is not None:
        os.environ["WAKEYARD_WORKERS"] = str(workers)


def _loopback(host: str) -> bool:
    try:
        return ipaddress.ip_address(host).is_loopback
    except ValueError:
        return host == "localhost"


def serve(host: str, port: int) -> int:
    import uvicorn

    from api.app import create_app
    from api.settings import Settings
    from api.store import Store

    settings = Settings()
    settings.data_dir.mkdir(parents=True, exist_ok=True)
    store, started = Store(settings.db_url), time.monotonic()
    if not _loopback(host) and not store.has_tokens():
        print(f"error: refusing to listen on {host} without API tokens: anyone on the network could run jobs.\\n"
              "Create one first with `wakeyard token create NAME`, or serve on 127.0.0.1.", file=sys.stderr)
        return 2
    with_workers = settings.workers > 0
    workers = _start_workers(settings.workers, settings.queue) if with_workers else None
    server = uvicorn.Server(uvicorn.Config(create_app(settings), host=host, port=port, log_level="warning"))
    shown = f"[{host}]" if ":" in host else host

    def announce() -> None:
        """Print the URL once the API answers and a worker has reported in (or after a minute, with a warning)."""
        def workers_up() -> bool:
            return not with_workers or store.workers_seen(within=time.monotonic() - started + 1) > 0

        while not server.should_exit and not (server.started and (workers_up() or time.monotonic() - started > 60)):
            time.sleep(0.1)
        if server.started:
            if not workers_up():
                print("warning: no worker has reported in yet; jobs will wait in the queue", file=sys.stderr)
            print(f"wakeyard is ready at http://{shown}:{port}/ ({settings.workers} worker processes here, data in "
                  f"{settings.data_dir.resolve()}); Ctrl-C stops it", flush=True)

    threading.Thread(target=announce, daemon=True).start()
    try:
        server.run()
    except KeyboardInterrupt:  # uvicorn re-raises the Ctrl-C it handled
        pass
    finally:
        if workers is not None:
            _stop(workers)
    return 0


def _start_workers(count: int, queue: str) -> subprocess.Popen[bytes]:
    """One Celery worker with ``count`` pool processes, in its own session so Ctrl-C reaches only us."""
    command = [sys.executable, "-m", "celery", "-A", "worker.app", "worker", "-c", str(count), "-Q", queue,
               "--loglevel", "warning", "--without-mingle", "--without-gossip"]
    return subprocess.Popen(command, start_new_session=True)


def _stop(proc: subprocess.Popen[bytes]) -> None:
    """Warm shutdown, then cold: a job cut short is re-queued by the lease and resumes from its checkpoint."""
    for sig, wait in ((signal.SIGTERM, 10), (signal.SIGQUIT, 5), (signal.SIGKILL, 5)):
        if proc.poll() is not None:
            return
        if sig == signal.SIGKILL:
            os.killpg(proc.pid, sig)
        else:
            proc.send_signal(sig)
        try:
            proc.wait(wait)
        except subprocess.TimeoutExpired:
            continue


def worker() -> int:
    from api.settings import Settings
    from worker.app import app

    settings = Settings()
    count = settings.workers or os.cpu_count() or 1
    # mingle and gossip sync worker state; ours lives in the job store, so they only slow the start
    app.worker_main(["worker", "-c", str(count), "-Q", settings.queue, "--loglevel", "info",
                     "--without-mingle", "--without-gossip"])
    return 0


def create_token(name: str, admin: bool) -> int:
    from api.auth import create_token
    from api.settings import Settings
    from api.store import Store

    settings = Settings()
    settings.data_dir.mkdir(parents=True, exist_ok=True)
    store = Store(settings.db_url)
    if store.has_token_named(name):
        print(f"error: a token named {name!r} exists already", file=sys.stderr)
        return 2
    print(create_token(store, name, admin))
    return 0
