"""One error shape for every refused request (4xx): ``{"detail": [{"field", "message"}]}``, as for a bad spec (422).

Services raise the domain errors below (or :class:`SpecProblems` for input the solver refuses); the handlers that
:func:`install` registers turn them, FastAPI's own validation errors and Starlette's 404/405 into that shape.
``field`` names the input at fault: a spec path, a query or path parameter, ``Authorization``, or ``(body)``,
``(path)``, ``(query)``, ``(request)`` for the request as a whole.
"""

from __future__ import annotations

from typing import Any

from fastapi import FastAPI, HTTPException, Request
from fastapi.exceptions import RequestValidationError
from fastapi.responses import JSONResponse
from sqlalchemy.exc import SQLAlchemyError
from starlette.exceptions import HTTPException as StarletteHTTPException

from wakeyard.core.disk import disk_full

Problems = list[tuple[str, str]]


class Problem(Exception):
    """A request the service refuses, with the status that says why."""

    status = 400
    headers: dict[str, str] | None = None

    def __init__(self, field: str, message: str):
        super().__init__(f"{field}: {message}")
        self.problems: Problems = [(field, message)]


class Unauthorized(Problem):
    status = 401
    headers = {"WWW-Authenticate": "Bearer"}


class Forbidden(Problem):
    status = 403


class NotFound(Problem):
    status = 404


class Conflict(Problem):
    status = 409


class TooManyJobs(Problem):
    status = 429


class NoSpace(Problem):
    """Refused because the data folder keeps less free space than ``min_free_mb`` (507 Insufficient Storage)."""

    status = 507


class SpecProblems(HTTPException):
    """Input the solver (or the service's limits) refuses. An HTTPException, so that FastAPI passes it through
    unchanged even when it is raised while the request body is being read (the size and time caps)."""

    def __init__(self, problems: Problems, status: int = 422):
        self.problems = problems
        super().__init__(status, "; ".join(f"{f}: {m}" for f, m in problems))


def body(problems: Problems) -> dict[str, Any]:
    return {"detail": [{"field": f, "message": m} for f, m in problems]}


def respond(problems: Problems, status: int, headers: dict[str, str] | None = None) -> JSONResponse:
    return JSONResponse(body(problems), status_code=status, headers=headers)


async def _problem(_: Request, exc: Exception) -> JSONResponse:
    assert isinstance(exc, Problem)
    if exc.status >= 500:  # the service's trouble, not the request's: one message, as every 5xx
        return JSONResponse({"detail": "; ".join(m for _, m in exc.problems)}, status_code=exc.status)
    return respond(exc.problems, exc.status, exc.headers)


async def _spec_problems(_: Request, exc: Exception) -> JSONResponse:
    assert isinstance(exc, SpecProblems)
    return respond(exc.problems, exc.status_code)


async def _http(_: Request, exc: Exception) -> JSONResponse:
    """Starlette's and FastAPI's own refusals (an unknown path, a method not allowed) in the same shape."""
    assert isinstance(exc, StarletteHTTPException)
    return respond([("(request)", str(exc.detail))], exc.status_code, dict(exc.headers or {}) or None)


def _field(loc: tuple[object, ...]) -> str:
    parts = [str(p) for p in loc]
    if parts and parts[0] == "body":
        parts = parts[1:]
    return ".".join(parts) or "(body)"


async def _validation(_: Request, exc: Exception) -> JSONResponse:
    assert isinstance(exc, RequestValidationError)
    found = []
    for e in exc.errors():
        field, msg = _field(tuple(e.get("loc", ()))), str(e.get("msg", "invalid"))
        if e.get("type") == "json_invalid":
            field = "(body)"
            msg = f"not valid JSON at character {e['loc'][-1]}: {e.get('ctx', {}).get('error', msg)}"
        found.append((field, msg))
    return respond(found, 422)


DISK_FULL = (
    "the data folder's disk is full: nothing new can be stored until space is freed (delete jobs that are "
    "no longer needed)"
)


async def _disk_full(_: Request, exc: Exception) -> JSONResponse:
    """507 Insufficient Storage for a write the full disk refused; any other error stays a server error."""
    if not disk_full(exc):
        raise exc
    return JSONResponse({"detail": DISK_FULL}, status_code=507)


def install(app: FastAPI) -> None:
    app.add_exception_handler(Problem, _problem)
    app.add_exception_handler(SpecProblems, _spec_problems)
    app.add_exception_handler(StarletteHTTPException, _http)
    app.add_exception_handler(RequestValidationError, _validation)
    app.add_exception_handler(OSError, _disk_full)
    app.add_exception_handler(SQLAlchemyError, _disk_full)
