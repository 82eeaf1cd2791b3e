"""Grid convergence: observed order, Richardson extrapolation and the grid convergence index.

Follows the three-grid procedure of Roache (1994) as set out by Celik et al.
(2008, J. Fluids Eng. 130, 078001): grids 1 (finest), 2 and 3 with refinement
ratios r21 = h2/h1 and r32 = h3/h2, which need not be equal.
"""

from __future__ import annotations

import math
from dataclasses import dataclass


@dataclass
class GridConvergence:
    observed_order: float
    extrapolated: float
    approximate_error: float
    extrapolated_error: float
    gci_fine: float
    monotone: bool
    reason: str | None = None  # why the numbers are undefined (NaN), if they are


def grid_convergence(
    h: tuple[float, float, float], phi: tuple[float, float, float], safety_factor: float = 1.25, noise: float = 1e-9
) -> GridConvergence:
    """Analyse one quantity ``phi`` computed on three grids of cell sizes ``h`` (finest first).

    Errors are relative to the finest-grid value (``approximate_error``) and
    to the extrapolated value (``extrapolated_error``); ``gci_fine`` is the
    grid convergence index of the finest grid, as a fraction.

    Differences between grids below ``noise`` times the largest value are
    round-off or solver-tolerance noise, not discretisation error (the
    threshold is a project choice, under the default Newton tolerance of
    1e-8): order, extrapolation and GCI are then undefined (NaN) and
    ``reason`` says why, as they are when a value does not change at all.

    Examples
    --------
    >>> g = grid_convergence((1.0, 2.0, 4.0), (1.01, 1.04, 1.16))
    >>> round(g.observed_order, 6), round(g.extrapolated, 6)
    (2.0, 1.0)
    """
    h1, h2, h3 = h
    p1, p2, p3 = phi
    if not h1 < h2 < h3:
        raise ValueError("cell sizes must grow from the finest to the coarsest grid")
    r21, r32 = h2 / h1, h3 / h2
    e21, e32 = p2 - p1, p3 - p2
    floor = noise * max(abs(p1), abs(p2), abs(p3))
    if abs(e21) <= floor or abs(e32) <= floor:
        reason = (
            "the value does not change between grids"
            if e21 == 0 or e32 == 0
            else f"the change between grids ({max(abs(e21), abs(e32)):.2g} at most) is at the level of round-off "
            f"(below {noise:g} of the value): no order can be observed"
        )
        return GridConvergence(math.nan, p1, abs(e21 / p1) if p1 else 0.0, math.nan, math.nan, False, reason)
    ratio = e32 / e21
    if abs(abs(ratio) - 1.0) <= 1e-12:
        reason = "the change between grids does not shrink with refinement: no order can be observed"
        return GridConvergence(math.nan, p1, _relative(p1 - p2, p1), math.nan, math.nan, ratio > 0, reason)
    s = math.copysign(1.0, ratio)
    p = abs(math.log(abs(ratio))) / math.log(r21)
    for _ in range(200):
        q = math.log((r21**p - s) / (r32**p - s))
        new = abs(math.log(abs(ratio)) + q) / math.log(r21)
        if abs(new - p) < 1e-12:
            break
        p = new
    p = new
    extrapolated = (r21**p * p1 - p2) / (r21**p - 1)
    approx = _relative(p1 - p2, p1)
    return GridConvergence(
        observed_order=p,
        extrapolated=extrapolated,
        approximate_error=approx,
        extrapolated_error=_relative(extrapolated - p1, extrapolated),
        gci_fine=safety_factor * approx / (r21**p - 1),
        monotone=ratio > 0,
        reason=None if p1 else "the finest-grid value is 0: errors relative to it (and the GCI) are undefined",
    )


def _relative(difference: float, reference: float) -> float:
    """``|difference / reference|``, NaN (undefined, not an error) when the reference is 0."""
    return abs(difference / reference) if reference else math.nan
