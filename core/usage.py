"""A job folder on disk: the bytes it takes, and the retention rule's trim (fields, pictures and checkpoints go;
the summary, forces, spec and status stay)."""

from __future__ import annotations

import os
import shutil
from pathlib import Path

# what a trimmed job keeps: the small top-level files that carry its result (summary.json, forces.csv, spec.json,
# status.json and the heat tables); everything else (fields/, pictures/, checkpoint.npz) can be recomputed
KEPT_SUFFIXES = (".json", ".csv")


def folder_bytes(folder: Path) -> int:
    """Bytes of the regular files under ``folder`` (0 when it does not exist); a file that vanishes while it is
    walked (a job being deleted or trimmed) simply no longer counts."""
    total = 0
    for root, _, files in os.walk(folder):
        for name in files:
            try:
                st = os.lstat(os.path.join(root, name))
            except FileNotFoundError:
                continue
            total += st.st_size
    return total


def kept(path: Path) -> bool:
    return path.is_file() and not path.is_symlink() and path.suffix.lower() in KEPT_SUFFIXES


def trim(folder: Path) -> int:
    """Delete what the retention rule removes from a job folder; returns the bytes freed. A hard link that a reused
    result shares is only unlinked here: the other job keeps its copy."""
    before = folder_bytes(folder)
    if not folder.is_dir():
        return 0
    for entry in folder.iterdir():
        if entry.is_dir() and not entry.is_symlink():
            shutil.rmtree(entry, ignore_errors=True)
        elif not kept(entry):
            entry.unlink(missing_ok=True)
    return before - folder_bytes(folder)
