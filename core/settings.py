"""Service settings, read from ``WAKEYARD_*`` environment variables so the API, workers and compose share them."""

from __future__ import annotations

import os
from pathlib import Path

from pydantic import Field
from pydantic_settings import BaseSettings, SettingsConfigDict

# a token's name is its user's name: letters, digits and _ . @ - (the API's and the CLI's rule too)
TOKEN_NAME = r"^[A-Za-z0-9][A-Za-z0-9_.@-]*$"


class Settings(BaseSettings):
    model_config = SettingsConfigDict(env_prefix="WAKEYARD_", extra="ignore")

    data_dir: Path = Field(Path("data"), description="job store, embedded broker and result files live here")
    database_url: str = Field("", description="SQLAlchemy URL; empty = SQLite file in data_dir")
    broker_url: str = Field("", description="Celery broker; empty = SQLAlchemy transport on a SQLite file in data_dir")
    queue: str = "wakeyard"
    workers: int = Field(default_factory=lambda: os.cpu_count() or 1, ge=0, description="0: serve starts none")
    max_dofs: int = Field(500_000, ge=1)
    max_steps: int = Field(200_000, ge=1)
    max_wall_time: float = Field(6 * 3600.0, gt=0, description="seconds one attempt of a job may run")
    max_active_per_user: int = Field(20, ge=1, description="queued + running jobs one owner may have")
    max_body_bytes: int = Field(256 * 1024, ge=1024)
    max_body_seconds: float = Field(30.0, gt=0, description="a request body must arrive within this time")
    max_validation_seconds: float = Field(10.0, gt=0, description="a study whose checks take longer is refused")
    heartbeat_seconds: float = Field(1.0, gt=0, description="progress/heartbeat write and cancel poll interval")
    lease_seconds: float = Field(60.0, gt=0, description="a running job whose heartbeat is older is re-queued")
    reaper_seconds: float = Field(5.0, gt=0, description="how often the API looks for expired leases")
    max_attempts: int = Field(3, ge=1)
    first_admin: str = Field(
        "",
        max_length=100,
        pattern=f"^$|{TOKEN_NAME}",
        description="serve on a network address while no token exists: create an admin token of this name first "
        "and write it to first-admin-token in the data folder (a container needs no token made beforehand)",
    )
    min_free_mb: float = Field(
        512.0,
        ge=0,
        description="below this much free space in the data folder health says degraded and new jobs are refused (507)",
    )

    user_quota_mb: float = Field(
        10240.0,
        ge=0,
        description="result files one owner may keep; at or over it their new jobs are refused (507) while running "
        "ones finish; 0: no quota",
    )
    fields_retention_days: float = Field(
        0.0,
        ge=0,
        description="field files, pictures and checkpoints of jobs finished longer ago are deleted (summary, forces "
        "and spec stay); 0: kept until the job is deleted",
    )
    max_upload_mb: float = Field(
        8192.0, gt=0, description="the largest file a remote worker (`wakeyard worker --url`) may upload"
    )
    max_job_upload_mb: float = Field(
        16384.0,
        gt=0,
        description="the bytes remote workers may upload into one job: its stored files and its uploads in progress, "
        "each at its full size",
    )
    upload_idle_seconds: float = Field(
        60.0, gt=0, description="an upload that sends nothing for this long is refused and its part removed"
    )
    max_upload_seconds: float = Field(
        3600.0, gt=0, description="one upload request must arrive within this time (a broken-off one resumes)"
    )
    disk_sweep_seconds: float = Field(
        30.0, gt=0, description="how often job folders are measured (disk use per user) and the retention applied"
    )

    @property
    def user_quota_bytes(self) -> int:
        return int(self.user_quota_mb * 2**20)

    @property
    def max_upload_bytes(self) -> int:
        return int(self.max_upload_mb * 2**20)

    @property
    def max_job_upload_bytes(self) -> int:
        return int(self.max_job_upload_mb * 2**20)

    @property
    def jobs_dir(self) -> Path:
        return self.data_dir / "jobs"

    @property
    def min_free_bytes(self) -> int:
        return int(self.min_free_mb * 2**20)

    @property
    def db_url(self) -> str:
        return self.database_url or f"sqlite:///{(self.data_dir / 'jobs.sqlite').resolve()}"

    @property
    def celery_broker(self) -> str:
        return self.broker_url or f"sqla+sqlite:///{(self.data_dir / 'broker.sqlite').resolve()}"
