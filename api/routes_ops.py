"""Health and Prometheus metrics: the same facts (api.health), as JSON and as gauges (api.metrics)."""

from __future__ import annotations

import os

from fastapi import APIRouter, Request
from fastapi.responses import JSONResponse, Response
from prometheus_client import CONTENT_TYPE_LATEST, generate_latest

from wakeyard.solver.caution import CAUTION

from .deps import SettingsDep, StoreDep
from .health import check

router = APIRouter(tags=["operations"])


@router.get(
    "/api/v1/health",
    summary="ok, or degraded (503) with the problems: store, broker, workers, disk",
    responses={503: {"description": "degraded: the same body, with the problems listed"}},
)
def health(request: Request, settings: SettingsDep, store: StoreDep) -> JSONResponse:
    found = check(settings, store, request.app.state.celery)
    # which API process answered, and whether it is the one that runs the lease reaper and the disk sweep
    process = {"pid": os.getpid(), "leads": request.app.state.reaper.leading}
    return JSONResponse({**found.body(), "process": process}, status_code=200 if found.ok else 503)


@router.get("/metrics", response_class=Response, summary="Prometheus text format")
def metrics(request: Request) -> Response:
    return Response(generate_latest(request.app.state.registry), media_type=CONTENT_TYPE_LATEST)


@router.get("/api/v1/caution", summary="The caution that goes with every result (the page shows it from here)")
def caution() -> dict[str, str]:
    return {"caution": CAUTION}
