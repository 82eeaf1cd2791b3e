"""``wakeyard study``: submit a study to a running service over HTTP and optionally wait for its table.

Exit codes: 0 submitted (with ``--wait``: every point succeeded), 1 some point failed or was cancelled, or the
service could not be reached, 2 the service refused the study (the reasons go to stderr).
"""

from __future__ import annotations

import json
import sys
import time
from pathlib import Path
from typing import Any

import httpx

from wakeyard.core.states import FINISHED, JobState


def _refused(response: httpx.Response) -> int:
    """Print why the service said no: field messages for a bad study (422), the messages for anything else."""
    try:
        detail: Any = response.json().get("detail")
    except ValueError:
        detail = response.text
    if isinstance(detail, list) and response.status_code == 422:
        for item in detail:
            print(f"invalid study: {item.get('field')}: {item.get('message')}", file=sys.stderr)
    else:
        if isinstance(detail, list):  # every refusal has the problem shape; only a bad study's fields matter
            detail = "; ".join(str(item.get("message")) for item in detail)
        print(f"error: the service answered {response.status_code}: {detail}", file=sys.stderr)
    return 2 if response.is_client_error else 1


def submit(spec_path: Path, url: str, token: str | None, wait: bool, fresh: bool, poll: float = 1.0) -> int:
    try:
        study = json.loads(spec_path.read_text())
    except (OSError, json.JSONDecodeError) as err:
        print(f"error: cannot read {spec_path}: {err}", file=sys.stderr)
        return 2
    headers = {"Authorization": f"Bearer {token}"} if token else {}
    try:
        with httpx.Client(base_url=url.rstrip("/"), headers=headers, timeout=30) as client:
            r = client.post("/api/v1/studies", json=study, params={"fresh": "true"} if fresh else None)
            if r.status_code != 202:
                return _refused(r)
            study_id = r.json()["id"]
            print(study_id, flush=True)
            return _wait(client, study_id, poll) if wait else 0
    except httpx.HTTPError as err:
        print(f"error: cannot reach the service at {url}: {err}", file=sys.stderr)
        return 1


def _wait(client: httpx.Client, study_id: str, poll: float) -> int:
    """Poll until no point is queued or running, report progress on stderr, print the table on stdout."""
    shown = None
    while True:
        r = client.get(f"/api/v1/studies/{study_id}")
        if r.status_code != 200:
            return _refused(r)
        study = r.json()
        done = sum(p["state"] in FINISHED for p in study["points"])
        line = f"study {study_id}: {study['state']}, {done} of {len(study['points'])} points finished"
        if line != shown:
            print(line, file=sys.stderr, flush=True)
            shown = line
        if study["state"] in FINISHED:
            break
        time.sleep(poll)
    print(client.get(f"/api/v1/studies/{study_id}/table.csv").text, end="")
    print(study["caution"], file=sys.stderr)
    return 0 if study["state"] == JobState.SUCCEEDED else 1
