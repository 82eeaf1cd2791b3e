"""The one caution that travels with every result: defined here, reused by the files, the API and the page."""

from __future__ import annotations

import textwrap

from matplotlib.figure import Figure

CAUTION = (
    "wakeyard solves the 2D laminar incompressible Navier-Stokes equations. Real piers, cables, pipes and "
    "structures see three-dimensional, usually turbulent flow, so these results are a study aid, not design "
    "loads. Check them against measurements or established methods, and defer to the applicable codes and "
    "standards and to a licensed engineer for any decision that matters."
)


def caution_lines(width: int = 110) -> list[str]:
    """The caution wrapped for a picture footer or a text file, prefixed so it reads as a warning."""
    return textwrap.wrap(f"Caution: {CAUTION}", width)


def add_footer(fig: Figure) -> None:
    """Put the caution under a figure; save with ``bbox_inches="tight"`` so the footer is kept whole."""
    width = int(fig.get_figwidth() * 16)  # characters of 6.5 pt text that fit the figure's width
    fig.text(0.01, -0.01, "\n".join(caution_lines(width)), fontsize=6.5, color="0.35", ha="left", va="top")
