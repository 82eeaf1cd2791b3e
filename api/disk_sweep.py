"""The disk sweep, run by the one process that holds the service's lead (``api.reaper``): measure the job folders
that may have changed (disk use per user, the quota) and apply the retention rule to old jobs."""

from __future__ import annotations

import logging
from datetime import timedelta

from wakeyard.core.settings import Settings
from wakeyard.core.store import Store, utcnow
from wakeyard.core.usage import folder_bytes, trim

log = logging.getLogger(__name__)


class DiskSweep:
    def __init__(self, settings: Settings, store: Store):
        self.settings, self.store = settings, store

    def run(self) -> None:
        if self.settings.fields_retention_days > 0:
            self.apply_retention()
        self.measure()

    def measure(self) -> None:
        jobs = self.settings.jobs_dir
        self.store.record_sizes({job_id: folder_bytes(jobs / job_id) for job_id in self.store.to_measure()})

    def apply_retention(self) -> list[str]:
        """Trim the jobs finished more than ``fields_retention_days`` ago; returns their ids."""
        days = self.settings.fields_retention_days
        trimmed, freed = [], 0
        while batch := self.store.to_trim(utcnow() - timedelta(days=days)):
            for job_id in batch:
                if self.store.mark_trimmed(job_id):  # recorded first: from now on no creation reuses it
                    freed += trim(self.settings.jobs_dir / job_id)
                    trimmed.append(job_id)
        if trimmed:
            log.warning(
                "retention: removed the fields, pictures and checkpoints of %d job(s) finished over %g days ago "
                "(%.1f MiB freed; summaries, forces and specs kept)",
                len(trimmed),
                days,
                freed / 2**20,
            )
        return trimmed
