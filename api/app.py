"""The FastAPI application: API routes first, then the web page mounted at "/"."""

from __future__ import annotations

from collections.abc import AsyncIterator
from contextlib import asynccontextmanager
from importlib import resources

from anyio import to_thread
from fastapi import FastAPI

from wakeyard import solver
from wakeyard.core.broker import make_celery
from wakeyard.core.disk import DiskReserve
from wakeyard.core.migrate import head, revision
from wakeyard.core.settings import Settings
from wakeyard.core.store import Store
from wakeyard.core.store.engine import REQUEST_THREADS
from wakeyard.solver.caution import CAUTION

from . import (
    routes_examples,
    routes_files,
    routes_jobs,
    routes_ops,
    routes_previews,
    routes_spectrum,
    routes_studies,
    routes_study_previews,
    routes_tokens,
    routes_usage,
    routes_worker,
)
from .dispatch import Dispatcher
from .docs import install_docs
from .limits import BodyLimit
from .listeners import Listeners
from .metrics import Timing, registry_for
from .page_files import PageFiles
from .problems import RESPONSES, install
from .quota import Quota
from .reaper import Reaper
from .submission import Submission
from .text_checks import RefuseNul

WEB = resources.files("wakeyard.web")  # package data: the page's files, wherever wakeyard is installed


def create_app(settings: Settings | None = None) -> FastAPI:
    """Build the app for ``settings`` (default: from WAKEYARD_* environment variables)."""
    settings = settings or Settings()
    settings.jobs_dir.mkdir(parents=True, exist_ok=True)
    if (found := revision(settings.db_url)) != head():
        raise RuntimeError(
            f"the job store is at revision {found or 'none'}, this wakeyard needs {head()}: run `wakeyard migrate`"
        )
    store = Store(settings.db_url)
    celery = make_celery(settings)
    listeners = Listeners(store, within=settings.lease_seconds)
    dispatch = Dispatcher(celery, settings.queue, listeners)
    reserve = DiskReserve(settings.data_dir)
    reserve.ensure()
    reaper = Reaper(settings, store, dispatch, reserve, listeners)

    @asynccontextmanager
    async def lifespan(_: FastAPI) -> AsyncIterator[None]:
        to_thread.current_default_thread_limiter().total_tokens = REQUEST_THREADS  # as many as the pool serves
        reaper.start()
        yield
        reaper.close()
        dispatch.close()
        if store.async_engine is not None:  # its connections belong to this event loop
            await store.async_engine.dispose()

    app = FastAPI(
        title="wakeyard",
        version=solver.__version__,
        lifespan=lifespan,
        docs_url=None,  # served by install_docs from packaged assets
        redoc_url=None,
        description=f"Queued 2D incompressible flow simulations. Caution: {CAUTION}",
        responses=RESPONSES,
    )
    app.state.settings, app.state.store, app.state.celery, app.state.dispatch = settings, store, celery, dispatch
    app.state.reaper, app.state.reserve, app.state.quota = reaper, reserve, Quota(settings, store)
    app.state.submission = Submission(store, settings, dispatch, app.state.quota)
    app.state.registry, latency = registry_for(settings, store, celery)
    install(app)
    app.add_middleware(BodyLimit, max_bytes=settings.max_body_bytes, max_seconds=settings.max_body_seconds)
    app.add_middleware(RefuseNul)
    app.add_middleware(Timing, latency=latency)  # outermost of ours: refusals are timed too
    for module in (
        routes_jobs,
        routes_previews,
        routes_files,
        routes_spectrum,
        routes_study_previews,
        routes_studies,
        routes_tokens,
        routes_usage,
        routes_worker,
        routes_ops,
        routes_examples,
    ):
        app.include_router(module.router)
    install_docs(app)
    app.mount("/", PageFiles(directory=str(WEB), html=True), name="web")
    return app
