"""The SHA-256 of a file, as the service and a remote worker both check an upload by it."""

from __future__ import annotations

import hashlib
from pathlib import Path


def sha256_of(path: Path) -> str:
    """Hex SHA-256 of the file at ``path``, read in blocks (a checkpoint can be hundreds of MB)."""
    with open(path, "rb") as f:
        return hashlib.file_digest(f, "sha256").hexdigest()
