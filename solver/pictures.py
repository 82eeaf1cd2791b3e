"""PNG pictures of fields and force histories (matplotlib, headless)."""

from __future__ import annotations

from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
from matplotlib.tri import Triangulation  # noqa: E402

from .caution import add_footer  # noqa: E402
from .spec import JobSpec  # noqa: E402

FIELDS = {
    "speed": ("Speed |u| [m/s]", "viridis"),
    "vorticity": ("Vorticity [1/s]", "RdBu_r"),
    "pressure": ("Pressure [Pa]", "magma"),
}
# drawn only for runs that solve for the temperature
HEAT_FIELDS = {"temperature": ("Temperature [°C]", "inferno")}


def triangulation(points: np.ndarray, element_dofs: np.ndarray) -> Triangulation:
    """Straight sub-triangles: four per quadratic cell, the corner triangle otherwise."""
    t = element_dofs
    if t.shape[0] == 6:
        sub = np.hstack([t[[0, 3, 5]], t[[3, 1, 4]], t[[5, 4, 2]], t[[3, 4, 5]]])
    else:
        sub = t[:3]
    return Triangulation(points[0], points[1], sub.T)


def color_limits(snapshots: list[dict[str, np.ndarray]]) -> dict[str, tuple[float, float]]:
    """One colour scale per run; vorticity symmetric and clipped at the 99th percentile."""
    limits = {}
    speed = np.concatenate([np.hypot(s["ux"], s["uy"]) for s in snapshots])
    limits["speed"] = (0.0, float(speed.max()) or 1.0)
    w = np.concatenate([np.abs(s["vorticity"]) for s in snapshots])
    top = float(np.percentile(w, 99)) or 1.0
    limits["vorticity"] = (-top, top)
    p = np.concatenate([s["pressure"] for s in snapshots])
    lo, hi = np.percentile(p, [0.5, 99.5])
    limits["pressure"] = (float(lo), float(hi) if hi > lo else float(lo) + 1.0)
    return limits


def field_picture(
    path: Path,
    spec: JobSpec,
    tri: Triangulation,
    fields: dict[str, np.ndarray],
    name: str,
    limits: tuple[float, float],
    time: float | None,
    shifts: dict[str, np.ndarray] | None = None,
) -> None:
    """One field over the channel; ``shifts`` moves a body's outline by its displacement (m) at ``time``."""
    label, cmap = {**FIELDS, **HEAT_FIELDS}[name]
    values = np.hypot(fields["ux"], fields["uy"]) if name == "speed" else fields[name]
    L, H = spec.channel.length, spec.channel.height
    width = 10.0
    height = min(8.0, 8.0 * H / L + 1.0)  # axes about 8 in wide at equal aspect, plus margins
    fig, ax = plt.subplots(figsize=(width, height))
    fig.subplots_adjust(left=0.07, right=0.98, bottom=0.62 / height, top=1 - 0.38 / height)
    art = ax.tripcolor(tri, values, shading="gouraud", cmap=cmap, vmin=limits[0], vmax=limits[1])
    for body in spec.bodies:
        outline = body.outline() + (shifts or {}).get(body.name, 0.0)
        ax.fill(*outline.T, facecolor="#d9d9d9", edgecolor="#333333", linewidth=0.6)
    ax.set_aspect("equal")
    ax.set_xlim(0, L)
    ax.set_ylim(0, H)
    ax.set_xlabel("x [m]")
    ax.set_ylabel("y [m]")
    title = spec.title or "flow"
    ax.set_title(
        f"{title}: {label.split(' [')[0].lower()}" + (f" at t = {time:.4g} s" if time is not None else ""), fontsize=10
    )
    fig.colorbar(art, ax=ax, label=label, fraction=0.05, pad=0.015)
    add_footer(fig)
    fig.savefig(path, dpi=110, bbox_inches="tight", pad_inches=0.12)
    plt.close(fig)


def force_plot(path: Path, columns: list[str], data: np.ndarray, body_names: list[str]) -> None:
    """Drag and lift coefficient histories of every body."""
    fig, (top, bottom) = plt.subplots(2, 1, figsize=(9, 5.5), sharex=True, layout="constrained")
    t = data[:, 0]
    for name in body_names:
        top.plot(t, data[:, columns.index(f"{name}_cd")], label=name, linewidth=1)
        bottom.plot(t, data[:, columns.index(f"{name}_cl")], label=name, linewidth=1)
    top.set_ylabel("drag coefficient cD")
    bottom.set_ylabel("lift coefficient cL")
    bottom.set_xlabel("time [s]")
    for ax in (top, bottom):
        ax.grid(alpha=0.3)
    if len(body_names) > 1:
        top.legend(fontsize=8)
    add_footer(fig)
    fig.savefig(path, dpi=110, bbox_inches="tight", pad_inches=0.12)
    plt.close(fig)
