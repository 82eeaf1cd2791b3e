"""``wakeyard serve`` and ``worker``: start the service's processes on one machine."""

from __future__ import annotations

import contextlib
import ipaddress
import logging
import os
import shutil
import signal
import sys
import threading
import time
from collections.abc import Callable, Iterator
from pathlib import Path
from types import FrameType
from typing import Any

import uvicorn
from uvicorn.supervisors import Multiprocess

SERVE_PID = "WAKEYARD_SERVE_PID"  # the API processes' parent, for their parent-death signal


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


def serve(host: str, port: int, api_processes: int = 1) -> int:
    from wakeyard.core.blas import one_blas_thread
    from wakeyard.core.settings import Settings
    from wakeyard.core.store import Store
    from wakeyard.worker.supervisor import Supervisor

    from .datalock import DataLock

    _log_to_stderr()
    one_blas_thread()  # the API's own numerical work (previews, study tables) needs no more
    settings = Settings()
    settings.data_dir.mkdir(parents=True, exist_ok=True)
    lock = DataLock(settings.data_dir)
    if not lock.acquire(wait=5.0):
        print(
            f"error: another wakeyard serve (pid {lock.holder()}) or its workers still use the data folder "
            f"{settings.data_dir.resolve()}; stop it first, or choose another --data folder",
            file=sys.stderr,
        )
        return 2
    migrate_store(settings.db_url, quiet=True)
    store, started = Store(settings.db_url), time.monotonic()
    if not _loopback(host) and not store.has_tokens() and settings.first_admin:
        _first_admin(store, settings.first_admin, settings.data_dir / "first-admin-token")
    elif not _loopback(host) and not store.has_tokens():
        print(
            f"error: refusing to listen on {host} without API tokens: anyone on the network could run jobs.\n"
            "Create one first with `wakeyard token create NAME`, or serve on 127.0.0.1.",
            file=sys.stderr,
        )
        return 2
    with_workers = settings.workers > 0
    supervisor = Supervisor(settings.workers, "warning", keep_fds=[lock.fd])
    # the supervising thread starts and stops every worker (their parent-death signal is tied to it)
    supervising = threading.Thread(target=supervisor.run, name="wakeyard-supervisor", daemon=True)
    api = _Api(host, port, api_processes, settings, supervisor.stopping.set)
    shown = f"[{host}]" if ":" in host else host

    def announce() -> None:
        """Print the URL once the API answers and a worker has reported in (or after a minute, with a warning)."""

        def workers_up() -> bool:
            return not with_workers or store.workers_seen(within=time.monotonic() - started + 1) > 0

        while not supervisor.stopping.is_set() and not (
            api.answers() and (workers_up() or time.monotonic() - started > 60)
        ):
            time.sleep(0.1)
        if not supervisor.stopping.is_set():
            if not workers_up():
                print("warning: no worker has reported in yet; jobs will wait in the queue", file=sys.stderr)
            processes = f", {api_processes} API processes" if api_processes > 1 else ""
            print(
                f"wakeyard is ready at http://{shown}:{port}/ ({settings.workers} worker processes here{processes}, "
                f"data in {settings.data_dir.resolve()}); Ctrl-C stops it",
                flush=True,
            )

    if with_workers:
        supervising.start()
    threading.Thread(target=announce, daemon=True).start()
    try:
        api.run()
    except KeyboardInterrupt:  # a second Ctrl-C
        pass
    finally:
        supervisor.stopping.set()
        if with_workers:
            supervising.join()
            _hand_back(store, supervisor.stopped)
        lock.release()
    # everything is stopped and recorded: skip the interpreter's teardown of the numerical modules (up to a second)
    sys.stdout.flush()
    sys.stderr.flush()
    os._exit(0)


def api_process_app() -> Any:
    """The app of one of several API processes (``serve --api-processes N``): each is a fresh interpreter that
    reads the same WAKEYARD_* settings; the lead (``core.lead``) makes one of them the reaper."""
    from wakeyard.api.app import create_app
    from wakeyard.core.blas import one_blas_thread
    from wakeyard.worker.child import die_with_parent

    die_with_parent(int(os.environ[SERVE_PID]))  # a kill -9 of serve takes its API processes along, as its workers
    _log_to_stderr()
    one_blas_thread()
    return create_app()


class _Api:
    """The API: in this process (one) or in ``processes`` children of uvicorn's process manager sharing one socket."""

    def __init__(self, host: str, port: int, processes: int, settings: Any, on_exit: Callable[[], None]):
        self.host, self.port, self.processes = host, port, processes
        common: dict[str, Any] = {"host": host, "port": port, "log_level": "warning", "timeout_graceful_shutdown": 1}
        if processes == 1:
            from wakeyard.api.app import create_app

            self.server = _Server(uvicorn.Config(create_app(settings), **common), on_exit=on_exit)
        else:
            os.environ[SERVE_PID] = str(os.getpid())
            # the API processes' request histograms, summed by every scrape (prometheus_client's multiprocess mode)
            metrics = settings.data_dir / "api-metrics"
            shutil.rmtree(metrics, ignore_errors=True)
            metrics.mkdir()
            os.environ["PROMETHEUS_MULTIPROC_DIR"] = str(metrics)
            self.config = uvicorn.Config(
                "wakeyard.cli.service:api_process_app", factory=True, workers=processes, **common
            )
            self.on_exit = on_exit

    def run(self) -> None:
        if self.processes == 1:
            self.server.run()
            return
        _Processes(self.config, [self.config.bind_socket()], self.on_exit).run()

    def answers(self) -> bool:
        if self.processes == 1:
            return self.server.started
        import urllib.error
        import urllib.request

        address = "127.0.0.1" if self.host in ("0.0.0.0", "") else ("::1" if self.host == "::" else self.host)
        shown = f"[{address}]" if ":" in address else address
        try:
            urllib.request.urlopen(f"http://{shown}:{self.port}/api/v1/caution", timeout=2).close()
        except urllib.error.HTTPError:
            return True  # an answer all the same
        except OSError:
            return False
        return True


class _Processes(Multiprocess):
    """uvicorn's process manager, but a SIGINT or SIGTERM also starts stopping the workers at once (it only queues
    the signal for its loop, which looks every half second)."""

    def __init__(self, config: uvicorn.Config, sockets: list[Any], on_exit: Callable[[], None]):
        super().__init__(config, sockets)

        def stop(sig: int, _: FrameType | None) -> None:
            on_exit()  # an Event that only the supervising thread waits on: safe in a handler
            self.signal_queue.append(sig)

        for sig in (signal.SIGINT, signal.SIGTERM):
            signal.signal(sig, stop)


def _first_admin(store: Any, name: str, path: Path) -> None:
    """The first admin token, written to a file only this user can read: never to the log, and no restart is
    needed before the service listens (as `wakeyard token create` before the first `serve` would)."""
    from wakeyard.api.auth import create_token

    token = create_token(store, name, admin=True)
    fd = os.open(path, os.O_WRONLY | os.O_CREAT | os.O_TRUNC, 0o600)
    with os.fdopen(fd, "w") as f:
        f.write(token + "\n")
    print(f"created the admin token {name!r} in {path.resolve()}: copy it, then delete that file", file=sys.stderr)


class _Server(uvicorn.Server):
    """uvicorn's server, but a SIGTERM or SIGINT also starts stopping the workers at once, and is not re-raised
    after the shutdown (uvicorn re-raises it, which would kill serve before it has stopped its workers)."""

    def __init__(self, config: uvicorn.Config, on_exit: Callable[[], None]):
        super().__init__(config)
        self.on_exit = on_exit

    def handle_exit(self, sig: int, frame: FrameType | None) -> None:
        self.on_exit()
        super().handle_exit(sig, frame)

    @contextlib.contextmanager
    def capture_signals(self) -> Iterator[None]:
        previous = {sig: signal.signal(sig, self.handle_exit) for sig in (signal.SIGINT, signal.SIGTERM)}
        try:
            yield
        finally:
            for sig, handler in previous.items():
                signal.signal(sig, handler)


def _hand_back(store: Any, names: list[str]) -> None:
    """Re-queue the jobs that stopped workers still held (a worker killed after the grace could not do it)."""
    try:
        requeued = store.release_hosts(names)
    except Exception as err:  # the lease re-queues them later
        print(f"warning: could not hand back the running jobs ({err}); the lease will re-queue them", file=sys.stderr)
        return
    if requeued:
        print(f"{len(requeued)} running job(s) handed back to the queue", file=sys.stderr)


def _log_to_stderr() -> None:
    logging.basicConfig(level=logging.WARNING, format="%(asctime)s %(name)s %(levelname)s: %(message)s")


def migrate() -> int:
    """``wakeyard migrate``: bring the job store to the schema this wakeyard needs, and say what was done."""
    from wakeyard.core.settings import Settings

    settings = Settings()
    settings.data_dir.mkdir(parents=True, exist_ok=True)
    migrate_store(settings.db_url, quiet=False)
    return 0


def migrate_store(url: str, quiet: bool) -> None:
    from sqlalchemy.engine import make_url

    from wakeyard.core.migrate import migrate

    before, after = migrate(url)
    if not quiet or before not in (None, after):
        shown = make_url(url).render_as_string(hide_password=True)
        what = f"migrated from revision {before} to {after}" if before != after else f"at revision {after} already"
        print(f"job store {shown}: {what}", file=sys.stderr)


def _wait_for_schema(url: str) -> None:
    """Workers never migrate: they wait for ``wakeyard serve`` or ``wakeyard migrate`` to have done it."""
    from wakeyard.core.migrate import head, revision

    told = False
    while (found := revision(url)) != head():
        if not told:
            print(
                f"waiting for the job store to be migrated (revision {found or 'none'}, needed {head()}): "
                "`wakeyard serve` or `wakeyard migrate` does it",
                file=sys.stderr,
                flush=True,
            )
            told = True
        time.sleep(2.0)


def worker() -> int:
    from wakeyard.core.settings import Settings
    from wakeyard.core.store import Store
    from wakeyard.worker.supervisor import Supervisor

    _log_to_stderr()
    settings = Settings()
    _wait_for_schema(settings.db_url)
    supervisor = Supervisor(settings.workers or os.cpu_count() or 1, "info")
    supervising = threading.Thread(target=supervisor.run, name="wakeyard-supervisor")

    def stop(sig: int, _: FrameType | None) -> None:
        supervisor.stopping.set()  # never waited on by this (the main) thread, so safe in a handler

    for sig in (signal.SIGINT, signal.SIGTERM):
        signal.signal(sig, stop)
    supervising.start()
    while supervising.is_alive():
        supervising.join(0.5)
    _hand_back(Store(settings.db_url), supervisor.stopped)
    return 0


def remote_worker(url: str, token: str, poll: float) -> int:
    """``wakeyard worker --url``: worker processes on this box that reach the service over HTTP only (no database,
    broker or shared folder); a running job is handed back to the service when they are stopped."""
    from wakeyard.core.settings import Settings
    from wakeyard.worker.remote import POLL_VARIABLE, TOKEN_VARIABLE, URL_VARIABLE
    from wakeyard.worker.supervisor import Supervisor

    _log_to_stderr()
    settings = Settings()
    settings.jobs_dir.mkdir(parents=True, exist_ok=True)
    os.environ.update({URL_VARIABLE: url, TOKEN_VARIABLE: token, POLL_VARIABLE: str(poll)})  # the children's
    count = settings.workers or os.cpu_count() or 1
    supervisor = Supervisor(count, "info", module="wakeyard.worker.remote")
    supervising = threading.Thread(target=supervisor.run, name="wakeyard-supervisor")

    def stop(sig: int, _: FrameType | None) -> None:
        supervisor.stopping.set()

    for sig in (signal.SIGINT, signal.SIGTERM):
        signal.signal(sig, stop)
    print(f"{count} worker process(es) taking jobs from {url}, data in {settings.data_dir.resolve()}", flush=True)
    supervising.start()
    while supervising.is_alive():
        supervising.join(0.5)
    return 0


def check_worker() -> int:
    """For container health checks: a worker process of this host has reported in within the lease."""
    import socket

    from wakeyard.core.settings import Settings
    from wakeyard.core.store import Store

    settings = Settings()
    seen = Store(settings.db_url).workers_seen(within=settings.lease_seconds, host=socket.gethostname())
    print(f"{seen} worker process(es) of this host seen in the last {settings.lease_seconds:g} s")
    return 0 if seen else 1
