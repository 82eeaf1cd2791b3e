"""Files a remote worker uploads into a job's folder: resumable parts, checked by size and SHA-256 before they move
into place atomically, and a manifest of what arrived (the next worker of the job downloads its checkpoint from it).

Parts and the manifest live in the job folder's hidden ``.uploads/`` (never listed as results, deleted with the
job). A part belongs to one lease: a worker that lost its job cannot continue another's upload.

The per-job limit is checked and the upload's declared size reserved in one step under the job's lock file, so two
uploads at once (threads, or API processes sharing the data folder) cannot both take the last room.
"""

from __future__ import annotations

import fcntl
import json
import os
import re
import shutil
import uuid
from collections.abc import Callable, Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

from wakeyard.core.digest import sha256_of

# a relative path of plain names: letters, digits and _ . - ; no empty, hidden (".x") or parent ("..") part
_PATH = re.compile(r"^[A-Za-z0-9_-][A-Za-z0-9_.-]*(/[A-Za-z0-9_-][A-Za-z0-9_.-]*)*$")
MAX_PATH = 200
STAGE = ".uploads"
RESERVED = "reserved.json"  # uploads in progress: "lease/path" -> {"ticket", "total"}


def path_problem(path: str) -> str | None:
    """Why ``path`` cannot name a job's result file, or None."""
    if len(path) > MAX_PATH:
        return f"at most {MAX_PATH} characters"
    if not _PATH.match(path):
        return "a relative path of names made of letters, digits, '_', '.' and '-' (no hidden or parent parts)"
    return None


class LeaseEnded(Exception):
    """The upload's lease ended before its file could move into the job's folder."""


class OverJobLimit(Exception):
    """An upload would take the job past its upload limit; ``others`` is what the job holds or is receiving."""

    def __init__(self, others: int):
        super().__init__(f"{others} bytes held or reserved")
        self.others = others


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

    def reserve(self, job_id: str, lease: str, path: str, total: int, limit: int) -> str:
        """Hold room for the ``total`` bytes this lease's ``path`` will have, if it fits under ``limit`` beside what
        the job holds and its other uploads in progress have reserved (else raise :class:`OverJobLimit`); returns
        the ticket that :meth:`release` takes. Checked and recorded under the job's lock: atomic across processes."""
        with self._locked(job_id) as stage:
            held = _read(stage / RESERVED)
            others = self._others(job_id, lease, path, held)
            if others + total > limit:
                raise OverJobLimit(others)
            ticket = uuid.uuid4().hex
            held[_key(lease, path)] = {"ticket": ticket, "total": total}  # replaces a crashed request's of the same
            _write(stage / RESERVED, held)
        return ticket

    def release(self, job_id: str, lease: str, path: str, ticket: str) -> None:
        """The upload request ended (published, refused or broken off): its reservation goes; a part left to be
        continued counts by its bytes until the next request reserves for it again."""
        with self._locked(job_id) as stage:
            held = _read(stage / RESERVED)
            if held.get(_key(lease, path), {}).get("ticket") == ticket:  # not a newer request's of the same upload
                del held[_key(lease, path)]
                _write(stage / RESERVED, held)

    def _others(self, job_id: str, lease: str, path: str, held: dict[str, dict[str, Any]]) -> int:
        """Bytes the job's uploads take besides this lease's ``path``: the stored files (a new version of ``path``
        replaces the stored one, so that one does not count), the reserved totals of the uploads in progress and
        the bytes of parts waiting to be continued, whatever their lease."""
        mine = _key(lease, path)
        stored = sum(int(f["size"]) for p, f in self.files(job_id).items() if p != path)
        reserved = sum(int(r["total"]) for key, r in held.items() if key != mine)
        return stored + reserved + sum(n for key, n in self._parts(job_id) if key != mine and key not in held)

    def _parts(self, job_id: str) -> Iterator[tuple[str, int]]:
        """(key, bytes) of every part in the job's upload area; one that vanishes meanwhile is skipped."""
        for folder in (self.jobs_dir / job_id / STAGE).iterdir():
            for root, _, names in os.walk(folder) if folder.is_dir() else ():
                for name in names:
                    part = Path(root, name)
                    try:
                        size = part.stat().st_size
                    except FileNotFoundError:
                        continue
                    yield _key(folder.name, part.relative_to(folder).as_posix()), size

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
        return _read(self.jobs_dir / job_id / STAGE / "manifest.json")

    def discard(self, job_id: str, paths: tuple[str, ...] = ()) -> None:
        """The job ended: drop unfinished parts and the uploaded ``paths`` no longer needed (the restart state of a
        finished run); the manifest keeps the rest."""
        stage = self.jobs_dir / job_id / STAGE
        if stage.is_dir():
            for entry in stage.iterdir():
                if entry.is_dir():
                    shutil.rmtree(entry, ignore_errors=True)
            with self._locked(job_id):  # the job takes no more uploads: a crashed request's reservation goes too
                (stage / RESERVED).unlink(missing_ok=True)
        if paths:
            with self._manifest(job_id) as files:
                for path in paths:
                    (self.jobs_dir / job_id / path).unlink(missing_ok=True)
                    files.pop(path, None)

    @contextmanager
    def _locked(self, job_id: str) -> Iterator[Path]:
        """The job's upload area, under its exclusive lock (several API processes may take uploads at once)."""
        stage = self.jobs_dir / job_id / STAGE
        stage.mkdir(parents=True, exist_ok=True)
        with open(stage / "manifest.lock", "w") as lock:  # its old name: processes of an older version lock it too
            fcntl.flock(lock, fcntl.LOCK_EX)
            yield stage

    @contextmanager
    def _manifest(self, job_id: str) -> Iterator[dict[str, dict[str, Any]]]:
        """The manifest, changed under the job's lock."""
        with self._locked(job_id) as stage:
            files = self.files(job_id)
            yield files
            _write(stage / "manifest.json", files)


def _key(lease: str, path: str) -> str:
    """One upload's name in the reservations: its lease's folder and path, as its part lies in the upload area."""
    return f"{lease}/{path}"


def _read(path: Path) -> dict[str, dict[str, Any]]:
    try:
        return dict(json.loads(path.read_text()))
    except FileNotFoundError:
        return {}


def _write(path: Path, value: dict[str, dict[str, Any]]) -> None:
    """Replace ``path`` whole: a reader without the lock (the manifest's) never sees half of it."""
    tmp = path.with_name(path.name + ".tmp")
    tmp.write_text(json.dumps(value, indent=1, sort_keys=True))
    os.replace(tmp, path)
