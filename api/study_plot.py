"""A PNG of one summary value against a study's first varied field (one line per value of a second one)."""

from __future__ import annotations

import io
import textwrap

from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from .problems import CAUTION

Point = tuple[dict[str, float], float]  # (varied values, summary value)


def plot_png(points: list[Point], paths: list[str], y: str, title: str) -> bytes:
    """Figure objects directly (no pyplot): nothing global, safe in the API's worker threads."""
    fig = Figure(figsize=(6.4, 4.4), dpi=100)
    FigureCanvasAgg(fig)
    ax = fig.add_subplot()
    groups: dict[float | None, list[tuple[float, float]]] = {}
    for values, value in points:
        key = values.get(paths[1]) if len(paths) > 1 else None
        groups.setdefault(key, []).append((values[paths[0]], value))
    for key, xy in groups.items():
        xs, ys = zip(*sorted(xy))
        ax.plot(xs, ys, marker="o", label=None if key is None else f"{paths[1]} = {key:g}")
    if len(groups) > 1:
        ax.legend()
    ax.set_xlabel(paths[0])
    ax.set_ylabel(y)
    ax.set_title(title or f"{y} against {paths[0]}")
    ax.grid(True, alpha=0.3)
    fig.text(0.01, 0.01, "\n".join(textwrap.wrap(CAUTION, 110)), fontsize=7, color="0.35", va="bottom")
    fig.subplots_adjust(bottom=0.22)
    buf = io.BytesIO()
    fig.savefig(buf, format="png")
    return buf.getvalue()
