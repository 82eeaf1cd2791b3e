"""Bodies that move, on the page: a mount on the New-case form, the service's room warning, the job page's
displacement histories, orbit and motion summary, and a study over a spring's reduced velocity with its amplitude
response. Debian's chromium against a running service with a real worker."""

from __future__ import annotations

import json
import math
import re
import time

import pytest

from .conftest import shot, submit, wait_state
from .test_page import chart_points, read_csv

pytestmark = pytest.mark.timeout(240)

expect = pytest.importorskip("playwright.sync_api", reason="pip install playwright (the test extra)").expect

S0, FN = 0.002, 2.0  # m, Hz: a heavy tube plucked in still water, released with the speed of a round orbit


def plucked(title: str, mount: dict) -> dict:
    """A 20 mm tube in a 0.3 m by 0.2 m tank of still water (no inflow), on springs, for a little over one period."""
    return {
        "title": title,
        "channel": {"length": 0.3, "height": 0.2},
        "bodies": [{"name": "tube", "shape": "circle", "center": [0.12, 0.1], "radius": 0.01, "mount": mount}],
        "fluid": {"density": 1000.0, "viscosity": 1e-6, "reference": {"velocity": 0.01}},
        "inflow": {
            "profile": "uniform",
            "mean_velocity": 0.01,
            "time_law": {"kind": "table", "points": [[0, 0], [9, 0]]},
        },
        "mesh": {"preset": "coarse", "scale": 3.0},
        "analysis": {"mode": "transient", "end_time": 0.6, "accuracy": 0.01, "output_interval": 0.6},
    }


def scaled(values: list[float]) -> list[float]:
    lo, hi = min(values), max(values)
    return [(v - lo) / (hi - lo) for v in values]


def spring(**extra) -> dict:
    return {"kind": "spring", "mass_ratio": 1e4, "damping_ratio": 0.05, **extra}


def test_the_form_gives_a_body_a_mount_and_shows_the_services_room_warning(page) -> None:
    page.goto("/#/new")
    kind = page.locator("#f-bodies-0-mount-kind")
    kind.select_option("driven")
    page.locator("#f-bodies-0-mount-amplitude").fill("0.004")
    page.locator("#f-bodies-0-mount-frequency").fill("0.02")
    spec = json.loads(page.locator("#spec-json").input_value())
    assert spec["bodies"][0]["mount"] == {"kind": "driven", "direction": "y", "amplitude": 0.004, "frequency": 0.02}
    # the service's rule, not the page's: a moving body needs a transient run
    page.locator("#analysis-mode-steady").check()
    expect(page.locator("ul.warnings")).to_contain_text("moving bodies (a mount) need a transient analysis")

    kind.select_option("spring")
    page.locator("#analysis-mode-transient").check()
    page.locator("#f-bodies-0-mount-directions").select_option("x,y")
    page.locator("#f-bodies-0-mount-mass_ratio").fill("2")
    page.locator("#f-bodies-0-mount-by-natural_frequency").check()
    page.locator("#f-bodies-0-mount-natural_frequency").fill("0.05")
    page.locator("#f-bodies-0-center-1").fill("0.025")  # 15 mm from the lower wall
    mount = json.loads(page.locator("#spec-json").input_value())["bodies"][0]["mount"]
    assert mount == {
        "kind": "spring",
        "directions": ["x", "y"],
        "mass_ratio": 2,
        "damping_ratio": 0,
        "natural_frequency": 0.05,
    }
    # the service assumes a swing of 0.6 D = 12 mm across the stream and warns, naming the gap it would leave
    warning = page.locator("ul.warnings li.service-warning")
    expect(warning).to_contain_text("Body 1 › mount: post may come within 0.003 m of the lower wall (0.015 m at rest)")
    expect(warning).to_contain_text("0.012 m across the stream")
    shot(page, "moving-form-warning")
    page.locator("#f-bodies-0-center-1").fill("0.05")
    expect(page.locator("ul.warnings li.service-warning")).to_have_count(0)
    kind.select_option("fixed")
    assert "mount" not in json.loads(page.locator("#spec-json").input_value())["bodies"][0]


def test_a_plucked_tube_s_job_page_shows_its_displacement_orbit_and_motion_summary(page, api) -> None:
    w = 2 * math.pi * FN
    mount = spring(
        directions=["x", "y"], natural_frequency=FN, initial_displacement=[S0, 0], initial_velocity=[0, w * S0]
    )
    job = wait_state(api, submit(api, plucked("Plucked tube (browser test)", mount)), {"succeeded", "failed"}, 200)
    assert job["state"] == "succeeded", job["error"]
    page.goto(f"/#/jobs/{job['id']}")
    # displacement histories from forces.csv's tube_dx and tube_dy columns, as drawn
    columns, rows = read_csv(api.get(f"/jobs/{job['id']}/files/forces.csv").text)
    drawn = chart_points(page, "#motion-chart", "tube_dx")
    assert len(drawn) == len(rows)  # every sample of the run, drawn in its place (up to the axes' scales)
    dx = [r[columns.index("tube_dx")] for r in rows]
    assert scaled([p[1] for p in drawn]) == pytest.approx(scaled(dx), abs=0.01)
    assert scaled([p[0] for p in drawn]) == pytest.approx(scaled([r[0] for r in rows]), abs=0.01)
    expect(page.locator('#motion-chart path.series[data-series="tube_dy"]')).to_have_count(1)
    # the orbit: one closed-ish loop of as many points as rows, dy against dx on equal scales
    orbit = page.locator('#orbit-chart polyline.orbit[data-owner="tube"]')
    expect(orbit).to_have_count(1)
    points = [tuple(map(float, p.split(","))) for p in orbit.get_attribute("points").split()]
    assert len(points) == len(rows)
    xs, ys = [p[0] for p in points], [p[1] for p in points]
    width, height = max(xs) - min(xs), max(ys) - min(ys)
    assert 0.85 < width / height < 1.15  # a near circle drawn round: equal scales
    summary = page.locator(".summary-table")
    motion = job["summary"]["bodies"][0]["motion"]
    expect(summary).to_contain_text("tube: amplitude ratio A/L along y")
    row = summary.locator("tr", has_text="tube: amplitude ratio A/L along x")
    assert float(row.locator("td").inner_text()) == pytest.approx(motion["x"]["amplitude_ratio"], rel=1e-3)
    expect(summary).to_contain_text("tube: frequency ratio")
    page.locator("#force-quantity").select_option("motion")
    expect(page.locator("#force-chart path.series")).to_have_count(2)
    shot(page, "moving-job")


def test_a_sweep_over_the_reduced_velocity_is_built_on_the_page_and_plots_the_amplitude_response(page, api) -> None:
    base = plucked("Plucked tube, two spring stiffnesses (web study test)", {})
    base["bodies"][0]["mount"] = spring(directions=["y"], reduced_velocity=0.5, initial_displacement=[0, S0])
    page.goto("/#/new")
    expect(page.locator("#f-bodies-0-mount-kind")).to_be_visible()  # the form is built: the JSON box is its own
    page.locator("#spec-json").fill(json.dumps(base))
    page.get_by_role("button", name="Apply JSON to form").click()
    expect(page.locator("#f-bodies-0-mount-reduced_velocity")).to_have_value("0.5")
    page.locator("#study-this-case").click()
    field = page.locator("#study-field-0")
    expect(field.locator('option[value="bodies.0.mount.reduced_velocity"]')).to_have_count(1)
    field.select_option("bodies.0.mount.reduced_velocity")
    page.locator("#study-values-0").fill("0.5, 1")  # f_n = U / (U* D): 1 Hz and 0.5 Hz
    page.locator("#study-preview").click()
    expect(page.locator("#study-total")).to_contain_text("2 points")
    page.locator("#study-queue").click()
    expect(page).to_have_url(re.compile(r"#/studies/[0-9a-f-]+$"))
    study_id = page.url.rsplit("/", 1)[1]
    deadline = time.monotonic() + 200
    while (study := api.get(f"/studies/{study_id}").json())["state"] in ("queued", "running"):
        jobs = [api.get(f"/jobs/{p['job']}").json() for p in study["points"]]
        assert time.monotonic() < deadline, [(j["state"], j["progress"], j["spec"]["analysis"]) for j in jobs]
        time.sleep(1)
    assert study["state"] == "succeeded", [api.get(f"/jobs/{p['job']}").json()["error"] for p in study["points"]]
    expect(page.locator("table.study-points .state-succeeded")).to_have_count(2)
    headers = page.locator("table.study-points thead th").all_inner_texts()
    assert headers[0] == "bodies.0.mount.reduced_velocity [-]"
    # the response leads the values, so the plot shows the amplitude ratio against U* first
    expect(page.locator("#study-y")).to_have_value("tube.y_amplitude_ratio")
    page.wait_for_function("document.querySelector('img.study-plot')?.naturalWidth > 0")
    rows = page.locator("table.study-points tbody tr")
    column = headers.index("tube.y_amplitude_ratio [-]")
    shown = {
        float(rows.nth(i).locator("td").nth(0).inner_text()): float(rows.nth(i).locator("td").nth(column).inner_text())
        for i in range(2)
    }
    served = {
        float(p["values"]["bodies.0.mount.reduced_velocity"]): p["summary"]["tube.y_amplitude_ratio"]
        for p in study["points"]
    }
    assert shown.keys() == served.keys()
    assert all(shown[k] == pytest.approx(served[k], rel=1e-3) and served[k] > 0 for k in served)
    shot(page, "moving-study")
