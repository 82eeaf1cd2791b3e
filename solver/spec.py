"""The job spec: one pydantic model shared by the solver, the API, the worker and the page.

``load`` turns untrusted JSON into a checked :class:`JobSpec` or raises
:class:`~solver.errors.SpecError` naming every bad field.

The defaults describe a scenario of our own, small and slow enough to stay laminar: a 100 mm wide laboratory
channel, seen from above, carrying water at 20 °C (density 998.2 kg/m^3, kinematic viscosity 1.004e-6 m^2/s,
property-table values, common knowledge) at a mean speed of 1 mm/s. A 20 mm round post in it (``DEFAULT_POST``)
sees Re = 0.001 * 0.02 / 1.004e-6 = 19.9: a steady wake. It is not a scaled-down bridge pier: real piers meet
Reynolds numbers of 1e5 to 1e7 and turbulent flow, which this solver does not model.
"""

from __future__ import annotations

import math
from collections.abc import Iterable
from typing import Annotated, Any, Final, Literal

import numpy as np
from pydantic import BaseModel, ConfigDict, Field, ValidationError, model_validator
from pydantic_core import ErrorDetails

from . import _polygons
from .errors import SpecError
from .motion import AXES, DrivenMount, SpringMount
from .shapes import Body, Point
from .thermal import Heat
from .thermal import check as check_heat

_Positive = Field(gt=0, allow_inf_nan=False)
# The range of Reynolds numbers and kinematic viscosities a case may have, given or derived from the other (a project
# choice: creeping flow to well past the laminar range; it keeps every derived quantity finite).
MIN_REYNOLDS, MAX_REYNOLDS = 1e-6, 1e5
MAX_VISCOSITY = 1e6
WATER_20C = {"density": 998.2, "viscosity": 1.004e-6}  # kg/m^3, m^2/s
MAX_BODIES = 20
DEFAULT_POST = {"name": "post", "shape": "circle", "center": [0.1, 0.05], "radius": 0.01}


class _Model(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False)


class Channel(_Model):
    """The flow box: inflow at x=0, outflow at x=length, walls at y=0 and y=height."""

    length: float = Field(0.4, ge=1e-6, le=1e4, description="along the flow, m")
    height: float = Field(0.1, ge=1e-6, le=1e4, description="across the flow, m")
    walls: Literal["no-slip", "slip"] = "no-slip"


class Reference(_Model):
    """Scales for the Reynolds number and the coefficients (defaults: mean inflow, body size)."""

    velocity: float | None = Field(None, gt=0, le=1e6)
    length: float | None = Field(None, gt=0, le=1e6)


class Fluid(_Model):
    """Either density and kinematic viscosity, or a Reynolds number on the reference scales."""

    density: float = Field(WATER_20C["density"], gt=0, le=1e6, description="kg/m^3 (default: water at 20 °C)")
    viscosity: float | None = Field(
        None, gt=0, le=MAX_VISCOSITY, description="kinematic viscosity, m^2/s (default: water at 20 °C)"
    )
    reynolds: float | None = Field(None, ge=MIN_REYNOLDS, le=MAX_REYNOLDS)
    reference: Reference = Reference()

    @model_validator(mode="after")
    def _one_of(self) -> Fluid:
        if self.viscosity is not None and self.reynolds is not None:
            raise ValueError("give either viscosity or reynolds, not both")
        if self.viscosity is None and self.reynolds is None:
            self.viscosity = WATER_20C["viscosity"]
        return self


class TimeLaw(_Model):
    """Factor on the inflow over time: constant, mean + amplitude*sin(2*pi*t/period), or a table."""

    kind: Literal["constant", "sine", "table"] = "constant"
    period: float | None = Field(None, gt=0, le=1e9)
    amplitude: float = Field(1.0, ge=-1e3, le=1e3)
    mean: float = Field(0.0, ge=-1e3, le=1e3)
    points: list[tuple[Annotated[float, Field(ge=0, le=1e9)], Annotated[float, Field(ge=-1e3, le=1e3)]]] | None = Field(
        None, min_length=2, max_length=10000
    )

    @model_validator(mode="after")
    def _complete(self) -> TimeLaw:
        if self.kind == "sine" and self.period is None:
            raise ValueError("a sine time law needs a period")
        if self.kind == "table":
            if not self.points:
                raise ValueError("a table time law needs points [[t, factor], ...]")
            if np.any(np.diff([t for t, _ in self.points]) <= 0):
                raise ValueError("table times must increase")
        return self

    def factor(self, t: float) -> float:
        if self.kind == "sine":
            return self.mean + self.amplitude * math.sin(2 * math.pi * t / self.period)  # type: ignore[operator]
        if self.kind == "table":
            ts, fs = zip(*self.points)  # type: ignore[misc]
            return float(np.interp(t, ts, fs))
        return 1.0

    def nominal(self) -> float:
        """The factor's size that scales coefficients (never its instantaneous value)."""
        if self.kind == "sine":
            return abs(self.mean) + abs(self.amplitude)
        if self.kind == "table":
            return max(abs(f) for _, f in self.points)  # type: ignore[union-attr]
        return 1.0


class Inflow(_Model):
    """Velocity profile at x=0; give the peak or the mean velocity."""

    profile: Literal["parabolic", "uniform"] = "parabolic"
    peak_velocity: float | None = Field(None, gt=0, le=1e4, description="m/s (default 0.0015 when neither is given)")
    mean_velocity: float | None = Field(None, gt=0, le=1e4, description="m/s")
    ramp_time: float = Field(0.0, ge=0, le=1e9)
    time_law: TimeLaw = TimeLaw()

    @model_validator(mode="after")
    def _one_of(self) -> Inflow:
        if self.peak_velocity is not None and self.mean_velocity is not None:
            raise ValueError("give either peak_velocity or mean_velocity, not both")
        if self.peak_velocity is None and self.mean_velocity is None:
            self.peak_velocity = 0.0015  # m/s: a mean of 1 mm/s across the parabolic profile
        return self

    def peak(self) -> float:
        if self.peak_velocity is not None:
            return self.peak_velocity
        return self.mean_velocity * (1.5 if self.profile == "parabolic" else 1.0)  # type: ignore[operator]

    def mean(self) -> float:
        return self.peak() * (2 / 3 if self.profile == "parabolic" else 1.0)

    def breakpoints(self) -> list[float]:
        """Times where the factor's time derivatives jump (the ramp's end, the table's points after the first)."""
        times = [self.ramp_time] if self.ramp_time > 0 else []
        if self.time_law.kind == "table":
            times += [t for t, _ in self.time_law.points[1:]]  # type: ignore[index]
        return sorted(t for t in set(times) if t > 0)

    def factor(self, t: float) -> float:
        """Time factor: smooth ramp from rest times the time law."""
        ramp = 1.0
        if self.ramp_time > 0 and t < self.ramp_time:
            ramp = 0.5 * (1 - math.cos(math.pi * t / self.ramp_time))
        return ramp * self.time_law.factor(t)


class MeshSettings(_Model):
    """Mesh density: a preset, optional explicit sizes (metres) and a global scale factor."""

    preset: Literal["coarse", "medium", "fine"] = "medium"
    body_size: float | None = Field(None, gt=0, le=1e6)
    wake_size: float | None = Field(None, gt=0, le=1e6)
    far_size: float | None = Field(None, gt=0, le=1e6)
    wake_length: float | None = Field(None, ge=0, le=1e6, description="length of the refined wake behind the bodies")
    scale: float = Field(1.0, gt=0.05, le=20, description="multiplies every size")
    refinements: int = Field(0, ge=0, le=4, description="uniform splits of every cell into four (mesh studies)")
    curved: bool = True


class UntilPeriodic(_Model):
    """Stop a transient run once the lift signal repeats itself."""

    cycles: int = Field(3, ge=2, le=50)
    tolerance: float = Field(0.01, gt=0, le=0.5)


ADAPTIVE: Final = "bdf2-adaptive"
KEEP_CLEARANCE = 0.5  # share of a moving body's gaps at rest that must remain at its extreme positions


class Analysis(_Model):
    mode: Literal["steady", "transient"] = "steady"
    scheme: Literal["bdf2-adaptive", "euler-imex", "bdf2-imex", "bdf2-implicit"] = Field(
        ADAPTIVE,
        description="bdf2-adaptive picks its own steps for the accuracy asked; the others keep time_step fixed",
    )
    time_step: float | None = Field(
        None, gt=0, le=1e6, description="seconds; the fixed schemes need it, bdf2-adaptive takes it as its first step"
    )
    accuracy: float = Field(
        1e-3,
        ge=1e-6,
        le=0.1,
        description="bdf2-adaptive: allowed velocity error per step, relative to the reference velocity, "
        "per convective time (reference length / reference velocity)",
    )
    end_time: float = Field(1.0, gt=0, le=1e9)
    output_interval: float | None = Field(None, gt=0, le=1e9, description="simulated time between field snapshots")
    checkpoint_interval: int = Field(200, ge=1, le=10**9, description="steps between checkpoints")
    until_periodic: UntilPeriodic | None = None
    newton_tolerance: float = Field(1e-8, gt=0, lt=1, description="relative size of the last Newton update")
    max_newton_iterations: int = Field(30, ge=1, le=200)


class Probes(_Model):
    pressure_drop: tuple[Point, Point] | None = None
    velocity: list[Point] = Field(default_factory=list, max_length=50)


class JobSpec(_Model):
    """A complete 2D flow case. Every field has a default, so ``{}`` is an empty channel."""

    title: str = Field("", max_length=200)
    channel: Channel = Channel()
    bodies: list[Body] = Field(default_factory=list, max_length=MAX_BODIES)
    fluid: Fluid = Fluid()
    inflow: Inflow = Inflow()
    mesh: MeshSettings = MeshSettings()
    elements: Literal["P2P1", "P3P2"] = "P2P1"
    analysis: Analysis = Analysis()
    probes: Probes = Probes()
    heat: Heat | None = Field(None, description="solve for the temperature (forced convection)")

    @model_validator(mode="after")
    def _name_bodies(self) -> JobSpec:
        for i, body in enumerate(self.bodies):
            if not body.name:
                body.name = f"body{i + 1}"
        return self

    def nominal_velocity(self) -> float:
        """Mean inflow velocity scaled by the time law's nominal factor."""
        return self.inflow.mean() * self.inflow.time_law.nominal()

    def reference_velocity(self) -> float:
        return self.fluid.reference.velocity or self.nominal_velocity()

    def reference_length(self, body: int = 0) -> float:
        if self.fluid.reference.length:
            return self.fluid.reference.length
        if self.bodies:
            return self.bodies[body].reference_length()
        return self.channel.height

    def viscosity(self) -> float:
        """Kinematic viscosity in m^2/s."""
        if self.fluid.reynolds is not None:
            return self.reference_velocity() * self.reference_length() / self.fluid.reynolds
        return self.fluid.viscosity  # type: ignore[return-value]

    def reynolds(self) -> float:
        return self.reference_velocity() * self.reference_length() / self.viscosity()


def _check_geometry(spec: JobSpec) -> list[tuple[str, str]]:
    """Cross-field rules pydantic cannot express on one field."""
    problems: list[tuple[str, str]] = []
    L, H = spec.channel.length, spec.channel.height
    outlines = [b.outline() for b in spec.bodies]
    for i, (body, pts) in enumerate(zip(spec.bodies, outlines)):
        where = f"bodies.{i}"
        x0, y0 = pts.min(axis=0)
        x1, y1 = pts.max(axis=0)
        if x0 <= 0 or y0 <= 0 or x1 >= L or y1 >= H:
            problems.append(
                (
                    where,
                    f"{body.name} spans x {x0:.4g}..{x1:.4g}, y {y0:.4g}..{y1:.4g}, "
                    f"which is not strictly inside the channel 0..{L:g} x 0..{H:g}",
                )
            )
        elif min(x0, y0, L - x1, H - y1) < 1e-3 * H:
            problems.append((where, f"{body.name} is closer than {1e-3 * H:.3g} to the channel boundary"))
        if body.reference_length() < 1e-5 * H:
            problems.append(
                (
                    where,
                    f"{body.name} is {body.reference_length():.3g} across, smaller than "
                    f"1e-5 of the channel height: too small to mesh",
                )
            )
        if body.shape == "polygon" and not _polygons.is_simple(pts):
            problems.append((f"{where}.points", "the polygon's edges cross or touch each other"))
        for j in range(i):
            if _polygons.overlap(outlines[j], pts, gap=1e-3 * H):
                problems.append((where, f"{body.name} overlaps or touches {spec.bodies[j].name}"))
    problems += _check_motion(spec, outlines)
    names = [b.name for b in spec.bodies]
    for i, name in enumerate(names):
        if name in names[:i]:
            problems.append((f"bodies.{i}.name", f"name {name!r} is used twice"))
    probe_points = {}
    if spec.probes.pressure_drop:
        probe_points.update({f"probes.pressure_drop.{k}": p for k, p in enumerate(spec.probes.pressure_drop)})
    probe_points.update({f"probes.velocity.{k}": p for k, p in enumerate(spec.probes.velocity)})
    for where, (x, y) in probe_points.items():
        if not (0 <= x <= L and 0 <= y <= H):
            problems.append((where, f"point ({x:g}, {y:g}) is outside the channel 0..{L:g} x 0..{H:g}"))
        for body, pts in zip(spec.bodies, outlines):
            point = np.array([[x, y]])
            if _polygons.contains(pts, point)[0] and _polygons.distance(pts, point)[0] > 1e-6 * H:
                problems.append((where, f"point ({x:g}, {y:g}) lies inside body {body.name}"))
    a = spec.analysis
    if a.mode == "transient" and a.scheme != ADAPTIVE and a.time_step is None:
        problems.append(("analysis.time_step", f"the fixed-step scheme {a.scheme} needs a time step (seconds)"))
    if a.mode == "transient" and a.time_step is not None and a.end_time < a.time_step:
        problems.append(("analysis.end_time", f"end time {a.end_time:g} is shorter than one time step {a.time_step:g}"))
    if spec.fluid.reynolds is not None and not spec.bodies and spec.fluid.reference.length is None:
        problems.append(("fluid.reference.length", "a Reynolds number without bodies needs a reference length"))
    return problems


def _check_motion(spec: JobSpec, outlines: list[np.ndarray]) -> list[tuple[str, str]]:
    """Moving bodies: what the moving mesh supports, and room to move.

    At both extreme positions a moving body must keep at least :data:`KEEP_CLEARANCE` of the gap it has at rest
    to the channel's sides and to every other body (both at their own extremes): the mesh in between is squeezed
    by about that factor, and a harmonic mesh motion keeps such cells the right way round.
    """
    moving = [i for i, b in enumerate(spec.bodies) if b.mount is not None]
    if not moving:
        return []
    problems: list[tuple[str, str]] = []
    a = spec.analysis
    if a.mode != "transient":
        problems.append(("analysis.mode", "moving bodies (a mount) need a transient analysis"))
    if a.scheme != ADAPTIVE:
        problems.append(("analysis.scheme", f"moving bodies (a mount) need the scheme {ADAPTIVE}"))
    if spec.elements != "P2P1":
        problems.append(("elements", "moving bodies (a mount) need the P2P1 elements"))
    if spec.heat is not None:
        problems.append(("heat", "heat transfer is not yet available with moving bodies (a mount)"))
    for i in moving:
        mount = spec.bodies[i].mount
        if not isinstance(mount, SpringMount):
            continue
        if (mount.reduced_velocity is None) == (mount.natural_frequency is None):
            given = "both" if mount.reduced_velocity is not None else "neither"
            problems.append(
                (
                    f"bodies.{i}.mount.reduced_velocity",
                    f"give exactly one of reduced_velocity and natural_frequency (got {given})",
                )
            )
        for name, pair in (
            ("initial_displacement", mount.initial_displacement),
            ("initial_velocity", mount.initial_velocity),
        ):
            for axis, c in AXES.items():
                if pair[c] != 0 and axis not in mount.directions:
                    problems.append(
                        (
                            f"bodies.{i}.mount.{name}.{c}",
                            f"{spec.bodies[i].name} is held along {axis} (directions {mount.directions}): its {axis} "
                            f"part must be 0 (got {pair[c]:g})",
                        )
                    )
    L, H = spec.channel.length, spec.channel.height

    def extremes(i: int) -> list[np.ndarray]:
        """Where a body is checked: a driven one at both ends of its stroke, a spring-mounted one where it starts."""
        mount = spec.bodies[i].mount
        if isinstance(mount, SpringMount):
            return [outlines[i] + np.array(mount.initial_displacement)]
        if not isinstance(mount, DrivenMount):
            return [outlines[i]]
        shift = mount.amplitude * mount.unit()
        return [outlines[i] - shift, outlines[i] + shift]

    def wall_gaps(pts: np.ndarray) -> np.ndarray:
        """Gaps to the inlet, the lower wall, the outlet and the upper wall."""
        return np.array([pts[:, 0].min(), pts[:, 1].min(), L - pts[:, 0].max(), H - pts[:, 1].max()])

    sides = ("the inlet", "the lower wall", "the outlet", "the upper wall")
    for i in moving:
        mount = spec.bodies[i].mount
        name, amplitude = spec.bodies[i].name, mount.reach()  # type: ignore[union-attr]
        if amplitude == 0:  # a spring-mounted body starting where it is meshed: its swing comes out of the run
            continue
        if isinstance(mount, SpringMount):
            field, at = f"bodies.{i}.mount.initial_displacement", f"starting {amplitude:g} m from where it is drawn"
            noun = "an initial displacement"
        else:
            field, at, noun = f"bodies.{i}.mount.amplitude", f"at amplitude {amplitude:g} m", "amplitude"
        rest = wall_gaps(outlines[i])
        moved = np.min([wall_gaps(p) for p in extremes(i)], axis=0)
        for k in np.nonzero(moved < KEEP_CLEARANCE * rest)[0]:
            problems.append(
                (
                    field,
                    f"{at}, {name} would come within {max(moved[k], 0):.3g} m of "
                    f"{sides[k]}; it must keep at least {KEEP_CLEARANCE:g} of its {rest[k]:.3g} m gap at rest "
                    f"({noun} up to {amplitude - (KEEP_CLEARANCE * rest[k] - moved[k]):.3g} m)",
                )
            )
        for j in range(len(spec.bodies)):
            if j == i:
                continue
            gap_rest = _polygons.gap(outlines[i], outlines[j])
            gap_moved = min(_polygons.gap(p, q) for p in extremes(i) for q in extremes(j))
            if gap_moved < KEEP_CLEARANCE * gap_rest:
                problems.append(
                    (
                        field,
                        f"{at}, {name} would come within {gap_moved:.3g} m of "
                        f"{spec.bodies[j].name}; it must keep at least {KEEP_CLEARANCE:g} of the {gap_rest:.3g} m "
                        "gap at rest",
                    )
                )
    return problems


def _check_scales(spec: JobSpec) -> list[tuple[str, str]]:
    """The derived scales (reference velocity, Reynolds number, viscosity) stay in the ranges a given one may have."""
    U, L = spec.reference_velocity(), spec.reference_length()
    if U <= 0:
        return [
            (
                "inflow.time_law",
                "the inflow's nominal velocity is zero: the time law must not be zero throughout "
                "(or give fluid.reference.velocity)",
            )
        ]
    if spec.fluid.reynolds is not None:
        nu = U * L / spec.fluid.reynolds
        if nu > MAX_VISCOSITY:
            return [
                (
                    "fluid.reynolds",
                    f"Re = {spec.fluid.reynolds:.3g} on U = {U:.3g} m/s and L = {L:.3g} m means a "
                    f"kinematic viscosity of {nu:.3g} m²/s, over the limit of {MAX_VISCOSITY:g}",
                )
            ]
        return []
    re = U * L / spec.fluid.viscosity  # type: ignore[operator]
    if not MIN_REYNOLDS <= re <= MAX_REYNOLDS:
        return [
            (
                "fluid.viscosity",
                f"the Reynolds number U L / ν = {re:.3g} (U = {U:.3g} m/s, L = {L:.3g} m) is "
                f"outside {MIN_REYNOLDS:g} to {MAX_REYNOLDS:g}",
            )
        ]
    return []


def load(data: dict[str, Any] | JobSpec) -> JobSpec:
    """Validate untrusted data into a :class:`JobSpec`.

    Raises
    ------
    SpecError
        With one ``(field path, message)`` per problem, e.g. ``("bodies.0.radius", ...)``.

    Examples
    --------
    >>> round(load({"bodies": [DEFAULT_POST]}).reynolds(), 1)
    19.9
    """
    try:
        spec = data if isinstance(data, JobSpec) else JobSpec.model_validate(data)
    except ValidationError as err:
        raise SpecError(problems_of(err.errors())) from None
    problems = (
        _check_geometry(spec)
        or _check_scales(spec)
        or check_heat(spec.heat, spec.bodies, spec.viscosity(), spec.fluid.density)
    )
    if problems:
        raise SpecError(problems)
    return spec


def problems_of(errors: Iterable[ErrorDetails], skip: int = 0) -> list[tuple[str, str]]:
    """``(field path, message)`` of each of pydantic's errors in a spec, as :class:`SpecError` carries them, the
    first ``skip`` parts of each location left out (the API reports a request body that fails the spec model
    with the same paths and messages; FastAPI's locations start with ``body``)."""
    return [(_path(e["loc"][skip:]), _message(e)) for e in errors]


def _path(loc: tuple[Any, ...]) -> str:
    # drop the discriminator tags pydantic inserts for tagged unions ("bodies.0.circle.radius")
    parts = [str(p) for p in loc if p not in ("circle", "rectangle", "ellipse", "naca4", "polygon", "driven", "spring")]
    return ".".join(parts) or "(spec)"


def _message(error: ErrorDetails) -> str:
    msg = str(error["msg"]).removeprefix("Value error, ")
    if "input" in error and error["type"] not in ("missing", "extra_forbidden"):
        shown = repr(error["input"])
        msg = f"{msg} (got {shown[:60]})"
    return msg
