"""A fingerprint of the solver's code, so that a reused result was computed by exactly the solver installed now.

A hand-maintained version string goes stale when a fix lands without a bump; the bytes of the solver's source
files, and the versions of the numerical libraries it calls, cannot.
"""

from __future__ import annotations

import hashlib
from functools import cache
from importlib import metadata
from pathlib import Path

from wakeyard import solver

# the libraries whose results the solver passes on (a new release may change the last digits)
NUMERICAL = ("numpy", "scipy", "scikit-fem", "gmsh", "pypardiso")


def code_fingerprint(folder: Path) -> str:
    """SHA-256 over the relative paths and bytes of every ``.py`` file below ``folder``, in a fixed order."""
    digest = hashlib.sha256()
    for path in sorted(folder.rglob("*.py")):
        digest.update(path.relative_to(folder).as_posix().encode() + b"\0")
        digest.update(path.read_bytes() + b"\0")
    return digest.hexdigest()


def _version(name: str) -> str:
    try:
        return metadata.version(name)
    except metadata.PackageNotFoundError:
        return "-"


@cache
def solver_fingerprint() -> str:
    """The installed solver's fingerprint, computed once per process (its files do not change while it runs)."""
    libraries = ",".join(f"{name}={_version(name)}" for name in NUMERICAL)
    return f"{code_fingerprint(Path(solver.__file__).parent)};{libraries}"
