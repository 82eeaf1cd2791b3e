"""How long ``wakeyard serve`` takes to stop on SIGTERM and on SIGINT, idle and with a running job (the goal is at
most 2 s), and whether the job was handed back to the queue.

Starts ``wakeyard serve --workers 1`` in a temporary data folder for each case; nothing leaves the machine.
Run: ``python bench/stop_bench.py [--repeat N] [--api-processes N]`` (about 30 s per case on two cores); with
``--api-processes`` the API processes must be gone too.
"""

from __future__ import annotations

import argparse
import os
import signal
import socket
import sqlite3
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import httpx

SPEC = {
    "title": "stop bench: pipe in a cooling duct",
    "channel": {"length": 1.0, "height": 0.41},
    "bodies": [{"name": "pipe", "shape": "circle", "center": [0.2, 0.2], "radius": 0.05}],
    "inflow": {"peak_velocity": 0.3, "ramp_time": 0.2},
    "mesh": {"preset": "coarse", "scale": 2.0},
    "analysis": {"mode": "transient", "time_step": 0.01, "end_time": 50.0, "output_interval": 10.0},
}


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def _gone(pid: int) -> bool:
    try:
        return Path(f"/proc/{pid}/stat").read_text().split()[2] == "Z"
    except FileNotFoundError:
        return True


def one(sig: signal.Signals, busy: bool, api_processes: int = 1) -> tuple[float, str]:
    with tempfile.TemporaryDirectory() as folder:
        port, log = _free_port(), Path(folder) / "serve.log"
        proc = subprocess.Popen(
            [
                sys.executable,
                "-m",
                "wakeyard.cli",
                "serve",
                "--port",
                str(port),
                "--data",
                folder,
                "--workers",
                "1",
                "--api-processes",
                str(api_processes),
            ],
            stdout=log.open("w"),
            stderr=subprocess.STDOUT,
            start_new_session=True,
        )
        while "is ready at" not in log.read_text():
            time.sleep(0.1)
        workers = [
            int(p)
            for p in subprocess.run(
                ["ps", "-o", "pid=", "--ppid", str(proc.pid)], capture_output=True, text=True
            ).stdout.split()
        ]
        state = "-"
        if busy:
            api = httpx.Client(base_url=f"http://127.0.0.1:{port}/api/v1")
            job = api.post("/jobs", json=SPEC).json()["id"]
            while api.get(f"/jobs/{job}").json()["progress"]["step"] < 50:
                time.sleep(0.1)
        start = time.monotonic()
        proc.send_signal(sig)
        while not (proc.poll() is not None and all(_gone(p) for p in workers)):
            time.sleep(0.005)
        took = time.monotonic() - start
        if busy:
            state = sqlite3.connect(Path(folder) / "jobs.sqlite").execute("SELECT state FROM jobs").fetchone()[0]
        return took, state


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__)
    parser.add_argument("--repeat", type=int, default=1)
    parser.add_argument("--api-processes", type=int, default=1)
    args = parser.parse_args()
    os.environ.setdefault("WAKEYARD_HEARTBEAT_SECONDS", "0.5")
    print(f"{'signal':8} {'job':8} {'stopped in (s)':>15}  job state after")
    for sig in (signal.SIGTERM, signal.SIGINT):
        for busy in (False, True):
            for _ in range(args.repeat):
                took, state = one(sig, busy, args.api_processes)
                print(f"{sig.name:8} {'running' if busy else 'none':8} {took:15.2f}  {state}", flush=True)


if __name__ == "__main__":
    main()
