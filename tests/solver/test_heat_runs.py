"""Runs with a temperature end to end: files, statistics, units, cancellation and resumption, the command line.

No published value is checked here (see test_heat.py); the case is the shortened 2D-1 channel of test_runs.py
with a heated pipe, in water with the default thermal properties.
"""

from __future__ import annotations

import json
import subprocess
import sys

import meshio
import numpy as np
import pytest

from wakeyard.solver import Cancelled, run
from wakeyard.solver.units import number_paths, unit_of

from .test_runs import SMALL

HEATED = {
    **SMALL,
    "bodies": [{**SMALL["bodies"][0], "thermal": {"temperature": 60.0}}],
    "heat": {"inflow_temperature": 20.0, "walls": "insulated"},
    "analysis": {**SMALL["analysis"], "end_time": 0.2},
}


@pytest.fixture(scope="module")
def heated_run(tmp_path_factory):
    out = tmp_path_factory.mktemp("heated")
    return out, run(HEATED, out)


def test_transient_heat_outputs(heated_run):
    out, summary = heated_run
    nusselt = summary["bodies"][0]["nusselt_number"]
    assert set(nusselt) == {"mean", "min", "max", "amplitude", "rms"}
    assert 0 < nusselt["min"] <= nusselt["mean"] <= nusselt["max"]
    heat = np.loadtxt(out / "heat.csv", delimiter=",", skiprows=1, ndmin=2)
    assert len(heat) == summary["steps"] == 40  # 0.2 s in the fixed steps of 0.005 s
    assert (out / "heat.csv").read_text().splitlines()[0] == "time,pipe_nu,outlet_temperature"
    # the warm wake has not reached the outlet 0.8 downstream within 0.2 s at 0.2 m/s: still the inflow temperature
    assert summary["outlet_temperature"]["max"] == pytest.approx(20.0, abs=1e-6)
    local = (out / "local_nusselt.csv").read_text().splitlines()
    assert local[0] == "body,x,y,angle_deg,arc_length,nusselt" and len(local) > 20
    for name in ("nusselt.png", "local_nusselt.png", "pictures/temperature_000040.png"):
        assert (out / name).exists(), name
    vtu = meshio.read(out / "fields" / "step_000040.vtu")
    T = vtu.point_data["temperature"]
    # SUPG allows small over- and undershoots at the heated surface, no large ones
    assert T.min() > 20.0 - 0.5 and T.max() < 60.0 + 0.5
    assert not (out / "heat_checkpoint.npz").exists()


def test_every_heat_number_has_a_unit(heated_run):
    out, _ = heated_run
    written = json.loads((out / "summary.json").read_text())
    units = written["units"]
    missing = [p for p in number_paths({k: v for k, v in written.items() if k != "units"}) if unit_of(units, p) is None]
    assert missing == []
    assert unit_of(units, "bodies.0.nusselt_number.mean") == "1"
    assert unit_of(units, "outlet_temperature.mean") == "°C"


def test_cancel_and_resume_continue_the_temperature(heated_run, tmp_path):
    out_full, _ = heated_run
    calls = {"n": 0}

    def stop_after_12_steps():
        calls["n"] += 1
        return calls["n"] > 12

    with pytest.raises(Cancelled):
        run(HEATED, tmp_path, should_stop=stop_after_12_steps)
    assert (tmp_path / "heat_checkpoint.npz").exists()
    summary = run(HEATED, tmp_path)  # resumes from step 10
    assert "heat.history" not in summary["unavailable"]
    resumed = np.loadtxt(tmp_path / "heat.csv", delimiter=",", skiprows=1, ndmin=2)
    reference = np.loadtxt(out_full / "heat.csv", delimiter=",", skiprows=1, ndmin=2)
    assert resumed.shape == reference.shape
    assert np.allclose(resumed, reference, rtol=1e-8, atol=1e-10)


def test_steady_run_without_heat_writes_no_heat(tmp_path):
    summary = run({**SMALL, "inflow": {"peak_velocity": 0.3}, "analysis": {"mode": "steady"}}, tmp_path)
    assert "outlet_temperature" not in summary and "nusselt_number" not in summary["bodies"][0]
    assert not (tmp_path / "heat.csv").exists()
    assert "temperature" not in meshio.read(tmp_path / "fields" / "step_000000.vtu").point_data


def test_cli_rejects_bad_heat_input_with_exit_2(tmp_path):
    bad = tmp_path / "bad.json"
    bad.write_text(json.dumps({**HEATED, "heat": {"prandtl": 0.7, "walls": {"heat_flux": 100.0}}}))
    done = subprocess.run(
        [sys.executable, "-m", "wakeyard.cli", "run", str(bad), "--out", str(tmp_path / "bad")],
        capture_output=True,
        text=True,
        timeout=600,
    )
    assert done.returncode == 2 and "heat.walls.heat_flux" in done.stderr


def test_a_body_at_the_inflow_temperature_has_no_nusselt_number_and_says_why(tmp_path):
    spec = {
        **HEATED,
        "bodies": [{**SMALL["bodies"][0], "thermal": {"temperature": 20.0}}],
        "inflow": {"peak_velocity": 0.3},  # no ramp: a steady run takes the inflow at t = 0
        "analysis": {"mode": "steady"},
    }
    summary = run(spec, tmp_path)
    assert summary["bodies"][0]["nusselt_number"] is None
    assert "inflow temperature" in summary["unavailable"]["bodies.0.nusselt_number"]
    assert summary["outlet_temperature"] == pytest.approx(20.0, abs=1e-9)  # nothing heats the water


def test_the_temperature_follows_error_controlled_steps(tmp_path):
    spec = {**HEATED, "analysis": {"mode": "transient", "end_time": 0.2, "checkpoint_interval": 1000}}
    summary = run(spec, tmp_path)
    assert summary["scheme"] == "bdf2-adaptive"
    heat = np.loadtxt(tmp_path / "heat.csv", delimiter=",", skiprows=1, ndmin=2)
    forces = np.loadtxt(tmp_path / "forces.csv", delimiter=",", skiprows=1, ndmin=2)
    assert len(heat) == summary["steps"] and np.array_equal(heat[:, 0], forces[:, 0])
    assert len(set(np.round(forces[:, -1], 12))) > 3  # uneven steps
    nusselt = summary["bodies"][0]["nusselt_number"]
    assert 0 < nusselt["min"] <= nusselt["mean"] <= nusselt["max"]
