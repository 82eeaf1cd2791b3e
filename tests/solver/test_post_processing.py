"""A finished solve is never lost to its post-processing: what cannot be computed is null with a reason."""

import json
import math
import subprocess
import sys

from wakeyard.solver import InternalError, run
from wakeyard.solver.caution import caution_lines
from wakeyard.solver.output import read_forces

TANDEM = {
    "title": "two tubes in tandem (test)",
    "channel": {"length": 1.2, "height": 0.3, "walls": "no-slip"},
    "bodies": [
        {"name": "upstream", "shape": "circle", "center": [0.25, 0.15], "radius": 0.02},
        {"name": "downstream", "shape": "circle", "center": [0.37, 0.15], "radius": 0.02},
    ],
    "fluid": {"density": 1.2, "viscosity": 1.5e-5},
    "inflow": {"profile": "parabolic", "mean_velocity": 0.02},
    "mesh": {"preset": "coarse", "scale": 1.5},
    "analysis": {"mode": "steady"},
}

R = 0.05
# Between two corners of the 256-sided outline the spec check uses, 2.5e-6 inside the true circle: the check
# accepts the point (it lies outside the outline) but the curved mesh has no fluid there.
MID = math.pi / 256
IN_CURVED_BODY = (0.2 + R * (1 - 5e-5) * math.cos(MID), 0.2 + R * (1 - 5e-5) * math.sin(MID))
PIPE = {
    "title": "pipe with probes (test)",
    "channel": {"length": 1.0, "height": 0.41},
    "bodies": [{"name": "pipe", "shape": "circle", "center": [0.2, 0.2], "radius": R}],
    "fluid": {"density": 1.0, "viscosity": 1e-3},
    "inflow": {"profile": "parabolic", "peak_velocity": 0.3},
    "mesh": {"preset": "coarse", "scale": 2.0},
    "analysis": {"mode": "steady"},
}


def test_wake_reaching_the_next_body_gives_null_length_with_reason(tmp_path):
    summary = run(TANDEM, tmp_path)
    upstream, downstream = summary["bodies"]
    assert upstream["recirculation_length"] is None
    assert "reaches downstream" in summary["unavailable"]["bodies.0.recirculation_length"]
    assert 0 < downstream["recirculation_length"] < 0.5  # its wake ends in the open channel
    assert "bodies.1.recirculation_length" not in summary["unavailable"]
    assert upstream["drag_coefficient"] > 0 and downstream["drag_coefficient"] > 0
    assert json.loads((tmp_path / "status.json").read_text())["state"] == "succeeded"
    assert json.loads((tmp_path / "summary.json").read_text())["bodies"][0]["recirculation_length"] is None


def test_probe_points_outside_the_fluid_give_null_with_reason(tmp_path):
    spec = {
        **PIPE,
        "probes": {
            "pressure_drop": [[0.1, 0.2], list(IN_CURVED_BODY)],
            "velocity": [[0.5, 0.2], list(IN_CURVED_BODY), [0.15, 0.2]],
        },
    }
    summary = run(spec, tmp_path)
    assert summary["pressure_drop"] is None
    assert "not in the fluid" in summary["unavailable"]["pressure_drop"]
    outside_probe, surface_probe = summary["velocity_probes"][1], summary["velocity_probes"][2]
    assert outside_probe is None and "velocity_probes.1" in summary["unavailable"]
    ux, uy = summary["velocity_probes"][0]
    assert ux > 0.05 and abs(uy) < 0.1 * ux  # behind the short Re 20 wake the flow runs downstream again
    assert abs(surface_probe[0]) < 1e-9 and abs(surface_probe[1]) < 1e-9  # on the resting wall: no-slip
    columns, data = read_forces(tmp_path / "forces.csv")
    assert columns[-4:] == ["probe1_ux", "probe1_uy", "probe3_ux", "probe3_uy"]
    assert "pressure_drop" not in columns and data.shape == (1, len(columns))


def test_pictures_that_cannot_be_written_leave_the_results(tmp_path):
    (tmp_path / "pictures").write_text("a file where the pictures folder should go")
    summary = run(PIPE, tmp_path)
    assert "pictures could not be drawn" in summary["unavailable"]["pictures"]
    assert summary["bodies"][0]["drag_coefficient"] > 0
    assert json.loads((tmp_path / "status.json").read_text())["state"] == "succeeded"


def test_unexpected_failure_names_its_stage(tmp_path):
    (tmp_path / "fields").write_text("a file where the snapshot folder should go")
    try:
        run(PIPE, tmp_path)
    except InternalError as err:
        assert err.stage == "writing result files" and str(err).startswith("writing result files failed: ")
    else:
        raise AssertionError("the run should have failed")
    status = json.loads((tmp_path / "status.json").read_text())
    assert status["state"] == "failed" and status["message"].startswith("writing result files failed")


def cli(*args):
    return subprocess.run([sys.executable, "-m", "wakeyard.cli", *args], capture_output=True, text=True, timeout=600)


def test_cli_reports_a_failure_in_one_line_with_exit_code_3(tmp_path):
    spec = tmp_path / "pipe.json"
    spec.write_text(json.dumps(PIPE))
    out = tmp_path / "out"
    out.mkdir()
    (out / "fields").write_text("in the way")
    done = cli("run", str(spec), "--out", str(out), "--quiet")
    assert done.returncode == 3
    first, *rest = done.stderr.strip().splitlines()
    assert rest == caution_lines()  # one line of failure, then the caution that goes with partial results
    assert first.startswith("run failed: writing result files failed: ") and "Traceback" not in done.stderr


def test_cli_refuses_unreadable_specs_in_one_line_with_exit_code_2(tmp_path):
    cases = {"deep.json": "[" * 100_000 + "]" * 100_000, "latin1.json": '{"title": "caf\xe9"}', "list.json": "[1, 2]"}
    for name, text in cases.items():
        path = tmp_path / name
        path.write_bytes(text.encode("latin-1"))
        done = cli("run", str(path), "--out", str(tmp_path / "out"), "--quiet")
        assert done.returncode == 2, (name, done.stderr)
        assert "Traceback" not in done.stderr and len(done.stderr.strip().splitlines()) == 1, (name, done.stderr)
