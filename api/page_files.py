"""The page's static files: everything in the ``wakeyard.web`` package except its Python side."""

from __future__ import annotations

from starlette.exceptions import HTTPException
from starlette.responses import Response
from starlette.staticfiles import StaticFiles
from starlette.types import Scope

HIDDEN_SUFFIXES = (".py", ".pyc")


class PageFiles(StaticFiles):
    """StaticFiles that does not serve the package's ``__init__.py`` or byte code: the page is only its assets."""

    async def get_response(self, path: str, scope: Scope) -> Response:
        if path.endswith(HIDDEN_SUFFIXES) or "__pycache__" in path.split("/"):
            raise HTTPException(status_code=404)
        return await super().get_response(path, scope)
