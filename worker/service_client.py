"""The service's worker endpoints as a remote worker calls them (``/api/v1/worker``, a worker token): claims,
heartbeats, outcomes, and files moved in both directions, resumable and checked by size and SHA-256.

Network trouble is retried with back-off (a compute box on a flaky link keeps its job while its lease lasts), and so
is an upload the service timed out (408: a link that stalled or crawled); a refusal that names the lease raises
:class:`LeaseLost` at once. A download given a stop event gives up between blocks once it is set (:class:`Stopped`).
"""

from __future__ import annotations

import logging
import os
import threading
import time
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any, TypeVar

import httpx

from wakeyard.core.digest import sha256_of

log = logging.getLogger(__name__)

T = TypeVar("T")
CHUNK = 1 << 20
RETRIES = 8  # network tries per call, with back-off from 0.5 s doubling up to 10 s (about a minute in all)
TIMED_OUT = 408  # the service gave up on a stalled or too slow upload body and dropped what had arrived of it


class LeaseLost(Exception):
    """The job is no longer this worker's (its lease expired or the job ended): upload and report nothing more."""


class TransferFailed(Exception):
    """A file did not arrive whole (after the retries)."""


class Stopped(Exception):
    """The worker is stopping: a download was abandoned part way (its partial file removed), not failed."""


class Refused(Exception):
    """The service refused a call (not the lease): the status and its problems."""

    def __init__(self, response: httpx.Response):
        self.status = response.status_code
        try:
            detail = response.json()["detail"]
            text = "; ".join(f"{d['field']}: {d['message']}" for d in detail)
        except (ValueError, KeyError, TypeError):
            text = response.text[:500]
        super().__init__(f"{response.request.method} {response.request.url.path}: {self.status} {text}")


class ServiceClient:
    def __init__(self, url: str, token: str, timeout: float = 30.0):
        self.http = httpx.Client(
            base_url=url.rstrip("/") + "/api/v1/worker",
            headers={"Authorization": f"Bearer {token}"},
            timeout=timeout,
        )
        self.worker: str | None = None  # this process, as its claims name it (heartbeats say it too)

    def close(self) -> None:
        self.http.close()

    def _retried(self, call: Callable[[], T], what: str, stop: threading.Event | None = None) -> T:
        """``call()``, tried again after network trouble; a set ``stop`` ends the back-off early (:class:`Stopped`)."""
        for attempt in range(RETRIES):
            try:
                return call()
            except httpx.TransportError as err:
                if attempt == RETRIES - 1:
                    raise
                wait = _backoff(attempt)
                log.warning("%s: %s; trying again in %.1f s", what, err, wait)
                if stop is None:
                    time.sleep(wait)
                elif stop.wait(wait):
                    raise Stopped(what) from err
        raise AssertionError("unreachable")

    def _checked(self, response: httpx.Response) -> httpx.Response:
        if response.status_code == 409 and any(d.get("field") == "Lease" for d in _detail(response)):
            raise LeaseLost(Refused(response).args[0])
        if response.status_code >= 400:
            raise Refused(response)
        return response

    def claim(self, worker: str) -> dict[str, Any] | None:
        """The next job (id, lease, attempts, spec, files uploaded so far), or None when none is waiting."""
        self.worker = worker
        r = self._checked(self._retried(lambda: self.http.post("/claim", json={"worker": worker}), "claim"))
        return None if r.status_code == 204 else r.json()

    def heartbeat(self, job_id: str, lease: str, progress: dict[str, Any] | None) -> tuple[bool, bool]:
        """(lease still held, cancel requested); one try: the next beat comes soon."""
        beat = {"progress": progress, "worker": self.worker}
        r = self.http.post(f"/jobs/{job_id}/heartbeat", json=beat, headers={"Lease": lease})
        answer = self._checked(r).json()
        return bool(answer["lease_held"]), bool(answer["cancel"])

    def finish(self, job_id: str, lease: str, outcome: dict[str, Any]) -> None:
        self._checked(
            self._retried(
                lambda: self.http.post(f"/jobs/{job_id}/finish", json=outcome, headers={"Lease": lease}), "finish"
            )
        )

    def release(self, job_id: str, lease: str) -> None:
        self._checked(self.http.post(f"/jobs/{job_id}/release", headers={"Lease": lease}))

    def download(
        self, job_id: str, lease: str, remote: str, local: Path, sha256: str, stop: threading.Event | None = None
    ) -> None:
        """Fetch an uploaded file; it replaces ``local`` only once its hash matches. Once ``stop`` is set the
        download is abandoned at the next block (:class:`Stopped`): a stopping worker must not wait minutes for a
        slow link to deliver the rest. A partial file is never left behind (a download starts again from zero)."""
        local.parent.mkdir(parents=True, exist_ok=True)
        tmp = local.with_name(f".{local.name}.download")
        what = f"download of {remote}"

        def fetch() -> None:
            with self.http.stream("GET", f"/jobs/{job_id}/files/{remote}", headers={"Lease": lease}) as r:
                if r.status_code >= 400:
                    r.read()
                    self._checked(r)
                with open(tmp, "wb") as f:
                    for block in r.iter_bytes():  # as they arrive, not gathered into CHUNKs: a stop is seen soon
                        if stop is not None and stop.is_set():
                            raise Stopped(what)
                        f.write(block)

        try:
            self._retried(fetch, what, stop)
            found = sha256_of(tmp)
        except BaseException:
            tmp.unlink(missing_ok=True)
            raise
        if found != sha256:
            tmp.unlink()
            raise TransferFailed(f"{what}: its bytes hash to {found}, not {sha256}")
        os.replace(tmp, local)

    def upload(self, job_id: str, lease: str, local: Path, remote: str) -> str:
        """Send ``local`` as the job's ``remote`` file; after a broken connection continue from the bytes the
        service has, after a timeout (408) from the start (the service dropped them). Returns the file's SHA-256
        (the service checked it)."""
        size, sha = local.stat().st_size, sha256_of(local)
        headers = {"Lease": lease, "Content-SHA256": sha}
        for attempt in range(RETRIES):
            try:
                start = self._received(job_id, lease, remote) if attempt else 0
                sent = {**headers}
                if size:
                    sent["Content-Range"] = f"bytes {start}-{size - 1}/{size}"
                sent["Content-Length"] = str(size - start)
                r = self.http.put(f"/jobs/{job_id}/files/{remote}", content=_read_from(local, start), headers=sent)
            except httpx.TransportError as err:
                if attempt == RETRIES - 1:
                    raise
                wait = _backoff(attempt)
                log.warning("upload of %s broke off (%s); continuing in %.1f s", remote, err, wait)
                time.sleep(wait)
                continue
            if r.status_code == 201:
                return sha
            if r.status_code == TIMED_OUT and attempt < RETRIES - 1:  # one stall must not lose a result
                wait = _backoff(attempt)
                log.warning("upload of %s: %s; sending it again in %.1f s", remote, Refused(r), wait)
                time.sleep(wait)
                continue
            if r.status_code == 422 and attempt < RETRIES - 1:  # hash mismatch: the service discarded it, resend
                log.warning("upload of %s: %s; sending it again", remote, Refused(r))
                continue
            if r.status_code != 202:
                self._checked(r)
        raise TransferFailed(f"upload of {remote}: not complete after {RETRIES} tries")

    def _received(self, job_id: str, lease: str, remote: str) -> int:
        r = self._retried(
            lambda: self.http.get(f"/jobs/{job_id}/uploads/{remote}", headers={"Lease": lease}), "upload offset"
        )
        return int(self._checked(r).json()["received"])


def _backoff(attempt: int) -> float:
    """Seconds to wait before the next try: 0.5 doubling up to 10 (a link that recovers is soon used again, one
    that does not is not hammered)."""
    return min(10.0, 0.5 * 2**attempt)


def _read_from(path: Path, start: int) -> Iterator[bytes]:
    with open(path, "rb") as f:
        f.seek(start)
        while block := f.read(CHUNK):
            yield block


def _detail(response: httpx.Response) -> list[dict[str, Any]]:
    try:
        detail = response.json().get("detail")
    except ValueError:
        return []
    return detail if isinstance(detail, list) else []
