"""What checking a request costs: a study whose base has 20 polygons of 200 points (the worst the spec allows),
through the API on a fresh data folder (embedded broker, no worker), and the polygon checks alone.

Run: ``python bench/validation_bench.py`` (a few seconds).
"""

from __future__ import annotations

import tempfile
import time
from pathlib import Path

import numpy as np
from fastapi.testclient import TestClient

from wakeyard.api.app import create_app
from wakeyard.core.migrate import migrate
from wakeyard.core.settings import Settings
from wakeyard.solver import _polygons


def polygons() -> list[dict]:
    t = np.linspace(0, 2 * np.pi, 200, endpoint=False)
    return [
        {
            "shape": "polygon",
            "points": np.c_[0.5 + (i % 10) * 0.15 + 0.03 * np.cos(t), 0.1 + (i // 10) * 0.2 + 0.03 * np.sin(t)]
            .round(6)
            .tolist(),
        }
        for i in range(20)
    ]


def main() -> None:
    base = {"channel": {"length": 2.2, "height": 0.41}, "bodies": polygons(), "mesh": {"preset": "coarse"}}
    ring = np.array(base["bodies"][0]["points"])
    start = time.perf_counter()
    for _ in range(100):
        _polygons.is_simple(ring)
    print(f"simplicity check of one 200-point polygon: {(time.perf_counter() - start) * 10:.2f} ms")
    start = time.perf_counter()
    for _ in range(10):
        _polygons.overlap(ring, np.array(base["bodies"][1]["points"]), 1e-3)
    print(f"overlap check of two 200-point polygons:   {(time.perf_counter() - start) * 100:.2f} ms")
    with tempfile.TemporaryDirectory() as folder:
        settings = Settings(data_dir=Path(folder), workers=0, max_active_per_user=1000)
        migrate(settings.db_url)
        with TestClient(create_app(settings)) as client:
            for values, axes, cap in ((6, 1, 1000), (100, 1, 1000), (100, 2, 5)):
                settings.max_active_per_user = cap
                vary = [
                    {"path": "inflow.peak_velocity", "values": [0.1 + 0.004 * k for k in range(values)]},
                    {"path": "mesh.scale", "values": [1.0, 1.1]},
                ][:axes]
                start = time.perf_counter()
                r = client.post("/api/v1/studies", json={"kind": "sweep", "base": base, "vary": vary})
                took = time.perf_counter() - start
                print(f"study of {values * axes:3d} points, cap {cap:4d}: HTTP {r.status_code} in {took:.2f} s")


if __name__ == "__main__":
    main()
