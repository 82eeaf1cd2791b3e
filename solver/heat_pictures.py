"""Plots of heat transfer: the local Nusselt number around each body and the Nusselt history (headless)."""

from __future__ import annotations

from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402

from .caution import add_footer  # noqa: E402


def local_nusselt_plot(path: Path, local: dict[str, np.ndarray]) -> None:
    """Local Nusselt number against the angle from each body's upstream point (rows of ``local_nusselt``)."""
    fig, ax = plt.subplots(figsize=(8, 4.5), layout="constrained")
    for name, table in local.items():
        ax.plot(table[:, 2], table[:, 4], label=name, linewidth=1)
    ax.set_xlabel("angle from the upstream point [deg] (90: top)")
    ax.set_ylabel("local Nusselt number [-]")
    ax.set_xlim(0, 360)
    ax.grid(alpha=0.3)
    if len(local) > 1:
        ax.legend(fontsize=8)
    add_footer(fig)
    fig.savefig(path, dpi=110, bbox_inches="tight", pad_inches=0.12)
    plt.close(fig)


def nusselt_history(path: Path, columns: list[str], data: np.ndarray) -> None:
    """Mean Nusselt number of every heated body over time."""
    fig, ax = plt.subplots(figsize=(9, 3.5), layout="constrained")
    for k, name in enumerate(columns):
        if name.endswith("_nu"):
            ax.plot(data[:, 0], data[:, k], label=name.removesuffix("_nu"), linewidth=1)
    ax.set_xlabel("time [s]")
    ax.set_ylabel("mean Nusselt number [-]")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8)
    add_footer(fig)
    fig.savefig(path, dpi=110, bbox_inches="tight", pad_inches=0.12)
    plt.close(fig)
