"""Study resources: a sweep or mesh-convergence study expands (in the solver) into ordinary jobs, created and
queued exactly as single jobs are; everything else about a study is derived from those jobs."""

from __future__ import annotations

import time
from typing import Annotated, Any

from fastapi import APIRouter, Query
from fastapi.responses import JSONResponse, Response

from wakeyard import solver
from wakeyard.core.states import ACTIVE
from wakeyard.core.store import Job, Store, Study
from wakeyard.solver.caution import CAUTION
from wakeyard.solver.study import StudySpec, expand

from . import studies
from .deps import StoreDep, UserDep
from .problems import Conflict, Forbidden, NotFound, SpecProblems, TooManyJobs
from .routes_jobs import Fresh, limits
from .study_plot import plot_png
from .submission import Submission, SubmissionDep
from .text_checks import NUL_MESSAGE, nul_fields

router = APIRouter(prefix="/api/v1/studies", tags=["studies"])


def links(study_id: str) -> dict[str, str]:
    base = f"/api/v1/studies/{study_id}"
    return {"self": base, "table": f"{base}/table.csv", "plot": f"{base}/plot.png", "cancel": f"{base}/cancel"}


def _expanded(study: StudySpec, submission: Submission, owner: str) -> list[tuple[dict[str, float], dict[str, Any]]]:
    """The solver's checks of every point of the study (the request body validated the study itself), plus the
    service's size limits for each point.

    The per-user cap is checked first, on the number of points (each counts, even one that will reuse a result),
    and the checks stop at a time bound: a refused study costs little."""
    if nul := nul_fields(study.model_dump(mode="json")):
        raise SpecProblems([(field, NUL_MESSAGE) for field in nul])
    settings = submission.settings
    deadline = time.monotonic() + settings.max_validation_seconds
    try:
        points = expand(study, counted=lambda n: submission.check_room(owner, n), deadline=deadline)
    except solver.SpecError as err:
        raise SpecProblems(err.problems) from None
    problems = []
    for k, (values, spec) in enumerate(points):
        try:
            solver.check_limits(spec, limits(settings), time.monotonic() < deadline)
        except solver.SpecError as err:
            problems += [(f"points.{k}.{f}", f"{m} (at {values})") for f, m in err.problems]
    if problems:
        raise SpecProblems(problems)
    return [(v, s.model_dump(mode="json")) for v, s in points]


def _point_title(title: str, values: dict[str, float]) -> str:
    return f"{title}: " + ", ".join(f"{p} = {v:g}" for p, v in values.items())


@router.post("", status_code=202, summary="Queue a parameter study")
def create_study(submission: SubmissionDep, user: UserDep, spec: StudySpec, fresh: Fresh = False) -> JSONResponse:
    submission.check_space(user.name)
    points = _expanded(spec, submission, user.name)
    title = spec.title or str(points[0][1].get("title", "")) or spec.kind
    planned = [submission.plan(case, fresh, _point_title(title, v), values=v) for v, case in points]
    study = submission.store.create_study(user.name, spec.kind, title, spec.model_dump(mode="json"))
    jobs: list[Job] = []
    try:
        for p in planned:
            p.provenance.study_id = study.id
            jobs.append(submission.place(user.name, p, []))
    except TooManyJobs as refused:  # concurrent requests took the room the early check saw: undo, say so
        for job in jobs:
            submission.store.cancel(job.id)
        raise TooManyJobs(
            "(request)",
            f"{refused.problems[0][1]} (other requests took the room meanwhile: the {len(jobs)} points of study "
            f"{study.id} created before were cancelled)",
        ) from None
    return JSONResponse(
        {"id": study.id, "state": studies.state(jobs), "jobs": [j.id for j in jobs], "links": links(study.id)},
        status_code=202,
        headers={"Location": links(study.id)["self"]},
    )


def _brief(study: Study, jobs: list[Job]) -> dict[str, Any]:
    return {
        "id": study.id,
        "kind": study.kind,
        "title": study.title,
        "owner": study.owner,
        "created_at": study.created_at.isoformat(),
        "varied": studies.varied(study),
        "state": studies.state(jobs),
        "progress": studies.progress(jobs),
        "points_count": len(jobs),
        "links": links(study.id),
    }


@router.get("", summary="List studies, newest first")
def list_studies(store: StoreDep, _: UserDep, limit: Annotated[int, Query(ge=1, le=200)] = 50) -> dict[str, Any]:
    found = store.list_studies(limit)
    jobs: dict[str, list[Job]] = {s.id: [] for s in found}
    for job in store.study_jobs(list(jobs)):
        jobs[job.study_id].append(job)  # type: ignore[index]
    return {"studies": [_brief(s, jobs[s.id]) for s in found], "caution": CAUTION}


def _load(store: Store, study_id: str) -> tuple[Study, list[Job]]:
    study = store.get_study(study_id)
    if study is None:
        raise NotFound("study_id", f"no study {study_id}")
    return study, store.study_jobs([study_id])


@router.get("/{study_id}", summary="Read one study: its points, their results and (mesh-convergence) the GCI")
def read_study(store: StoreDep, study_id: str, _: UserDep) -> JSONResponse:
    study, jobs = _load(store, study_id)
    body = _brief(study, jobs)
    body["spec"] = study.spec
    body["points"] = [
        {
            "values": j.study_values,
            "job": j.id,
            "state": j.state,
            "reused_from": j.reused_from,
            "summary": studies.values_of(j) or None,
        }
        for j in jobs
    ]
    if study.kind == "mesh-convergence":
        body["convergence"] = studies.grid_convergence(study, jobs)
    keys = list(dict.fromkeys(k for p in body["points"] for k in p["summary"] or {}))
    body["units"] = studies.units(body["varied"], keys)
    body["caution"] = CAUTION
    return JSONResponse(body)


@router.get("/{study_id}/table.csv", summary="The points and their summary values as CSV")
def study_table(store: StoreDep, study_id: str, _: UserDep) -> Response:
    study, jobs = _load(store, study_id)
    return Response(
        studies.table_csv(study, jobs),
        media_type="text/csv",
        headers={"Content-Disposition": f'attachment; filename="study-{study_id}.csv"', "X-Caution": CAUTION},
    )


@router.get("/{study_id}/plot.png", summary="One summary value against the first varied field")
def study_plot(
    store: StoreDep,
    study_id: str,
    _: UserDep,
    y: Annotated[str, Query(description="a summary value, e.g. pipe.cd or strouhal_number")],
) -> Response:
    study, jobs = _load(store, study_id)
    paths = studies.varied(study)
    points = [(j.study_values or {}, v[y]) for j in jobs if (v := studies.values_of(j)).get(y) is not None]
    if not points:
        known = sorted({k for j in jobs for k in studies.values_of(j)})
        hint = f"choose one of {', '.join(known)}" if known else "no point has succeeded yet"
        raise SpecProblems([("y", f"{y!r} is not a summary value of this study's succeeded points: {hint}")])
    return Response(plot_png(points, paths, y, study.title), media_type="image/png")


@router.post("/{study_id}/cancel", summary="Cancel the study's queued and running jobs")
def cancel_study(store: StoreDep, study_id: str, user: UserDep) -> JSONResponse:
    study, jobs = _load(store, study_id)
    if study.owner != user.name and not user.admin:
        raise Forbidden(
            "study_id", f"study {study_id} belongs to {study.owner}; only its owner or an admin may cancel it"
        )
    active = [j.id for j in jobs if j.state in ACTIVE]
    if not active:
        raise Conflict("study_id", f"study {study_id} has no queued or running jobs (it is {studies.state(jobs)})")
    for job_id in active:
        store.cancel(job_id)
    return read_study(store, study_id, user)
