"""Parameter studies: a base case plus varied fields (sweeps) or systematically refined meshes.

A study expands into ordinary job specs; its results are the points' summaries
put side by side, and for a mesh-convergence study the grid convergence index
of every summary value (see :mod:`solver.verification`).
"""

from __future__ import annotations

import itertools
import math
import re
import time
from collections.abc import Callable
from typing import Any, Literal

import numpy as np
from pydantic import Field, ValidationError, model_validator

from . import meshing
from .errors import SpecError
from .results import Stats, SteadySummary, TransientBody, TransientSummary
from .spec import JobSpec, _message, _Model, _path, load
from .units import spec_unit
from .verification import grid_convergence


class Range(_Model):
    start: float
    stop: float
    count: int = Field(ge=2, le=100)
    spacing: Literal["linear", "geometric"] = "linear"

    @model_validator(mode="after")
    def _positive_for_geometric(self) -> Range:
        if self.spacing == "geometric" and (self.start <= 0 or self.stop <= 0):
            raise ValueError("a geometric range needs positive start and stop")
        return self

    def values(self) -> list[float]:
        space = np.geomspace if self.spacing == "geometric" else np.linspace
        return [float(v) for v in space(self.start, self.stop, self.count)]


class Vary(_Model):
    """One varied field, by its dotted path in the job spec (e.g. ``bodies.1.center.0``)."""

    path: str = Field(min_length=1, max_length=200, pattern=r"^[A-Za-z_][A-Za-z0-9_]*(\.[A-Za-z0-9_]+)*$")
    values: list[float] | None = Field(None, min_length=1, max_length=100)
    range: Range | None = None

    @model_validator(mode="after")
    def _one_of(self) -> Vary:
        if (self.values is None) == (self.range is None):
            raise ValueError("give either values or range")
        return self

    def points(self) -> list[float]:
        return self.values if self.values is not None else self.range.values()  # type: ignore[union-attr]


class StudySpec(_Model):
    """A sweep over one or two fields, or a mesh-convergence study of one case."""

    kind: Literal["sweep", "mesh-convergence"] = "sweep"
    title: str = Field("", max_length=200)
    base: dict[str, Any] = Field(default_factory=dict)
    vary: list[Vary] = Field(default_factory=list, max_length=2)
    levels: int = Field(3, ge=3, le=5, description="meshes in a convergence study, each cell split in four")

    @model_validator(mode="after")
    def _consistent(self) -> StudySpec:
        if self.kind == "sweep" and not self.vary:
            raise ValueError("a sweep needs at least one entry in vary")
        if self.kind == "mesh-convergence" and self.vary:
            raise ValueError("a mesh-convergence study varies the mesh itself; leave vary empty")
        return self


MAX_POINTS = 200


def expand(
    study: StudySpec | dict[str, Any], counted: Callable[[int], None] | None = None, deadline: float = math.inf
) -> list[tuple[dict[str, float], JobSpec]]:
    """The study's points: ``(varied values, job spec)``.

    A mesh-convergence study splits every cell of the base mesh into four,
    ``levels - 1`` times (refinement ratio 2), coarsest first. ``counted``
    gets the number of points before any point is checked (a caller's cap
    can refuse the study before that work); checking stops with an error
    once ``time.monotonic()`` passes ``deadline``.

    Raises
    ------
    SpecError
        Naming the study field, e.g. ``vary.0.path`` or ``points.3.bodies.0``.

    Examples
    --------
    >>> pts = expand({"base": {}, "vary": [{"path": "inflow.peak_velocity", "values": [0.1, 0.2]}]})
    >>> [(v, s.inflow.peak()) for v, s in pts]
    [({'inflow.peak_velocity': 0.1}, 0.1), ({'inflow.peak_velocity': 0.2}, 0.2)]
    """
    if not isinstance(study, StudySpec):
        try:
            study = StudySpec.model_validate(study)
        except ValidationError as err:
            raise SpecError([(_path(e["loc"]), _message(e)) for e in err.errors()]) from None
    try:
        base = load(study.base)
    except SpecError as err:
        raise SpecError([(f"base.{f}", m) for f, m in err.problems]) from None
    data = base.model_dump(mode="json")
    axes: list[tuple[str, list[float]]]
    if study.kind == "mesh-convergence":
        axes = [("mesh.refinements", [base.mesh.refinements + k for k in range(study.levels)])]
    else:
        axes = [(v.path, v.points()) for v in study.vary]
        for i, (path, _) in enumerate(axes):
            _check_path(data, path, f"vary.{i}.path")
            if i and path == axes[0][0]:
                raise SpecError([(f"vary.{i}.path", f"{path!r} is already varied by vary.0: vary another field")])
    combos = list(itertools.product(*[vals for _, vals in axes]))
    if len(combos) > MAX_POINTS:
        raise SpecError([("vary", f"{len(combos)} points exceed the limit of {MAX_POINTS} per study")])
    if counted is not None:
        counted(len(combos))
    points, problems = [], []
    for k, combo in enumerate(combos):
        if time.monotonic() > deadline:
            raise SpecError(
                [
                    (
                        "(body)",
                        f"checking the study's points took too long (stopped at point {k} of "
                        f"{len(combos)}): use fewer points or simpler bodies",
                    )
                ]
            )
        case, values = data, {}
        for (path, _), value in zip(axes, combo):
            case = _with(case, path, value)
            values[path] = value
        try:
            points.append((values, load(case)))
        except SpecError as err:
            problems += [(f"points.{k}.{f}", f"{m} (at {values})") for f, m in err.problems]
    if problems:
        raise SpecError(problems)
    return points


# Numbers of a case a sweep offers to vary: polygon vertices, time-law points and probe positions are lists a user
# edits as a whole, not single knobs (a sweep may still name any numeric field by its path).
_NOT_OFFERED = ("bodies.*.points.", "inflow.time_law.points.", "probes.")

# Fields given as one of a pair: setting one in a sweep clears the other (a spec may not hold both).
_EITHER = {
    "fluid.reynolds": "fluid.viscosity",
    "fluid.viscosity": "fluid.reynolds",
    "inflow.mean_velocity": "inflow.peak_velocity",
    "inflow.peak_velocity": "inflow.mean_velocity",
}


def sweepable(spec: JobSpec) -> list[dict[str, Any]]:
    """The numeric fields of ``spec`` a sweep can vary: ``{path, value, unit}`` for every number of the normalised
    spec that has a unit, in the spec's own order (the page offers these; it keeps no list of its own).

    Fields left empty (null) that a sweep can still set are offered too, marked ``derived`` with the value the run
    uses now: the other half of a pair (the Reynolds number beside a viscosity, the mean velocity beside a peak)
    and the mesh's cell sizes and wake length. Other empty fields are not offered: under bdf2-adaptive
    ``analysis.time_step`` is only the first step, the reference scales only rescale the coefficients, a time law's
    period means nothing for a constant law and the picture interval changes no result."""
    data = spec.model_dump(mode="json")
    derived = _derived(spec)
    out = []
    for path in _leaf_paths(data):
        generic = re.sub(r"\.\d+(?=\.|$)", ".*", path)
        if any(generic.startswith(p) for p in _NOT_OFFERED) or (unit := spec_unit(path)) is None:
            continue
        node: Any = data
        for part in path.split("."):
            node = node[int(part)] if isinstance(node, list) else node[part]
        if isinstance(node, int | float) and not isinstance(node, bool):
            out.append({"path": path, "value": node, "unit": unit})
        elif node is None and path in derived:
            out.append({"path": path, "value": derived[path], "unit": unit, "derived": True})
    return out


def _leaf_paths(value: Any, path: str = "") -> list[str]:
    """Dotted paths of every number and every null in a JSON-like value, in order."""
    if isinstance(value, dict):
        return [p for k, v in value.items() for p in _leaf_paths(v, f"{path}.{k}" if path else str(k))]
    if isinstance(value, list):
        return [p for i, v in enumerate(value) for p in _leaf_paths(v, f"{path}.{i}" if path else str(i))]
    return [path] if value is None or (isinstance(value, int | float) and not isinstance(value, bool)) else []


def _derived(spec: JobSpec) -> dict[str, float]:
    """The values a run uses for the empty fields a sweep may set (:func:`sweepable`)."""
    out = {
        "fluid.reynolds": spec.reynolds(),
        "fluid.viscosity": spec.viscosity(),
        "inflow.mean_velocity": spec.inflow.mean(),
        "inflow.peak_velocity": spec.inflow.peak(),
    }
    if spec.bodies:
        s, scale = meshing.sizes(spec), spec.mesh.scale  # sizes() applies the scale to explicit sizes too
        out |= {"mesh.body_size": s.body / scale, "mesh.wake_size": s.wake / scale, "mesh.far_size": s.far / scale}
        out["mesh.wake_length"] = s.wake_length
    return out


def _check_path(data: dict[str, Any], path: str, where: str) -> None:
    node: Any = data
    for part in path.split("."):
        if isinstance(node, list) and part.isdigit() and int(part) < len(node):
            node = node[int(part)]
        elif isinstance(node, dict) and part in node:
            node = node[part]
        else:
            raise SpecError([(where, f"{path!r} is not a field of the base case")])
    if node is not None and (isinstance(node, bool) or not isinstance(node, int | float)):
        raise SpecError([(where, f"{path!r} is not a numeric field (it holds {node!r})")])


def _with(data: Any, path: str, value: float) -> Any:
    """A copy of ``data`` with ``path`` set to ``value`` (and the other half of a pair, :data:`_EITHER`, cleared):
    only the containers on the path are copied (a deep copy of a base with many polygon points per study point
    cost more than checking the point)."""
    if (other := _EITHER.get(path)) is not None:
        data = _with_leaf(data, other, None)
    return _with_leaf(data, path, value)


def _with_leaf(data: Any, path: str, value: float | None) -> Any:
    head, _, rest = path.partition(".")
    out = list(data) if isinstance(data, list) else dict(data)
    key = int(head) if isinstance(data, list) else head
    out[key] = _with_leaf(data[key], rest, value) if rest else value  # type: ignore[index]
    return out


def summary_values(summary: SteadySummary | TransientSummary) -> dict[str, float]:
    """Flat numeric values of a job summary for tables and plots (transient: means and amplitudes).

    A moving body's response leads its values (the page plots the first by default): the amplitude ratio along each
    axis it moves on (a held axis, exactly still, is left out) and the frequency ratio, the amplitude response
    of a sweep over a spring's reduced velocity."""
    out: dict[str, float] = {}
    for body in summary.bodies:
        motion = body.motion if isinstance(body, TransientBody) else None
        if motion is not None:
            for axis, response in (("y", motion.y), ("x", motion.x)):
                if response.amplitude != 0:
                    out[f"{body.name}.{axis}_amplitude_ratio"] = response.amplitude_ratio
            if motion.frequency_ratio is not None:
                out[f"{body.name}.frequency_ratio"] = motion.frequency_ratio
        for short, v in (("cd", body.drag_coefficient), ("cl", body.lift_coefficient), ("nu", body.nusselt_number)):
            if isinstance(v, Stats):
                out[f"{body.name}.{short}_mean"] = v.mean
                out[f"{body.name}.{short}_amplitude"] = v.amplitude
            elif v is not None:
                out[f"{body.name}.{short}"] = v
    dp = summary.pressure_drop
    if isinstance(dp, Stats):
        out["pressure_drop_mean"] = dp.mean
    elif dp is not None:
        out["pressure_drop"] = dp
    if isinstance(summary, TransientSummary) and summary.strouhal_number is not None:
        out["strouhal_number"] = summary.strouhal_number
    return out


def convergence(
    summaries: list[SteadySummary | TransientSummary], area: float
) -> dict[str, dict[str, float | bool | str | None]]:
    """Grid convergence of every summary value from the three finest of ``summaries`` (any order).

    The representative cell size is ``sqrt(area / cells)`` (Celik et al. 2008).
    """
    ranked = sorted(summaries, key=lambda s: -s.mesh.cells)[:3]
    if len(ranked) < 3:
        return {}
    h = tuple(math.sqrt(area / s.mesh.cells) for s in ranked)
    values = [summary_values(s) for s in ranked]
    out = {}
    for key in values[0]:
        if all(key in v for v in values):
            g = grid_convergence(h, tuple(v[key] for v in values))  # type: ignore[arg-type]
            out[key] = {
                "observed_order": g.observed_order,
                "extrapolated": g.extrapolated,
                "gci_fine": g.gci_fine,
                "monotone": g.monotone,
                "reason": g.reason,
            }
    return out
