"""Small polygon helpers for validation and boundary tagging."""

from __future__ import annotations

import numpy as np
from matplotlib.path import Path
from shapely.geometry import LinearRing
from shapely.geometry import Polygon as ShapelyPolygon


def contains(polygon: np.ndarray, points: np.ndarray) -> np.ndarray:
    """Which of ``points`` (``(n, 2)``) lie strictly inside the closed ``polygon``."""
    return Path(polygon).contains_points(np.atleast_2d(points))


def distance(polygon: np.ndarray, points: np.ndarray) -> np.ndarray:
    """Distance from each of ``points`` (``(n, 2)``) to the edges of the closed ``polygon``."""
    a = polygon[:, None, :]
    b = np.roll(polygon, -1, axis=0)[:, None, :]
    p = np.atleast_2d(points)[None, :, :]
    ab = b - a
    s = np.clip(((p - a) * ab).sum(-1) / np.maximum((ab * ab).sum(-1), 1e-300), 0, 1)
    return np.linalg.norm(p - (a + s[..., None] * ab), axis=-1).min(axis=0)


def overlap(a: np.ndarray, b: np.ndarray, gap: float = 0.0) -> bool:
    """True when the closed polygons come closer than ``gap`` or intersect (one inside the other included).

    GEOS's distance between the two areas (zero when they intersect), near O(n log n); a self-crossing outline
    is reported on its own and measured by its edges here."""
    first, second = ShapelyPolygon(a), ShapelyPolygon(b)
    if not (first.is_valid and second.is_valid):
        first, second = LinearRing(a), LinearRing(b)
    return bool(first.distance(second) <= gap)


def gap(a: np.ndarray, b: np.ndarray) -> float:
    """Distance between the areas of two closed polygons (zero when they intersect); by their edges when one
    crosses itself (reported on its own)."""
    first, second = ShapelyPolygon(a), ShapelyPolygon(b)
    if not (first.is_valid and second.is_valid):
        first, second = LinearRing(a), LinearRing(b)
    return float(first.distance(second))


def area(polygon: np.ndarray) -> float:
    """The area a closed polygon encloses (the shoelace formula, either orientation)."""
    x, y = polygon[:, 0], polygon[:, 1]
    return 0.5 * abs(float(x @ np.roll(y, -1) - y @ np.roll(x, -1)))


def is_simple(polygon: np.ndarray) -> bool:
    """True when no two edges of the closed polygon cross or touch, except neighbours at their common corner.

    GEOS (through shapely) sweeps the edges in O(n log n): a pairwise test in Python took seconds per polygon."""
    return bool(LinearRing(polygon).is_simple)
