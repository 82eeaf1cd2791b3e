"""A picture of the mesh: the whole channel, and a close-up of each body (where the cells are finest)."""

from __future__ import annotations

from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.tri import Triangulation  # noqa: E402

from .caution import add_footer  # noqa: E402
from .spec import JobSpec  # noqa: E402

MAX_CLOSE_UPS = 6  # bodies beyond this get no close-up of their own (the whole-channel view still shows them)
CLOSE_UP = 3.0  # a close-up spans this many body sizes


def mesh_picture(path: Path, spec: JobSpec, points: np.ndarray, corners: np.ndarray) -> None:
    """``points`` (2, n) and ``corners`` (3, cells): the cells drawn with straight edges (curved cells follow the
    body; their straight chords are close to it at these sizes)."""
    tri = Triangulation(points[0], points[1], corners.T)
    bodies = spec.bodies[:MAX_CLOSE_UPS]
    L, H = spec.channel.length, spec.channel.height
    cols = max(1, len(bodies))
    fig = plt.figure(figsize=(10, 10 * H / L + (3.4 if bodies else 0) + 1), layout="constrained")
    grid = fig.add_gridspec(2 if bodies else 1, cols, height_ratios=[max(10 * H / L, 1.5), 3.2] if bodies else None)
    whole = fig.add_subplot(grid[0, :])
    _draw(whole, tri, spec)
    whole.set_xlim(0, L)
    whole.set_ylim(0, H)
    whole.set_title(f"{spec.title or 'mesh'}: {corners.shape[1]:,} cells", fontsize=10)
    whole.set_xlabel("x [m]")
    whole.set_ylabel("y [m]")
    for i, body in enumerate(bodies):
        ax = fig.add_subplot(grid[1, i])
        _draw(ax, tri, spec)
        outline = body.outline()
        centre = (outline.min(axis=0) + outline.max(axis=0)) / 2
        half = CLOSE_UP * float(np.ptp(outline, axis=0).max()) / 2
        ax.set_xlim(centre[0] - half, centre[0] + half)
        ax.set_ylim(centre[1] - half, centre[1] + half)
        ax.set_title(f"close-up: {body.name}", fontsize=9)
        ax.tick_params(labelsize=7)
    add_footer(fig)
    fig.savefig(path, dpi=110, bbox_inches="tight", pad_inches=0.12)
    plt.close(fig)


def _draw(ax: plt.Axes, tri: Triangulation, spec: JobSpec) -> None:
    ax.triplot(tri, color="#3d5a80", linewidth=0.25)
    for body in spec.bodies:
        ax.fill(*body.outline().T, facecolor="#e0e0e0", edgecolor="#222222", linewidth=0.6)
    ax.set_aspect("equal")
