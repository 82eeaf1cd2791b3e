"""Prometheus metrics (prometheus_client): request latency histograms, and the facts of ``api.health`` as gauges
read at each scrape. Each app has its own registry, so several apps in one process (the tests) never clash."""

from __future__ import annotations

import os
import time
from collections.abc import Iterator

from celery import Celery
from prometheus_client import CollectorRegistry, Histogram
from prometheus_client.core import GaugeMetricFamily, Metric
from prometheus_client.multiprocess import MultiProcessCollector
from prometheus_client.registry import Collector
from starlette.types import ASGIApp, Message, Receive, Scope, Send

from wakeyard.core.settings import Settings
from wakeyard.core.states import JobState
from wakeyard.core.store import Store

from .health import check


class HealthCollector(Collector):
    """The health check's facts; no job or worker numbers while the store does not answer (rather than wrong ones)."""

    def __init__(self, settings: Settings, store: Store, celery: Celery):
        self.settings, self.store, self.celery = settings, store, celery

    def collect(self) -> Iterator[Metric]:
        found = check(self.settings, self.store, self.celery)
        yield _gauge("wakeyard_healthy", "1 when /api/v1/health says ok, 0 when degraded.", found.ok)
        up = GaugeMetricFamily("wakeyard_up", "1 when the component answers.", labels=["component"])
        up.add_metric(["database"], found.database == "ok")
        up.add_metric(["broker"], found.broker == "ok")
        yield up
        if found.database == "ok":
            jobs = GaugeMetricFamily("wakeyard_jobs", "Jobs in the store by state.", labels=["state"])
            for state in JobState:
                jobs.add_metric([state.value], found.counts.get(state, 0))
            yield jobs
            yield _gauge(
                "wakeyard_workers_seen", "Worker processes that reported in within the lease.", found.workers_seen or 0
            )
        if found.free_disk_bytes is not None:
            yield _gauge("wakeyard_free_disk_bytes", "Free space in the data folder.", found.free_disk_bytes)


class DiskUseCollector(Collector):
    """Bytes of result files per owner as the disk sweep last measured them, and the per-user quota."""

    def __init__(self, settings: Settings, store: Store):
        self.settings, self.store = settings, store

    def collect(self) -> Iterator[Metric]:
        try:
            use = self.store.disk_use_by_owner()
        except Exception:  # the store does not answer: health says so; no numbers rather than wrong ones
            return
        used = GaugeMetricFamily("wakeyard_disk_used_bytes", "Result files each owner's jobs take.", labels=["owner"])
        for owner, n in sorted(use.items()):
            used.add_metric([owner], n)
        yield used
        yield _gauge("wakeyard_disk_quota_bytes", "Per-user quota (0: none).", self.settings.user_quota_bytes)


def _gauge(name: str, documentation: str, value: float) -> GaugeMetricFamily:
    return GaugeMetricFamily(name, documentation, value=float(value))


def registry_for(settings: Settings, store: Store, celery: Celery) -> tuple[CollectorRegistry, Histogram]:
    """The scrape's registry and the latency histogram. Under ``serve --api-processes N`` (``PROMETHEUS_MULTIPROC_DIR``
    set) every process writes its histogram to that folder and a scrape, whichever process answers it, sums them
    all (prometheus_client's multiprocess mode)."""
    registry = CollectorRegistry(auto_describe=False)
    registry.register(HealthCollector(settings, store, celery))
    registry.register(DiskUseCollector(settings, store))
    shared = bool(os.environ.get("PROMETHEUS_MULTIPROC_DIR"))
    if shared:
        MultiProcessCollector(registry)
    latency = Histogram(
        "wakeyard_http_request_duration_seconds",
        "Time from a request's arrival to the start of its response, by route template, method and status.",
        ["method", "route", "status"],
        registry=None if shared else registry,
    )
    return registry, latency


class Timing:
    """Pure ASGI middleware that observes each HTTP request's latency under its route template (``/api/v1/jobs/
    {job_id}``, never the raw path, so the label set stays small); the page's files count as ``(page)``."""

    def __init__(self, app: ASGIApp, latency: Histogram):
        self.app, self.latency = app, latency

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        start = time.perf_counter()

        async def timed(message: Message) -> None:
            if message["type"] == "http.response.start":
                route = getattr(scope.get("route"), "path", "(page)")
                self.latency.labels(scope["method"], route, str(message["status"])).observe(time.perf_counter() - start)
            await send(message)

        await self.app(scope, receive, timed)
