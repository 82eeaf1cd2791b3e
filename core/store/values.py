"""Values as the job store keeps them: aware UTC times, JSON without NaN or infinity."""

from __future__ import annotations

import math
from datetime import UTC, datetime
from typing import Any


def utcnow() -> datetime:
    return datetime.now(UTC)


def finite(value: Any) -> Any:
    """JSON columns on PostgreSQL (and JSON responses) reject NaN/inf: make them null."""
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {k: finite(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [finite(v) for v in value]
    return value
