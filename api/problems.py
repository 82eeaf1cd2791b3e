"""One error shape for every bad request: ``{"detail": [{"field", "message"}]}`` with status 422."""

from __future__ import annotations

from fastapi import HTTPException, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse

from core.disk import disk_full


class SpecProblems(HTTPException):
    """Raised by routes for input the solver (or the service's limits) refuses. An HTTPException, so that FastAPI
    passes it through unchanged even when it is raised while the request body is being read (the size cap)."""

    def __init__(self, problems: list[tuple[str, str]], status: int = 422):
        self.problems = problems
        super().__init__(status, "; ".join(f"{f}: {m}" for f, m in problems))


def _field(loc: tuple[object, ...]) -> str:
    parts = [str(p) for p in loc]
    if parts and parts[0] == "body":
        parts = parts[1:]
    return ".".join(parts) or "(body)"


async def spec_problems_handler(_: Request, exc: Exception) -> JSONResponse:
    assert isinstance(exc, SpecProblems)
    return JSONResponse({"detail": [{"field": f, "message": m} for f, m in exc.problems]}, status_code=exc.status_code)


DISK_FULL = (
    "the data folder's disk is full: nothing new can be stored until space is freed (delete jobs that are "
    "no longer needed)"
)


async def disk_full_handler(_: Request, exc: Exception) -> JSONResponse:
    """507 Insufficient Storage for a write the full disk refused; any other error stays a server error."""
    if not disk_full(exc):
        raise exc
    return JSONResponse({"detail": DISK_FULL}, status_code=507)


async def validation_handler(_: Request, exc: Exception) -> JSONResponse:
    assert isinstance(exc, RequestValidationError)
    detail = []
    for e in exc.errors():
        field, msg = _field(tuple(e.get("loc", ()))), str(e.get("msg", "invalid"))
        if e.get("type") == "json_invalid":
            field = "(body)"
            msg = f"not valid JSON at character {e['loc'][-1]}: {e.get('ctx', {}).get('error', msg)}"
        detail.append({"field": field, "message": msg})
    return JSONResponse({"detail": detail}, status_code=422)
