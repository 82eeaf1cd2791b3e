"""What a study would queue, before it is queued: its points (the study's own expansion, so the page never copies
the rules of ranges or levels) and each point's size estimate (the single-job preview's), with the totals.

>>> vary = [{"path": "fluid.viscosity", "values": [1e-6, 2e-6]}]
>>> p = preview_study({"base": {"mesh": {"preset": "coarse"}}, "vary": vary})
>>> p["count"], [pt["values"] for pt in p["points"]], p["total"]["cells"] == 2 * p["points"][0]["estimate"]["cells"]
(2, [{'fluid.viscosity': 1e-06}, {'fluid.viscosity': 2e-06}], True)
"""

from __future__ import annotations

import math
import time
from collections.abc import Callable
from typing import Any

from .errors import SpecError
from .limits import Limits, check_limits
from .preview import estimate
from .study import StudySpec, expand


def preview_study(
    study: StudySpec | dict[str, Any],
    limits: Limits | None = None,
    deadline: float = math.inf,
    counted: Callable[[int], None] | None = None,
) -> dict[str, Any]:
    """``count``, ``points`` (``{values, reynolds, estimate}`` each) and ``total`` ``{cells, dofs, steps, seconds}``.

    ``steps`` totals only when every point has a count (transient points: counted for fixed steps, estimated for
    bdf2-adaptive), and ``seconds`` sums the points' rough estimates. Checking stops with an error once
    ``time.monotonic()`` passes ``deadline``; points estimated after it get the size rule's figures instead of a
    dry run of the mesher (``estimate.method`` says which), and so does the unknowns limit. ``counted`` gets the
    number of points first, as in :func:`~solver.study.expand` (a caller's cap can refuse the study).

    Raises
    ------
    SpecError
        Naming the study field (``vary.0.range.count``, ``points.1.fluid.viscosity``), as queueing would.
    """
    points = expand(study, counted=counted, deadline=deadline)
    problems = []
    for k, (values, spec) in enumerate(points):
        try:
            check_limits(spec, limits or Limits(), time.monotonic() < deadline)
        except SpecError as err:
            problems += [(f"points.{k}.{f}", f"{m} (at {values})") for f, m in err.problems]
    if problems:
        raise SpecError(problems)
    estimates = [estimate(spec, time.monotonic() < deadline) for _, spec in points]
    steps = [e["steps"] for e in estimates]
    total = {
        "cells": sum(e["cells"] for e in estimates),
        "dofs": sum(e["dofs"] for e in estimates),
        "steps": sum(steps) if all(s is not None for s in steps) else None,
        "seconds": sum(e["seconds"] for e in estimates),
    }
    out = [
        {"values": values, "reynolds": spec.reynolds(), "estimate": e} for (values, spec), e in zip(points, estimates)
    ]
    return {"count": len(out), "points": out, "total": total}
