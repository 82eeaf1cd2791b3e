"""Size limits a shared machine puts on a case, checked before the case is built (its unknowns from a dry run of
the mesher, as the preview shows them)."""

from __future__ import annotations

import math
from dataclasses import dataclass

from .errors import SpecError
from .sizing import mesh_size
from .spec import ADAPTIVE, JobSpec


@dataclass(frozen=True)
class Limits:
    max_dofs: int = 2_000_000
    max_steps: int = 1_000_000


def check_limits(spec: JobSpec, limits: Limits, dry_run: bool = True) -> None:
    """Raise :class:`SpecError` naming the field when ``spec`` is too big for ``limits``. The unknowns are the
    preview's (:func:`solver.sizing.mesh_size`: a dry run of the mesher; ``dry_run`` False, or a mesh too big to
    generate quickly: the size rule)."""
    problems = []
    dofs = mesh_size(spec, dry_run).dofs
    if dofs > limits.max_dofs:
        problems.append(
            (
                "mesh",
                f"the mesh would have about {dofs:,} unknowns, over the limit of "
                f"{limits.max_dofs:,}: choose a coarser preset or larger sizes",
            )
        )
    a = spec.analysis
    if a.mode == "transient" and a.time_step is not None and a.scheme != ADAPTIVE:
        ratio = a.end_time / a.time_step  # may be astronomically large for untrusted input
        if ratio > limits.max_steps:
            shown = f"{math.ceil(ratio - 1e-9):,}" if ratio < 1e15 else "over 1e15"
            problems.append(
                ("analysis.time_step", f"{shown} steps (end_time / time_step) exceed the limit of {limits.max_steps:,}")
            )
    if problems:
        raise SpecError(problems)
