"""What a spec would become before it is queued: every problem at once, its scales, outlines and a size estimate.

Cells and unknowns come from a dry run of the mesher (:func:`solver.meshing.counts`): the coarse base mesh is
generated and the uniform splits are counted, so the figures are the ones the run will have. A mesh too big to
generate quickly is estimated by the size rule instead (``estimate.method`` says which). Dry runs are cached by
the part of the spec that shapes the mesh.

>>> p = preview({"bodies": [{"shape": "circle", "center": [0.1, 0.05], "radius": 0.01}], "mesh": {"preset": "coarse"}})
>>> p["problems"], round(p["reynolds"], 1), p["estimate"]["method"], p["estimate"]["steps"]
([], 19.9, 'mesher', None)
"""

from __future__ import annotations

import json
import math
from functools import lru_cache
from typing import Any

from pydantic import ValidationError

from . import meshing, picture_choice
from .errors import SpecError
from .limits import Limits, check_limits
from .spec import ADAPTIVE, JobSpec, _check_geometry, _check_scales, _message, _path
from .spring_room import room_warnings
from .study import sweepable
from .thermal import check as check_heat

# Largest base mesh (cells before the uniform splits) a preview generates; gmsh makes about 1e5 cells a second
# here, so a dry run stays well under a second. Bigger meshes get the size rule's figure.
MAX_DRY_CELLS = 60_000
STEPS_UNKNOWN = "bdf2-adaptive chooses its steps while it runs, for the accuracy asked: the count is not known before"

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
    return answer(spec if not problems else None, problems)


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
    a study of it can vary (:func:`solver.study.sweepable`); ``warnings`` what the spec allows but may still stop
    the run (a spring-mounted body with little room to swing, :mod:`solver.spring_room`), each ``{field, message}``."""
    out: dict[str, Any] = {
        "problems": [{"field": f, "message": m} for f, m in problems],
        "warnings": [],
        "spec": None,
        "reynolds": None,
        "blockage": None,
        "outlines": [],
        "estimate": None,
        "sweepable": [],
    }
    if spec is None:
        return out
    out.update(
        spec=spec.model_dump(mode="json"),
        warnings=[{"field": f, "message": m} for f, m in room_warnings(spec)],
        reynolds=spec.reynolds(),
        blockage=blockage(spec),
        outlines=[{"name": b.name, "points": b.outline(96).round(9).tolist()} for b in spec.bodies],
        estimate=estimate(spec),
        sweepable=sweepable(spec),
    )
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
    """``cells``, ``dofs`` (unknowns), ``steps`` and ``seconds`` of a run, with how they were found (``dry_run``
    False: the size rule alone, for a caller out of time)."""
    a = spec.analysis
    steps: int | None = None
    note = None
    if a.mode == "steady":
        note = "a steady run solves once (Newton iterations), without time steps"
    elif a.scheme == ADAPTIVE:
        note = STEPS_UNKNOWN
    elif a.time_step is not None:
        steps = math.ceil(a.end_time / a.time_step - 1e-9)
    size = meshing.sizes(spec)
    base_cells = meshing.estimate_cells(spec) / 4 ** (size.preset_splits + size.extra_splits)
    cells, dofs, method = meshing.estimate_cells(spec), meshing.estimate_dofs(spec), "rule"
    if dry_run and base_cells <= MAX_DRY_CELLS:
        try:
            vertices, edges, cells = _counts(_mesh_key(spec))
        except Exception as err:  # gmsh raises plain Exceptions; the run would meet the same failure
            note = f"the mesher failed on this case ({err}); the figures are the size rule's"
        else:
            dofs = 3 * vertices + 2 * edges if spec.elements == "P2P1" else 3 * vertices + 5 * edges + 2 * cells
            method = "mesher"
    return {
        "cells": cells,
        "dofs": dofs,
        "steps": steps,
        "seconds": None,
        "method": method,
        "body_cell_size": size.body / 2**size.extra_splits if spec.bodies else None,
        "pictures": picture_choice.plan(spec),
        "note": note,
    }


def _mesh_key(spec: JobSpec) -> str:
    """The part of the spec that shapes the mesh (no names, temperatures, spins or mounts), as canonical JSON."""
    bodies = [b.model_dump(mode="json", exclude={"name", "thermal", "spin", "mount"}) for b in spec.bodies]
    channel = {"length": spec.channel.length, "height": spec.channel.height}
    mesh = spec.mesh.model_dump(mode="json")
    return json.dumps([channel, bodies, mesh], sort_keys=True)


@lru_cache(maxsize=256)
def _counts(key: str) -> tuple[int, int, int]:
    channel, bodies, mesh = json.loads(key)
    spec = JobSpec.model_validate({"channel": channel, "bodies": bodies, "mesh": mesh})
    return meshing.counts(spec)
