"""A job's states: the store's compare-and-set updates move a job along queued → running → one of the ends."""

from __future__ import annotations

from enum import StrEnum


class JobState(StrEnum):
    QUEUED = "queued"
    RUNNING = "running"
    SUCCEEDED = "succeeded"
    FAILED = "failed"
    CANCELLED = "cancelled"


ACTIVE = (JobState.QUEUED, JobState.RUNNING)
FINISHED = (JobState.SUCCEEDED, JobState.FAILED, JobState.CANCELLED)
