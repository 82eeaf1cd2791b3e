"""Run one case to completion and write its result files: the entry point the CLI and the worker share."""

from __future__ import annotations

import hashlib
import logging
import math
import time
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from . import analysis, output, picture_choice, pictures, results
from .adaptive import FIRST_STEP, AdaptiveBDF2, Scales
from .case import Case
from .caution import CAUTION
from .errors import Cancelled, Diverged, InternalError, RunFailed, WallTimeExceeded
from .heat_output import HeatRun
from .mesh_picture import mesh_picture
from .motion import DrivenMount, motion_summary
from .recirculation import recirculation_length
from .restart import FLOW_CHECKPOINT
from .results import ForceHistory, Motion, Stats, SteadyBody, SteadySummary, TransientBody, TransientSummary
from .spec import ADAPTIVE, JobSpec, load
from .spring import SpringBody
from .stages import failed_stage
from .steady import solve_steady
from .transient import Stepper
from .units import summary_units

log = logging.getLogger(__name__)


@dataclass
class Progress:
    """How far a run is: simulated time of a transient run (its steps vary), Newton iterations of a steady one."""

    step: int
    total_steps: int
    time: float
    end_time: float
    message: str = ""

    @property
    def fraction(self) -> float:
        if self.end_time:
            return min(self.time / self.end_time, 1.0)
        return min(self.step / self.total_steps, 1.0) if self.total_steps else 0.0


ProgressCallback = Callable[[Progress], None]


def run(
    spec: JobSpec | dict[str, Any],
    out: str | Path,
    *,
    progress: ProgressCallback | None = None,
    should_stop: Callable[[], bool] | None = None,
    wall_time_limit: float | None = None,
    resume: bool = True,
    on_checkpoint: Callable[[int], None] | None = None,
) -> dict[str, Any]:
    """Compute ``spec`` and write forces.csv, summary.json, fields/ and pictures to ``out``.

    ``should_stop`` is polled between steps (cancellation); a transient run
    checkpoints every ``analysis.checkpoint_interval`` steps and, with
    ``resume``, continues from the last checkpoint in ``out``; ``on_checkpoint``
    (step) is called, in the solver's thread, right after each checkpoint is
    complete on disk (a remote worker copies and uploads it). status.json
    always tells how the run ended. Returns summary.json's content (a
    :mod:`solver.results` summary model, dumped).

    A derived quantity that cannot be computed (a recirculation length that
    runs into another body, a probe point outside the fluid, the pictures) is
    ``null`` in the summary, with the reason under ``unavailable``: it never
    fails a finished solve.

    Raises
    ------
    SpecError
        Invalid spec (nothing is written).
    RunFailed
        Diverged, WallTimeExceeded or Cancelled; partial results stay in ``out``.
        Any unexpected exception becomes an InternalError naming the stage it came from.
    """
    spec = load(spec)
    out = Path(out)
    out.mkdir(parents=True, exist_ok=True)
    started = time.perf_counter()
    deadline = started + wall_time_limit if wall_time_limit else math.inf
    output.write_json(out / "status.json", {"state": "running"})
    output.write_atomic(out / "spec.json", spec.model_dump_json(indent=2))
    try:
        case = Case.build(spec)
        summary: SteadySummary | TransientSummary
        if spec.analysis.mode == "steady":
            summary = _steady(case, out, progress)
        else:
            summary = _Transient(case, out, progress, should_stop, deadline, resume, on_checkpoint).run()
        summary.unavailable = dict(case.unavailable)
        summary.wall_time_seconds = time.perf_counter() - started
        summary.caution = CAUTION
        summary.units = summary_units(results.dump(summary))
        content = results.dump(summary)
        output.write_json(out / "summary.json", content)
        output.write_json(out / "status.json", {"state": "succeeded"})
        return content
    except Cancelled as err:
        output.write_json(out / "status.json", {"state": "cancelled", "message": str(err)})
        raise
    except RunFailed as err:
        output.write_json(out / "status.json", {"state": "failed", "message": str(err) or type(err).__name__})
        raise
    except Exception as err:
        failure = InternalError(failed_stage(err), f"{type(err).__name__}: {err}")
        output.write_json(out / "status.json", {"state": "failed", "message": str(failure)})
        raise failure from err


def _common_summary(case: Case) -> dict[str, Any]:
    """The fields both summary models start with."""
    spec = case.spec
    return {
        "title": spec.title,
        "mode": spec.analysis.mode,
        "elements": spec.elements,
        "reynolds_number": spec.reynolds(),
        "reference": {
            "velocity": spec.reference_velocity(),
            "lengths": {b.name: spec.reference_length(i) for i, b in enumerate(spec.bodies)},
        },
        "mesh": {"cells": case.cells, "dofs": case.th.ndofs},
        "timings": dict(case.timings),
    }


def _steady(case: Case, out: Path, progress: ProgressCallback | None) -> SteadySummary:
    spec = case.spec
    t0 = time.perf_counter()

    def report(k: int, update: float) -> None:
        if progress:
            progress(
                Progress(
                    k,
                    spec.analysis.max_newton_iterations,
                    0.0,
                    0.0,
                    f"Newton iteration {k}: relative update {update:.2e}",
                )
            )

    # the state the inflow settles to: after the start-up ramp, which only eases a transient run in
    at = spec.inflow.ramp_time
    x, newton = solve_steady(case.ns, spec.analysis.newton_tolerance, spec.analysis.max_newton_iterations, report, t=at)
    solve = time.perf_counter() - t0
    row = case.force_row(0.0, x, case.ns.convection(x), None)
    output.write_forces(out / "forces.csv", case.columns(), [row])
    forces = ForceHistory.of_rows(case.columns(), [row])
    bodies = []
    for i, b in enumerate(spec.bodies):
        length, reason = recirculation_length(case, x, i)
        if reason:
            case.unavailable[f"bodies.{i}.recirculation_length"] = reason
        bodies.append(
            SteadyBody(
                name=b.name,
                fx=forces.last(results.body_column(b.name, "fx")),
                fy=forces.last(results.body_column(b.name, "fy")),
                drag_coefficient=forces.last(results.body_column(b.name, "cd")),
                lift_coefficient=forces.last(results.body_column(b.name, "cl")),
                recirculation_length=length,
            )
        )
    summary = SteadySummary.model_validate(
        {
            **_common_summary(case),
            "bodies": bodies,
            "pressure_drop": forces.last("pressure_drop") if "pressure_drop" in forces else None,
        }
    )
    if spec.probes.velocity:
        summary.velocity_probes = case.velocity_probe_values(row)
    summary.newton = results.Newton(
        iterations=newton.iterations, residual=newton.residual, continuation=newton.continuation_steps
    )
    heat = HeatRun(case, out) if spec.heat else None  # heat hook: the temperature in the stationary flow
    if heat:
        heat.steady(x, summary)
    t1 = time.perf_counter()
    snaps = output.Snapshots(out, case.th, spec.fluid.density)
    snaps.extra_fields = heat.fields if heat else None
    snaps.save(0, 0.0, x)
    _pictures(case, out, [0])
    if heat:
        heat.pictures([0])
    summary.timings.update({"solve": solve, "output": time.perf_counter() - t1})
    return summary


def _pictures(case: Case, out: Path, steps: list[int]) -> None:
    """Field pictures of the snapshots ``picture_choice`` picks; a failure is recorded, never raised (the solve is
    done)."""
    try:
        _draw_pictures(case, out, steps)
    except Exception as err:
        case.unavailable["pictures"] = f"the field pictures could not be drawn: {type(err).__name__}: {err}"
        log.warning("%s: %s", out, case.unavailable["pictures"])


def _draw_pictures(case: Case, out: Path, steps: list[int]) -> None:
    """One colour scale for the whole run."""
    steps = sorted(set(steps))
    pick = picture_choice.chosen(len(steps))
    loaded = [np.load(out / "fields" / f"step_{steps[i]:06d}.npz") for i in pick]
    fields = [{k: f[k] for k in ("ux", "uy", "pressure", "vorticity")} for f in loaded]
    limits = pictures.color_limits(fields)
    dofs = case.th.velocity.element_dofs
    tri = pictures.triangulation(case.th.velocity.doflocs, dofs)
    folder = out / "pictures"
    folder.mkdir(exist_ok=True)
    velocity = case.th.velocity
    mesh_picture(folder / "mesh.png", case.spec, velocity.doflocs, velocity.element_dofs[:3])
    transient = case.spec.analysis.mode == "transient"
    for i, f, raw in zip(pick, fields, loaded):
        t = float(raw["time"]) if transient else None
        shifts = None
        if "points" in raw.files and case.motion is not None:  # a moving mesh: drawn where it was
            tri = pictures.triangulation(raw["points"], dofs)
            moved = case.motion.bodies
            start = case.motion.start
            shifts = {b.name: (raw["points"][:, b.dofs] - start[:, b.dofs]).mean(axis=1) for b in moved}
        for name in pictures.FIELDS:
            path = folder / f"{name}_{steps[i]:06d}.png"
            pictures.field_picture(path, case.spec, tri, f, name, limits[name], t, shifts)


class _Transient:
    """The time loop with outputs, checkpoints, cancellation and the periodic-state stop."""

    def __init__(
        self,
        case: Case,
        out: Path,
        progress: ProgressCallback | None,
        should_stop: Callable[[], bool] | None,
        deadline: float,
        resume: bool,
        on_checkpoint: Callable[[int], None] | None = None,
    ):
        self.case, self.out, self.progress, self.should_stop = case, out, progress, should_stop
        self.deadline, self.resume, self.on_checkpoint = deadline, resume, on_checkpoint
        a = case.spec.analysis
        self.output_interval = picture_choice.interval(a.end_time, a.output_interval)
        self.columns = [*case.columns(), "time_step", *case.motion_columns()]
        self.rows: list[list[float]] = []
        self.snapshots: list[int] = []
        self.rows_written: int | None = None  # rows of forces.csv on disk this attempt (None: not written yet)
        self.fingerprint = hashlib.sha256(case.spec.model_dump_json().encode()).hexdigest()
        self.resumed_from_step: int | None = None
        self.heat: HeatRun | None = None

    def run(self) -> TransientSummary:
        case, a = self.case, self.case.spec.analysis
        t_solve = time.perf_counter()
        stepper = self._start()
        heat = self._start_heat(stepper.n)
        snaps = output.Snapshots(self.out, case.th, case.spec.fluid.density)
        snaps.extra_fields = heat.fields if heat else None
        snaps.moving = case.motion is not None
        if stepper.n == 0:
            snaps.save(0, 0.0, stepper.x)
            self.snapshots = [0]
        ended_by = "end_time"
        last_report = 0.0
        max_cfl = 0.0
        end = a.end_time * (1 - 1e-12)
        try:
            while stepper.t < end:
                if self.should_stop and self.should_stop():
                    raise Cancelled(f"cancelled at t = {stepper.t:.6g} s (step {stepper.n})")
                if time.perf_counter() > self.deadline:
                    raise WallTimeExceeded(f"wall-time limit reached at t = {stepper.t:.6g} s (step {stepper.n})")
                healthy = (stepper.x, stepper.t, stepper.n)
                t_before = stepper.t
                result = stepper.step(a.end_time)
                dt = stepper.t - t_before
                row = [
                    *case.force_row(stepper.t, result.x, result.convection, result.dudt),
                    dt,
                    *case.motion_row(stepper.t),
                ]
                if not np.all(np.isfinite(row)) or not np.isfinite(result.x).all() or self._blown_up(result.x):
                    self._diverged(stepper, *healthy)
                if heat:  # heat hook: follow every accepted flow step
                    heat.after_step(stepper.t, result.x, dt)
                self.rows.append(row)
                max_cfl = max(max_cfl, case.cfl(result.x, dt))
                if stepper.t >= end or int(stepper.t / self.output_interval) > int(t_before / self.output_interval):
                    snaps.save(stepper.n, stepper.t, result.x)
                    self.snapshots.append(stepper.n)
                if stepper.n % a.checkpoint_interval == 0:
                    self._checkpoint(stepper)
                    if self.on_checkpoint:
                        self.on_checkpoint(stepper.n)
                if a.until_periodic and stepper.n % 20 == 0 and self._periodic():
                    ended_by = "periodic"
                    if self.snapshots[-1] != stepper.n:
                        snaps.save(stepper.n, stepper.t, result.x)
                        self.snapshots.append(stepper.n)
                    break
                now = time.perf_counter()
                if now - last_report > 0.5:
                    last_report = now
                    self._forces_so_far()
                    if self.progress:
                        self.progress(Progress(stepper.n, 0, stepper.t, a.end_time))
        finally:
            if self.rows:
                output.write_forces(self.out / "forces.csv", self.columns, self.rows)
            if heat and heat.rows:
                heat.write()
        solve = time.perf_counter() - t_solve
        t_out = time.perf_counter()
        history = ForceHistory.of_rows(self.columns, self.rows)
        names = [b.name for b in case.spec.bodies]
        nf = len(case.columns())  # the forces, without the step and the displacements
        pictures.force_plot(self.out / "forces.png", self.columns[:nf], history.data[:, :nf], names)
        _pictures(case, self.out, self.snapshots)
        whole = a.until_periodic.cycles if a.until_periodic and ended_by == "periodic" else 5  # cycles that repeat
        statistics = self._statistics(history, whole)
        self._motion(statistics, history)
        summary = TransientSummary.model_validate(
            {
                **_common_summary(case),
                **statistics,
                "ended_by": ended_by,
                "steps": stepper.n,
                "scheme": a.scheme,
                "accuracy": a.accuracy if a.scheme == ADAPTIVE else None,
                "time_steps": stepper.stats.summary(),
                "simulated_time": stepper.t,
                "max_cfl": max_cfl,
                "resumed_from_step": self.resumed_from_step,
            }
        )
        if heat:  # heat hook: Nusselt statistics over the forces' window, temperature pictures
            heat.finish(summary, stepper.x)
            heat.pictures(self.snapshots)
        summary.timings.update(
            {"solve": solve, "seconds_per_step": solve / max(stepper.n, 1), "output": time.perf_counter() - t_out}
        )
        (self.out / FLOW_CHECKPOINT).unlink(missing_ok=True)
        return summary

    def _new_stepper(self) -> Stepper | AdaptiveBDF2:
        case, a = self.case, self.case.spec.analysis
        x0 = case.ns.stokes(0.0)
        if a.scheme == ADAPTIVE:
            U = case.spec.reference_velocity()
            scales = Scales(U, case.spec.reference_length() / U)
            first = a.time_step or FIRST_STEP * scales.time
            breakpoints = case.spec.inflow.breakpoints()
            return AdaptiveBDF2(
                case.ns,
                x0,
                a.accuracy,
                scales,
                first_step=first,
                breakpoints=breakpoints,
                cfl=case.cfl,
                springs=case.springs,
            )
        assert a.time_step is not None  # the spec requires one for the fixed-step schemes
        return Stepper(case.ns, a.scheme, a.time_step, x0, cfl=case.cfl)

    def _start(self) -> Stepper | AdaptiveBDF2:
        stepper = self._new_stepper()
        path = self.out / FLOW_CHECKPOINT
        if self.resume and path.exists():
            with np.load(path, allow_pickle=False) as ck:
                if str(ck["fingerprint"]) == self.fingerprint:
                    self.rows = ck["rows"].tolist()
                    self.snapshots = ck["snapshots"].tolist()
                    stepper.restore({k: ck[k] for k in ck.files})
                    self.resumed_from_step = stepper.n
        return stepper

    def _start_heat(self, step: int) -> HeatRun | None:
        """Heat hook: the temperature beside the flow, resumed with it."""
        self.heat = HeatRun(self.case, self.out) if self.case.spec.heat else None
        if self.heat and step > 0:
            self.heat.resume(step)
        return self.heat

    def _checkpoint(self, stepper: Stepper | AdaptiveBDF2) -> None:
        if self.heat:
            self.heat.checkpoint(stepper.n)
        tmp = self.out / f".{FLOW_CHECKPOINT}"
        arrays: dict[str, Any] = {
            **stepper.state(),
            "rows": np.array(self.rows),
            "snapshots": np.array(self.snapshots, dtype=int),
            "fingerprint": self.fingerprint,
        }
        with open(tmp, "wb") as f:
            np.savez(f, **arrays)
        tmp.replace(self.out / FLOW_CHECKPOINT)
        stepper.renew_factorisation()
        output.write_forces(self.out / "forces.csv", self.columns, self.rows)
        self.rows_written = len(self.rows)

    def _forces_so_far(self) -> None:
        """forces.csv grows while the run goes, for the page's live chart: the whole file first (a resumed run
        starts from its checkpoint's rows), then only the new rows."""
        if self.rows_written is None:
            output.write_forces(self.out / "forces.csv", self.columns, self.rows)
        else:
            output.append_forces(self.out / "forces.csv", self.rows[self.rows_written :])
        self.rows_written = len(self.rows)

    def _blown_up(self, x: np.ndarray) -> bool:
        ux, uy, _ = self.case.th.split(x)
        spec = self.case.spec
        moving = [
            2 * math.pi * b.mount.amplitude * b.mount.frequency
            for b in spec.bodies
            if b.mount and b.mount.kind == "driven"
        ]
        released = [  # a spring-mounted body's fastest undamped swing from its initial state
            float(np.hypot(*start[2:]) + 2 * math.pi * law.natural_frequency * np.hypot(*start[:2]))
            for law in (self.case.springs.bodies if self.case.springs else [])
            for start in [law.mount.start()]
        ]
        inflow = spec.inflow.peak() * spec.inflow.time_law.nominal()
        limit = 100 * max(inflow, spec.reference_velocity(), *moving, *released, 1e-12)
        return bool(np.abs(ux).max() > limit or np.abs(uy).max() > limit)

    def _diverged(self, stepper: Stepper | AdaptiveBDF2, x: np.ndarray, t: float, n: int) -> None:
        """Fail with advice computed from the last healthy state (``x`` at ``t``), not from the blown-up one."""
        a = self.case.spec.analysis
        dt = a.time_step or stepper.stats.summary()["mean"] or 0.0
        cfl = self.case.cfl(x, dt)
        advice = (
            f"try analysis.time_step = {dt * min(0.5, 0.4 / cfl):.3g} (CFL 0.4 at the last healthy state) "
            f"or the default scheme {ADAPTIVE}, which controls its step itself"
            if a.scheme != ADAPTIVE and cfl > 0
            else "try a smaller analysis.accuracy or a finer mesh"
        )
        raise Diverged(
            f"the solution blew up after t = {t:.6g} s (step {n}) with scheme {a.scheme}; "
            f"CFL number of the last healthy state about {cfl:.2f}; {advice}"
        )

    def _periodic(self) -> bool:
        up = self.case.spec.analysis.until_periodic
        if not self.case.spec.bodies or up is None:
            return False
        history = ForceHistory.of_rows(self.columns, self.rows)
        lift = history.body(self.case.spec.bodies[0].name, "cl")
        return analysis.is_periodic(history.time, lift, up.cycles, up.tolerance)

    def _motion(self, statistics: dict[str, Any], history: ForceHistory) -> None:
        """Each moving body's ``motion`` (:func:`solver.motion.motion_summary`) over the forces' window."""
        motion = self.case.motion
        if motion is None:
            return
        spec, t = self.case.spec, history.time
        window = (t >= statistics["window"]["start"]) & (t <= statistics["window"]["end"])
        index = {b.name: i for i, b in enumerate(spec.bodies)}
        for body in motion.bodies:
            i = index[body.name]
            dx, dy = history[f"{body.name}_dx"], history[f"{body.name}_dy"]
            mount = spec.bodies[i].mount
            base = mount.frequency if isinstance(mount, DrivenMount) else None
            if isinstance(body.law, SpringBody):
                base = body.law.natural_frequency
            summary = motion_summary(t, dx, dy, window, spec.reference_length(i), base)
            statistics["bodies"][i].motion = Motion.model_validate(summary)

    def _statistics(self, history: ForceHistory, whole_cycles: int) -> dict[str, Any]:
        """The transient summary's statistics: per body and shedding, over the analysis window."""
        spec = self.case.spec
        t = history.time
        lift_ref = history.body(spec.bodies[0].name, "cl") if spec.bodies else t * 0
        cycles = analysis.find_cycles(t, lift_ref)
        window = analysis.analysis_window(t, cycles, whole_cycles)
        bodies = []
        for i, b in enumerate(spec.bodies):
            cd, cl = history.body(b.name, "cd"), history.body(b.name, "cl")
            st = analysis.strouhal(t, cl, spec.reference_length(i), spec.reference_velocity())
            bodies.append(
                TransientBody(
                    name=b.name,
                    drag_coefficient=Stats(**analysis.window_stats(t[window], cd[window])),
                    lift_coefficient=Stats(**analysis.window_stats(t[window], cl[window])),
                    strouhal_number=st["strouhal_number"],
                )
            )
            if st["strouhal_number"] is None and st.get("note"):  # an oscillation that dies out: say so
                self.case.unavailable[f"bodies.{i}.strouhal_number"] = str(st["note"])
        shedding = (
            analysis.strouhal(t, lift_ref, spec.reference_length(0), spec.reference_velocity())
            if spec.bodies
            else {"strouhal_number": None}
        )
        if shedding["strouhal_number"] is None and shedding.get("note"):
            self.case.unavailable["strouhal_number"] = str(shedding["note"])
        pdrop = (
            analysis.window_stats(t[window], history["pressure_drop"][window]) if "pressure_drop" in history else None
        )
        return {
            "bodies": bodies,
            "strouhal_number": shedding["strouhal_number"],
            "shedding": shedding,
            "pressure_drop": pdrop,
            "window": {
                "start": float(t[window][0]),
                "end": float(t[window][-1]),
                "whole_cycles": int(min(cycles.count, whole_cycles)),
            },
        }
