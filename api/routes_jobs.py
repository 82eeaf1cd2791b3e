"""Job resources: create, list, read, cancel, delete, clone. Validation is the solver's own (``solver.load``)."""

from __future__ import annotations

import logging
import shutil
from datetime import datetime
from typing import Annotated, Any

from fastapi import APIRouter, Body, Query, Request
from sqlalchemy.engine import Row

from wakeyard import solver
from wakeyard.core.settings import Settings
from wakeyard.core.states import ACTIVE, JobState
from wakeyard.core.store import Job, Store
from wakeyard.solver.caution import CAUTION

from .deps import ReserveDep, SettingsDep, StoreDep, User, UserDep
from .fast_json import FastJSON
from .problems import Conflict, Forbidden, NotFound, SpecProblems
from .schemas import Job as JobView
from .schemas import JobPage
from .spec_checks import checked, validated
from .submission import Submission, SubmissionDep

log = logging.getLogger(__name__)
router = APIRouter(prefix="/api/v1/jobs", tags=["jobs"])
SPEC_BODY = {
    "requestBody": {
        "required": True,
        "content": {"application/json": {"schema": {"$ref": "#/components/schemas/JobSpec"}}},
    }
}
PARTIAL_BODY = {
    "requestBody": {
        "required": False,
        "content": {
            "application/json": {
                "schema": {
                    "type": "object",
                    "description": "any part of a job spec; merged over the original job's spec",
                }
            }
        },
    }
}
MAX_TAGS, MAX_TAG_LENGTH = 20, 64
MAX_CURSOR = 2**31  # job sequence numbers are 32-bit integers in the store
Tags = Annotated[list[str] | None, Query(description=f"up to {MAX_TAGS} labels for filtering")]
Fresh = Annotated[bool, Query(description="run even if a succeeded job with the identical spec could be reused")]


def links(job_id: str) -> dict[str, str]:
    base = f"/api/v1/jobs/{job_id}"
    return {"self": base, "files": f"{base}/files", "cancel": f"{base}/cancel", "clone": f"{base}/clone"}


def _stamp(moment: datetime | None) -> str | None:
    return moment.isoformat() if moment else None


def view(job: Job | Row[Any]) -> dict[str, Any]:
    """The job as the contract shows it (from an ORM object or a Core row of the jobs table)."""
    return {
        "id": job.id,
        "state": job.state,
        "owner": job.owner,
        "title": job.title,
        "tags": job.tags,
        "spec": job.spec,
        "progress": {
            "fraction": job.progress_fraction,
            "step": job.progress_step,
            "time": job.progress_time,
            "eta_seconds": job.eta_seconds,
        },
        "created_at": _stamp(job.created_at),
        "started_at": _stamp(job.started_at),
        "finished_at": _stamp(job.finished_at),
        "heartbeat_at": _stamp(job.heartbeat_at),
        "attempts": job.attempts,
        "worker_host": job.worker_host,
        "cancel_requested": job.cancel_requested,
        "summary": job.summary,
        "error": job.error,
        "reused_from": job.reused_from,
        "fields_removed_at": _stamp(job.trimmed_at),  # the retention rule removed fields, pictures, checkpoint
        "study": job.study_id,
        "links": links(job.id),
        "caution": CAUTION,
    }


def limits(settings: Settings) -> solver.Limits:
    return solver.Limits(max_dofs=settings.max_dofs, max_steps=settings.max_steps)


def _check_tags(tags: list[str]) -> list[str]:
    if len(tags) > MAX_TAGS:
        raise SpecProblems([("tags", f"{len(tags)} tags, over the limit of {MAX_TAGS}")])
    for i, tag in enumerate(tags):
        if not 0 < len(tag) <= MAX_TAG_LENGTH:
            raise SpecProblems([(f"tags.{i}", f"a tag has 1 to {MAX_TAG_LENGTH} characters (got {len(tag)})")])
    return tags


def _submit(
    submission: Submission, user: User, spec: dict[str, Any], tags: list[str], fresh: bool, digest: str | None = None
) -> FastJSON:
    submission.check_space(user.name)
    planned = submission.plan(spec, fresh, digest=digest)
    job = submission.place(user.name, planned, tags)
    return FastJSON(
        {"id": job.id, "state": job.state, "reused_from": job.reused_from, "links": links(job.id)},
        status_code=202,
        headers={"Location": links(job.id)["self"]},
    )


def found(store: Store, job_id: str) -> Job:
    job = store.get(job_id)
    if job is None:
        raise NotFound("job_id", f"no job {job_id}")
    return job


def owned(store: Store, job_id: str, user: User) -> Job:
    """The job, if ``user`` may change it: its owner or an admin."""
    job = found(store, job_id)
    if job.owner != user.name and not user.admin:
        raise Forbidden("job_id", f"job {job_id} belongs to {job.owner}; only its owner or an admin may change it")
    return job


def merge(base: dict[str, Any], edits: dict[str, Any]) -> dict[str, Any]:
    """Deep-merge ``edits`` over ``base``: objects merge key by key, anything else (lists too) replaces."""
    out = dict(base)
    for key, value in edits.items():
        out[key] = merge(out[key], value) if isinstance(value, dict) and isinstance(out.get(key), dict) else value
    return out


@router.post("", status_code=202, summary="Queue a job")
def create_job(
    submission: SubmissionDep,
    user: UserDep,
    spec: solver.JobSpec,
    tags: Tags = None,
    fresh: Fresh = False,
) -> FastJSON:
    known = checked(spec, limits(submission.settings))
    return _submit(submission, user, known.spec, _check_tags(tags or []), fresh, known.digest)


@router.get("", summary="List jobs, newest first", response_model=JobPage, response_model_exclude_unset=True)
def list_jobs(
    store: StoreDep,
    _: UserDep,
    state: JobState | None = None,
    owner: str | None = None,
    tag: str | None = None,
    limit: Annotated[int, Query(ge=1, le=500)] = 50,
    cursor: Annotated[str | None, Query(description="next_cursor of the previous page")] = None,
) -> FastJSON:
    before = None
    if cursor is not None:  # ASCII digits only (int() takes other scripts' digits), within the column's range
        if not (cursor.isascii() and cursor.isdigit() and int(cursor) < MAX_CURSOR):
            raise SpecProblems([("cursor", "use the next_cursor value of the previous page")])
        before = int(cursor)
    jobs = store.list_jobs(state, owner, tag, limit, before)
    nxt = str(jobs[-1].seq) if len(jobs) == limit else None
    # stored as written (no re-validation): a summary an older release wrote still lists, as reading one job does
    return FastJSON({"jobs": [view(j) for j in jobs], "next_cursor": nxt})


@router.get("/{job_id}", summary="Read one job", response_model=JobView)
async def read_job(request: Request, job_id: str, _: UserDep) -> FastJSON:
    """On the event loop, awaiting the store (status reads are the hottest path: no thread hand-off, and the store
    from the app rather than one more dependency to solve); a read that waits on a lock (a PostgreSQL table lock,
    a busy SQLite file) stalls no other request."""
    job = await request.app.state.store.read_on_loop(job_id)
    if job is None:
        raise NotFound("job_id", f"no job {job_id}")
    return FastJSON(view(job))  # already JSON types: skip FastAPI's re-validation (status reads are hot)


@router.post(
    "/{job_id}/cancel",
    summary="Cancel a queued or running job",
    response_model=JobView,
    response_model_exclude_unset=True,
)
def cancel_job(store: StoreDep, reserve: ReserveDep, job_id: str, user: UserDep) -> dict[str, Any]:
    job = owned(store, job_id, user)
    if job.state not in ACTIVE:
        raise Conflict("job_id", f"job {job_id} is already {job.state}")
    reserve.retry(lambda: store.cancel(job_id))  # works on a full disk too
    return view(store.get(job_id) or job)


@router.delete("/{job_id}", status_code=204, summary="Delete a job and its files")
def delete_job(store: StoreDep, reserve: ReserveDep, settings: SettingsDep, job_id: str, user: UserDep) -> None:
    owned(store, job_id, user)
    # a queued job must not start while we delete it; every write can use the reserve (deleting frees space)
    if reserve.retry(lambda: store.cancel(job_id)) == JobState.RUNNING:
        raise Conflict(
            "job_id", f"job {job_id} is running; it has been asked to stop: delete it again once its state is cancelled"
        )
    shutil.rmtree(settings.jobs_dir / job_id, ignore_errors=True)  # files first: that frees the space
    reserve.retry(lambda: store.delete(job_id))


@router.post("/{job_id}/clone", status_code=202, openapi_extra=PARTIAL_BODY, summary="Queue a copy with edits")
def clone_job(
    submission: SubmissionDep,
    job_id: str,
    user: UserDep,
    edits: Annotated[Any, Body()] = None,
    tags: Tags = None,
    fresh: Fresh = False,
) -> FastJSON:
    job = found(submission.store, job_id)
    if edits is not None and not isinstance(edits, dict):
        raise SpecProblems([("(body)", "must be a JSON object with the parts of the spec to change")])
    spec = validated(merge(job.spec, edits or {}), limits(submission.settings))
    return _submit(submission, user, spec, _check_tags(tags or job.tags), fresh)
