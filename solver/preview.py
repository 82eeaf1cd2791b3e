"""What a spec would become before it is queued: every problem at once, its scales, outlines and a size estimate.

Cells and unknowns come from a dry run of the mesher (:mod:`solver.sizing`, the same figures the service's
unknowns limit judges), so they are the ones the run will have; a mesh too big to generate quickly is estimated by
the size rule instead (``estimate.method`` says which). Steps, seconds and the CFL number of a fixed step are
estimates by documented rules (:mod:`solver.run_cost`); ``warnings`` says what would not stop the run but
deserves a look (a fixed step past the CFL limit of explicit convection, bodies that block most of the channel).
The body ``outlines`` (the solver's shapes, for a drawing) are given even when there are problems, for every body
valid on its own.

>>> p = preview({"bodies": [{"shape": "circle", "center": [0.1, 0.05], "radius": 0.01}], "mesh": {"preset": "coarse"}})
>>> p["problems"], round(p["reynolds"], 1), p["estimate"]["method"], p["estimate"]["steps"], p["warnings"]
([], 19.9, 'mesher', None, [])
"""

from __future__ import annotations

import json
import math
from typing import Any

from pydantic import TypeAdapter, ValidationError

from . import picture_choice, run_cost
from .errors import SpecError
from .limits import Limits, check_limits
from .shapes import Body
from .sizing import mesh_size
from .spec import ADAPTIVE, MAX_BODIES, JobSpec, _check_geometry, _check_scales, _message, _path
from .spring_room import room_warnings
from .study import sweepable
from .thermal import check as check_heat

_BODY: TypeAdapter[Any] = TypeAdapter(Body)

STEPS_ESTIMATED = (
    "bdf2-adaptive chooses its steps while it runs, for the accuracy asked: the count is an estimate (within a "
    "factor of 2 on the calibration runs)"
)

Problems = list[tuple[str, str]]


def preview(data: Any, limits: Limits | None = None) -> dict[str, Any]:
    """The preview of untrusted ``data``: ``problems`` lists field and geometry problems together; the rest is
    filled only when there are none (a spec with problems has no trustworthy scales or mesh)."""
    if not isinstance(data, dict):
        return answer(None, [("(body)", f"must be a JSON object (the job spec), got {type(data).__name__}")])
    spec, problems = _checked(data)
    if spec is not None and not problems:
        try:
            check_limits(spec, limits or Limits())
        except SpecError as err:
            problems = err.problems
    out = answer(spec if not problems else None, problems)
    if problems:
        out["outlines"] = _outlines(data.get("bodies"))
    return out


def _outlines(bodies: Any) -> list[dict[str, Any] | None]:
    """The outline of every body that is valid on its own, in the user's numbering (``None`` for the others), so a
    drawing can show the bodies a geometry problem names (an overlap, a wall) while the spec is refused."""
    if not isinstance(bodies, list) or len(bodies) > MAX_BODIES:
        return []
    out: list[dict[str, Any] | None] = []
    for i, data in enumerate(bodies):
        try:
            body = _BODY.validate_python(data)
        except ValidationError:
            out.append(None)
            continue
        out.append({"name": body.name or f"body{i + 1}", "points": body.outline(96).round(9).tolist()})
    return out


def _checked(data: dict[str, Any]) -> tuple[JobSpec | None, Problems]:
    """The spec and all its problems. When some fields are invalid, the cross-field checks still run on the rest:
    invalid bodies are left out of them, other invalid fields fall back to their defaults, and checks that would
    then judge a default instead of the user's value (the channel's for geometry, the flow's for the scales) are
    skipped."""
    try:
        spec = JobSpec.model_validate(data)
        return spec, _cross_checks(spec, set())
    except ValidationError as err:
        fields = [(_path(e["loc"]), _message(e)) for e in err.errors()]
    repaired, dropped = _without(data, [f for f, _ in fields])
    try:
        spec = JobSpec.model_validate(repaired)
    except ValidationError:
        return None, fields
    bad = {f.split(".")[0] for f, _ in fields}
    cross = [(_renumber(f, dropped), m) for f, m in _cross_checks(spec, bad)]
    return None, fields + [p for p in cross if p not in fields]


def _cross_checks(spec: JobSpec, bad: set[str]) -> Problems:
    problems: Problems = []
    if not bad & {"channel", "probes"}:
        problems += _check_geometry(spec)
    if not bad & {"fluid", "inflow", "bodies", "channel"}:
        problems += _check_scales(spec)
        if not problems and "heat" not in bad:
            problems += check_heat(spec.heat, spec.bodies, spec.viscosity(), spec.fluid.density)
    return problems


def _without(data: dict[str, Any], fields: list[str]) -> tuple[dict[str, Any], list[int]]:
    """A copy of ``data`` without the invalid leaves and without any body that had a problem (returns the indices
    of the bodies dropped)."""
    out = json.loads(json.dumps(data))
    bodies = out.get("bodies")
    dropped = sorted(
        {int(f.split(".")[1]) for f in fields if f.startswith("bodies.") and f.split(".")[1].isdigit()}, reverse=True
    )
    for field in fields:
        parts = field.split(".")
        if parts[0] == "bodies" and len(parts) > 1:
            continue
        node = out
        for part in parts[:-1]:
            node = node.get(part) if isinstance(node, dict) else None
        if isinstance(node, dict):
            node.pop(parts[-1], None)
        elif len(parts) == 1:
            out.pop(parts[0], None)
    if isinstance(bodies, list):
        for i, body in enumerate(bodies):  # keep the default names the user's numbering gives
            if isinstance(body, dict) and not body.get("name"):
                body["name"] = f"body{i + 1}"
        for i in dropped:
            if i < len(bodies):
                bodies.pop(i)
    return out, sorted(dropped)


def _renumber(field: str, dropped: list[int]) -> str:
    """Map ``bodies.k`` of the repaired spec back to the index the user gave."""
    parts = field.split(".")
    if len(parts) > 1 and parts[0] == "bodies" and parts[1].isdigit():
        k = int(parts[1])
        for i in dropped:
            if i <= k:
                k += 1
        parts[1] = str(k)
    return ".".join(parts)


def answer(spec: JobSpec | None, problems: Problems) -> dict[str, Any]:
    """The preview of a checked ``spec`` (``None`` when it has ``problems``); ``sweepable`` lists the numeric fields
    a study of it can vary (:func:`solver.study.sweepable`); ``warnings`` what the spec allows but deserves a look
    (:func:`warnings`), each ``{field, message}``."""
    out: dict[str, Any] = {
        "problems": [{"field": f, "message": m} for f, m in problems],
        "spec": None,
        "reynolds": None,
        "blockage": None,
        "outlines": [],
        "estimate": None,
        "warnings": [],
        "sweepable": [],
    }
    if spec is None:
        return out
    out.update(
        spec=spec.model_dump(mode="json"),
        reynolds=spec.reynolds(),
        blockage=blockage(spec),
        outlines=[{"name": b.name, "points": b.outline(96).round(9).tolist()} for b in spec.bodies],
        estimate=(figures := estimate(spec)),
        warnings=[{"field": f, "message": m} for f, m in warnings(spec, figures["shortest_edge"])],
        sweepable=sweepable(spec),
    )
    return out


# Share of the channel height past which the walls, not the bodies, set the forces (common practice: blockage
# corrections are usual past a few percent and the flow is a different one past half).
HIGH_BLOCKAGE = 0.5


def warnings(spec: JobSpec, shortest_edge: float) -> Problems:
    """What would not stop the run but deserves a look: a fixed step past the CFL limit of explicit convection
    (:func:`solver.run_cost.step_warnings`), bodies that block most of the channel, a spring-mounted body with
    little room to swing (:mod:`solver.spring_room`)."""
    out = run_cost.step_warnings(spec, shortest_edge) + room_warnings(spec)
    if (share := blockage(spec)) > HIGH_BLOCKAGE:
        message = f"the bodies block {100 * share:.3g} % of the channel: the walls will dominate the forces"
        out.append(("bodies", message))
    return out


def blockage(spec: JobSpec) -> float:
    """Share of the channel height the bodies cover (the union of their vertical extents)."""
    spans = sorted((float(b.outline()[:, 1].min()), float(b.outline()[:, 1].max())) for b in spec.bodies)
    covered, top = 0.0, -math.inf
    for lo, hi in spans:
        covered += max(0.0, hi - max(lo, top))
        top = max(top, hi)
    return covered / spec.channel.height


def estimate(spec: JobSpec, dry_run: bool = True) -> dict[str, Any]:
    """``cells``, ``dofs`` (unknowns), ``steps``, ``seconds`` and ``cfl`` of a run, with how they were found
    (``dry_run`` False: the size rule alone, for a caller out of time). Cells and unknowns are the mesher's
    (:mod:`solver.sizing`); steps, seconds and the CFL number are estimates (:mod:`solver.run_cost`)."""
    size = mesh_size(spec, dry_run)
    a = spec.analysis
    note = size.note and f"{size.note}; the figures are the size rule's"
    if a.mode == "steady":
        note = note or "a steady run solves once (Newton iterations), without time steps"
    elif a.scheme == ADAPTIVE:
        note = note or STEPS_ESTIMATED
    return {
        "cells": size.cells,
        "dofs": size.dofs,
        **run_cost.summary(spec, size.dofs, size.shortest_edge),
        "method": size.method,
        "shortest_edge": size.shortest_edge,
        "pictures": picture_choice.plan(spec),
        "note": note,
    }
