"""How a body may move: the ``mount`` of a body in the spec, its law of motion, and the motion's statistics.

A driven mount prescribes a harmonic translation ``s(t) = A sin(2 pi f t)`` along x or y. It starts from the
body's meshed position with its full velocity ``2 pi f A`` (an impulsive start, like an inflow without a ramp),
so the mean position is the meshed one and no start-up offset drifts into the statistics.
"""

from __future__ import annotations

import math
from typing import Literal

import numpy as np
from pydantic import BaseModel, ConfigDict, Field

from .analysis import find_cycles, time_mean

AXES = {"x": 0, "y": 1}


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


Mount = DrivenMount


def motion_summary(
    t: np.ndarray,
    dx: np.ndarray,
    dy: np.ndarray,
    window: np.ndarray,
    reference_length: float,
    driving_frequency: float | None,
) -> dict[str, object]:
    """summary.json's ``motion`` of one moving body from its displacement history (m) at times ``t``.

    Each direction has, over the samples in ``window`` (the forces' analysis window), the time mean, the extremes,
    half the peak-to-peak swing (``amplitude``, m) and that swing over the reference length (``amplitude_ratio``).
    ``frequency`` is the response frequency, from whole cycles of the larger displacement component in the last
    half of the record (``None`` with fewer than two); ``frequency_ratio`` divides it by the driving frequency of a
    driven body (1 once the body follows its drive).
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
    out["frequency_ratio"] = frequency / driving_frequency if frequency and driving_frequency else None
    return out
