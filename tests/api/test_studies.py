"""Parameter studies end to end (Redis, a real worker), their validation and cap (no worker), result reuse, the CLI."""

from __future__ import annotations

import copy
import csv
import io
import json
import math
import subprocess
import threading
import time
from collections.abc import Iterator
from pathlib import Path
from typing import Any

import pytest
import uvicorn
from fastapi.testclient import TestClient

from tests.cli.test_cli import WAKEYARD, _free_port
from tests.helpers import finished, wait_for
from wakeyard.api.studies import fluid_area
from wakeyard.solver.caution import CAUTION
from wakeyard.solver.results import MeshSize, ReferenceScales, SteadyBody, SteadySummary, dump

# the 2D-1 benchmark cylinder and fluid (Schäfer & Turek 1996) in a channel shortened to 1.0 (Re 20 at peak 0.3)
STEADY: dict[str, Any] = {
    "title": "cylinder in a shortened 2D-1 channel (study test)",
    "channel": {"length": 1.0, "height": 0.41},
    "bodies": [{"name": "pipe", "shape": "circle", "center": [0.2, 0.2], "radius": 0.05}],
    "fluid": {"density": 1.0, "viscosity": 1e-3},
    "mesh": {"preset": "coarse", "scale": 2.0},
}


def written(cells: int, pipe: dict[str, Any]) -> dict[str, Any]:
    """A steady run's summary as the worker records it, with the given cell count and pipe values."""
    summary = SteadySummary(
        title="",
        mode="steady",
        elements="P2P1",
        reynolds_number=20.0,
        reference=ReferenceScales(velocity=0.2, lengths={"pipe": 0.1}),
        mesh=MeshSize(cells=cells, dofs=5 * cells),
        timings={},
        bodies=[SteadyBody(fx=0.0, fy=0.0, recirculation_length=None, **pipe)],
    )
    return dump(summary)


def steady(title: str, **inflow: float) -> dict[str, Any]:
    spec = copy.deepcopy(STEADY)
    spec["title"] = title
    if inflow:
        spec["inflow"] = inflow
    return spec


def sweep(title: str, values: list[float]) -> dict[str, Any]:
    return {
        "kind": "sweep",
        "title": title,
        "base": steady(title),
        "vary": [{"path": "inflow.peak_velocity", "values": values}],
    }


def wait_study(client: TestClient, study_id: str, timeout: float = 60.0) -> dict[str, Any]:
    deadline = time.monotonic() + timeout
    while (study := client.get(f"/api/v1/studies/{study_id}").json())["state"] in ("queued", "running"):
        assert time.monotonic() < deadline, study
        time.sleep(0.2)
    return study


def rows(text: str) -> list[dict[str, str]]:
    """The table's rows after its first line, the caution as a ``#`` comment."""
    caution, _, table = text.partition("\n")
    assert caution == f"# Caution: {CAUTION}"
    return list(csv.DictReader(io.StringIO(table)))


def test_sweep_runs_every_point_with_table_and_plot(service: TestClient) -> None:
    r = service.post("/api/v1/studies", json=sweep("duct sweep (test)", [0.2, 0.3, 0.45]))
    assert r.status_code == 202, r.text
    created = r.json()
    assert created["state"] == "queued" and len(created["jobs"]) == 3
    study = wait_study(service, created["id"])
    assert study["state"] == "succeeded" and study["progress"] == 1.0 and study["kind"] == "sweep"
    assert [p["job"] for p in study["points"]] == created["jobs"]
    assert [p["values"] for p in study["points"]] == [{"inflow.peak_velocity": v} for v in (0.2, 0.3, 0.45)]
    assert study["caution"] == CAUTION and "convergence" not in study
    assert study["units"] == {"inflow.peak_velocity": "m/s", "pipe.cd": "1", "pipe.cl": "1"}
    job = service.get(f"/api/v1/jobs/{created['jobs'][1]}").json()
    assert job["study"] == created["id"] and job["spec"]["inflow"]["peak_velocity"] == 0.3
    assert job["summary"]["reynolds_number"] == pytest.approx(20.0)

    table = service.get(study["links"]["table"])
    assert table.headers["content-type"].startswith("text/csv")
    got = rows(table.text)
    assert list(got[0])[:5] == ["inflow.peak_velocity [m/s]", "job", "state", "pipe.cd [-]", "pipe.cl [-]"]
    assert [float(r["inflow.peak_velocity [m/s]"]) for r in got] == [0.2, 0.3, 0.45]
    assert [r["job"] for r in got] == created["jobs"] and {r["state"] for r in got} == {"succeeded"}
    cd = [float(r["pipe.cd [-]"]) for r in got]
    assert cd[0] > cd[1] > cd[2] > 1.0  # viscous drag weighs less as the Reynolds number grows
    assert cd[1] == pytest.approx(study["points"][1]["summary"]["pipe.cd"])

    plot = service.get(study["links"]["plot"], params={"y": "pipe.cd"})
    assert plot.status_code == 200 and plot.content[:8] == b"\x89PNG\r\n\x1a\n" and len(plot.content) > 10_000
    unknown = service.get(study["links"]["plot"], params={"y": "pipe.thrust"})
    assert unknown.status_code == 422 and unknown.json()["detail"][0]["field"] == "y"
    assert "pipe.cd" in unknown.json()["detail"][0]["message"]
    assert service.get("/api/v1/studies/nope/table.csv").status_code == 404

    again = service.post("/api/v1/studies", json=sweep("duct sweep (test)", [0.2, 0.3, 0.45])).json()
    assert again["state"] == "succeeded"  # every point reused at once
    reused = service.get(f"/api/v1/studies/{again['id']}").json()
    assert [p["reused_from"] for p in reused["points"]] == created["jobs"]
    listed = service.get("/api/v1/studies", params={"limit": 2}).json()["studies"]
    assert [s["id"] for s in listed] == [again["id"], created["id"]]


@pytest.mark.parametrize(
    ("study", "field"),
    [
        ({**sweep("bad", [0.1]), "vary": [{"path": "inflow.gust", "values": [0.1]}]}, "vary.0.path"),
        ({**sweep("bad", [0.1]), "vary": [{"path": "inflow.peak_velocity"}]}, "vary.0"),
        ({**sweep("bad", [0.1]), "kind": "tornado"}, "kind"),
        ({**sweep("bad", [0.1]), "base": {**STEADY, "fluid": {"viscosity": -1}}}, "base.fluid.viscosity"),
        (
            {**sweep("bad", [0.1]), "vary": [{"path": "bodies.0.radius", "values": [0.05, -0.01]}]},
            "points.1.bodies.0.radius",
        ),
        (
            {
                "kind": "sweep",
                "base": {
                    **STEADY,
                    "analysis": {"mode": "transient", "scheme": "bdf2-imex", "time_step": 0.01, "end_time": 1.0},
                },
                "vary": [{"path": "analysis.time_step", "values": [0.01, 1e-5]}],
            },
            "points.1.analysis.time_step",
        ),
        ({"kind": "mesh-convergence", "base": STEADY, "levels": 9}, "levels"),
        ([STEADY], "(body)"),
    ],
)
def test_bad_study_is_422_naming_the_field(offline: TestClient, study: Any, field: str) -> None:
    r = offline.post("/api/v1/studies", json=study)
    assert r.status_code == 422, r.text
    assert field in [d["field"] for d in r.json()["detail"]]
    assert offline.get("/api/v1/studies").json()["studies"] == []


def test_study_over_the_per_user_cap_is_refused_whole_and_cancel_stops_it(offline: TestClient) -> None:
    big = offline.post("/api/v1/studies", json=sweep("cap", [0.1, 0.2, 0.3, 0.4]))
    assert big.status_code == 429
    assert "would add 4" in big.json()["detail"][0]["message"] and "limit per user is 3" in big.text
    assert offline.get("/api/v1/jobs").json()["jobs"] == [] and offline.get("/api/v1/studies").json()["studies"] == []

    created = offline.post("/api/v1/studies", json=sweep("cap", [0.1, 0.2, 0.3])).json()
    study = offline.get(f"/api/v1/studies/{created['id']}").json()
    assert study["state"] == "queued" and study["progress"] == 0.0 and study["points"][0]["summary"] is None
    assert offline.post("/api/v1/jobs", json=steady("one more")).status_code == 429
    cancelled = offline.post(f"/api/v1/studies/{created['id']}/cancel").json()
    assert cancelled["state"] == "cancelled" and {p["state"] for p in cancelled["points"]} == {"cancelled"}
    assert offline.post(f"/api/v1/studies/{created['id']}/cancel").status_code == 409


def test_mesh_convergence_reports_order_extrapolation_and_gci(offline: TestClient) -> None:
    """Results with a known second-order error, cD = 5.5 + 40 h², written as the worker would write them."""
    created = offline.post("/api/v1/studies", json={"kind": "mesh-convergence", "base": STEADY, "levels": 3}).json()
    store = offline.app.state.store
    study = offline.get(f"/api/v1/studies/{created['id']}").json()
    assert [p["values"] for p in study["points"]] == [{"mesh.refinements": k} for k in range(3)]
    assert [store.get(j).spec["mesh"]["refinements"] for j in created["jobs"]] == [0, 1, 2]
    area = fluid_area(STEADY)
    assert area == pytest.approx(0.41 - math.pi * 0.05**2, rel=1e-4)
    for k in range(3):
        claimed = store.claim_next("test")
        cells = 1000 * 4**k
        summary = written(
            cells, {"name": "pipe", "drag_coefficient": 5.5 + 40 * area / cells, "lift_coefficient": 0.01}
        )
        store.finish(claimed.id, claimed.claim, "succeeded", summary, progress={"progress_fraction": 1.0})
        study = offline.get(f"/api/v1/studies/{created['id']}").json()
        if k < 2:
            assert study["state"] == "running" and study["convergence"] == {}
            assert study["progress"] == pytest.approx((k + 1) / 3)
    assert study["state"] == "succeeded"
    cd = study["convergence"]["pipe.cd"]
    assert cd["observed_order"] == pytest.approx(2.0) and cd["extrapolated"] == pytest.approx(5.5)
    fine_error = 40 * area / 16000  # GCI = 1.25 |e21| / (r^p - 1) with e21 = 3 x fine_error and r^p - 1 = 3
    assert cd["monotone"] is True and cd["gci_fine"] == pytest.approx(1.25 * fine_error / (5.5 + fine_error))
    assert study["convergence"]["pipe.cl"]["observed_order"] is None  # identical on every mesh: no order
    table = rows(offline.get(f"/api/v1/studies/{created['id']}/table.csv").text)
    assert [r["mesh.refinements [-]"] for r in table] == ["0", "1", "2"]


def test_convergence_of_a_zero_or_non_shrinking_value_is_null_with_a_reason(offline: TestClient) -> None:
    """A lift of 0 on the finest mesh and a drag whose changes do not shrink once made this read a 500."""
    created = offline.post("/api/v1/studies", json={"kind": "mesh-convergence", "base": STEADY, "levels": 3}).json()
    store = offline.app.state.store
    for k in range(3):
        claimed = store.claim_next("test")
        h2 = fluid_area(STEADY) / (1000 * 4**k)
        pipe = {"name": "pipe", "drag_coefficient": 5.5 + 0.1 * k, "lift_coefficient": 40 * h2 - 40 * h2 * (k == 2)}
        store.finish(claimed.id, claimed.claim, "succeeded", written(1000 * 4**k, pipe))
    r = offline.get(f"/api/v1/studies/{created['id']}")
    assert r.status_code == 200, r.text
    cd, cl = r.json()["convergence"]["pipe.cd"], r.json()["convergence"]["pipe.cl"]
    assert cd["observed_order"] is None and cd["gci_fine"] is None and "does not shrink" in cd["reason"]
    assert cl["gci_fine"] is None and "finest-grid value is 0" in cl["reason"]


def test_identical_job_reuses_the_result_unless_fresh(service: TestClient) -> None:
    spec = steady("shortened 2D-1 cylinder (reuse test)", peak_velocity=0.35)
    first = wait_for(service, service.post("/api/v1/jobs", json=spec).json()["id"], finished)
    assert first["state"] == "succeeded" and first["reused_from"] is None
    r = service.post("/api/v1/jobs", json=spec)
    assert r.status_code == 202 and r.json()["state"] == "succeeded" and r.json()["reused_from"] == first["id"]
    second = service.get(f"/api/v1/jobs/{r.json()['id']}").json()
    assert second["summary"] == first["summary"] and second["attempts"] == 0
    assert second["progress"]["fraction"] == 1.0

    fresh = service.post("/api/v1/jobs", params={"fresh": "true"}, json=spec).json()
    assert fresh["state"] == "queued" and fresh["reused_from"] is None
    third = wait_for(service, fresh["id"], finished)
    assert third["state"] == "succeeded" and third["attempts"] == 1
    assert third["summary"]["bodies"][0]["drag_coefficient"] == pytest.approx(
        first["summary"]["bodies"][0]["drag_coefficient"], rel=1e-9
    )

    assert service.delete(f"/api/v1/jobs/{first['id']}").status_code == 204
    summary = service.get(f"/api/v1/jobs/{second['id']}/files/summary.json")
    assert summary.status_code == 200 and json.loads(summary.content)["title"] == spec["title"]
    assert service.post("/api/v1/jobs", json=spec).json()["reused_from"] == third["id"]
    other = service.post("/api/v1/jobs", json=steady("shortened 2D-1 cylinder (reuse test)", peak_velocity=0.36))
    assert other.json()["state"] == "queued"
    assert service.post(f"/api/v1/jobs/{other.json()['id']}/cancel").json()["state"] in ("running", "cancelled")


@pytest.fixture
def http_url(service: TestClient) -> Iterator[str]:
    """The test service's app on a real loopback port (its lifespan already runs in the TestClient)."""
    port = _free_port()
    server = uvicorn.Server(
        uvicorn.Config(service.app, host="127.0.0.1", port=port, lifespan="off", log_level="warning")
    )
    thread = threading.Thread(target=server.run, daemon=True)
    thread.start()
    deadline = time.monotonic() + 10
    while not server.started:
        assert time.monotonic() < deadline
        time.sleep(0.05)
    yield f"http://127.0.0.1:{port}"
    server.should_exit = True
    thread.join(10)


def test_cli_study_waits_and_prints_the_table(http_url: str, tmp_path: Path) -> None:
    spec = tmp_path / "study.json"
    spec.write_text(json.dumps(sweep("duct sweep (CLI test)", [0.25, 0.4])))
    done = subprocess.run(
        [*WAKEYARD, "study", str(spec), "--url", http_url, "--wait"], capture_output=True, text=True, timeout=120
    )
    assert done.returncode == 0, done.stderr
    study_id, *lines = done.stdout.splitlines()
    table = rows("\n".join(lines))
    assert [(float(r["inflow.peak_velocity [m/s]"]), r["state"]) for r in table] == [
        (0.25, "succeeded"),
        (0.4, "succeeded"),
    ]
    assert float(table[0]["pipe.cd [-]"]) > float(table[1]["pipe.cd [-]"])
    assert f"study {study_id}: succeeded, 2 of 2 points finished" in done.stderr and "not design loads" in done.stderr

    spec.write_text(json.dumps({**sweep("bad", [0.1]), "vary": [{"path": "inflow.gust", "values": [0.1]}]}))
    bad = subprocess.run([*WAKEYARD, "study", str(spec), "--url", http_url], capture_output=True, text=True, timeout=60)
    assert bad.returncode == 2 and "invalid study: vary.0.path:" in bad.stderr and bad.stdout == ""
