"""Request-body size and time caps as pure ASGI middleware: oversized bodies are refused before they are buffered,
and a body that arrives too slowly (or stalls) is refused instead of holding a connection open indefinitely."""

from __future__ import annotations

import asyncio

from starlette.responses import JSONResponse
from starlette.types import ASGIApp, Message, Receive, Scope, Send

from .problems import SpecProblems


class BodyLimit:
    """``streamed``: the path prefix of PUT uploads, which check their own size (remote workers' result files)."""

    def __init__(self, app: ASGIApp, max_bytes: int, max_seconds: float, streamed: str = "/api/v1/worker/jobs/"):
        self.app, self.max_bytes, self.max_seconds, self.streamed = app, max_bytes, max_seconds, streamed

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        uploading = scope["type"] == "http" and scope["method"] == "PUT" and scope["path"].startswith(self.streamed)
        if scope["type"] != "http" or uploading:
            await self.app(scope, receive, send)
            return
        declared = dict(scope["headers"]).get(b"content-length")
        if declared is not None and (not declared.isdigit() or int(declared) > self.max_bytes):
            await self._refuse(scope, receive, send)
            return
        seen, complete, deadline = 0, False, asyncio.get_running_loop().time() + self.max_seconds

        async def counted() -> Message:
            nonlocal seen, complete
            if complete:  # after the body only a disconnect can come, which a streamed response waits for
                return await receive()
            try:  # a timeout scope, not wait_for: on Python 3.11 wait_for starts a task for every body message
                async with asyncio.timeout_at(deadline):
                    message = await receive()
            except TimeoutError:
                raise SpecProblems(
                    [("(body)", f"request body: not received within {self.max_seconds:g} s")], status=408
                ) from None
            complete = message["type"] != "http.request" or not message.get("more_body", False)
            seen += len(message.get("body", b""))
            if seen > self.max_bytes:  # the same problem shape as the refusal on Content-Length
                raise SpecProblems([("(body)", self._message())], status=413)
            return message

        await self.app(scope, counted, send)

    def _message(self) -> str:
        return f"request body: over the limit of {self.max_bytes:,} bytes"

    async def _refuse(self, scope: Scope, receive: Receive, send: Send) -> None:
        await JSONResponse({"detail": [{"field": "(body)", "message": self._message()}]}, 413)(scope, receive, send)
