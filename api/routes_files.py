"""Result files, streamed from the job's folder; nothing outside that folder is ever served."""

from __future__ import annotations

import mimetypes
import tempfile
import zipfile
from collections.abc import Iterator
from pathlib import Path
from typing import IO, Any

from fastapi import APIRouter
from fastapi.responses import FileResponse, StreamingResponse

from wakeyard.core.settings import Settings
from wakeyard.core.store import Store
from wakeyard.solver.caution import CAUTION, caution_lines
from wakeyard.solver.restart import RESTART_FILES

from .deps import SettingsDep, StoreDep, UserDep
from .problems import NotFound

router = APIRouter(prefix="/api/v1/jobs", tags=["files"])
ARCHIVE = "fields.zip"
EVERYTHING = "all-files.zip"  # every result file of the job in one download (not listed: it holds the list)
ARCHIVE_NOTE = "CAUTION.txt"  # the caution travels inside the archive with the fields
TYPES = {
    ".csv": "text/csv",
    ".json": "application/json",
    ".png": "image/png",
    ".vtu": "application/xml",
    ".pvd": "application/xml",
    ".npz": "application/octet-stream",
    ".zip": "application/zip",
}


def _content_type(path: str) -> str:
    return TYPES.get(Path(path).suffix.lower()) or mimetypes.guess_type(path)[0] or "application/octet-stream"


def _folder(store: Store, settings: Settings, job_id: str) -> Path:
    if store.get(job_id) is None:
        raise NotFound("job_id", f"no job {job_id}")
    return (settings.jobs_dir / job_id).resolve()


# What odd paths raise: a name over 255 bytes (OSError), a symlink loop (RuntimeError from resolve, OSError from
# stat). Such a path is simply not a result file.
BAD_PATH = (OSError, RuntimeError, ValueError)


def _shown(folder: Path, path: Path) -> bool:
    """A result file: a regular file really inside ``folder`` (no symlink out), not hidden or internal."""
    try:
        return (
            path.is_file()
            and path.resolve().is_relative_to(folder)
            and path.name not in RESTART_FILES
            and not any(part.startswith(".") for part in path.relative_to(folder).parts)
        )
    except BAD_PATH:
        return False


def _visible(folder: Path) -> list[Path]:
    try:
        return sorted(p for p in folder.rglob("*") if _shown(folder, p)) if folder.is_dir() else []
    except BAD_PATH:  # a folder the walk cannot enter: list what the top level shows
        return sorted(p for p in folder.iterdir() if _shown(folder, p))


def _field_files(folder: Path) -> list[Path]:
    return [p for p in _visible(folder / "fields") if p.suffix in (".vtu", ".pvd")]


@router.get("/{job_id}/files", summary="List a job's result files")
def list_files(store: StoreDep, settings: SettingsDep, job_id: str, _: UserDep) -> dict[str, Any]:
    folder = _folder(store, settings, job_id)
    base = f"/api/v1/jobs/{job_id}/files"
    files = [
        {
            "path": p.relative_to(folder).as_posix(),
            "size": p.stat().st_size,
            "content_type": _content_type(p.name),
            "url": f"{base}/{p.relative_to(folder).as_posix()}",
        }
        for p in _visible(folder)
    ]
    if _field_files(folder):
        files.append({"path": ARCHIVE, "size": None, "content_type": "application/zip", "url": f"{base}/{ARCHIVE}"})
    return {"files": files, "caution": CAUTION}


@router.get(
    "/{job_id}/files/{path:path}",
    summary="Download one result file (fields.zip: all VTU/PVD files; all-files.zip: every file of the job)",
)
def get_file(store: StoreDep, settings: SettingsDep, job_id: str, path: str, _: UserDep) -> Any:
    folder = _folder(store, settings, job_id)
    if path == ARCHIVE:
        files = _field_files(folder)
        if not files:
            raise NotFound("path", f"job {job_id} has no VTU files (yet)")
        return _archive(folder / "fields", files, f"{job_id}-fields.zip")
    if path == EVERYTHING:
        files = _visible(folder)
        if not files:
            raise NotFound("path", f"job {job_id} has no result files (yet)")
        return _archive(folder, files, f"{job_id}-{EVERYTHING}")
    try:
        target = (folder / path).resolve()
    except BAD_PATH:
        raise NotFound("path", f"no file {path[:300]!r} in job {job_id}") from None
    if not target.is_relative_to(folder) or target == folder:
        raise NotFound("path", f"no file {path[:300]!r} in job {job_id}")
    if not _shown(folder, target):
        raise NotFound("path", f"no file {path[:300]!r} in job {job_id} (yet)")
    return FileResponse(target, media_type=_content_type(target.name))


def _archive(root: Path, files: list[Path], name: str) -> StreamingResponse:
    """Zip ``files`` (named relative to ``root``) with the caution into a spooled temporary file (memory first, disk
    when large) and stream it."""
    spool = tempfile.SpooledTemporaryFile(max_size=32 * 2**20)  # noqa: SIM115 - closed by _chunks
    with zipfile.ZipFile(spool, "w", zipfile.ZIP_DEFLATED) as zf:
        zf.writestr(ARCHIVE_NOTE, "\n".join(caution_lines(100)) + "\n")
        for p in files:
            zf.write(p, p.relative_to(root).as_posix())
    spool.seek(0)
    return StreamingResponse(
        _chunks(spool),
        media_type="application/zip",
        headers={"Content-Disposition": f'attachment; filename="{name}"'},
    )


def _chunks(f: IO[bytes]) -> Iterator[bytes]:
    with f:
        yield from iter(lambda: f.read(1 << 16), b"")
