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
from pydantic import BaseModel, Field
from sqlalchemy.exc import SQLAlchemyError
from starlette.exceptions import HTTPException as StarletteHTTPException

from wakeyard.core.disk import disk_full
from wakeyard.solver.spec import problems_of

from .fast_json import FastJSON
from .text_checks import NUL_MESSAGE, nul_fields

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


class BadRequest(Problem):
    status = 400


class Conflict(Problem):
    status = 409


class LengthRequired(Problem):
    status = 411


class TimedOut(Problem):
    """The request body stalled or took too long. The connection is closed with the answer (RFC 9110, 408): the rest
    of that body may still be on its way, and the client's next request must not follow it on the same line."""

    status = 408
    headers = {"Connection": "close"}


class TooLarge(Problem):
    status = 413


class Unprocessable(Problem):
    status = 422


class TooManyJobs(Problem):
    status = 429


class NoSpace(Problem):
    """Refused because the data folder keeps less free space than ``min_free_mb`` (507 Insufficient Storage)."""

    status = 507


class OverQuota(Problem):
    """Refused because the owner's result files reach the per-user quota (507 Insufficient Storage)."""

    status = 507


class SpecProblems(HTTPException):
    """Input the solver (or the service's limits) refuses. An HTTPException, so that FastAPI passes it through
    unchanged even when it is raised while the request body is being read (the size and time caps)."""

    def __init__(self, problems: Problems, status: int = 422):
        self.problems = problems
        super().__init__(status, "; ".join(f"{f}: {m}" for f, m in problems))


class Problem4xx(BaseModel):
    field: str = Field(description="the input at fault: a spec path, a parameter, Authorization, (body), (request)")
    message: str


class Refused(BaseModel):
    """The one shape of every refused request (4xx): every problem found, each naming the input at fault."""

    detail: list[Problem4xx]


# what OpenAPI shows for every 4xx of every route (in place of FastAPI's own validation-error shape)
RESPONSES: dict[int | str, dict[str, Any]] = {"4XX": {"model": Refused, "description": "refused, with every problem"}}


def body(problems: Problems) -> dict[str, Any]:
    return {"detail": [{"field": f, "message": m} for f, m in problems]}


def respond(problems: Problems, status: int, headers: dict[str, str] | None = None) -> JSONResponse:
    return FastJSON(body(problems), status_code=status, headers=headers)


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
    """A parameter's place and name, e.g. ``query.state``."""
    return ".".join(str(p) for p in loc) or "(request)"


# pydantic's error types for a body that is not a JSON object at all, or no body
_NOT_AN_OBJECT = ("model_attributes_type", "model_type", "dict_type", "missing")


async def _validation(_: Request, exc: Exception) -> JSONResponse:
    """Every problem FastAPI found at once: a request body typed as a spec model (JobSpec, StudySpec) is reported
    as the solver reports a spec (the same paths and messages), a parameter by where it is and its name."""
    assert isinstance(exc, RequestValidationError)
    found: Problems = []
    for e in exc.errors():
        loc, msg = tuple(e.get("loc", ())), str(e.get("msg", "invalid"))
        if e.get("type") == "json_invalid":
            found.append(("(body)", f"not valid JSON at character {loc[-1]}: {e.get('ctx', {}).get('error', msg)}"))
        elif loc == ("body",) and e.get("type") in _NOT_AN_OBJECT:
            got = "nothing" if e.get("type") == "missing" else type(e.get("input")).__name__
            found.append(("(body)", f"must be a JSON object, got {got}"))
        elif loc[:1] == ("body",):
            found += problems_of([e], skip=1)
        else:
            found.append((_field(loc), msg))
    if isinstance(exc.body, dict):  # the store could not keep a NUL character either: say so at once too
        named = {field for field, _ in found}
        found += [(field, NUL_MESSAGE) for field in nul_fields(exc.body) if field not in named]
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
