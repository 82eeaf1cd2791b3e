"""The per-user storage quota: an owner whose result files reach ``user_quota_mb`` gets no new jobs (507) until
some are deleted or trimmed; their running jobs finish. The totals come from the disk sweep's measurements, read
at most once every few seconds per owner per process (creation is a hot path)."""

from __future__ import annotations

import time

from wakeyard.core.settings import Settings
from wakeyard.core.store import Store

from .problems import OverQuota

FRESH_SECONDS = 2.0


class Quota:
    def __init__(self, settings: Settings, store: Store):
        self.settings, self.store = settings, store
        self._seen: dict[str, tuple[float, int]] = {}

    def used(self, owner: str, fresh: bool = False) -> int:
        now = time.monotonic()
        seen = self._seen.get(owner)
        if fresh or seen is None or now - seen[0] > FRESH_SECONDS:
            seen = self._seen[owner] = (now, self.store.disk_use(owner))
        return seen[1]

    def check(self, owner: str) -> None:
        limit = self.settings.user_quota_bytes
        if limit and (used := self.used(owner)) >= limit:
            raise OverQuota(
                "(request)",
                f"{owner}'s jobs keep {used / 2**20:.1f} MiB of result files, at or over the per-user quota of "
                f"{self.settings.user_quota_mb:g} MiB (WAKEYARD_USER_QUOTA_MB): new jobs are refused until jobs "
                "are deleted; running jobs finish",
            )
