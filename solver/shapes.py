"""Body shapes of a job spec and their geometry (outline, reference length).

Each shape is a pydantic model; ``outline`` gives a closed counter-clockwise
polygon used for validation, boundary tagging and drawing, while the mesher
builds the exact curves (see :mod:`solver.meshing`).
"""

from __future__ import annotations

from typing import Annotated, Literal

import numpy as np
from pydantic import BaseModel, ConfigDict, Field, field_validator

from .motion import Mount
from .thermal import Thermal

# Geometry is in metres; the bounds keep arithmetic on untrusted input finite.
Coordinate = Annotated[float, Field(ge=-1e6, le=1e6)]
Point = tuple[Coordinate, Coordinate]


class _Body(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False)

    name: str = Field("", max_length=40, pattern=r"^[A-Za-z0-9_\-]*$")
    thermal: Thermal | None = Field(None, description="surface temperature, heat flux or insulated (needs heat)")
    mount: Mount | None = Field(None, description="how the body moves (a driven harmonic translation); none: fixed")

    def outline(self, n: int = 256) -> np.ndarray:
        """Return ``(n, 2)`` boundary points, counter-clockwise, not closed."""
        raise NotImplementedError

    def reference_length(self) -> float:
        """Length that makes the force coefficients: the frontal height by default."""
        y = self.outline()[:, 1]
        return float(y.max() - y.min())

    def wall_velocity(self, x: np.ndarray) -> np.ndarray:
        """Velocity of the body surface at points ``x`` (shape ``(2, n)``): at rest."""
        return np.zeros_like(x)

    def reference_point(self) -> Point:
        """A point inside the body (used to draw labels and to sort)."""
        return tuple(self.outline().mean(axis=0))


def _rotate(points: np.ndarray, angle_deg: float, about: Point) -> np.ndarray:
    a = np.deg2rad(angle_deg)
    rot = np.array([[np.cos(a), -np.sin(a)], [np.sin(a), np.cos(a)]])
    return (points - about) @ rot.T + about


class Circle(_Body):
    """A circular cylinder, optionally spinning at ``spin`` rad/s (counter-clockwise)."""

    shape: Literal["circle"] = "circle"
    center: Point = (0.1, 0.05)
    radius: float = Field(0.01, gt=0, le=1e6)
    spin: float = Field(0.0, ge=-1e6, le=1e6, description="rad/s, counter-clockwise")

    def outline(self, n: int = 256) -> np.ndarray:
        s = np.linspace(0, 2 * np.pi, n, endpoint=False)
        return np.c_[self.center[0] + self.radius * np.cos(s), self.center[1] + self.radius * np.sin(s)]

    def reference_length(self) -> float:
        return 2 * self.radius

    def wall_velocity(self, x: np.ndarray) -> np.ndarray:
        return self.spin * np.array([-(x[1] - self.center[1]), x[0] - self.center[0]])

    def reference_point(self) -> Point:
        return self.center


class Rectangle(_Body):
    """A rectangle turned by ``angle`` degrees about its centre, corners optionally rounded."""

    shape: Literal["rectangle"]
    center: Point
    width: float = Field(gt=0, le=1e6)
    height: float = Field(gt=0, le=1e6)
    angle: float = Field(0.0, ge=-180, le=180)
    corner_radius: float = Field(0.0, ge=0, le=1e6)

    def outline(self, n: int = 256) -> np.ndarray:
        w, h = self.width / 2, self.height / 2
        r = min(self.corner_radius, 0.999 * min(w, h))
        k = max(n // 4, 2)
        arcs = []
        for i, (cx, cy) in enumerate([(w - r, h - r), (-w + r, h - r), (-w + r, -h + r), (w - r, -h + r)]):
            s = np.linspace(i * np.pi / 2, (i + 1) * np.pi / 2, k)
            arcs.append(np.c_[cx + r * np.cos(s), cy + r * np.sin(s)])
        pts = np.vstack(arcs) + self.center
        return _rotate(pts, self.angle, self.center)

    def reference_point(self) -> Point:
        return self.center


class Ellipse(_Body):
    """An ellipse with full axes ``width`` and ``height``, turned by ``angle`` degrees."""

    shape: Literal["ellipse"]
    center: Point
    width: float = Field(gt=0, le=1e6)
    height: float = Field(gt=0, le=1e6)
    angle: float = Field(0.0, ge=-180, le=180)

    def outline(self, n: int = 256) -> np.ndarray:
        s = np.linspace(0, 2 * np.pi, n, endpoint=False)
        pts = np.c_[self.width / 2 * np.cos(s), self.height / 2 * np.sin(s)] + self.center
        return _rotate(pts, self.angle, self.center)

    def reference_point(self) -> Point:
        return self.center


class Naca4(_Body):
    """A NACA four-digit airfoil (closed trailing edge), nose at ``leading_edge``.

    A positive ``angle_of_attack`` (degrees) lifts the nose against a flow in +x.
    """

    shape: Literal["naca4"]
    code: str = Field(pattern=r"^\d{4}$")
    chord: float = Field(gt=0, le=1e6)
    leading_edge: Point
    angle_of_attack: float = Field(0.0, ge=-90, le=90)

    @field_validator("code")
    @classmethod
    def _thick_enough(cls, code: str) -> str:
        if int(code[2:]) == 0:
            raise ValueError("the last two digits (thickness in % of chord) must be at least 01")
        if int(code[0]) > 0 and int(code[1]) == 0:
            raise ValueError("a cambered airfoil needs the camber position (second digit) 1-9")
        return code

    def surface(self, n: int = 256) -> np.ndarray:
        """Points from the trailing edge over the upper side to the nose and back below."""
        m, p, t = int(self.code[0]) / 100, int(self.code[1]) / 10, int(self.code[2:]) / 100
        beta = np.linspace(0, np.pi, n // 2 + 1)
        x = (1 - np.cos(beta)) / 2
        yt = 5 * t * (0.2969 * np.sqrt(x) - 0.1260 * x - 0.3516 * x**2 + 0.2843 * x**3 - 0.1036 * x**4)
        if m > 0:
            front = x < p
            yc = np.where(front, m / p**2 * (2 * p * x - x**2), m / (1 - p) ** 2 * (1 - 2 * p + 2 * p * x - x**2))
            slope = np.where(front, 2 * m / p**2 * (p - x), 2 * m / (1 - p) ** 2 * (p - x))
        else:
            yc = slope = np.zeros_like(x)
        th = np.arctan(slope)
        upper = np.c_[x - yt * np.sin(th), yc + yt * np.cos(th)]
        lower = np.c_[x + yt * np.sin(th), yc - yt * np.cos(th)]
        pts = np.vstack([upper[::-1], lower[1:-1]]) * self.chord + self.leading_edge
        return _rotate(pts, -self.angle_of_attack, self.leading_edge)

    def outline(self, n: int = 256) -> np.ndarray:
        return self.surface(n)

    def reference_length(self) -> float:
        return self.chord


class Polygon(_Body):
    """A simple polygon given by its corner points (either orientation)."""

    shape: Literal["polygon"]
    points: list[Point] = Field(min_length=3, max_length=200)

    def outline(self, n: int = 256) -> np.ndarray:
        pts = np.asarray(self.points, dtype=float)
        x, y = pts.T
        if np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1)) < 0:
            pts = pts[::-1]
        return pts


Body = Annotated[Circle | Rectangle | Ellipse | Naca4 | Polygon, Field(discriminator="shape")]
