"""Creating jobs, shared by single jobs, clones and study points: reuse an identical result or queue a run.

A spec's hash is SHA-256 of its canonical JSON (the normalised spec, keys sorted) plus the fingerprint of the solver's
code (``api.fingerprint``), so a result is reused only for exactly the same case computed by the same solver.
"""

from __future__ import annotations

import hashlib
import json
import logging
import os
import shutil
import uuid
from collections.abc import Callable
from dataclasses import dataclass
from pathlib import Path
from typing import Annotated, Any

from fastapi import Depends, Request

from wakeyard.core.settings import Settings
from wakeyard.core.states import JobState
from wakeyard.core.store import Job, OverCap, Provenance, Store

from .fingerprint import solver_fingerprint
from .problems import NoSpace, TooManyJobs
from .quota import Quota

log = logging.getLogger(__name__)


def spec_hash(spec: dict[str, Any]) -> str:
    canonical = json.dumps(spec, sort_keys=True, separators=(",", ":"), ensure_ascii=True)
    return hashlib.sha256(f"{canonical}\nsolver {solver_fingerprint()}".encode()).hexdigest()


@dataclass
class Planned:
    """A job about to be created: its normalised spec and where it comes from."""

    spec: dict[str, Any]
    provenance: Provenance


@dataclass
class Submission:
    """The one job-creation path: free space, the storage quota, the per-user cap, reuse, creation and the wake-up."""

    store: Store
    settings: Settings
    dispatch: Callable[[str], None]
    quota: Quota

    def plan(
        self,
        spec: dict[str, Any],
        fresh: bool,
        title: str | None = None,
        study_id: str | None = None,
        values: dict[str, float] | None = None,
        digest: str | None = None,
    ) -> Planned:
        """Look for a succeeded job with the same spec hash (unless ``fresh``); ``digest``: the hash if known."""
        digest = digest or spec_hash(spec)
        source = None if fresh else self.store.find_result(digest)
        title = str(spec.get("title", "")) if title is None else title
        return Planned(spec, Provenance(digest, title, source, study_id, values))

    def check_space(self, owner: str) -> None:
        """Refuse (507) new jobs while the data folder has less free space than the service keeps, or while
        ``owner``'s result files reach the per-user quota."""
        free = shutil.disk_usage(self.settings.data_dir).free
        if free < self.settings.min_free_bytes:
            raise NoSpace(
                "(request)",
                f"the data folder has {free / 2**20:.0f} MiB free, below the "
                f"{self.settings.min_free_mb:.0f} MiB the service keeps: new jobs are refused until space "
                "is freed (delete jobs that are no longer needed)",
            )
        self.quota.check(owner)

    def check_room(self, owner: str, to_run: int) -> None:
        """Refuse (429) ``to_run`` more jobs at once if they would take ``owner`` over the per-user cap of queued +
        running jobs: a cheap early refusal for a study; each creation checks again, atomically (:meth:`place`)."""
        cap, active = self.settings.max_active_per_user, self.store.active_count(owner)
        if to_run and active + to_run > cap:
            raise _too_many(owner, active, cap, to_run)

    def place(self, owner: str, planned: Planned, tags: list[str]) -> Job:
        """Create the job (429 if a queued one would take ``owner`` over the cap, even under concurrent requests);
        a reused result's files are hard-linked first, so deleting either job never breaks the other. If the
        reused job's files vanish meanwhile (it was deleted), the job is queued to run instead."""
        job_id, source = uuid.uuid4().hex, planned.provenance.source
        if source is not None:
            target = self.settings.jobs_dir / job_id
            try:
                _link_tree(self.settings.jobs_dir / source.id, target)
            except OSError as err:
                log.warning("could not reuse the files of job %s (%s): running the case again", source.id, err)
                shutil.rmtree(target, ignore_errors=True)
                planned.provenance.source = None
        try:
            job = self.store.create(
                owner, planned.spec, tags, planned.provenance, job_id, self.settings.max_active_per_user
            )
        except OverCap as over:
            raise _too_many(owner, over.active, over.cap, 1) from None
        if job.state == JobState.QUEUED:
            self.dispatch(job.id)
        return job


def _too_many(owner: str, active: int, cap: int, to_run: int) -> TooManyJobs:
    adding = "" if to_run == 1 else f" and this study would add {to_run} more"
    return TooManyJobs(
        "(request)",
        f"{owner} already has {active} queued or running jobs{adding}, the limit per user "
        f"is {cap}: wait for some to finish, cancel some, or split the study",
    )


def _link_tree(source: Path, target: Path) -> None:
    if not source.is_dir():
        raise FileNotFoundError(f"no result folder {source}")
    shutil.copytree(source, target, copy_function=os.link)


async def get_submission(request: Request) -> Submission:
    """The app's one Submission (it keeps no state of its own): one dependency, not four, per creation."""
    return request.app.state.submission


SubmissionDep = Annotated[Submission, Depends(get_submission)]
