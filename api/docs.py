"""The interactive API reference at /docs, its script and styles served from the fastapi-offline package.

FastAPI's own /docs page loads them from a CDN, which leaves it blank on a machine without internet.
"""

from __future__ import annotations

from importlib import resources

from fastapi import FastAPI
from fastapi.openapi.docs import get_swagger_ui_html, get_swagger_ui_oauth2_redirect_html
from fastapi.responses import HTMLResponse
from fastapi.staticfiles import StaticFiles

ASSETS = "/docs-assets"
FILES = resources.files("fastapi_offline") / "static"  # Swagger UI 5 (reads OpenAPI 3.1), package data


def install_docs(app: FastAPI) -> None:
    """Serve /docs (and its OAuth2 redirect page) with assets from the installed package; no /redoc."""
    app.mount(ASSETS, StaticFiles(directory=str(FILES)), name="docs-assets")
    redirect = "/docs/oauth2-redirect"

    @app.get("/docs", include_in_schema=False)
    def docs() -> HTMLResponse:
        return get_swagger_ui_html(
            openapi_url=app.openapi_url or "/openapi.json",
            title=f"{app.title}: API reference",
            oauth2_redirect_url=redirect,
            swagger_js_url=f"{ASSETS}/swagger-ui-bundle.js",
            swagger_css_url=f"{ASSETS}/swagger-ui.css",
            swagger_favicon_url=f"{ASSETS}/favicon.png",
        )

    @app.get(redirect, include_in_schema=False)
    def oauth2_redirect() -> HTMLResponse:
        return get_swagger_ui_oauth2_redirect_html()
