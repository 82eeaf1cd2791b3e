"""A PNG of one summary value against a study's first varied field (one line per value of a second one)."""

from __future__ import annotations

import io

from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure

from wakeyard.solver.caution import add_footer
from wakeyard.solver.units import labelled, spec_unit, value_unit

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
    second = labelled(paths[1], spec_unit(paths[1])) if len(paths) > 1 else ""
    for key, xy in groups.items():
        xs, ys = zip(*sorted(xy))
        ax.plot(xs, ys, marker="o", label=None if key is None else f"{second} = {key:g}")
    if len(groups) > 1:
        ax.legend()
    ax.set_xlabel(labelled(paths[0], spec_unit(paths[0])))
    ax.set_ylabel(labelled(y, value_unit(y)))
    ax.set_title(title or f"{y} against {paths[0]}")
    ax.grid(True, alpha=0.3)
    fig.tight_layout()
    add_footer(fig)
    buf = io.BytesIO()
    fig.savefig(buf, format="png", bbox_inches="tight", pad_inches=0.12)
    return buf.getvalue()
