"""A study's results, derived from its jobs: state, progress, the points table and the grid convergence."""

from __future__ import annotations

import csv
import io
from typing import Any

import numpy as np

from wakeyard import solver
from wakeyard.core.states import ACTIVE, JobState
from wakeyard.core.store import Job, Study, finite
from wakeyard.solver.caution import CAUTION
from wakeyard.solver.results import parse
from wakeyard.solver.study import convergence, summary_values
from wakeyard.solver.units import labelled, spec_unit, value_unit


def varied(study: Study) -> list[str]:
    """The paths a study varies (a mesh-convergence study varies the refinements)."""
    return [v["path"] for v in study.spec.get("vary", [])] or ["mesh.refinements"]


def state(jobs: list[Job]) -> str:
    """Queued until a point starts, running while any is active, then succeeded / failed / cancelled."""
    states = [j.state for j in jobs]
    if any(s in ACTIVE for s in states):
        return JobState.QUEUED if all(s == JobState.QUEUED for s in states) else JobState.RUNNING
    if states and all(s == JobState.SUCCEEDED for s in states):
        return JobState.SUCCEEDED
    return JobState.FAILED if JobState.FAILED in states else JobState.CANCELLED


def progress(jobs: list[Job]) -> float:
    return sum(j.progress_fraction for j in jobs) / len(jobs) if jobs else 0.0


def values_of(job: Job) -> dict[str, float]:
    """The point's flat summary values (drag and lift coefficients, Strouhal number...); empty until it succeeds."""
    return summary_values(parse(job.summary)) if job.state == JobState.SUCCEEDED and job.summary else {}


def fluid_area(base: dict[str, Any]) -> float:
    """Channel area minus the bodies' areas (shoelace formula on their outlines): the area the cells fill,
    which sets the representative cell size h = sqrt(area / cells) of the convergence analysis."""
    spec = solver.load(base)
    area = spec.channel.length * spec.channel.height
    for body in spec.bodies:
        x, y = body.outline().T
        area -= 0.5 * abs(float(np.dot(x, np.roll(y, -1)) - np.dot(y, np.roll(x, -1))))
    return area


def grid_convergence(study: Study, jobs: list[Job]) -> dict[str, Any]:
    """Observed order, extrapolated value and GCI of every summary value, from the three finest succeeded meshes."""
    done = [parse(j.summary) for j in jobs if j.state == JobState.SUCCEEDED and j.summary]
    return finite(convergence(done, fluid_area(study.spec["base"]))) if len(done) >= 3 else {}


def units(paths: list[str], keys: list[str]) -> dict[str, str]:
    """Units of the varied fields and of the summary values ("1": dimension one)."""
    return {**{p: u for p in paths if (u := spec_unit(p)) is not None}, **{k: value_unit(k) for k in keys}}


def table_csv(study: Study, jobs: list[Job]) -> str:
    """A ``#`` caution line, then one row per point: the varied values, job id, state, every summary value;
    headers carry their units (``inflow.mean_velocity [m/s]``, ``pier.cd [-]``)."""
    paths, rows = varied(study), [values_of(j) for j in jobs]
    keys = list(dict.fromkeys(k for row in rows for k in row))
    unit = units(paths, keys)
    out = io.StringIO()
    out.write(f"# Caution: {CAUTION}\n")
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow([*(labelled(p, unit.get(p)) for p in paths), "job", "state", *(labelled(k, unit[k]) for k in keys)])
    for job, row in zip(jobs, rows):
        point = job.study_values or {}
        writer.writerow(
            [
                *(point.get(p, "") for p in paths),
                job.id,
                job.state,
                *("" if row.get(k) is None else row[k] for k in keys),
            ]
        )
    return out.getvalue()
