"""Which saved snapshots get field pictures: one per output interval, up to a cap, evenly spread past it.

Kept apart from ``pictures`` (matplotlib) so the preview can say how many pictures a run will draw.
"""

from __future__ import annotations

import math

from .spec import JobSpec

MAX_PICTURES = 24
"""At most this many pictures of each field per run (drawing them takes seconds each)."""


def chosen(count: int, cap: int = MAX_PICTURES) -> list[int]:
    """Indices of the ``count`` snapshots to draw: all up to ``cap``; past it every k-th, evenly spaced and ending on
    the last snapshot (the final state is the one most looked at).

    >>> chosen(4), chosen(17, cap=12), len(chosen(101))
    ([0, 1, 2, 3], [0, 2, 4, 6, 8, 10, 12, 14, 16], 21)
    """
    every = max(1, math.ceil(count / cap))
    return list(range((count - 1) % every, count, every))


def expected_snapshots(end_time: float, interval: float) -> int:
    """Snapshots a transient run saves: the start, one per output interval crossed, and the end when it falls
    between two (a run stopped early by ``until_periodic`` saves fewer)."""
    return 1 + math.ceil(end_time / interval - 1e-9)


def interval(end_time: float, output_interval: float | None) -> float:
    """Simulated time between snapshots: the spec's, or a twentieth of the run when it gives none."""
    return output_interval or end_time / 20


def plan(spec: JobSpec) -> dict[str, int]:
    """What a run of ``spec`` draws: ``snapshots`` saved, ``drawn`` pictures of each field (every ``every``-th
    snapshot), and the ``cap``."""
    a = spec.analysis
    snapshots = 1 if a.mode == "steady" else expected_snapshots(a.end_time, interval(a.end_time, a.output_interval))
    drawn = chosen(snapshots)
    return {
        "snapshots": snapshots,
        "drawn": len(drawn),
        "every": drawn[1] - drawn[0] if len(drawn) > 1 else 1,
        "cap": MAX_PICTURES,
    }
