"""Service benchmark: job creations/s, status reads/s, submit-to-start latency and the service's overhead.

Starts ``wakeyard serve`` on 127.0.0.1 (a free port, a temporary data folder) and sends a bounded number of
requests to it; nothing leaves the machine. Redis figures use DB 6 of the local Redis, or the database of
``WAKEYARD_BENCH_REDIS_URL`` (flushed before and after). Run: ``python bench/service_bench.py`` (about two minutes
on two cores).

``python bench/service_bench.py wrk [N ...]`` measures the API alone with ``wrk`` (Debian's package): creations/s
(all by one owner, then spread over 16) and status reads/s over 32 connections, Redis broker and a PostgreSQL job
store (``WAKEYARD_BENCH_POSTGRES_URL``, default the local server's ``postgres`` database; a schema of its own,
dropped afterwards), for ``serve --api-processes N`` (default 1 and 2), each run ``WAKEYARD_BENCH_REPEATS`` times
(default 2), and prints every run with the load average before it, then the best rate and the least CPU time per
request of the service and of the PostgreSQL backends serving it (when the server runs on this machine).
``python bench/service_bench.py wrk --against OTHER/.venv/bin/python [N ...]`` alternates each run with the wakeyard
of another checkout (e.g. main's, in a worktree of its own with its own venv) and prints the ratios, this / base.

``python bench/service_bench.py dispatch`` measures the wake-up path alone on Redis: wall and CPU time per
wake-up for a burst sent one ``send_task`` each (the path before batching) and through ``api.dispatch.Dispatcher``
(batches on one producer, one Redis pipeline each), and their ratios.
"""

from __future__ import annotations

import copy
import http.client
import json
import math
import os
import signal
import socket
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from collections.abc import Iterable
from concurrent.futures import ThreadPoolExecutor
from datetime import datetime
from pathlib import Path
from typing import Any

import httpx
import redis

from wakeyard import solver

REDIS_URL = os.environ.get("WAKEYARD_BENCH_REDIS_URL", "redis://127.0.0.1:6379/6")
POSTGRES_URL = os.environ.get("WAKEYARD_BENCH_POSTGRES_URL", "postgresql+psycopg://postgres@127.0.0.1:5432/postgres")
WRK_SECONDS, WRK_CONNECTIONS = 10, 32
CREATIONS, READS, CLIENTS, LATENCY_JOBS = 400, 2000, 8, 5
CASE: dict[str, Any] = {
    # the 2D-1 benchmark cylinder and fluid (Schäfer & Turek 1996) in a channel shortened to 1.0
    "title": "cylinder in a shortened 2D-1 channel (benchmark)",
    "channel": {"length": 1.0, "height": 0.41},
    "bodies": [{"name": "pipe", "shape": "circle", "center": [0.2, 0.2], "radius": 0.05}],
    "fluid": {"density": 1.0, "viscosity": 1e-3},
    "inflow": {"peak_velocity": 0.3, "ramp_time": 0.2},
    "mesh": {"preset": "coarse", "scale": 2.0},
    "analysis": {"mode": "transient", "time_step": 0.01, "end_time": 0.3, "output_interval": 0.1},
}


def case(end_time: float) -> dict[str, Any]:
    spec = copy.deepcopy(CASE)
    spec["analysis"]["end_time"] = end_time
    return spec


class Service:
    """``wakeyard serve`` in a child process; stopped with Ctrl-C (SIGINT) like a person would."""

    def __init__(
        self,
        folder: Path,
        workers: int,
        broker: str = "",
        api_processes: int = 1,
        python: str = sys.executable,
        **env: str,
    ):
        """``python``: the interpreter of the wakeyard to serve (another checkout's venv, to compare with)."""
        with socket.socket() as s:
            s.bind(("127.0.0.1", 0))
            self.port = s.getsockname()[1]
        env = {
            **os.environ,
            "WAKEYARD_BROKER_URL": broker,
            "WAKEYARD_MAX_ACTIVE_PER_USER": "100000",
            "WAKEYARD_HEARTBEAT_SECONDS": "0.25",
            **env,
        }
        folder.mkdir(parents=True, exist_ok=True)
        self.log = folder / "serve.log"
        self.proc = subprocess.Popen(
            [
                python,
                "-c",
                "import sys; from wakeyard.cli.main import main; sys.exit(main())",
                "serve",
                "--port",
                str(self.port),
                "--data",
                str(folder),
                "--workers",
                str(workers),
                "--api-processes",
                str(api_processes),
            ],
            env=env,
            stdout=self.log.open("w"),
            stderr=subprocess.STDOUT,
        )
        deadline = time.monotonic() + 90
        while "ready at" not in self.log.read_text():
            if self.proc.poll() is not None or time.monotonic() > deadline:
                raise RuntimeError(self.log.read_text())
            time.sleep(0.1)
        self.url = f"http://127.0.0.1:{self.port}"

    def stop(self) -> None:
        self.proc.send_signal(signal.SIGINT)
        self.proc.wait(60)


def rate(n: int, work: Any, clients: int = CLIENTS) -> tuple[float, list[float]]:
    """Run ``work(i)`` n times from ``clients`` threads; returns (per second, each call's seconds)."""

    def timed(i: int) -> float:
        t = time.perf_counter()
        work(i)
        return time.perf_counter() - t

    t0 = time.perf_counter()
    with ThreadPoolExecutor(clients) as pool:
        times = list(pool.map(timed, range(n)))
    return n / (time.perf_counter() - t0), times


def p(times: list[float], q: float) -> float:
    return 1000 * statistics.quantiles(times, n=100)[q - 1]


def throughput(folder: Path) -> None:
    """Bare keep-alive connections (http.client), one per client thread: the client must cost less than the server."""
    service = Service(folder, workers=0)
    local = threading.local()

    def call(method: str, path: str, body: bytes | None = None) -> bytes:
        if not hasattr(local, "conn"):
            local.conn = http.client.HTTPConnection("127.0.0.1", service.port, timeout=30)
        local.conn.request(method, path, body, {"Content-Type": "application/json"})
        response = local.conn.getresponse()
        data = response.read()
        assert response.status in (200, 202), data
        return data

    body = json.dumps(case(0.3)).encode()
    try:
        per_s, _ = rate(CREATIONS, lambda _: call("POST", "/api/v1/jobs", body))
        print(f"job creations:       {per_s:8.0f} /s   ({CREATIONS} requests, {CLIENTS} clients; target >= 500)")
        job_id = json.loads(call("GET", "/api/v1/jobs?limit=1"))["jobs"][0]["id"]
        per_s, times = rate(READS, lambda _: call("GET", f"/api/v1/jobs/{job_id}"))
        print(
            f"status reads:        {per_s:8.0f} /s   ({READS} requests; p50 {p(times, 50):.1f} ms, "
            f"p99 {p(times, 99):.1f} ms; target >= 2000)"
        )
    finally:
        service.stop()


def stamp(text: str) -> datetime:
    return datetime.fromisoformat(text)


def latency_and_overhead(folder: Path, broker: str, name: str) -> None:
    service = Service(folder, workers=2, broker=broker)
    try:
        with httpx.Client(base_url=service.url, timeout=30) as http:
            waits, totals = [], []
            for _ in range(LATENCY_JOBS):
                job_id = http.post("/api/v1/jobs", json=case(0.3)).json()["id"]
                while (job := http.get(f"/api/v1/jobs/{job_id}").json())["state"] in ("queued", "running"):
                    time.sleep(0.05)
                assert job["state"] == "succeeded", job["error"]
                waits.append((stamp(job["started_at"]) - stamp(job["created_at"])).total_seconds())
                totals.append((stamp(job["finished_at"]) - stamp(job["created_at"])).total_seconds())
            target = "50 ms" if broker else "1 s"
            print(
                f"submit-to-start ({name}): median {1000 * statistics.median(waits):6.0f} ms, "
                f"max {1000 * max(waits):6.0f} ms (target <= {target})"
            )
            direct = []
            for i in range(3):
                t = time.perf_counter()
                solver.run(case(0.3), folder / f"direct{i}")
                direct.append(time.perf_counter() - t)
            extra = statistics.median(totals) - statistics.median(direct)
            print(
                f"service overhead ({name}): {extra:+.2f} s on a {statistics.median(direct):.1f} s job "
                f"(submit to finished vs solver.run in process; target <= 2 s or 5 %)"
            )
            if broker:  # both cores busy: is the API still quick?
                busy = [http.post("/api/v1/jobs", json=case(3.0)).json()["id"] for _ in range(2)]
                while any(http.get(f"/api/v1/jobs/{j}").json()["state"] != "running" for j in busy):
                    time.sleep(0.1)
                _, times = rate(300, lambda _: http.get(f"/api/v1/jobs/{busy[0]}"), clients=4)
                print(
                    f"status read while both cores compute: p50 {p(times, 50):.1f} ms, p99 {p(times, 99):.1f} ms "
                    f"(target p99 <= 50 ms)"
                )
                for j in busy:
                    http.post(f"/api/v1/jobs/{j}/cancel")
    finally:
        service.stop()


def cpu_seconds(pid: int) -> dict[int, float]:
    """CPU seconds (user + system) that process ``pid`` and each of its living descendants have used: a figure the
    other loads of a shared machine barely change, unlike requests per second."""
    parents: dict[int, int] = {}
    times: dict[int, float] = {}
    for stat in Path("/proc").glob("[0-9]*/stat"):
        try:
            fields = stat.read_text().rsplit(")", 1)[1].split()
        except OSError:  # ended meanwhile
            continue
        child = int(stat.parent.name)
        parents[child], times[child] = int(fields[1]), _ticks(fields)
    family = {pid}
    for child in sorted(times):  # a child's pid is usually above its parent's; check the whole chain anyway
        chain = child
        while chain not in family and chain in parents and parents[chain] > 1:
            chain = parents[chain]
        if chain in family:
            family.add(child)
    return {p: times[p] for p in family if p in times}


def used(before: dict[int, float], after: dict[int, float]) -> float:
    """CPU seconds the processes used between two looks; NaN if one of them ended meanwhile (its last figures are
    lost: uvicorn's process manager replaces an API process that missed its health checks)."""
    if before.keys() - after.keys():
        return math.nan
    return sum(t - before.get(p, 0.0) for p, t in after.items())


def _ticks(fields: list[str]) -> float:
    """User + system seconds from the fields of /proc/PID/stat after the command name."""
    return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")


def database_cpu(admin: Any) -> dict[int, float]:
    """CPU seconds of each PostgreSQL backend serving the bench's database (the service's pooled connections, which
    live through a run): what a request costs the database server, which round trips saved show. Empty when the
    server is not on this machine or its processes cannot be read."""
    import sqlalchemy

    with admin.connect() as conn:
        pids = conn.scalars(
            sqlalchemy.text(
                "SELECT pid FROM pg_stat_activity WHERE datname = current_database() AND pid <> pg_backend_pid() "
                "AND backend_type = 'client backend'"  # not autovacuum's workers, which come and go
            )
        ).all()
    found = {}
    for pid in pids:
        try:
            found[pid] = _ticks(Path(f"/proc/{pid}/stat").read_text().rsplit(")", 1)[1].split())
        except OSError:  # ended meanwhile, another machine's, or not ours to read
            continue
    return found


def wrk(url: str, script: str, folder: Path, service: Service, admin: Any) -> tuple[float, float, float]:
    """Requests per second that ``wrk`` measured (2 threads, 32 connections, 10 s), all answered 2xx, and the
    CPU milliseconds per request of the service and of the database's backends."""
    lua = folder / "wrk.lua"
    lua.write_text(script)
    cpu, db = cpu_seconds(service.proc.pid), database_cpu(admin)
    out = subprocess.run(
        ["wrk", "-t2", f"-c{WRK_CONNECTIONS}", f"-d{WRK_SECONDS}s", "-s", str(lua), url],
        capture_output=True,
        text=True,
        check=True,
    ).stdout
    cpu, db_cpu = used(cpu, cpu_seconds(service.proc.pid)), used(db, database_cpu(admin))
    assert "Non-2xx" not in out, out
    done = int(next(line for line in out.splitlines() if "requests in" in line).split()[0])
    per_s = float(next(line for line in out.splitlines() if line.startswith("Requests/sec:")).split()[1])
    return per_s, 1000 * cpu / done, 1000 * db_cpu / done


OWNERS = 16  # the team run: creations spread over this many tokens


def creation_script(body: str, tokens: list[str]) -> str:
    """wrk Lua: POST the spec, each request with the next token in turn."""
    names = ", ".join(json.dumps(t) for t in tokens)
    return f"""
tokens = {{{names}}}
body = {json.dumps(body)}
n = 0
request = function()
  n = n + 1
  local headers = {{["Content-Type"] = "application/json", ["Authorization"] = "Bearer " .. tokens[n % #tokens + 1]}}
  return wrk.format("POST", nil, headers, body)
end
"""


Rate = tuple[float, float, float]  # requests/s, the service's and the database's CPU ms per request


def wrk_rates(folder: Path, api_processes: int, python: str = sys.executable) -> tuple[Rate, Rate, Rate]:
    """(creations by one owner, creations spread over OWNERS owners, status reads) of ``serve --api-processes N
    --workers 0`` on Redis and PostgreSQL, served by ``python``'s wakeyard."""
    import sqlalchemy

    from wakeyard.api.auth import create_token
    from wakeyard.core.store import Store

    schema = f"wakeyard_bench_{os.getpid()}_{api_processes}"
    store_url = f"{POSTGRES_URL}?options=-csearch_path%3D{schema}"
    admin = sqlalchemy.create_engine(POSTGRES_URL)
    with admin.begin() as conn:
        conn.execute(sqlalchemy.text(f"CREATE SCHEMA {schema}"))
    service = Service(folder, 0, REDIS_URL, api_processes, python, WAKEYARD_DATABASE_URL=store_url)
    store = Store(store_url)
    try:
        tokens = [create_token(store, f"engineer{i}") for i in range(OWNERS)]
        body = json.dumps(case(0.3))
        alone = wrk(f"{service.url}/api/v1/jobs", creation_script(body, tokens[:1]), folder, service, admin)
        team = wrk(f"{service.url}/api/v1/jobs", creation_script(body, tokens), folder, service, admin)
        bearer = {"Authorization": f"Bearer {tokens[0]}"}
        job_id = httpx.get(f"{service.url}/api/v1/jobs?limit=1", headers=bearer).json()["jobs"][0]["id"]
        script = f"wrk.headers['Authorization'] = 'Bearer {tokens[0]}'"
        reads = wrk(f"{service.url}/api/v1/jobs/{job_id}", script, folder, service, admin)
    finally:
        service.stop()
        store.engine.dispose()
        with admin.begin() as conn:
            conn.execute(sqlalchemy.text(f"DROP SCHEMA {schema} CASCADE"))
        admin.dispose()
    return alone, team, reads


def load_average() -> str:
    return "load average " + " ".join(Path("/proc/loadavg").read_text().split()[:3])


def wrk_main(processes: list[int], repeats: int, against: str | None = None) -> None:
    """Each figure is the best of ``repeats`` runs (the machine is shared: the best is the least disturbed), with
    the load average before each run and the CPU per request, which the other loads barely change. ``against``:
    another wakeyard's interpreter, run alternately with this one (so both meet the same machine), and the ratios."""
    builds = {"this": sys.executable} if against is None else {"base": against, "this": sys.executable}
    r = redis.Redis.from_url(REDIS_URL)
    print(f"wakeyard API with wrk on {os.cpu_count()} cores: Redis broker, PostgreSQL store, no workers")
    names = ("creations by one owner", f"creations by {OWNERS} owners", "status reads")
    targets = (500, 500, 2000)
    with tempfile.TemporaryDirectory() as tmp:
        for n in processes:
            runs: dict[str, list[tuple[Rate, Rate, Rate]]] = {build: [] for build in builds}
            for i in range(repeats):
                for build, python in builds.items():
                    r.flushdb()
                    load = load_average()
                    runs[build].append(wrk_rates(Path(tmp) / f"api{n}-{build}-{i}", n, python))
                    print(
                        f"  --api-processes {n}, {build} run {i + 1} ({load}): "
                        + ", ".join(
                            f"{rate:.0f}/s ({ms:.2f} ms CPU, {db:.2f} ms DB)" for rate, ms, db in runs[build][-1]
                        ),
                        flush=True,
                    )
            best = {build: [_best(found, k) for k in range(len(names))] for build, found in runs.items()}
            for build in builds:
                print(f"--api-processes {n}, {build}, best of {repeats}:")
                for (name, target), (rate, cpu, db) in zip(zip(names, targets, strict=True), best[build], strict=True):
                    print(
                        f"    {name:28s} {rate:6.0f}/s  {cpu:5.2f} ms CPU per request, database {db:5.2f} ms"
                        f"  (target >= {target}/s)",
                        flush=True,
                    )
            if against is not None:
                print(f"--api-processes {n}, this / base:")
                for name, (rate, cpu, db), (rate0, cpu0, db0) in zip(names, best["this"], best["base"], strict=True):
                    shown = f"x{db / db0:.2f}" if db0 and not math.isnan(db / db0) else "-"
                    print(f"    {name:28s} rate x{rate / rate0:.2f}, CPU x{cpu / cpu0:.2f}, database CPU {shown}")
    r.flushdb()


def _best(runs: list[tuple[Rate, Rate, Rate]], k: int) -> Rate:
    """The best rate and the least CPU times of figure ``k`` over ``runs`` (NaN where no run had them)."""
    return max(run[k][0] for run in runs), _least(run[k][1] for run in runs), _least(run[k][2] for run in runs)


def _least(values: Iterable[float]) -> float:
    return min((v for v in values if not math.isnan(v)), default=math.nan)


def dispatch_costs(bursts: int = 5, burst: int = 400) -> None:
    from wakeyard.api.dispatch import Dispatcher
    from wakeyard.core.broker import make_celery
    from wakeyard.core.settings import Settings

    r = redis.Redis.from_url(REDIS_URL)
    with tempfile.TemporaryDirectory() as tmp:
        settings = Settings(data_dir=Path(tmp), broker_url=REDIS_URL, queue="wakeyard-bench")
        celery = make_celery(settings)
        celery.send_task("wakeyard.run_next", args=["warm-up"], queue=settings.queue)
        ids = [f"{i:032x}" for i in range(burst)]

        def each() -> None:
            for job_id in ids:
                celery.send_task("wakeyard.run_next", args=[job_id], queue=settings.queue)

        def batched() -> None:
            dispatch = Dispatcher(celery, settings.queue, lambda: 1)  # as with a worker consuming
            for job_id in ids:
                dispatch(job_id)
            dispatch.close()

        found: dict[str, list[tuple[float, float]]] = {"each": [], "batched": []}
        for _ in range(bursts):  # interleaved, so both see the same machine load
            for name, send in (("each", each), ("batched", batched)):
                r.flushdb()
                wall, cpu = time.perf_counter(), time.process_time()
                send()
                found[name].append(((time.perf_counter() - wall) / burst, (time.process_time() - cpu) / burst))
                assert r.llen(settings.queue) == burst
    r.flushdb()
    (w0, c0), (w1, c1) = (
        (statistics.median(t[0] for t in v), statistics.median(t[1] for t in v)) for v in found.values()
    )
    print(f"wake-ups on Redis, bursts of {burst} (median of {bursts}):")
    print(f"  one send_task each: {1e6 * w0:6.0f} us wall, {1e6 * c0:6.0f} us CPU per wake-up")
    ratios = f"x{w1 / w0:.2f} wall, x{c1 / c0:.2f} CPU"
    print(f"  Dispatcher batches: {1e6 * w1:6.0f} us wall, {1e6 * c1:6.0f} us CPU ({ratios})")


def main() -> None:
    if sys.argv[1:2] == ["dispatch"]:
        dispatch_costs()
        return
    if sys.argv[1:2] == ["wrk"]:
        repeats = int(os.environ.get("WAKEYARD_BENCH_REPEATS", "2"))
        args, against = sys.argv[2:], None
        if args[:1] == ["--against"]:
            against, args = args[1], args[2:]
        wrk_main([int(n) for n in args] or [1, 2], repeats, against)
        return
    r = redis.Redis.from_url(REDIS_URL)
    r.flushdb()
    try:
        with tempfile.TemporaryDirectory() as tmp:
            root = Path(tmp)
            print(f"wakeyard service benchmark on {os.cpu_count()} cores, loopback only")
            throughput(root / "throughput")
            latency_and_overhead(root / "embedded", "", "embedded SQLite broker")
            latency_and_overhead(root / "redis", REDIS_URL, "Redis")
    finally:
        r.flushdb()


if __name__ == "__main__":
    main()
