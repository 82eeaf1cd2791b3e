"""The worker endpoints: a compute box with a worker token claims jobs, heartbeats, uploads their files and reports
how they ended over HTTP (``wakeyard worker --url``), so it needs neither the database nor the data folder.

Every call about a job names its lease (the claim's fencing token, header ``Lease``): a worker whose lease expired
(its job re-queued and maybe taken by another box) can neither upload into the job nor record its outcome.
"""

from __future__ import annotations

import re
from collections.abc import AsyncIterator
from contextlib import asynccontextmanager
from functools import partial
from typing import Annotated, Any, Literal

from fastapi import APIRouter, Header, Request, Response
from fastapi.responses import FileResponse, JSONResponse
from pydantic import BaseModel, ConfigDict, Field
from starlette.concurrency import run_in_threadpool
from starlette.requests import ClientDisconnect

from wakeyard.core.states import JobState
from wakeyard.core.store import finite, remote_worker
from wakeyard.solver.restart import RESTART_FILES

from .deps import SettingsDep, StoreDep, WorkerDep
from .problems import BadRequest, Conflict, LengthRequired, NotFound, Problem, TooLarge, Unprocessable
from .upload_stream import timed
from .uploads import LeaseEnded, OverJobLimit, Uploads, path_problem

router = APIRouter(prefix="/api/v1/worker", tags=["worker"])
LeaseHeader = Annotated[str, Header(alias="Lease", description="the lease from the claim", max_length=64)]
_RANGE = re.compile(r"^bytes (\d+)-(\d+)/(\d+)$")
_SHA = re.compile(r"^[0-9a-f]{64}$")
CLASH = (IsADirectoryError, NotADirectoryError, FileExistsError)  # "a/b" where "a" is a file, or the reverse


class ClaimRequest(BaseModel):
    model_config = ConfigDict(extra="forbid")
    worker: str = Field(min_length=1, max_length=100, description="the worker process (box:pid), for the job's record")


class UploadedFile(BaseModel):
    path: str
    size: int
    sha256: str


class Claim(BaseModel):
    job_id: str
    lease: str
    attempts: int
    spec: dict[str, Any]
    files: list[UploadedFile] = Field(description="what earlier attempts uploaded: the checkpoint to resume from")
    heartbeat_seconds: float = Field(description="send a heartbeat this often: the service's lease counts on it")
    max_wall_time: float = Field(description="seconds this attempt may run, as on the service's own workers")


class Progress(BaseModel):
    model_config = ConfigDict(extra="forbid", allow_inf_nan=False)
    fraction: float = Field(ge=0, le=1)
    step: int = Field(ge=0, le=2**31 - 1)  # the job store's integer column
    time: float
    eta_seconds: float | None = Field(None, ge=0)


class Beat(BaseModel):
    model_config = ConfigDict(extra="forbid")
    progress: Progress | None = None
    worker: str | None = Field(None, min_length=1, max_length=100, description="as in the claim: counts as alive")


class BeatAnswer(BaseModel):
    lease_held: bool = Field(description="false: the job is no longer this worker's; stop it and upload nothing")
    cancel: bool = Field(description="a cancel was requested: stop and report the job cancelled")


class Outcome(BaseModel):
    model_config = ConfigDict(extra="forbid")
    state: Literal["succeeded", "failed", "cancelled"]
    summary: dict[str, Any] | None = None
    error: str | None = Field(None, max_length=20_000)
    progress: Progress | None = None


def _progress(p: Progress | None) -> dict[str, Any]:
    if p is None:
        return {}
    return {
        "progress_fraction": p.fraction,
        "progress_step": p.step,
        "progress_time": p.time,
        "eta_seconds": p.eta_seconds,
    }


async def _hold(store: StoreDep, job_id: str, lease: str) -> None:
    if not await run_in_threadpool(store.lease_held, job_id, lease):
        raise Conflict("Lease", f"job {job_id} is not running under this lease (it expired or the job ended)")


def _checked_path(path: str) -> str:
    if (problem := path_problem(path)) is not None:
        raise Unprocessable("path", problem)
    return path


@router.post("/claim", response_model=Claim, summary="Claim the next queued job (204: none is waiting)")
def claim(wanted: ClaimRequest, store: StoreDep, settings: SettingsDep, worker: WorkerDep) -> Any:
    name = remote_worker(worker.name, wanted.worker)
    store.worker_alive(name)  # health and the lease's wake-ups count remote workers too
    job = store.claim_next(name)
    if job is None:
        return Response(status_code=204)
    files = Uploads(settings.jobs_dir).files(job.id)
    return Claim(
        job_id=job.id,
        lease=job.claim,
        attempts=job.attempts,
        spec=job.spec,
        files=[UploadedFile(path=p, **f) for p, f in sorted(files.items())],
        heartbeat_seconds=settings.heartbeat_seconds,
        max_wall_time=settings.max_wall_time,
    )


@router.post("/jobs/{job_id}/heartbeat", response_model=BeatAnswer, summary="Extend the lease, report progress")
def heartbeat(job_id: str, beat: Beat, lease: LeaseHeader, store: StoreDep, worker: WorkerDep) -> BeatAnswer:
    ours, cancel = store.heartbeat(job_id, lease, finite(_progress(beat.progress)))
    if ours and beat.worker:  # a busy remote worker is alive too (health, the lease's wake-ups)
        store.worker_alive(remote_worker(worker.name, beat.worker))
    return BeatAnswer(lease_held=ours, cancel=cancel)


@router.get("/jobs/{job_id}/uploads/{path:path}", summary="How many bytes of an upload the service has")
async def received(
    job_id: str, path: str, lease: LeaseHeader, store: StoreDep, settings: SettingsDep, _: WorkerDep
) -> dict[str, Any]:
    await _hold(store, job_id, lease)
    return {"path": path, "received": Uploads(settings.jobs_dir).received(job_id, lease, _checked_path(path))}


@router.put(
    "/jobs/{job_id}/files/{path:path}",
    status_code=201,
    summary="Upload a result or checkpoint file (streamed; resumable with Content-Range)",
    description="Headers: `Content-Length`, `Content-SHA256` (hex digest of the whole file) and, to continue an "
    "upload, `Content-Range: bytes START-END/TOTAL` with START the bytes the service has (GET "
    "`/uploads/{path}`). 202 with `received` while incomplete; 201 once the whole file arrived with that hash and "
    "is in the job's folder; 422 on a hash mismatch (the bytes are discarded). 413 over the per-file "
    "(`MAX_UPLOAD_MB`) or per-job (`MAX_JOB_UPLOAD_MB`) limit: the job's stored files and each of its uploads in "
    "progress count at their full TOTAL from the start, so uploads at once cannot together go over. 408 when the "
    "body stalls (`UPLOAD_IDLE_SECONDS`) or takes too long (`MAX_UPLOAD_SECONDS`), with `Connection: close`; send "
    "the file again from byte 0. A refused upload's part is removed, the stored file stays as it was.",
)
async def upload(
    job_id: str,
    path: str,
    request: Request,
    lease: LeaseHeader,
    store: StoreDep,
    settings: SettingsDep,
    _: WorkerDep,
    sha256: Annotated[str, Header(alias="Content-SHA256", max_length=64)],
    content_range: Annotated[str | None, Header(alias="Content-Range", max_length=100)] = None,
) -> JSONResponse:
    path = _checked_path(path)
    if not _SHA.match(sha256):
        raise BadRequest("Content-SHA256", "the file's SHA-256 as 64 lowercase hex digits")
    declared = request.headers.get("content-length")
    if declared is None or not declared.isdigit():
        raise LengthRequired("Content-Length", "needed: the upload is checked by its size")
    length = int(declared)
    start, total = 0, length
    if content_range is not None:
        if not (m := _RANGE.match(content_range)):
            raise BadRequest("Content-Range", "bytes START-END/TOTAL")
        start, end, total = (int(g) for g in m.groups())
        if end - start + 1 != length or end >= total:
            raise BadRequest("Content-Range", f"{content_range} does not match Content-Length {length}")
    elif length == 0:
        total = 0
    sized = "Content-Range" if content_range is not None else "Content-Length"
    if total > settings.max_upload_bytes:
        raise TooLarge(sized, f"{total:,} bytes: over the per-file upload limit of {settings.max_upload_bytes:,} bytes")
    await _hold(store, job_id, lease)
    uploads = Uploads(settings.jobs_dir)
    have = uploads.received(job_id, lease, path)
    if start not in (0, have):
        raise Conflict("Content-Range", f"the service has {have} bytes of {path}: continue from byte {have}")
    async with _room(uploads, settings, job_id, lease, path, total, sized):
        try:
            f = await run_in_threadpool(uploads.open_part, job_id, lease, path, start)
        except CLASH:
            raise Conflict("path", f"{path} clashes with a file or folder of the same name in the upload") from None
        got = 0
        try:
            async for chunk in timed(request.stream(), settings.upload_idle_seconds, settings.max_upload_seconds):
                got += len(chunk)
                if got > length:
                    raise BadRequest("(body)", f"more than the {length} bytes Content-Length declared")
                await run_in_threadpool(f.write, chunk)
        except ClientDisconnect:  # the bytes so far stay: the worker continues from them
            pass
        except Problem:  # refused on the way: nothing of it stays
            f.close()
            await run_in_threadpool(uploads.drop_part, job_id, lease, path)
            raise
        finally:
            f.close()
        have = uploads.received(job_id, lease, path)
        if have < total:
            return JSONResponse({"path": path, "received": have}, status_code=202)
        try:  # a lease lost during the transfer: the file does not go into the job
            held = partial(store.lease_held, job_id, lease)
            found = await run_in_threadpool(uploads.publish, job_id, lease, path, sha256, held)
        except CLASH:
            raise Conflict("path", f"{path} clashes with a file or folder of the same name in the job") from None
        except LeaseEnded:
            raise Conflict(
                "Lease", f"job {job_id} is no longer running under this lease: {path} was discarded"
            ) from None
        if found is not None:
            raise Unprocessable(
                "Content-SHA256", f"the {have} bytes received hash to {found}, not {sha256}: discarded, send it again"
            )
        return JSONResponse({"path": path, "size": have, "sha256": sha256}, status_code=201)


@asynccontextmanager
async def _room(
    uploads: Uploads, settings: SettingsDep, job_id: str, lease: str, path: str, total: int, sized: str
) -> AsyncIterator[None]:
    """Room for the upload's ``total`` bytes under the per-job limit while it is received: checked and kept in one
    step (uploads at once cannot together go over), given back however the request ends (published, refused or
    broken off; a part left to be continued then counts by its bytes). 413 naming ``sized`` when it does not fit."""
    limit = settings.max_job_upload_bytes
    try:
        ticket = await run_in_threadpool(uploads.reserve, job_id, lease, path, total, limit)
    except OverJobLimit as over:
        await run_in_threadpool(uploads.drop_part, job_id, lease, path)
        raise TooLarge(
            sized,
            f"{total:,} bytes beside the {over.others:,} job {job_id} holds or is receiving: over the per-job "
            f"upload limit of {limit:,} bytes",
        ) from None
    try:
        yield
    finally:
        await run_in_threadpool(uploads.release, job_id, lease, path, ticket)


@router.get("/jobs/{job_id}/files/{path:path}", summary="Download a file an earlier attempt uploaded")
async def download(
    job_id: str, path: str, lease: LeaseHeader, store: StoreDep, settings: SettingsDep, _: WorkerDep
) -> FileResponse:
    await _hold(store, job_id, lease)
    path = _checked_path(path)
    known = Uploads(settings.jobs_dir).files(job_id).get(path)
    if known is None:
        raise NotFound("path", f"{path} was not uploaded for job {job_id}")
    headers = {"Content-SHA256": known["sha256"]}
    return FileResponse(settings.jobs_dir / job_id / path, headers=headers, media_type="application/octet-stream")


@router.post("/jobs/{job_id}/finish", summary="Record how the job ended (only its lease holder can)")
def finish(
    job_id: str, outcome: Outcome, lease: LeaseHeader, store: StoreDep, settings: SettingsDep, _: WorkerDep
) -> Any:
    uploads = Uploads(settings.jobs_dir)
    if outcome.state == JobState.SUCCEEDED and "summary.json" not in uploads.files(job_id):
        raise Conflict("state", "upload summary.json (and the other result files) before reporting success")
    if not store.finish(
        job_id, lease, outcome.state, finite(outcome.summary), outcome.error, finite(_progress(outcome.progress))
    ):
        raise Conflict("Lease", f"job {job_id} is not running under this lease: its outcome is not recorded")
    restart = RESTART_FILES if outcome.state == JobState.SUCCEEDED else ()  # a finished run resumes no more
    uploads.discard(job_id, restart)
    return {"job_id": job_id, "state": outcome.state}


@router.post("/jobs/{job_id}/release", summary="Hand the job back to the queue (this worker is stopping)")
def release(job_id: str, lease: LeaseHeader, store: StoreDep, _: WorkerDep) -> dict[str, Any]:
    if not store.release(job_id, lease):
        raise Conflict("Lease", f"job {job_id} is not running under this lease")
    return {"job_id": job_id, "state": JobState.QUEUED}
