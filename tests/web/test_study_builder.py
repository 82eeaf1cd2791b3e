"""Building a study in the browser: the fields come from the service, the preview (points, sizes) before queueing,
then the study appears as any other. Debian's chromium against a running service with a real worker."""

from __future__ import annotations

import json
import re

import pytest

from .conftest import shot

pytestmark = pytest.mark.timeout(180)

expect = pytest.importorskip("playwright.sync_api", reason="pip install playwright (the test extra)").expect

# a small steady case of our own: a round bridge pier in a short flume, coarse mesh
PIER = {
    "title": "Flume pier at two speeds (web study test)",
    "channel": {"length": 1.0, "height": 0.41},
    "bodies": [{"name": "pier", "shape": "circle", "center": [0.2, 0.2], "radius": 0.05}],
    "fluid": {"density": 1.0, "viscosity": 1e-3},
    "mesh": {"preset": "coarse", "scale": 2.0},
}


def test_a_sweep_is_built_previewed_and_queued_from_the_page(page, api) -> None:
    page.goto("/#/new")
    page.locator("#spec-json").fill(json.dumps(PIER))
    page.get_by_role("button", name="Apply JSON to form").click()
    expect(page.locator("#f-title")).to_have_value(PIER["title"])
    page.locator("#study-this-case").click()
    expect(page.locator("#study-base")).to_contain_text(PIER["title"])
    # the fields offered are the service's list for this case (the body's radius among them)
    field = page.locator("#study-field-0")
    expect(field.locator('option[value="bodies.0.radius"]')).to_have_count(1)
    offered = field.locator("option").evaluate_all("os => os.map(o => o.value)")
    served = [f["path"] for f in api.post("/previews", json=PIER).json()["sweepable"]]
    assert offered == served
    # a field the case leaves empty but a sweep can set is offered with the value the run derives for it
    expect(field.locator('option[value="fluid.reynolds"]')).to_contain_text("derived")
    field.select_option("inflow.peak_velocity")

    # a value the solver refuses is named in the preview's problems; nothing can be queued
    page.locator("#study-values-0").fill("0.15, -0.3")
    page.locator("#study-preview").click()
    expect(page.locator(".study-problems")).to_contain_text("Point 2 › inflow › peak velocity")
    expect(page.locator("#study-queue")).to_be_disabled()

    # a mesh-convergence study of the same case: three meshes, each with four times the cells of the one before
    page.locator("#study-kind-mesh-convergence").check()
    page.locator("#study-preview").click()
    expect(page.locator("#study-total")).to_contain_text("3 points")
    cells = page.locator("table.study-plan tbody tr td:nth-child(3)").all_inner_texts()
    coarse, medium, fine = (int(c.replace(",", "")) for c in cells)
    assert medium == 4 * coarse and fine == 16 * coarse
    page.locator("#study-kind-sweep").check()

    page.locator("#study-values-0").fill("0.15, 0.3")
    page.locator("#study-preview").click()
    expect(page.locator("#study-total")).to_contain_text("2 points")
    rows = page.locator("table.study-plan tbody tr")
    expect(rows).to_have_count(2)
    # Reynolds number from the service: mean velocity (2/3 of the peak) x diameter / viscosity = 10 and 20
    reynolds = [rows.nth(i).locator("td").nth(1).inner_text() for i in range(2)]
    assert [round(float(r)) for r in reynolds] == [10, 20]
    single = api.post("/previews", json=PIER).json()["estimate"]["cells"]
    assert f"{2 * single:,}" in page.locator("#study-total").inner_text()
    expect(page.locator("#study-queue")).to_be_enabled()
    shot(page, "14-study-builder")

    # a second field as a geometric range: every combination, the range expanded by the service
    page.locator("#study-field-1").select_option("fluid.viscosity")
    page.locator("#study-how-1").select_option("geometric")
    page.locator("#study-start-1").fill("0.001")
    page.locator("#study-stop-1").fill("0.004")
    page.locator("#study-count-1").fill("3")
    expect(page.locator("#study-queue")).to_be_disabled()
    expect(page.locator("#study-preview-out")).to_have_class(re.compile("outdated"))
    page.locator("#study-preview").click()
    expect(page.locator("#study-total")).to_contain_text("6 points")
    nus = page.locator("table.study-plan tbody tr td:nth-child(2)").all_inner_texts()
    assert sorted({float(v) for v in nus}) == [0.001, 0.002, 0.004]
    page.locator("#study-field-1").select_option("")
    page.locator("#study-preview").click()
    expect(page.locator("#study-total")).to_contain_text("2 points")

    # an edit after the preview asks for a new one before queueing
    page.locator("#study-title").fill("Pier, two river speeds")
    expect(page.locator("#study-queue")).to_be_disabled()
    page.locator("#study-preview").click()
    expect(page.locator("#study-queue")).to_be_enabled()
    page.locator("#study-queue").click()

    expect(page).to_have_url(re.compile(r"#/studies/[0-9a-f-]+$"))
    expect(page.locator("#view-studies h2")).to_have_text("Pier, two river speeds")
    expect(page.locator("table.study-points tbody tr")).to_have_count(2)
    study_id = page.url.rsplit("/", 1)[1]
    study = api.get(f"/studies/{study_id}").json()
    assert sorted(p["values"]["inflow.peak_velocity"] for p in study["points"]) == [0.15, 0.3]
    assert study["spec"]["base"]["bodies"][0]["radius"] == 0.05
    page.goto("/#/studies")
    expect(page.locator("table.studies-table")).to_contain_text("Pier, two river speeds")
    # the caller's disk use, from GET /api/v1/me, in the footer
    expect(page.locator("#usage-foot")).to_contain_text("disk used:")
