"""Request-body size cap as pure ASGI middleware, so oversized bodies are refused before they are buffered."""

from __future__ import annotations

from starlette.responses import JSONResponse
from starlette.types import ASGIApp, Message, Receive, Scope, Send

from .problems import SpecProblems


class BodyLimit:
    def __init__(self, app: ASGIApp, max_bytes: int):
        self.app, self.max_bytes = app, max_bytes

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        declared = dict(scope["headers"]).get(b"content-length")
        if declared is not None and (not declared.isdigit() or int(declared) > self.max_bytes):
            await self._refuse(scope, receive, send)
            return
        seen = 0

        async def counted() -> Message:
            nonlocal seen
            message = await receive()
            seen += len(message.get("body", b""))
            if seen > self.max_bytes:  # the same problem shape as the refusal on Content-Length
                raise SpecProblems([("(body)", self._message())], status=413)
            return message

        await self.app(scope, counted, send)

    def _message(self) -> str:
        return f"request body: over the limit of {self.max_bytes:,} bytes"

    async def _refuse(self, scope: Scope, receive: Receive, send: Send) -> None:
        await JSONResponse({"detail": [{"field": "(body)", "message": self._message()}]}, 413)(scope, receive, send)
