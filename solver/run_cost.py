"""What a run will cost before it runs: its CFL number near the bodies, its time steps and its seconds.

All three are estimates from the mesh's size (:mod:`solver.sizing`) and documented rules, calibrated on real runs
(``bench/estimate_bench.py`` prints estimate against run):

* CFL number: the solver's own measure (:meth:`solver.case.Case.cfl`, |u| Δt / (edge / velocity degree) on the
  shortest edge) with the fastest inflow speed (peak of the profile times the time law's nominal factor) on the
  mesh's shortest edge. On the tiny test case it gave 0.78 where the run's largest was 0.83.
* Steps: fixed schemes take ``end_time / time_step``. The error-controlled scheme has no count before it runs; its
  typical step is the smaller of its CFL cap (:data:`solver.adaptive.MAX_CFL` on the CFL estimate above) and an
  accuracy step of ``ACCURACY_STEP * sqrt(accuracy / 1e-3)`` convective times L/U, half that over the first
  ``START_UP`` convective times while the flow develops, plus the steps that grow again from the first step after
  each breakpoint (the ramp's end, a table's points). Calibrated on six runs of the test and demo cases (Re 20 to
  200, accuracy 1e-4 to 1e-2): 0.8 to 1.5 times the accepted steps; the tests hold it within a factor of 2. A run
  that stops once periodic takes fewer.
* Seconds: steps times a cost per step that grows as unknowns to the power 1.3 (Newton iterations for a steady
  run), plus the pictures and a fixed part; measured on a 2-core box shared with other work, so a rough figure
  (0.5 to 1.7 times the wall-clock time of the calibration runs on that loaded box).
"""

from __future__ import annotations

import math
from typing import Any

from . import picture_choice
from .adaptive import FIRST_STEP, MAX_CFL
from .spec import ADAPTIVE, JobSpec
from .transient import CFL_LIMIT, MAX_SPLIT

ACCURACY_STEP = 0.01  # its typical step at accuracy 1e-3, in convective times
START_UP = 0.5  # convective times at the start with steps half as long
STEP_SECONDS = 0.012  # seconds per time step at REFERENCE_DOFS unknowns (P2P1, one solve with stored factors)
REFERENCE_DOFS = 5600
COST_POWER = 1.3  # a direct solve on a 2D mesh costs about unknowns**1.3 here
NEWTON_STEP_COST = 10  # one Newton iteration (assembly and a new factorisation) in time steps
NEWTON_ITERATIONS = 8  # a steady run's typical iterations (5-6 on the steady examples, more with continuation)
PICTURE_SECONDS = 0.8  # per snapshot drawn (every field) at 7000 unknowns, growing with the unknowns
PICTURE_DOFS = 7000
OVERHEAD_SECONDS = 2.0  # meshing, the mesh picture, the force plots and files of any run


def fastest_inflow(spec: JobSpec) -> float:
    """The fastest inflow speed: the profile's peak times the time law's nominal factor (m/s)."""
    return spec.inflow.peak() * spec.inflow.time_law.nominal()


def cfl_number(spec: JobSpec, shortest_edge: float, dt: float) -> float:
    """The CFL number of a step ``dt`` by the solver's measure, at the fastest inflow on the shortest edge."""
    degree = 2 if spec.elements == "P2P1" else 3
    return fastest_inflow(spec) * dt * degree / shortest_edge


def steps(spec: JobSpec, shortest_edge: float) -> int | None:
    """Time steps of a run (``None`` for a steady one); an estimate for the error-controlled scheme."""
    a = spec.analysis
    if a.mode == "steady":
        return None
    if a.scheme != ADAPTIVE:
        assert a.time_step is not None  # the spec requires one for the fixed schemes
        return math.ceil(a.end_time / a.time_step - 1e-9)
    tc = spec.reference_length() / spec.reference_velocity()
    unit_cfl = cfl_number(spec, shortest_edge, 1.0)
    cap = MAX_CFL / unit_cfl if unit_cfl > 0 else math.inf  # no inflow (a body swinging in still fluid): no cap
    h = min(cap, ACCURACY_STEP * math.sqrt(a.accuracy / 1e-3) * tc)
    start = min(START_UP * tc, a.end_time)
    first = a.time_step or FIRST_STEP * tc
    regrowth = math.ceil(math.log2(max(h / first, 1.0)))  # steps that double from the first one to h
    restarts = 1 + sum(1 for t in spec.inflow.breakpoints() if t < a.end_time)
    return math.ceil(2 * start / h + (a.end_time - start) / h) + restarts * regrowth


def seconds(spec: JobSpec, dofs: int, step_count: int | None) -> float:
    """Rough wall-clock seconds of a run: solving plus the pictures."""
    per_step = STEP_SECONDS * (dofs / REFERENCE_DOFS) ** COST_POWER
    solve = per_step * (step_count if step_count is not None else NEWTON_ITERATIONS * NEWTON_STEP_COST)
    pictures = (1 + picture_choice.plan(spec)["drawn"]) * PICTURE_SECONDS * dofs / PICTURE_DOFS
    return OVERHEAD_SECONDS + solve + pictures


def step_warnings(spec: JobSpec, shortest_edge: float) -> list[tuple[str, str]]:
    """``(field, message)`` warnings about the fixed time step: explicit convection past the CFL limit, where
    the solver splits steps (or, past :data:`MAX_SPLIT` parts, stops)."""
    a = spec.analysis
    if a.mode == "steady" or a.scheme in (ADAPTIVE, "bdf2-implicit") or a.time_step is None:
        return []
    cfl = cfl_number(spec, shortest_edge, a.time_step)
    suggest = f"{a.time_step * 0.8 * CFL_LIMIT / cfl:.2g}"
    if cfl > CFL_LIMIT * MAX_SPLIT:
        return [
            (
                "analysis.time_step",
                f"the CFL number near the bodies would be about {cfl:.3g}, over {MAX_SPLIT} times the limit "
                f"{CFL_LIMIT:g} of explicit convection: the run would stop at its first step; use a time step of "
                f"about {suggest} s or the error-controlled scheme",
            )
        ]
    if cfl > CFL_LIMIT:
        return [
            (
                "analysis.time_step",
                f"the CFL number near the bodies would be about {cfl:.2g}, over the limit {CFL_LIMIT:g} of explicit "
                f"convection: the solver will split the steps; use a time step of about {suggest} s or the "
                "error-controlled scheme",
            )
        ]
    return []


def summary(spec: JobSpec, dofs: int, shortest_edge: float) -> dict[str, Any]:
    """``steps`` (with ``steps_method``: ``counted`` for fixed steps, ``estimated`` for bdf2-adaptive, ``None``
    for a steady run), ``seconds`` and ``cfl`` (the fixed step's CFL number near the bodies, else ``None``)."""
    count = steps(spec, shortest_edge)
    a = spec.analysis
    fixed = a.mode == "transient" and a.scheme != ADAPTIVE and a.time_step is not None
    return {
        "steps": count,
        "steps_method": None if count is None else "counted" if fixed else "estimated",
        "seconds": seconds(spec, dofs, count),
        "cfl": cfl_number(spec, shortest_edge, a.time_step) if fixed and a.time_step else None,
    }
