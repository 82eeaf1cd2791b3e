"""How a body may move: the ``mount`` of a body in the spec, its law of motion, and the motion's statistics.

A driven mount prescribes a harmonic translation ``s(t) = A sin(2 pi f t)`` along x or y. It starts from the
body's meshed position with its full velocity ``2 pi f A`` (an impulsive start, like an inflow without a ramp),
so the mean position is the meshed one and no start-up offset drifts into the statistics.

A spring mount holds the body on linear springs and dampers along one or both axes; the body's motion comes from
the fluid's force (:mod:`solver.spring`), from the drawn position at rest or from a given initial displacement
and velocity (a body released from a displaced position, "plucked", rings at its natural frequency). Its stiffness
and damping follow from the natural frequency in vacuum ``f_n`` (the body's own, without the fluid's added mass)
and the damping ratio: ``k = m (2 pi f_n)^2``,
``c = 2 zeta m 2 pi f_n``, with ``m`` the mass ratio times the displaced fluid's mass (per unit length).
"""

from __future__ import annotations

import math
from typing import Annotated, Literal

import numpy as np
from pydantic import BaseModel, ConfigDict, Field

from .analysis import find_cycles, time_mean

AXES = {"x": 0, "y": 1}
_Component = Annotated[float, Field(ge=-1e6, le=1e6)]


class DrivenMount(BaseModel):
    """A prescribed harmonic translation along one axis."""

    model_config = ConfigDict(extra="forbid", allow_inf_nan=False)

    kind: Literal["driven"] = "driven"
    direction: Literal["x", "y"] = Field("y", description="axis of the motion")
    amplitude: float = Field(gt=0, le=1e6, description="half the stroke, m")
    frequency: float = Field(gt=0, le=1e6, description="Hz")

    def unit(self) -> np.ndarray:
        """The direction of motion as a unit vector."""
        e = np.zeros(2)
        e[AXES[self.direction]] = 1.0
        return e

    def displacement(self, t: float) -> float:
        """Signed distance from the meshed position along :meth:`unit`, m."""
        return self.amplitude * math.sin(2 * math.pi * self.frequency * t)

    def velocity(self, t: float) -> float:
        """Time derivative of :meth:`displacement`, m/s (exact: every stage sits on the prescribed law)."""
        omega = 2 * math.pi * self.frequency
        return self.amplitude * omega * math.cos(omega * t)

    def offset(self, t: float) -> np.ndarray:
        """``(dx, dy)`` from the meshed position, m."""
        return self.unit() * self.displacement(t)

    def rate(self, t: float) -> np.ndarray:
        """``(vx, vy)``, m/s."""
        return self.unit() * self.velocity(t)

    def reach(self) -> float:
        """The largest excursion the spec checks for room, m."""
        return self.amplitude


class SpringMount(BaseModel):
    """Linear springs and dampers along the listed axes; the fluid's force moves the body."""

    model_config = ConfigDict(extra="forbid", allow_inf_nan=False)

    kind: Literal["spring"] = "spring"
    directions: list[Literal["x", "y"]] = Field(min_length=1, max_length=2, description="axes the body may move along")
    mass_ratio: float = Field(gt=0, le=1e6, description="body mass over the mass of the fluid it displaces")
    damping_ratio: float = Field(0.0, ge=0, lt=1, description="share of critical damping (in vacuum)")
    reduced_velocity: float | None = Field(
        None,
        gt=0,
        le=1e6,
        description="U / (f_n L): reference velocity over natural frequency (in vacuum) times length",
    )
    natural_frequency: float | None = Field(None, gt=0, le=1e6, description="in vacuum, Hz")
    initial_displacement: tuple[_Component, _Component] = Field(
        (0.0, 0.0), description="(dx, dy) from the drawn position at the start, m; 0 along a held axis"
    )
    initial_velocity: tuple[_Component, _Component] = Field(
        (0.0, 0.0), description="(vx, vy) at the start, m/s; 0 along a held axis"
    )

    def frequency(self, velocity: float, length: float) -> float:
        """The natural frequency in vacuum f_n, Hz (the spec makes sure exactly one way to it is given)."""
        if self.natural_frequency is not None:
            return self.natural_frequency
        assert self.reduced_velocity is not None
        return velocity / (self.reduced_velocity * length)

    def free(self) -> np.ndarray:
        """1 for each axis the body may move along, 0 for the held ones."""
        e = np.zeros(2)
        for axis in self.directions:
            e[AXES[axis]] = 1.0
        return e

    def start(self) -> np.ndarray:
        """``(sx, sy, vx, vy)`` at the start: the initial displacement and velocity."""
        return np.r_[self.initial_displacement, self.initial_velocity].astype(float)

    def reach(self) -> float:
        """The excursion the spec checks for room: where the body starts (its swing comes out of the run)."""
        return float(np.hypot(*self.initial_displacement))


Mount = Annotated[DrivenMount | SpringMount, Field(discriminator="kind")]


def motion_summary(
    t: np.ndarray,
    dx: np.ndarray,
    dy: np.ndarray,
    window: np.ndarray,
    reference_length: float,
    base_frequency: float | None,
) -> dict[str, object]:
    """summary.json's ``motion`` of one moving body from its displacement history (m) at times ``t``.

    Each direction has, over the samples in ``window`` (the forces' analysis window), the time mean, the extremes,
    half the peak-to-peak swing (``amplitude``, m) and that swing over the reference length (``amplitude_ratio``).
    ``frequency`` is the response frequency, from whole cycles of the larger displacement component in the last
    half of the record (``None`` with fewer than two); ``frequency_ratio`` divides it by ``base_frequency``: the
    driving frequency of a driven body (1 once the body follows its drive), the natural frequency in vacuum of a
    spring-mounted one (below 1 in still fluid, by the added mass).
    """
    out: dict[str, object] = {}
    tw = t[window]
    for name, d in (("x", dx[window]), ("y", dy[window])):
        amplitude = float(0.5 * np.ptp(d)) if len(d) else 0.0
        out[name] = {
            "mean": time_mean(tw, d),
            "min": float(d.min()),
            "max": float(d.max()),
            "amplitude": amplitude,
            "amplitude_ratio": amplitude / reference_length,
        }
    main = dx if np.ptp(dx) >= np.ptp(dy) else dy
    cycles = find_cycles(t, main)
    frequency = 1.0 / float(cycles.periods[-min(5, cycles.count) :].mean()) if cycles.count >= 2 else None
    out["frequency"] = frequency
    out["frequency_ratio"] = frequency / base_frequency if frequency and base_frequency else None
    return out
