"""Transient runs end to end: files, cancellation, resumption, divergence and the command line."""

import json
import subprocess
import sys

import numpy as np
import pytest

from solver import Cancelled, Diverged, run
from solver.output import read_forces

SMALL = {
    "title": "pipe in a cooling duct (demo)",
    "channel": {"length": 1.0, "height": 0.41},
    "bodies": [{"name": "pipe", "shape": "circle", "center": [0.2, 0.2], "radius": 0.05}],
    "inflow": {"peak_velocity": 0.3, "ramp_time": 0.2},
    "mesh": {"preset": "coarse", "scale": 2.0},
    "analysis": {"mode": "transient", "scheme": "bdf2-imex", "time_step": 0.01, "end_time": 0.3,
                 "output_interval": 0.1, "checkpoint_interval": 5},
    "probes": {"pressure_drop": [[0.1, 0.2], [0.3, 0.2]]},
}


@pytest.fixture(scope="module")
def full_run(tmp_path_factory):
    out = tmp_path_factory.mktemp("full")
    summary = run(SMALL, out)
    return out, summary


def test_transient_outputs(full_run):
    out, summary = full_run
    columns, data = read_forces(out / "forces.csv")
    assert columns == ["time", "pipe_fx", "pipe_fy", "pipe_cd", "pipe_cl", "pressure_drop"]
    assert data.shape == (30, 6)
    assert np.allclose(data[:, 0], np.arange(1, 31) * 0.01)
    stats = summary["bodies"][0]["drag_coefficient"]
    assert set(stats) == {"mean", "min", "max", "amplitude", "rms"}
    assert stats["min"] <= stats["mean"] <= stats["max"]
    assert summary["strouhal_number"] is None  # Re 20: no shedding
    assert sorted(p.name for p in (out / "fields").glob("*.vtu")) == [
        "step_000000.vtu", "step_000010.vtu", "step_000020.vtu", "step_000030.vtu"]
    assert len(list((out / "pictures").glob("vorticity_*.png"))) == 4
    assert (out / "forces.png").stat().st_size > 1000
    assert not (out / "checkpoint.npz").exists()


def test_cancel_keeps_partial_history_and_resume_gives_same_result(full_run, tmp_path):
    out_full, _ = full_run
    calls = {"n": 0}

    def stop_after_12_steps():
        calls["n"] += 1
        return calls["n"] > 12

    with pytest.raises(Cancelled):
        run(SMALL, tmp_path, should_stop=stop_after_12_steps)
    assert json.loads((tmp_path / "status.json").read_text())["state"] == "cancelled"
    _, partial = read_forces(tmp_path / "forces.csv")
    assert len(partial) == 12
    assert (tmp_path / "checkpoint.npz").exists()
    run(SMALL, tmp_path)  # resumes from step 10
    _, resumed = read_forces(tmp_path / "forces.csv")
    _, reference = read_forces(out_full / "forces.csv")
    assert resumed.shape == reference.shape
    assert np.allclose(resumed, reference, rtol=1e-9, atol=1e-12)


def test_divergence_is_reported_with_time_and_cfl(tmp_path):
    spec = {**SMALL, "inflow": {"peak_velocity": 30.0},
            "analysis": {**SMALL["analysis"], "scheme": "euler-imex", "time_step": 0.05, "end_time": 5.0}}
    with pytest.raises(Diverged, match=r"blew up at t = .*CFL number .*time_step = "):
        run(spec, tmp_path)
    assert json.loads((tmp_path / "status.json").read_text())["state"] == "failed"


def cli(*args):
    return subprocess.run([sys.executable, "-m", "cli", *args], capture_output=True, text=True, timeout=600)


def test_cli_exit_codes(tmp_path):
    bad = tmp_path / "bad.json"
    bad.write_text(json.dumps({"bodies": [{"shape": "circle", "center": [0.2, 0.2], "radius": -0.05}]}))
    done = cli("run", str(bad), "--out", str(tmp_path / "bad"))
    assert done.returncode == 2 and "bodies.0.radius" in done.stderr

    diverging = tmp_path / "diverging.json"
    diverging.write_text(json.dumps({**SMALL, "inflow": {"peak_velocity": 30.0},
                                     "analysis": {**SMALL["analysis"], "scheme": "euler-imex",
                                                  "time_step": 0.05, "end_time": 5.0}}))
    done = cli("run", str(diverging), "--out", str(tmp_path / "div"), "--quiet")
    assert done.returncode == 3 and "blew up" in done.stderr

    good = tmp_path / "good.json"
    good.write_text(json.dumps({**SMALL, "analysis": {**SMALL["analysis"], "end_time": 0.05}}))
    done = cli("run", str(good), "--out", str(tmp_path / "good"), "--quiet")
    assert done.returncode == 0, done.stderr
    assert (tmp_path / "good" / "summary.json").exists() and (tmp_path / "good" / "forces.csv").exists()
