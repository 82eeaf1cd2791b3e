"""Published validation cases for the shapes beyond the channel cylinder: job specs, reference values, sources.

Shared by the coarse checks in CI (tests/solver/test_published_shapes.py) and the fine runs of
bench/published_bench.py. Every reference value names its source and says whether it was read from the
source or recalled from memory (then: verify before relying on its last digits). Lengths are in units of the
body size D (or chord c), speeds in units of the reference speed, so the time unit is D/U.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np
import scipy.sparse as sp
from scipy.sparse.linalg import eigs

from wakeyard.solver import load
from wakeyard.solver.case import Case
from wakeyard.solver.steady import solve_steady


# Williamson & Brown (1998), Strouhal-Reynolds fit for the laminar wake of a circular cylinder, as listed in
# the project's reference values (/work/shared/reference/check-values.md); 0.1666 at Re = 100.
def strouhal_williamson_brown(re: float) -> float:
    return 0.2731 - 1.1129 / math.sqrt(re) + 0.4821 / re


# Williamson (1988, Phys. Fluids 31:2742), the fit also quoted in Williamson (1996, Annu. Rev. Fluid Mech.
# 28:477) for parallel shedding, 49 < Re < 178 (coefficients from memory); 0.1643 at Re = 100.
def strouhal_williamson_1988(re: float) -> float:
    return -3.3265 / re + 0.1816 + 1.6e-4 * re


# Circular cylinder in a free stream, Re = 100, two-dimensional simulations (values from memory):
# Park, Kwon & Choi (1998, KSME Int. J. 12:1200), Table: mean cD 1.33, lift amplitude 0.33, St 0.165.
CIRCLE_RE100 = {"cd_mean": 1.33, "cl_amplitude": 0.33, "strouhal": 0.165}

# Rotating cylinder, Re = 100, rotation rate alpha = omega R / U = 1 (counter-clockwise, flow to the right):
# Kang, Choi & Lee (1999, Phys. Fluids 11:3312), mean lift -2.4881 and mean drag 1.1080 (from memory).
ROTATING_RE100_ALPHA1 = {"cl_mean": -2.4881, "cd_mean": 1.1080}

# Square cylinder in a plane channel, blockage 1/8, parabolic inflow, Re = u_max D / nu = 100 (coefficients and
# St on u_max and D): Breuer, Bernsdorf, Zeiser & Durst (2000, Int. J. Heat Fluid Flow 21:186). The set-up
# (blockage 1/8, Re on the maximum inflow speed) is read from the abstract; St 0.139 and cD 1.40 at Re = 100
# are recalled from their St-Re and cD-Re figures (from memory); so are the channel length 50 D and the
# inflow 12.5 D upstream of the square.
SQUARE_CHANNEL_RE100 = {"strouhal": 0.139, "cd_mean": 1.40}

# NACA 0012 at Re = 1000 (chord, free stream), two-dimensional laminar: Kurtulus (2015, Int. J. Micro Air
# Vehicles 7:301). Read (abstract): the flow becomes unsteady at about 8 degrees, so 5 degrees is steady.
# Lift 0.20 and drag 0.13 at 5 degrees are recalled from the paper's force figures (from memory). The recalled
# lift is doubtful: the bench's mesh sequence converges to 0.246 (drag 0.128), so read the source before using
# it (0.20 would fit 4 degrees rather than 5).
NACA0012_RE1000_AOA5 = {"cl": 0.20, "cd": 0.13}

# Onset of shedding behind a circular cylinder: Provansal, Mathis & Boyer (1987, J. Fluid Mech. 182:1) and
# Williamson (1996): steady wake below Re of about 46-47, periodic above (value range as given in issue 9;
# recalled, not read).
ONSET_RANGE = (46.0, 47.0)


def _transient(dt: float, end_time: float) -> dict[str, Any]:
    """Linearly implicit BDF2 with an explicit step (so it keeps its meaning), stopped once periodic."""
    return {
        "mode": "transient",
        "scheme": "bdf2-implicit",
        "time_step": dt,
        "end_time": end_time,
        "output_interval": end_time,
        "checkpoint_interval": 100_000,
        "until_periodic": {"cycles": 3, "tolerance": 0.02},
    }


def free_stream(
    bodies: list[dict[str, Any]],
    reynolds: float,
    scale: float,
    *,
    length: float = 30.0,
    height: float = 20.0,
    analysis: dict[str, Any] | None = None,
    preset: str = "coarse",
    reference_length: float | None = None,
) -> dict[str, Any]:
    """A body in a wide channel with slip walls (blockage D/H = 5 % for D = 1) and uniform inflow U = 1."""
    reference = {"length": reference_length} if reference_length else {}
    return {
        "title": "free-stream validation case",
        "channel": {"length": length, "height": height, "walls": "slip"},
        "bodies": bodies,
        "fluid": {"density": 1.0, "reynolds": reynolds, "reference": reference},
        "inflow": {"profile": "uniform", "mean_velocity": 1.0},
        "mesh": {"preset": preset, "scale": scale},
        "analysis": analysis or {"mode": "steady"},
    }


def circle(
    offset: float = 0.0, spin_ratio: float = 0.0, centre: tuple[float, float] = (10.0, 10.0)
) -> list[dict[str, Any]]:
    """Cylinder of diameter 1 (10 D behind the inlet of the 20 D wide channel by default); ``offset`` lifts it off
    the centre line to seed shedding."""
    return [
        {
            "name": "cylinder",
            "shape": "circle",
            "center": [centre[0], centre[1] + offset],
            "radius": 0.5,
            "spin": 2.0 * spin_ratio,
        }
    ]


def circle_re100(scale: float, dt: float, end_time: float = 200.0) -> dict[str, Any]:
    # 0.05 D off the centre line (0.5 % of the half-width): a seed for the shedding, far below what moves the means
    return free_stream(circle(offset=0.05), 100.0, scale, analysis=_transient(dt, end_time))


def rotating_re100(scale: float, dt: float, end_time: float = 200.0) -> dict[str, Any]:
    return free_stream(circle(spin_ratio=1.0), 100.0, scale, analysis=_transient(dt, end_time))


def square_channel_re100(scale: float, dt: float, length: float = 30.0, end_time: float = 300.0) -> dict[str, Any]:
    """Breuer et al. (2000): square of side 1 centred 12.5 D behind the inlet of an 8 D channel, parabolic inflow
    with u_max = 1 (the reference speed). A 0.05 D offset seeds the shedding."""
    return {
        "title": "square cylinder in a channel (Breuer et al. 2000)",
        "channel": {"length": length, "height": 8.0, "walls": "no-slip"},
        "bodies": [{"name": "square", "shape": "rectangle", "center": [12.5, 4.05], "width": 1.0, "height": 1.0}],
        "fluid": {"density": 1.0, "reynolds": 100.0, "reference": {"velocity": 1.0}},
        "inflow": {"profile": "parabolic", "peak_velocity": 1.0},
        "mesh": {"preset": "coarse", "scale": scale},
        "analysis": _transient(dt, end_time),
    }


def naca0012_re1000(scale: float, preset: str = "coarse") -> dict[str, Any]:
    foil = [
        {
            "name": "foil",
            "shape": "naca4",
            "code": "0012",
            "chord": 1.0,
            "leading_edge": [10.0, 10.0],
            "angle_of_attack": 5.0,
        }
    ]
    return free_stream(foil, 1000.0, scale, preset=preset)


def regular_polygon(sides: int, radius: float = 0.05, centre: tuple[float, float] = (0.2, 0.2)) -> dict[str, Any]:
    """Regular polygon inscribed in the 2D-1 cylinder, one corner at the front stagnation point."""
    angles = [math.pi + 2 * math.pi * k / sides for k in range(sides)]
    return {
        "name": "body",
        "shape": "polygon",
        "points": [[centre[0] + radius * math.cos(a), centre[1] + radius * math.sin(a)] for a in angles],
    }


def channel_re20(body: dict[str, Any], scale: float = 1.0, preset: str = "coarse") -> dict[str, Any]:
    """The 2D-1 set-up of Schäfer & Turek (1996) around any body; coefficients on the cylinder's diameter 0.1."""
    return {
        "title": "2D-1 set-up",
        "channel": {"length": 2.2, "height": 0.41, "walls": "no-slip"},
        "bodies": [body],
        "fluid": {"density": 1.0, "viscosity": 1e-3, "reference": {"length": 0.1}},
        "inflow": {"profile": "parabolic", "peak_velocity": 0.3},
        "mesh": {"preset": preset, "scale": scale},
    }


def leading_eigenvalue(spec: dict[str, Any]) -> complex:
    """Eigenvalue of largest real part of the flow linearised about its steady state (global stability).

    Small disturbances grow like exp(lambda t) with ``-J v = lambda M v``, J the Newton matrix of the steady
    equations and M the velocity mass matrix (zero on the pressure). Shift-invert around the imaginary axis
    near the expected shedding frequency finds the mode that turns unstable at the onset of shedding.
    """
    case = Case.build(load(spec))
    ns = case.ns
    x, _ = solve_steady(ns)
    th, free = ns.th, ns.free
    mass = sp.block_diag([th.mass, th.mass, sp.csr_matrix((th.npr, th.npr))], format="csr")
    A = (-ns.jacobian(x))[free][:, free].astype(complex).tocsc()
    M = mass[free][:, free].astype(complex).tocsc()
    values = eigs(A, k=6, M=M, sigma=0.8j, which="LM", return_eigenvectors=False)
    return complex(values[np.argmax(values.real)])


# --- heat transfer ---------------------------------------------------------------------------------------------
# Shah & London (1978), Laminar Flow Forced Convection in Ducts (Academic Press): fully developed laminar flow
# between parallel plates, Nusselt number on the hydraulic diameter 2H (recalled; the values are also in issue 14).
PLATES_NUSSELT = {"temperature": 7.541, "heat_flux": 8.235}


def plates(walls: dict[str, float], scale: float = 1.0, peclet: float = 200.0, length: float = 24.0) -> dict[str, Any]:
    """Plates 1 apart, parabolic inflow of mean speed 1 at 20 °C; Pe on the hydraulic diameter 2 (k = 2 / Pe,
    ρ = c = 1). At Pe 200 the temperature is fully developed after about 8 (thermal entrance length near
    0.02 Pe D_h, common practice) and axial conduction is negligible."""
    return {
        "title": "heated parallel plates (Shah & London 1978)",
        "channel": {"length": length, "height": 1.0},
        "fluid": {"density": 1.0, "reynolds": 10.0, "reference": {"length": 2.0, "velocity": 1.0}},
        "inflow": {"profile": "parabolic", "mean_velocity": 1.0},
        "mesh": {"preset": "coarse", "scale": scale},
        "heat": {"conductivity": 2.0 / peclet, "heat_capacity": 1.0, "inflow_temperature": 20.0, "walls": walls},
    }


def nusselt_lange_durst_breuer(reynolds: float) -> float:
    """Lange, Durst & Breuer (1998), Int. J. Heat Mass Transfer 41:3409: fit of their computed mean Nusselt number
    of a cylinder in an unbounded stream at Pr 0.71, 1e-4 < Re < 200 (2D, shedding included above Re 47):
    Nu = 0.082 Re^0.5 + 0.734 Re^(0.05 + 0.226 Re^0.085) (recalled, not read: verify before relying on it)."""
    return 0.082 * reynolds**0.5 + 0.734 * reynolds ** (0.05 + 0.226 * reynolds**0.085)


def heated_circle(reynolds: float, scale: float, height: float = 20.0, analysis: dict | None = None) -> dict[str, Any]:
    """The free-stream cylinder at 1 °C above a 0 °C inflow, Pr 0.7, in a channel ``height`` D wide, 1.5 times as
    long, the cylinder in the middle."""
    bodies = circle(centre=(height / 2, height / 2), offset=0.05 if analysis else 0.0)
    bodies[0]["thermal"] = {"temperature": 1.0}
    spec = free_stream(bodies, reynolds, scale, length=1.5 * height, height=height, analysis=analysis)
    spec["heat"] = {"prandtl": 0.7, "inflow_temperature": 0.0}
    return spec
