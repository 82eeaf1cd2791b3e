"""The temperature part of a run: solve alongside the flow, write heat.csv, local_nusselt.csv, fields and pictures.

:class:`HeatRun` is what :mod:`solver.run` calls, through a few hooks, when the spec has a ``heat`` section:
``steady`` after the stationary flow; ``after_step`` after every accepted flow step (any step length),
``checkpoint``/``resume`` beside the flow's checkpoint, ``finish`` to add the Nusselt numbers to the summary.
"""

from __future__ import annotations

import csv
import io
import logging
from pathlib import Path
from typing import Any

import numpy as np

from . import analysis, heat_pictures, output, picture_choice, pictures
from .case import Case
from .errors import Diverged
from .heat_transfer import HeatTransfer
from .restart import HEAT_CHECKPOINT
from .results import ForceHistory, HeatNumbers, Stats, SteadySummary, TransientSummary

log = logging.getLogger(__name__)


class HeatRun:
    """Temperature, Nusselt histories and heat result files of one run."""

    def __init__(self, case: Case, out: Path):
        self.case, self.out = case, out
        self.heat = HeatTransfer(case.spec, case.th, case.mesh)
        self.nodal = output.on_velocity_nodes(case.th, self.heat.basis)
        self.columns = ["time"] + [f"{s.name}_nu" for s in self.heat.surfaces] + ["outlet_temperature"]
        self.rows: list[list[float]] = []

    def fields(self) -> dict[str, np.ndarray]:
        """The temperature on the velocity nodes, for the field snapshots."""
        return {"temperature": self.nodal @ self.heat.T}

    def steady(self, x: np.ndarray, summary: SteadySummary) -> None:
        """Solve for the temperature in the stationary flow ``x``; add the Nusselt numbers to ``summary``."""
        self.heat.steady(x)
        self.rows = [self._row(0.0, x)]
        self.finish(summary, x)

    def after_step(self, t: float, x: np.ndarray, dt: float) -> None:
        """Follow one accepted flow step to time ``t``."""
        T = self.heat.advance(x, dt)
        if not np.isfinite(T).all():
            raise Diverged(f"the temperature is not finite at t = {t:.6g} s")
        self.rows.append(self._row(t, x))

    def _row(self, t: float, x: np.ndarray) -> list[float]:
        outlet = self.heat.outlet_temperature(x)
        return [t] + [self.heat.nusselt(s) for s in self.heat.surfaces] + [np.nan if outlet is None else outlet]

    def checkpoint(self, step: int) -> None:
        """Save the temperature state beside the flow's checkpoint (same step)."""
        h = self.heat
        tmp = self.out / f".{HEAT_CHECKPOINT}"
        with open(tmp, "wb") as f:
            np.savez(
                f,
                step=step,
                T=h.T,
                T_old=h.T if h.T_old is None else h.T_old,
                has_old=h.T_old is not None,
                last_dt=h.last_dt or 0.0,
                rows=np.array(self.rows).reshape(-1, len(self.columns)),
            )
        tmp.replace(self.out / HEAT_CHECKPOINT)
        self.write()

    def resume(self, step: int) -> None:
        """Continue from the heat checkpoint of flow step ``step``; restart the temperature (and say so) without one."""
        path = self.out / HEAT_CHECKPOINT
        if path.exists():
            ck = np.load(path, allow_pickle=False)
            if int(ck["step"]) == step:
                h = self.heat
                h.T = ck["T"]
                h.T_old = ck["T_old"] if bool(ck["has_old"]) else None
                h.last_dt = float(ck["last_dt"]) or None
                self.rows = ck["rows"].tolist()
                return
        self.case.unavailable["heat.history"] = (
            f"no temperature checkpoint for step {step}: the temperature restarted from the inflow temperature there"
        )

    def write(self) -> None:
        buf = io.StringIO()
        writer = csv.writer(buf, lineterminator="\n")
        writer.writerow(self.columns)
        writer.writerows([[f"{v:.12g}" for v in row] for row in self.rows])
        output.write_atomic(self.out / "heat.csv", buf.getvalue())

    def finish(self, summary: SteadySummary | TransientSummary, x: np.ndarray) -> None:
        """heat.csv, local_nusselt.csv and the plots; per body ``nusselt_number``, ``outlet_temperature``."""
        h = self.heat
        self.write()
        (self.out / HEAT_CHECKPOINT).unlink(missing_ok=True)
        history = ForceHistory.of_rows(self.columns, self.rows)
        t = history.time
        window = np.ones(len(t), dtype=bool)
        if isinstance(summary, TransientSummary) and summary.window is not None:
            window = (t >= summary.window.start) & (t <= summary.window.end)

        def value(column: str) -> Any:
            """Over the analysis window (transient: :class:`Stats`) or the one stationary value; the field that
            takes it is of that kind."""
            if isinstance(summary, TransientSummary):
                return Stats(**analysis.window_stats(t[window], history[column][window]))
            return history.last(column)

        by_name = {b.name: b for b in summary.bodies}
        for s in h.surfaces:
            if (entry := by_name.get(s.name)) is not None:
                entry.nusselt_number = value(f"{s.name}_nu")
                entry.surface_temperature = h.surface_temperature(s)
        heated = {s.name for s in h.surfaces}
        for i, body in enumerate(self.case.spec.bodies):
            if body.thermal is not None and body.thermal.kind != "insulated" and body.name not in heated:
                by_name[body.name].nusselt_number = None
                self.case.unavailable[f"bodies.{i}.nusselt_number"] = (
                    f"{body.name} neither gains nor gives heat (surface at the inflow temperature or zero heat flux)"
                )
        if np.isfinite(history["outlet_temperature"][window]).all():
            summary.outlet_temperature = value("outlet_temperature")
        else:
            summary.outlet_temperature = None
            self.case.unavailable["outlet_temperature"] = "no net outflow at the outlet: no mixed-mean temperature"
        prandtl = self.case.spec.viscosity() / h.kappa
        summary.heat = HeatNumbers(
            prandtl_number=prandtl, peclet_number=self.case.spec.reynolds() * prandtl, diffusivity=h.kappa
        )
        local = {s.name: h.local_nusselt(s) for s in h.surfaces}
        self._write_local(local)
        try:
            heat_pictures.local_nusselt_plot(self.out / "local_nusselt.png", local)
            if isinstance(summary, TransientSummary):
                heat_pictures.nusselt_history(self.out / "nusselt.png", self.columns, history.data)
        except Exception as err:  # a plot never fails a finished solve
            self.case.unavailable["heat.pictures"] = f"the heat plots could not be drawn: {type(err).__name__}: {err}"
            log.warning("%s: %s", self.out, self.case.unavailable["heat.pictures"])

    def _write_local(self, local: dict[str, np.ndarray]) -> None:
        buf = io.StringIO()
        writer = csv.writer(buf, lineterminator="\n")
        writer.writerow(["body", "x", "y", "angle_deg", "arc_length", "nusselt"])
        for name, table in local.items():
            writer.writerows([[name] + [f"{v:.10g}" for v in row] for row in table])
        output.write_atomic(self.out / "local_nusselt.csv", buf.getvalue())

    def pictures(self, steps: list[int]) -> None:
        """Temperature pictures of the saved snapshots, one colour scale from the inflow to the extremes."""
        try:
            case = self.case
            pick = sorted(set(steps))
            pick = [pick[i] for i in picture_choice.chosen(len(pick))]
            loaded = [np.load(self.out / "fields" / f"step_{k:06d}.npz") for k in pick]
            values = np.concatenate([f["temperature"] for f in loaded])
            limits = (
                float(values.min()),
                float(values.max()) if values.max() > values.min() else float(values.min()) + 1,
            )
            tri = pictures.triangulation(case.th.velocity.doflocs, case.th.velocity.element_dofs)
            folder = self.out / "pictures"
            folder.mkdir(exist_ok=True)
            transient = case.spec.analysis.mode == "transient"
            for k, f in zip(pick, loaded):
                t = float(f["time"]) if transient else None
                fields = {"temperature": f["temperature"]}
                pictures.field_picture(
                    folder / f"temperature_{k:06d}.png", case.spec, tri, fields, "temperature", limits, t
                )
        except Exception as err:
            self.case.unavailable["heat.pictures"] = (
                f"the temperature pictures could not be drawn: {type(err).__name__}: {err}"
            )
            log.warning("%s: %s", self.out, self.case.unavailable["heat.pictures"])

    def close(self) -> None:
        self.heat.close()
