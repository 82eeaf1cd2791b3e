"""Small polygon helpers for validation and boundary tagging."""

from __future__ import annotations

import numpy as np
from matplotlib.path import Path


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
    """True when the closed polygons come closer than ``gap`` or intersect."""
    if contains(a, b).any() or contains(b, a).any():
        return True
    return bool(min(distance(a, b).min(), distance(b, a).min()) <= gap)


def is_simple(polygon: np.ndarray) -> bool:
    """True when no two non-adjacent edges of the closed polygon cross."""
    n = len(polygon)
    a, b = polygon, np.roll(polygon, -1, axis=0)
    for i in range(n):
        for j in range(i + 2, n):
            if i == 0 and j == n - 1:
                continue
            if _segments_cross(a[i], b[i], a[j], b[j]):
                return False
    return True


def _segments_cross(p1: np.ndarray, p2: np.ndarray, q1: np.ndarray, q2: np.ndarray) -> bool:
    def orient(a: np.ndarray, b: np.ndarray, c: np.ndarray) -> float:
        return float((b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0]))

    d1, d2 = orient(q1, q2, p1), orient(q1, q2, p2)
    d3, d4 = orient(p1, p2, q1), orient(p1, p2, q2)
    return d1 * d2 < 0 and d3 * d4 < 0
