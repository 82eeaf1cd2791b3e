"""The example cases: every ``*.json`` of the ``wakeyard.examples`` package data (the repository's ``examples/``),
as published. The page offers exactly these, so the examples have one home."""

from __future__ import annotations

import json
from functools import cache
from importlib import resources
from typing import Any

from fastapi import APIRouter
from pydantic import BaseModel, Field

router = APIRouter(prefix="/api/v1/examples", tags=["examples"])


class Example(BaseModel):
    name: str = Field(description="the file's name without .json, e.g. bridge_pier")
    title: str
    spec: dict[str, Any] = Field(description="the job spec as published (POST it to /api/v1/jobs as it stands)")


class Examples(BaseModel):
    examples: list[Example]


@cache
def examples() -> tuple[Example, ...]:
    """The examples in name order (read once: they are package data)."""
    files = sorted(
        (f for f in resources.files("wakeyard.examples").iterdir() if f.name.endswith(".json")), key=lambda f: f.name
    )
    out = []
    for f in files:
        spec = json.loads(f.read_text(encoding="utf-8"))
        out.append(Example(name=f.name.removesuffix(".json"), title=spec.get("title", ""), spec=spec))
    return tuple(out)


@router.get(
    "",
    summary="The example cases the page offers (invented demo scenarios)",
    description="Every example of the service's `examples/` folder: `name`, `title` and the job `spec` as published. "
    "They are demonstrations of our own, not design cases.",
)
def list_examples() -> Examples:
    return Examples(examples=list(examples()))
