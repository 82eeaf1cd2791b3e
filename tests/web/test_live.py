"""A running job's page draws its force history as the solver writes it; a finished one shows its lift spectrum."""

from __future__ import annotations

import numpy as np
import pytest

from wakeyard.solver import load
from wakeyard.solver.caution import CAUTION
from wakeyard.solver.spectrum import lift_spectrum

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
        for _ in range(120):  # a third poll: on a quiet machine two can already bring the 20 rows
            if len(ranged) >= 3:
                break
            page.wait_for_timeout(250)
        assert ranged[0] == "bytes=0-" and len(ranged) >= 3, ranged
        offsets = [int(r.removeprefix("bytes=").rstrip("-")) for r in ranged]
        assert offsets == sorted(offsets) and offsets[-1] > 0, offsets
        shot(page, "13-live-forces")
    finally:
        api.post(f"/jobs/{job_id}/cancel")
    wait_state(api, job_id, {"cancelled"}, timeout=60)
    expect(page.locator("#live-card")).to_be_hidden(timeout=20_000)  # finished: the results show the history
    expect(page.locator("#force-chart")).to_be_visible()


def test_lift_spectrum_is_the_services(page, api) -> None:
    spec = {**TINY, "title": "Spectrum of a short run", "analysis": {**TINY["analysis"], "end_time": 1.0}}
    job_id = submit(api, spec)
    wait_state(api, job_id, {"succeeded"}, timeout=150)
    answer = api.get(f"/jobs/{job_id}/spectrum").json()
    # the service's figures are the solver's function applied to the job's own forces.csv
    columns, rows = read_csv(api.get(f"/jobs/{job_id}/files/forces.csv").text)
    data = np.array(rows)
    job = load(api.get(f"/jobs/{job_id}").json()["spec"])
    own = lift_spectrum(
        data[:, 0], data[:, columns.index("pipe_cl")], job.reference_length(0), job.reference_velocity()
    )
    served = answer["bodies"][0]["spectrum"]
    assert served["peak"] == own["peak"] and served["amplitude"] == pytest.approx(own["amplitude"])
    assert answer["caution"] == CAUTION
    page.goto(f"/#/jobs/{job_id}")
    peak = page.locator('#spectrum-card li[data-body="pipe"]')
    # a Re-20 wake does not shed: no peak is claimed, and the page says so
    assert served["peak"] is None and served["from_cycles"]["strouhal_number"] is None
    expect(peak).to_contain_text("pipe: no shedding peak")
    drawn = chart_points(page, "#spectrum-chart", "pipe")
    df_px, da_px = pixel(page, "#spectrum-chart")
    assert [f for f, _ in drawn] == pytest.approx(served["frequency"], abs=0.006 * df_px)
    assert [a for _, a in drawn] == pytest.approx(served["amplitude"], abs=0.006 * da_px)
    shot(page, "14-spectrum")
    assert api.get("/jobs/nope/spectrum").status_code == 404
