"""Transient runs end to end: files, cancellation, resumption, divergence and the command line."""

import copy
import json
import subprocess
import sys
import time

import numpy as np
import pytest

from tests.helpers import TINY
from wakeyard.solver import Cancelled, Diverged, run
from wakeyard.solver.caution import CAUTION
from wakeyard.solver.output import read_forces
from wakeyard.solver.units import number_paths, unit_of

# The tiny case of the service tests (tests/helpers.py) with a step that keeps the largest CFL number about 0.8 (the
# fixed step is never split) and two pressure probes
SMALL = copy.deepcopy(TINY) | {"probes": {"pressure_drop": [[0.1, 0.2], [0.3, 0.2]]}}
SMALL["analysis"]["time_step"] = 0.005


@pytest.fixture(scope="module")
def full_run(tmp_path_factory):
    out = tmp_path_factory.mktemp("full")
    summary = run(SMALL, out)
    return out, summary


def test_transient_outputs(full_run):
    out, summary = full_run
    columns, data = read_forces(out / "forces.csv")
    assert columns == ["time", "pipe_fx", "pipe_fy", "pipe_cd", "pipe_cl", "pressure_drop", "time_step"]
    assert data.shape == (60, 7)
    assert np.allclose(data[:, 0], np.arange(1, 61) * 0.005)
    assert np.allclose(data[:, -1], 0.005)
    steps = summary["time_steps"]
    assert steps["accepted"] == 60 and steps["rejected"] == 0 and steps["factorisations"] == 1
    assert steps["smallest"] == pytest.approx(0.005) and steps["largest"] == pytest.approx(0.005)
    stats = summary["bodies"][0]["drag_coefficient"]
    assert set(stats) == {"mean", "min", "max", "amplitude", "rms"}
    assert stats["min"] <= stats["mean"] <= stats["max"]
    # Re 20: no shedding (common knowledge: a circular cylinder's wake stays steady below Re of about 47)
    assert summary["strouhal_number"] is None
    assert sorted(p.name for p in (out / "fields").glob("*.vtu")) == [
        "step_000000.vtu",
        "step_000020.vtu",
        "step_000040.vtu",
        "step_000060.vtu",
    ]
    assert len(list((out / "pictures").glob("vorticity_*.png"))) == 4
    assert (out / "forces.png").stat().st_size > 1000
    assert (out / "pictures" / "mesh.png").read_bytes()[:4] == b"\x89PNG"  # the mesh, with a close-up of the body
    assert not (out / "checkpoint.npz").exists()


def test_summary_carries_the_caution_and_a_unit_for_every_number(full_run):
    out, summary = full_run
    written = json.loads((out / "summary.json").read_text())
    assert written["caution"] == summary["caution"] == CAUTION
    units = written["units"]
    missing = [p for p in number_paths({k: v for k, v in written.items() if k != "units"}) if unit_of(units, p) is None]
    assert missing == []
    assert unit_of(units, "pressure_drop.mean") == "Pa" and unit_of(units, "window.start") == "s"
    assert unit_of(units, "time_steps.mean") == "s" and unit_of(units, "simulated_time") == "s"
    assert unit_of(units, "bodies.0.drag_coefficient.mean") == "1" and unit_of(units, "reference.velocity") == "m/s"


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


def test_a_far_too_long_explicit_step_fails_early_with_advice(tmp_path):
    spec = {
        **SMALL,
        "inflow": {"peak_velocity": 30.0},
        "analysis": {**SMALL["analysis"], "scheme": "euler-imex", "time_step": 0.05, "end_time": 5.0},
    }
    with pytest.raises(Diverged, match=r"at t = .*CFL number .*try analysis.time_step = ") as failure:
        run(spec, tmp_path)
    advised = float(failure.value.args[0].split("try analysis.time_step = ")[1].split()[0])
    assert 1e-5 < advised < 0.05 / 64  # from the healthy velocity: a step that is usable, not a collapse
    assert json.loads((tmp_path / "status.json").read_text())["state"] == "failed"


def cli(*args):
    return subprocess.run([sys.executable, "-m", "wakeyard.cli", *args], capture_output=True, text=True, timeout=600)


def test_cli_exit_codes(tmp_path):
    bad = tmp_path / "bad.json"
    bad.write_text(json.dumps({"bodies": [{"shape": "circle", "center": [0.2, 0.2], "radius": -0.05}]}))
    done = cli("run", str(bad), "--out", str(tmp_path / "bad"))
    assert done.returncode == 2 and "bodies.0.radius" in done.stderr
    bad.write_text(json.dumps({**SMALL, "analysis": {"mode": "transient", "accuracy": 0.0}}))
    done = cli("run", str(bad), "--out", str(tmp_path / "bad"))
    assert done.returncode == 2 and "analysis.accuracy" in done.stderr

    diverging = tmp_path / "diverging.json"
    diverging.write_text(
        json.dumps(
            {
                **SMALL,
                "inflow": {"peak_velocity": 30.0},
                "analysis": {**SMALL["analysis"], "scheme": "euler-imex", "time_step": 0.05, "end_time": 5.0},
            }
        )
    )
    done = cli("run", str(diverging), "--out", str(tmp_path / "div"), "--quiet")
    assert done.returncode == 3 and "CFL number" in done.stderr
    assert " ".join(done.stderr.split()).endswith(f"Caution: {CAUTION}")  # the partial results are kept

    good = tmp_path / "good.json"
    good.write_text(json.dumps({**SMALL, "analysis": {**SMALL["analysis"], "end_time": 0.05}}))
    done = cli("run", str(good), "--out", str(tmp_path / "good"), "--quiet")
    assert done.returncode == 0, done.stderr
    assert (tmp_path / "good" / "summary.json").exists() and (tmp_path / "good" / "forces.csv").exists()
    assert " ".join(done.stderr.split()) == f"Caution: {CAUTION}" and "Caution" not in done.stdout


def test_a_steady_run_solves_for_the_inflow_after_the_start_up_ramp(tmp_path):
    steady = {**SMALL, "analysis": {"mode": "steady"}}
    ramped = run(steady, tmp_path / "ramped")  # SMALL's inflow ramps up over 0.2 s
    plain = run({**steady, "inflow": {"peak_velocity": 0.3}}, tmp_path / "plain")
    cd = ramped["bodies"][0]["drag_coefficient"]
    assert cd > 1.0 and cd == pytest.approx(plain["bodies"][0]["drag_coefficient"], rel=1e-9)


def test_forces_csv_grows_while_the_run_goes(tmp_path):
    """The page draws the force history of a running job from the growing forces.csv."""
    spec = {**SMALL, "analysis": {**SMALL["analysis"], "checkpoint_interval": 10**6}}  # no checkpoint rewrites
    seen: list[str] = []

    def look_then_go_on():
        path = tmp_path / "forces.csv"
        if path.exists():
            seen.append(path.read_text())
        time.sleep(0.05)  # a slow step: the file is brought up to date twice a second of wall time
        return False

    run(spec, tmp_path, should_stop=look_then_go_on)
    final = (tmp_path / "forces.csv").read_text()
    growing = sorted({text.count("\n") - 1 for text in seen})
    assert len(growing) >= 3 and growing[-1] < 60, growing  # several partial histories before the last of 60 rows
    assert all(final.startswith(text) for text in seen)  # each one the start of the final file, whole lines
