"""Heartbeats from a thread while something long runs in this one: a solve, or a transfer on a slow link, may last
longer than the service's lease, and a job whose heartbeats stop is handed to another worker."""

from __future__ import annotations

import threading
from collections.abc import Callable
from types import TracebackType


class Pulse:
    """``with Pulse(beat, every, name):`` calls ``beat()`` every ``every`` seconds until the block ends (the first
    call after ``every``: the claim or the previous beat has just renewed the lease)."""

    def __init__(self, beat: Callable[[], None], every: float, name: str):
        self.beat, self.every = beat, every
        self.done = threading.Event()
        self.thread = threading.Thread(target=self._loop, name=name, daemon=True)

    def __enter__(self) -> Pulse:
        self.thread.start()
        return self

    def __exit__(self, *_: type[BaseException] | BaseException | TracebackType | None) -> None:
        self.done.set()
        self.thread.join()

    def _loop(self) -> None:
        while not self.done.wait(self.every):
            self.beat()
