"""Driven bodies on a moving (ALE) mesh: free-stream preservation, the force on an oscillating circle, the spec's
refusals and the result files."""

import json
import math

import numpy as np
import pytest

from tests.helpers import interrupted_then_resumed
from wakeyard.solver import SpecError, load, run
from wakeyard.solver.adaptive import AdaptiveBDF2, Scales
from wakeyard.solver.ale import MeshMotion, MeshTangled, MovingBody
from wakeyard.solver.boundary import Dirichlet
from wakeyard.solver.case import Case
from wakeyard.solver.output import read_forces

CHANNEL = {"length": 1.0, "height": 0.5}


def driven(direction, amplitude, frequency):
    return {"kind": "driven", "direction": direction, "amplitude": amplitude, "frequency": frequency}


def test_a_uniform_stream_stays_uniform_on_a_moving_mesh():
    """Free-stream preservation (the geometric conservation law's test, common practice for ALE schemes): a uniform
    velocity, prescribed on every boundary but the free outlet (the bodies' surfaces included), is the exact
    solution; two bodies moving across and along the stream drag the mesh far from where it was built, and the
    computed flow must stay uniform to round-off."""
    spec = load(
        {
            "channel": CHANNEL,
            "bodies": [
                {"name": "a", "shape": "circle", "center": [0.3, 0.25], "radius": 0.05, "mount": driven("x", 0.06, 2)},
                {"name": "b", "shape": "circle", "center": [0.7, 0.25], "radius": 0.05, "mount": driven("y", 0.08, 3)},
            ],
            "fluid": {"density": 1.0, "viscosity": 0.01},
            "inflow": {"profile": "uniform", "mean_velocity": 1.0},
            "mesh": {"preset": "coarse", "scale": 2.0},
            "analysis": {"mode": "transient"},
        }
    )
    case = Case.build(spec)
    ns, th = case.ns, case.th
    U, V = 1.0, 0.4
    edge = th.velocity.get_dofs(np.concatenate([f for name, f in case.mesh.facets.items() if name != "outlet"]))
    edge = edge.all()
    stream = np.zeros(th.ndofs)
    stream[: th.nu], stream[th.nu : 2 * th.nu] = U, V
    fixed = np.r_[edge, th.nu + edge]
    ns.dirichlet = Dirichlet(fixed, np.where(np.isin(np.arange(th.ndofs), fixed), stream, 0.0), np.zeros(th.ndofs))
    ns.free = np.setdiff1d(np.arange(th.ndofs), fixed)
    start = th.velocity.doflocs.copy()
    stepper = AdaptiveBDF2(ns, stream, 1e-3, Scales(1.0, 0.1), first_step=0.005)
    largest_move = 0.0
    while stepper.t < 0.3:
        result = stepper.step(0.3)
        largest_move = max(largest_move, float(np.abs(th.velocity.doflocs - start).max()))
        ux, uy, p = th.split(result.x)
        assert np.abs(ux - U).max() < 1e-10 and np.abs(uy - V).max() < 1e-10
        assert np.abs(p).max() < 1e-9
    assert largest_move > 0.05  # the bodies' nodes went most of their amplitudes away
    assert stepper.n >= 5  # several steps, each on a differently moved mesh


# Still fluid around a circle driven along y by s = A sin(2 pi f t): the force per unit length is
#   F = -rho pi R^2 (k s'' + k' omega s'),
# k the added-mass (in-phase) and k' the damping (out-of-phase) coefficient. Stokes (1851, Trans. Camb. Phil. Soc.
# 9:8) solved the linearised problem; Wang (1968, J. Fluid Mech. 32:55) gave its expansion in the Stokes number
# beta = D^2 f / nu (recalled from memory, in the form of the inertia and drag coefficients of an oscillating flow,
# with the potential-flow part 1 of the inertia removed for a body moving in still fluid):
#   k  = 1 + 4 (pi beta)^(-1/2) + (pi beta)^(-3/2),
#   k' = 4 (pi beta)^(-1/2) + 4 (pi beta)^(-1) - (pi beta)^(-3/2).
# As beta grows k tends to the potential-flow added mass rho pi R^2 (k = 1). Sarpkaya (1986, J. Fluid Mech. 165:61;
# its abstract read) found measured forces in good agreement with this Stokes-Wang analysis at small amplitudes.
BETA = 50.0
D, F = 0.02, 1.0


def stokes_wang(beta):
    x = math.pi * beta
    return 1 + 4 * x**-0.5 + x**-1.5, 4 * x**-0.5 + 4 / x - x**-1.5


@pytest.mark.slow
def test_a_circle_oscillating_in_still_fluid_has_the_stokes_wang_added_mass_and_damping(tmp_path):
    """Small amplitude (A = 0.02 D: the convective terms the linear theory drops are of the order of A / D against
    the others) in a box 20 D wide (the walls add about 0.5 % to the potential-flow added mass, from the
    concentric-cylinder value (b^2 + a^2) / (b^2 - a^2), common practice). The Stokes layer is sqrt(nu / (pi f)) =
    0.08 D thick at beta = 50; the cells at the body are D / 12 (P2) and the steps loose (accuracy 1e-2), so the
    coefficients are asked to within 2 % (k) and 3 % (k'); measured here: +0.3 % and -0.4 % (with D / 20 and
    accuracy 1e-3: +0.6 % and +0.2 %)."""
    amplitude, box = 0.02 * D, 20 * D
    spec = {
        "channel": {"length": box, "height": box},
        "bodies": [
            {
                "name": "tube",
                "shape": "circle",
                "center": [box / 2, box / 2],
                "radius": D / 2,
                "mount": driven("y", amplitude, F),
            }
        ],
        "fluid": {
            "density": 1000.0,
            "viscosity": D * D * F / BETA,
            "reference": {"velocity": 2 * math.pi * F * amplitude},
        },
        "inflow": {
            "profile": "uniform",
            "mean_velocity": 1.0,
            "time_law": {"kind": "table", "points": [[0, 0], [9, 0]]},
        },
        "mesh": {"preset": "coarse", "body_size": D / 12},
        "analysis": {"mode": "transient", "end_time": 2.5 / F, "accuracy": 1e-2, "output_interval": 10.0},
    }
    run(spec, tmp_path)
    columns, data = read_forces(tmp_path / "forces.csv")
    t, fy = data[:, 0], data[:, columns.index("tube_fy")]
    last = t >= 1.0 / F  # the start-up has died down after a period
    omega = 2 * math.pi * F
    basis = np.c_[np.sin(omega * t[last]), np.cos(omega * t[last]), np.ones(last.sum())]
    sin_part, cos_part, _ = np.linalg.lstsq(basis, fy[last], rcond=None)[0]
    scale = 1000.0 * math.pi * (D / 2) ** 2 * amplitude * omega**2
    k, k_damping = sin_part / scale, -cos_part / scale
    k_ref, k_damping_ref = stokes_wang(BETA)
    assert k == pytest.approx(k_ref, rel=0.02)  # Stokes (1851), Wang (1968): recalled from memory
    assert k_damping == pytest.approx(k_damping_ref, rel=0.03)  # Stokes (1851), Wang (1968): recalled from memory


def post(**mount):
    return {"name": "post", "shape": "circle", "center": [0.1, 0.05], "radius": 0.01, "mount": mount}


TRANSIENT = {"mode": "transient", "end_time": 1.0}


def problems(data):
    with pytest.raises(SpecError) as err:
        load(data)
    return dict(err.value.problems)


@pytest.mark.parametrize(
    ("mount", "field"),
    [
        (driven("y", 0.0, 1.0), "bodies.0.mount.amplitude"),
        (driven("y", -0.001, 1.0), "bodies.0.mount.amplitude"),
        (driven("y", 0.001, 0.0), "bodies.0.mount.frequency"),
        (driven("z", 0.001, 1.0), "bodies.0.mount.direction"),
        ({"kind": "driven", "direction": "y", "frequency": 1.0}, "bodies.0.mount.amplitude"),
        ({**driven("y", 0.001, 1.0), "phase": 1}, "bodies.0.mount.phase"),
    ],
)
def test_bad_mount_parameters_are_refused_naming_the_field(mount, field):
    found = problems({"bodies": [post(**mount)], "analysis": TRANSIENT})
    assert field in found


def test_an_amplitude_that_squeezes_the_gap_to_a_wall_is_refused_naming_the_field_and_the_limit():
    # the post has 40 mm to each wall; 25 mm of motion leaves 15 mm, less than half
    with pytest.raises(SpecError) as err:
        load({"bodies": [post(**driven("y", 0.025, 1.0))], "analysis": TRANSIENT})
    messages = [m for field, m in err.value.problems if field == "bodies.0.mount.amplitude"]
    assert len(messages) == 2
    assert "lower wall" in messages[0] and "upper wall" in messages[1]
    assert all("within 0.015 m" in m and "amplitude up to 0.02 m" in m for m in messages)
    assert load({"bodies": [post(**driven("y", 0.02, 1.0))], "analysis": TRANSIENT}).bodies[0].mount.amplitude == 0.02
    # along the stream the inlet is 90 mm away: the same stroke fits
    assert load({"bodies": [post(**driven("x", 0.025, 1.0))], "analysis": TRANSIENT})


def test_two_bodies_that_would_close_their_gap_are_refused():
    other = {"name": "pier", "shape": "circle", "center": [0.16, 0.05], "radius": 0.01}
    found = problems({"bodies": [post(**driven("x", 0.03, 1.0)), other], "analysis": TRANSIENT})
    assert "pier" in found["bodies.0.mount.amplitude"]


@pytest.mark.parametrize(
    ("analysis", "extra", "field"),
    [
        ({"mode": "steady"}, {}, "analysis.mode"),
        ({**TRANSIENT, "scheme": "bdf2-implicit", "time_step": 0.01}, {}, "analysis.scheme"),
        (TRANSIENT, {"elements": "P3P2"}, "elements"),
    ],
)
def test_what_moving_bodies_do_not_support_is_refused_naming_the_field(analysis, extra, field):
    found = problems({"bodies": [post(**driven("y", 0.005, 1.0))], "analysis": analysis, **extra})
    assert field in found


def test_a_driven_post_in_a_stream_reports_its_displacement_and_motion(tmp_path):
    """A post shaken across a slow stream (Re 5): forces.csv carries its displacement after the other columns,
    summary.json its motion, and the field snapshots show the mesh where it was."""
    amplitude, frequency, end = 0.002, 2.0, 3.0
    spec = {
        "title": "shaken post",
        "bodies": [post(**driven("y", amplitude, frequency))],
        "fluid": {"density": 1000.0, "viscosity": 4e-5},
        "inflow": {"profile": "uniform", "mean_velocity": 0.01},
        "mesh": {"preset": "coarse", "scale": 3.0},
        "analysis": {"mode": "transient", "end_time": end, "accuracy": 0.05, "output_interval": 1.1},
    }
    summary = run(spec, tmp_path)
    columns, data = read_forces(tmp_path / "forces.csv")
    assert columns[-3:] == ["time_step", "post_dx", "post_dy"]
    t = data[:, 0]
    assert np.abs(data[:, -2]).max() == 0.0
    np.testing.assert_allclose(data[:, -1], amplitude * np.sin(2 * np.pi * frequency * t), atol=1e-12)
    motion = summary["bodies"][0]["motion"]
    assert motion["x"]["amplitude"] == 0.0
    assert motion["y"]["amplitude"] == pytest.approx(amplitude, rel=0.02)  # the samples nearly reach the peaks
    assert motion["y"]["amplitude_ratio"] == pytest.approx(motion["y"]["amplitude"] / 0.02)
    assert motion["frequency_ratio"] == pytest.approx(1.0, rel=0.02)
    assert json.loads((tmp_path / "summary.json").read_text())["bodies"][0]["motion"] == motion
    # the last snapshot: the post's surface nodes sit displaced by the prescribed amount
    last = sorted((tmp_path / "fields").glob("step_*.npz"))[-1]
    with np.load(last) as f:
        points, when = f["points"], float(f["time"])
    centre = np.array([0.1, 0.05 + amplitude * np.sin(2 * np.pi * frequency * when)])
    radius = np.hypot(*(points - centre[:, None]))
    assert np.isclose(radius, 0.01, atol=1e-9).sum() >= 16
    assert (tmp_path / "pictures").is_dir() and any((tmp_path / "pictures").glob("vorticity_*.png"))


def test_a_resumed_run_with_a_moving_body_repeats_the_whole_run_bit_for_bit(tmp_path):
    """The mesh's position is a function of time alone, so a run resumed from a checkpoint moves it the same way."""
    spec = {
        "channel": {"length": 1.0, "height": 0.41},
        "bodies": [
            {"name": "post", "shape": "circle", "center": [0.2, 0.2], "radius": 0.05, "mount": driven("y", 0.01, 1)}
        ],
        "fluid": {"density": 1.0, "viscosity": 1e-3},
        "inflow": {"peak_velocity": 0.3},
        "mesh": {"preset": "coarse", "scale": 2.0},
        "analysis": {
            "mode": "transient",
            "end_time": 0.1,
            "checkpoint_interval": 5,
            "accuracy": 1e-2,
            "output_interval": 0.1,
        },
    }
    whole = run(spec, tmp_path / "whole")
    resumed = interrupted_then_resumed(spec, tmp_path / "parts", steps=12)
    assert resumed["resumed_from_step"] == 10 and whole["steps"] > 15
    assert (tmp_path / "parts" / "forces.csv").read_bytes() == (tmp_path / "whole" / "forces.csv").read_bytes()
    assert resumed["bodies"][0]["motion"] == whole["bodies"][0]["motion"]


class FarAway:
    """A law of motion that carries its body a given distance along y (what a runaway spring body would do)."""

    def __init__(self, distance):
        self.distance = distance

    def offset(self, t):
        return np.array([0.0, self.distance * t])

    def rate(self, t):
        return np.array([0.0, self.distance])


def test_a_body_driven_into_the_wall_stops_the_run_with_a_reason_instead_of_a_turned_over_mesh():
    """The spec keeps driven bodies clear of walls; a spring body's swing is not known beforehand. A mesh whose cells
    turn over would give a meaningless flow, so moving it there is refused with the body, its displacement and
    advice."""
    spec = load(
        {
            "channel": CHANNEL,
            "bodies": [{"name": "tube", "shape": "circle", "center": [0.4, 0.25], "radius": 0.05}],
            "mesh": {"preset": "coarse", "scale": 2.0},
            "analysis": {"mode": "transient"},
        }
    )
    case = Case.build(spec)
    th = case.th
    tube = th.velocity.get_dofs(case.mesh.facets["tube"]).all()
    motion = MeshMotion(th, [MovingBody("tube", tube, FarAway(0.15))])
    motion.mesh_at(0.5)  # 0.075 m of the 0.2 m gap to the wall: the mesh follows
    with pytest.raises(MeshTangled, match=r"tube by \(0, 0.3\) m\).* mesh cannot follow"):
        motion.mesh_at(2.0)  # 0.3 m: through the wall
