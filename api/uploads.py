"""Files a remote worker uploads into a job's folder: resumable parts, checked by size and SHA-256 before they move
into place atomically, and a manifest of what arrived (the next worker of the job downloads its checkpoint from it).

Parts and the manifest live in the job folder's hidden ``.uploads/`` (never listed as results, deleted with the
job). A part belongs to one lease: a worker that lost its job cannot continue another's upload.
"""

from __future__ import annotations

import fcntl
import json
import os
import re
import shutil
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

from wakeyard.core.digest import sha256_of
from wakeyard.core.usage import folder_bytes

# a relative path of plain names: letters, digits and _ . - ; no empty, hidden (".x") or parent ("..") part
_PATH = re.compile(r"^[A-Za-z0-9_-][A-Za-z0-9_.-]*(/[A-Za-z0-9_-][A-Za-z0-9_.-]*)*$")
MAX_PATH = 200
STAGE = ".uploads"


def path_problem(path: str) -> str | None:
    """Why ``path`` cannot name a job's result file, or None."""
    if len(path) > MAX_PATH:
        return f"at most {MAX_PATH} characters"
    if not _PATH.match(path):
        return "a relative path of names made of letters, digits, '_', '.' and '-' (no hidden or parent parts)"
    return None


class LeaseEnded(Exception):
    """The upload's lease ended before its file could move into the job's folder."""


class Uploads:
    """The upload side of one data folder's jobs (``jobs_dir``)."""

    def __init__(self, jobs_dir: Path):
        self.jobs_dir = jobs_dir

    def part(self, job_id: str, lease: str, path: str) -> Path:
        return self.jobs_dir / job_id / STAGE / lease / path

    def received(self, job_id: str, lease: str, path: str) -> int:
        """Bytes of ``path`` this lease's upload has so far (0: none)."""
        try:
            return self.part(job_id, lease, path).stat().st_size
        except FileNotFoundError:
            return 0

    def drop_part(self, job_id: str, lease: str, path: str) -> None:
        """Remove what arrived of a refused upload (a stored file of that path is left as it was)."""
        self.part(job_id, lease, path).unlink(missing_ok=True)

    def others(self, job_id: str, lease: str, path: str) -> int:
        """Bytes the job's uploads take besides this lease's ``path``: the stored files (a new ``path`` replaces the
        stored one, so that one does not count) and every part still arriving, whatever its lease."""
        stored = sum(int(f["size"]) for p, f in self.files(job_id).items() if p != path)
        stage = self.jobs_dir / job_id / STAGE
        parts = sum(folder_bytes(d) for d in stage.iterdir() if d.is_dir()) if stage.is_dir() else 0
        return stored + parts - self.received(job_id, lease, path)

    def open_part(self, job_id: str, lease: str, path: str, start: int) -> Any:
        """The part file, positioned to take the bytes from ``start`` (0 starts over)."""
        part = self.part(job_id, lease, path)
        part.parent.mkdir(parents=True, exist_ok=True)
        f = open(part, "r+b" if part.exists() else "wb")  # noqa: SIM115 (the caller closes it)
        f.truncate(start)
        f.seek(start)
        return f

    def publish(self, job_id: str, lease: str, path: str, sha256: str, held: Callable[[], bool]) -> str | None:
        """Move the complete part into the job folder if its hash is ``sha256`` (else discard it and return the hash
        it had) and the lease is still ``held`` (else raise :class:`LeaseEnded`); record it in the manifest."""
        part = self.part(job_id, lease, path)
        found = sha256_of(part)
        if found != sha256:
            part.unlink(missing_ok=True)
            return found
        target = self.jobs_dir / job_id / path
        target.parent.mkdir(parents=True, exist_ok=True)
        size = part.stat().st_size
        with self._manifest(job_id) as files:  # under the lock: no other upload to the job comes in between
            if not held():
                part.unlink(missing_ok=True)
                raise LeaseEnded(job_id)
            os.replace(part, target)
            files[path] = {"size": size, "sha256": sha256}
        return None

    def files(self, job_id: str) -> dict[str, dict[str, Any]]:
        """What has been uploaded for the job: path -> {size, sha256}."""
        path = self.jobs_dir / job_id / STAGE / "manifest.json"
        try:
            return dict(json.loads(path.read_text()))
        except FileNotFoundError:
            return {}

    def discard(self, job_id: str, paths: tuple[str, ...] = ()) -> None:
        """The job ended: drop unfinished parts and the uploaded ``paths`` no longer needed (the restart state of a
        finished run); the manifest keeps the rest."""
        stage = self.jobs_dir / job_id / STAGE
        if stage.is_dir():
            for entry in stage.iterdir():
                if entry.is_dir():
                    shutil.rmtree(entry, ignore_errors=True)
        if paths:
            with self._manifest(job_id) as files:
                for path in paths:
                    (self.jobs_dir / job_id / path).unlink(missing_ok=True)
                    files.pop(path, None)

    @contextmanager
    def _manifest(self, job_id: str) -> Iterator[dict[str, dict[str, Any]]]:
        """The manifest, changed under an exclusive lock (several API processes may take uploads)."""
        stage = self.jobs_dir / job_id / STAGE
        stage.mkdir(parents=True, exist_ok=True)
        with open(stage / "manifest.lock", "w") as lock:
            fcntl.flock(lock, fcntl.LOCK_EX)
            files = self.files(job_id)
            yield files
            tmp = stage / "manifest.json.tmp"
            tmp.write_text(json.dumps(files, indent=1, sort_keys=True))
            os.replace(tmp, stage / "manifest.json")
