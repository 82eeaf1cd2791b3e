"""Health and Prometheus metrics, both read from the job store (the source of truth)."""

from __future__ import annotations

from typing import Any

from fastapi import APIRouter, Request
from fastapi.responses import JSONResponse, PlainTextResponse

from solver.caution import CAUTION

router = APIRouter(tags=["operations"])
STATES = ("queued", "running", "succeeded", "failed", "cancelled")


@router.get("/api/v1/health", summary="Database, broker, workers seen and queue depth")
def health(request: Request) -> JSONResponse:
    state = request.app.state
    body: dict[str, Any] = {"database": "ok", "broker": "ok"}
    try:
        state.store.ping()
        counts = state.store.counts()
        body["queue_depth"] = counts.get("queued", 0)
        body["running"] = counts.get("running", 0)
        body["workers_seen"] = state.store.workers_seen(within=30.0)
    except Exception as err:  # report, don't crash: health must answer when things are broken
        body["database"] = f"error: {type(err).__name__}: {err}"
    try:
        with state.celery.connection_for_write() as conn:
            conn.ensure_connection(max_retries=1, timeout=2)
    except Exception as err:
        body["broker"] = f"error: {type(err).__name__}: {err}"
    ok = body["database"] == "ok" and body["broker"] == "ok"
    body["status"] = "ok" if ok else "degraded"
    return JSONResponse(body, status_code=200 if ok else 503)


@router.get("/metrics", response_class=PlainTextResponse, summary="Prometheus text format")
def metrics(request: Request) -> PlainTextResponse:
    store = request.app.state.store
    counts = store.counts()
    lines = ["# HELP wakeyard_jobs Jobs in the store by state.", "# TYPE wakeyard_jobs gauge"]
    lines += [f'wakeyard_jobs{{state="{s}"}} {counts.get(s, 0)}' for s in STATES]
    lines += ["# HELP wakeyard_workers_seen Worker processes that reported in the last 30 s.",
              "# TYPE wakeyard_workers_seen gauge", f"wakeyard_workers_seen {store.workers_seen(within=30.0)}"]
    return PlainTextResponse("\n".join(lines) + "\n", media_type="text/plain; version=0.0.4; charset=utf-8")


@router.get("/api/v1/caution", summary="The caution that goes with every result (the page shows it from here)")
def caution() -> dict[str, str]:
    return {"caution": CAUTION}
