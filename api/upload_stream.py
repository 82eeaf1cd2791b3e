"""A worker's streamed upload body under time limits: a box that stalls, or trickles bytes forever, must not hold a
connection and a part file open without end (the request-body caps of ``limits.py`` skip uploads, which are large)."""

from __future__ import annotations

import asyncio
import time
from collections.abc import AsyncIterator

from .problems import TimedOut


async def timed(chunks: AsyncIterator[bytes], idle: float, total: float) -> AsyncIterator[bytes]:
    """``chunks`` as they come; :class:`TimedOut` when none comes for ``idle`` seconds or the whole takes longer than
    ``total``."""
    deadline = time.monotonic() + total
    while True:
        left = deadline - time.monotonic()
        try:
            chunk = await asyncio.wait_for(anext(chunks), max(0.0, min(idle, left)))
        except StopAsyncIteration:
            return
        except TimeoutError:
            if left <= idle:
                raise TimedOut("(body)", f"the upload took over {total:g} s, the upload time limit") from None
            raise TimedOut("(body)", f"no bytes arrived for {idle:g} s, the upload idle limit") from None
        yield chunk
