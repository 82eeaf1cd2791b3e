"""Health and Prometheus metrics: the same facts (api.health), as JSON and as gauges."""

from __future__ import annotations

from fastapi import APIRouter, Request
from fastapi.responses import JSONResponse, PlainTextResponse

from core.states import JobState
from solver.caution import CAUTION

from .health import check

router = APIRouter(tags=["operations"])


@router.get(
    "/api/v1/health",
    summary="ok, or degraded (503) with the problems: store, broker, workers, disk",
    responses={503: {"description": "degraded: the same body, with the problems listed"}},
)
def health(request: Request) -> JSONResponse:
    state = request.app.state
    found = check(state.settings, state.store, state.celery)
    return JSONResponse(found.body(), status_code=200 if found.ok else 503)


def _gauge(name: str, help_text: str, samples: list[tuple[str, int]]) -> list[str]:
    return [f"# HELP {name} {help_text}", f"# TYPE {name} gauge"] + [
        f"{name}{labels} {int(value)}" for labels, value in samples
    ]


@router.get("/metrics", response_class=PlainTextResponse, summary="Prometheus text format")
def metrics(request: Request) -> PlainTextResponse:
    state = request.app.state
    found = check(state.settings, state.store, state.celery)
    lines = _gauge("wakeyard_healthy", "1 when /api/v1/health says ok, 0 when degraded.", [("", found.ok)])
    lines += _gauge(
        "wakeyard_up",
        "1 when the component answers.",
        [('{component="database"}', found.database == "ok"), ('{component="broker"}', found.broker == "ok")],
    )
    if found.database == "ok":
        lines += _gauge(
            "wakeyard_jobs",
            "Jobs in the store by state.",
            [(f'{{state="{s}"}}', found.counts.get(s, 0)) for s in JobState],
        )
        lines += _gauge(
            "wakeyard_workers_seen",
            "Worker processes that reported in within the lease.",
            [("", found.workers_seen or 0)],
        )
    if found.free_disk_bytes is not None:
        lines += _gauge("wakeyard_free_disk_bytes", "Free space in the data folder.", [("", found.free_disk_bytes)])
    return PlainTextResponse("\n".join(lines) + "\n", media_type="text/plain; version=0.0.4; charset=utf-8")


@router.get("/api/v1/caution", summary="The caution that goes with every result (the page shows it from here)")
def caution() -> dict[str, str]:
    return {"caution": CAUTION}
