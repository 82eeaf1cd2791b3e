"""Text the job store cannot hold: NUL characters (PostgreSQL refuses them in any string; no field needs them)."""

from __future__ import annotations

from typing import Any

from starlette.responses import JSONResponse
from starlette.types import ASGIApp, Receive, Scope, Send

NUL_MESSAGE = "must not contain NUL characters (U+0000)"


def nul_fields(data: Any, path: str = "") -> list[str]:
    """Dotted paths of the keys and strings in parsed JSON that contain a NUL character."""
    if isinstance(data, str):
        return [path or "(body)"] if "\x00" in data else []
    if isinstance(data, dict):
        found = [f"{path}.{k}".lstrip(".") or "(body)" for k in data if "\x00" in str(k)]
        return found + [f for k, v in data.items() for f in nul_fields(v, f"{path}.{k}".lstrip("."))]
    if isinstance(data, list):
        return [f for i, v in enumerate(data) for f in nul_fields(v, f"{path}.{i}".lstrip("."))]
    return []


class RefuseNul:
    """422 for a NUL in the URL path or query, before any route (and any database query) sees it."""

    def __init__(self, app: ASGIApp):
        self.app = app

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] == "http":
            where = None
            if "\x00" in scope["path"]:
                where = "(path)"
            elif b"\x00" in (query := scope.get("query_string", b"")) or b"%00" in query:  # what decodes to NUL
                where = "(query)"
            if where is not None:
                problem = {"detail": [{"field": where, "message": NUL_MESSAGE}]}
                await JSONResponse(problem, status_code=422)(scope, receive, send)
                return
        await self.app(scope, receive, send)
