"""A running job's page draws its force history as the solver writes it."""

from __future__ import annotations

import pytest

from .conftest import TINY, shot, submit, wait_state
from .test_page import chart_points, pixel, read_csv

pytestmark = pytest.mark.timeout(180)

expect = pytest.importorskip("playwright.sync_api", reason="pip install playwright (the test extra)").expect


def test_force_history_grows_while_the_job_runs(page, api) -> None:
    spec = {
        **TINY,
        "title": "Long run drawn live",
        "analysis": {**TINY["analysis"], "end_time": 1000.0, "output_interval": 100.0},
    }
    job_id = submit(api, spec)
    try:
        wait_state(api, job_id, {"running"}, timeout=120)
        ranged: list[str | None] = []
        page.on("request", lambda r: ranged.append(r.headers.get("range")) if "forces.csv" in r.url else None)
        page.goto(f"/#/jobs/{job_id}")
        live = page.locator("#live-card")
        expect(live.locator("path.series")).to_have_count(2)  # cD and cL of the one body
        first = int(live.get_attribute("data-rows"))
        expect(live).not_to_have_attribute("data-rows", str(first), timeout=20_000)  # it grows
        page.wait_for_function(f"Number(document.querySelector('#live-card').dataset.rows) > {first + 20}")
        # what is drawn is the file's own rows, each poll asking only for the bytes after the last whole line
        drawn = chart_points(page, "#live-chart", "pipe_cd")
        _, rows = read_csv(api.get(f"/jobs/{job_id}/files/forces.csv").text)
        assert first < len(drawn) <= len(rows)
        dt_px, dy_px = pixel(page, "#live-chart")
        assert [t for t, _ in drawn] == pytest.approx([r[0] for r in rows[: len(drawn)]], abs=0.006 * dt_px)
        assert [y for _, y in drawn] == pytest.approx([r[3] for r in rows[: len(drawn)]], abs=0.006 * dy_px)
        assert ranged[0] == "bytes=0-" and len(ranged) >= 3, ranged
        offsets = [int(r.removeprefix("bytes=").rstrip("-")) for r in ranged]
        assert offsets == sorted(offsets) and offsets[-1] > 0, offsets
        shot(page, "13-live-forces")
    finally:
        api.post(f"/jobs/{job_id}/cancel")
    wait_state(api, job_id, {"cancelled"}, timeout=60)
    expect(page.locator("#live-card")).to_be_hidden(timeout=20_000)  # finished: the results show the history
    expect(page.locator("#force-chart")).to_be_visible()
