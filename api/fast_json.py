"""JSON responses written by pydantic-core's serializer (Rust, already installed with pydantic): a job's answer
carries its whole spec, and the standard library's encoder took about four times as long on every status read."""

from __future__ import annotations

from typing import Any

from fastapi.responses import JSONResponse
from pydantic_core import to_json


class FastJSON(JSONResponse):
    """A JSONResponse for content that is already JSON types (dicts, lists, str, numbers, None). A NaN or infinity
    becomes null (the store keeps none: ``core.store.finite``) rather than failing the response."""

    def render(self, content: Any) -> bytes:
        return to_json(content, inf_nan_mode="null")
