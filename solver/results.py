"""The result models: summary.json of a steady and of a transient run, and the force history by column name.

One model serves the solver (which fills it and writes it), the study tables (which read it) and the API (whose
OpenAPI document shows it). summary.json holds the fields a run set: an optional block (``heat``, a body's
``nusselt_number``) is written only when the run filled it, so a new block is one more optional field with the
default ``None`` (see :func:`dump`), and summaries written before it existed still validate. A per-body block goes
on both :class:`SteadyBody` and :class:`TransientBody`. The models refuse unknown keys: a key the solver writes
must be declared here (tests/solver/test_results.py round-trips real runs).
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path
from typing import Annotated, Any, Literal

import numpy as np
from pydantic import BaseModel, ConfigDict, Field, TypeAdapter

from .output import read_forces

Quantity = Literal["fx", "fy", "cd", "cl"]


def body_column(body: str, quantity: Quantity) -> str:
    """forces.csv column of one body quantity: force per unit depth (fx, fy) or coefficient (cd, cl)."""
    return f"{body}_{quantity}"


class _Result(BaseModel):
    model_config = ConfigDict(extra="forbid", validate_assignment=True)


class Stats(_Result):
    """A signal over the analysis window: time mean, extremes, half the peak-to-peak swing, RMS of the fluctuation."""

    mean: float
    min: float
    max: float
    amplitude: float
    rms: float


class ReferenceScales(_Result):
    """The velocity and the per-body lengths the coefficients and the Reynolds number are made with."""

    velocity: float
    lengths: dict[str, float]


class MeshSize(_Result):
    cells: int
    dofs: int


class HeatNumbers(_Result):
    prandtl_number: float
    peclet_number: float
    diffusivity: float


class SteadyBody(_Result):
    """One body's loads in the stationary flow; the heat fields are there when the spec has a ``heat`` section."""

    name: str
    fx: float
    fy: float
    drag_coefficient: float
    lift_coefficient: float
    recirculation_length: float | None
    nusselt_number: float | None = None
    surface_temperature: float | None = None


class MotionAxis(_Result):
    """One direction of a moving body's displacement (m) over the analysis window."""

    mean: float
    min: float
    max: float
    amplitude: float = Field(description="half the peak-to-peak swing, m")
    amplitude_ratio: float = Field(description="amplitude over the body's reference length")


class Motion(_Result):
    """A moving body's response (:func:`solver.motion.motion_summary`)."""

    x: MotionAxis
    y: MotionAxis
    frequency: float | None = Field(description="response frequency from whole cycles, Hz")
    frequency_ratio: float | None = Field(
        description="response over driving frequency (driven bodies) or natural frequency in vacuum (spring-mounted)"
    )


class TransientBody(_Result):
    """One body's coefficients over the analysis window; the heat fields as for :class:`SteadyBody`."""

    name: str
    drag_coefficient: Stats
    lift_coefficient: Stats
    strouhal_number: float | None
    nusselt_number: Stats | None = None
    surface_temperature: float | None = None
    motion: Motion | None = None


class Newton(_Result):
    iterations: int
    residual: float
    continuation: list[float] = Field(description="fractions of the target Reynolds number solved on the way")


class Shedding(_Result):
    """The vortex-shedding frequency from whole lift cycles of the first body (only the Strouhal number, null,
    in a channel without bodies)."""

    strouhal_number: float | None
    frequency: float | None = None
    frequency_resolution: float | None = None
    cycles: int | None = None
    method: str | None = None
    note: str | None = Field(None, description="why there is no Strouhal number, or why it is not settled yet")


class Window(_Result):
    """The analysis window: the last whole lift cycles, else the last half of the record."""

    start: float
    end: float
    whole_cycles: int


class TimeSteps(_Result):
    accepted: int
    rejected: int
    smallest: float | None
    largest: float | None
    mean: float | None
    factorisations: int
    solves_per_step: float


class _Summary(_Result):
    """What both kinds of run report first (the closing fields, ``unavailable`` to ``units``, are declared last in
    each kind: a model's fields keep their declaration order in summary.json)."""

    title: str
    mode: str
    elements: str
    reynolds_number: float
    reference: ReferenceScales
    mesh: MeshSize
    timings: dict[str, float] = Field(description="seconds per stage")


class SteadySummary(_Summary):
    """summary.json of a steady run (Newton's method on the stationary equations)."""

    mode: Literal["steady"]
    bodies: list[SteadyBody] = Field(default_factory=list)
    pressure_drop: float | None = None
    velocity_probes: list[list[float] | None] | None = Field(
        None, description="[ux, uy] per velocity probe, null for a point outside the fluid"
    )
    newton: Newton | None = None
    outlet_temperature: float | None = None
    heat: HeatNumbers | None = None
    unavailable: dict[str, str] = Field(default_factory=dict, description="why a value is null, by its path")
    wall_time_seconds: float | None = None
    caution: str | None = None
    units: dict[str, str] = Field(default_factory=dict, description="units by value path; * any index or key")


class TransientSummary(_Summary):
    """summary.json of a transient run: statistics over the analysis window."""

    mode: Literal["transient"]
    bodies: list[TransientBody] = Field(default_factory=list)
    strouhal_number: float | None = None
    shedding: Shedding | None = None
    pressure_drop: Stats | None = None
    window: Window | None = None
    ended_by: Literal["end_time", "periodic"] | None = None
    steps: int | None = None
    scheme: str | None = None
    accuracy: float | None = None
    time_steps: TimeSteps | None = None
    simulated_time: float | None = None
    max_cfl: float | None = None
    resumed_from_step: int | None = None
    outlet_temperature: Stats | None = None
    heat: HeatNumbers | None = None
    unavailable: dict[str, str] = Field(default_factory=dict, description="why a value is null, by its path")
    wall_time_seconds: float | None = None
    caution: str | None = None
    units: dict[str, str] = Field(default_factory=dict, description="units by value path; * any index or key")


Summary = Annotated[SteadySummary | TransientSummary, Field(discriminator="mode")]
SUMMARY = TypeAdapter(Summary)


def parse(data: dict[str, Any]) -> SteadySummary | TransientSummary:
    """A stored summary (summary.json, a job's summary) as its model."""
    return SUMMARY.validate_python(data)


def dump(summary: SteadySummary | TransientSummary) -> dict[str, Any]:
    """summary.json's content: the fields the run set, in the models' order (an unset optional block is left out,
    a value set to None is written as null)."""
    return summary.model_dump(exclude_unset=True)


@dataclass(frozen=True)
class ForceHistory:
    """forces.csv (or heat.csv) by column name: ``history["pier_cd"]`` is that column over all rows."""

    columns: list[str]
    data: np.ndarray

    @classmethod
    def of_rows(cls, columns: list[str], rows: list[list[float]]) -> ForceHistory:
        return cls(list(columns), np.array(rows, dtype=float).reshape(-1, len(columns)))

    @classmethod
    def read(cls, path: Path) -> ForceHistory:
        columns, data = read_forces(path)
        return cls(columns, data)

    def __getitem__(self, column: str) -> np.ndarray:
        return self.data[:, self.columns.index(column)]

    def __contains__(self, column: object) -> bool:
        return column in self.columns

    @property
    def time(self) -> np.ndarray:
        return self["time"]

    def body(self, name: str, quantity: Quantity) -> np.ndarray:
        return self[body_column(name, quantity)]

    def last(self, column: str) -> float:
        return float(self[column][-1])
