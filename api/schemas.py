"""Response models of the job resources, so that OpenAPI documents a job and its result summary
(:mod:`solver.results`). Routes that return one validate the stored job against it and leave out what the run did
not set (``response_model_exclude_unset``): the answer carries summary.json's keys, no more."""

from __future__ import annotations

from typing import Any

from pydantic import BaseModel, Field

from wakeyard.core.states import JobState
from wakeyard.solver.results import Summary


class JobProgress(BaseModel):
    fraction: float = Field(description="0 to 1: simulated time of a transient run, Newton iterations of a steady one")
    step: int
    time: float = Field(description="simulated time reached, s")
    eta_seconds: float | None


class Job(BaseModel):
    """A job as every job route shows it."""

    id: str
    state: JobState
    owner: str
    title: str
    tags: list[str]
    spec: dict[str, Any] = Field(description="the normalised job spec (JobSpec)")
    progress: JobProgress
    created_at: str | None
    started_at: str | None
    finished_at: str | None
    heartbeat_at: str | None
    attempts: int
    worker_host: str | None
    cancel_requested: bool
    summary: Summary | None = Field(description="summary.json of a succeeded run, null until then")
    error: str | None
    reused_from: str | None = Field(description="the job whose identical result this job reuses")
    fields_removed_at: str | None = Field(
        None,
        description="when the retention rule removed the field files, pictures and checkpoint (kept: summary, forces)",
    )
    study: str | None
    links: dict[str, str]
    caution: str


class JobPage(BaseModel):
    jobs: list[Job]
    next_cursor: str | None = Field(description="pass as cursor to read the next (older) page; null on the last")
