"""End-to-end tests of the web page in a real browser against a running service with a real worker.

Order matters only for speed: the first test's job queues behind the ``pair`` jobs, which the compare
test later reuses. Every test also passes on its own.
"""

from __future__ import annotations

import csv
import io
import json
import math
import re

import pytest

from tests.solver.test_post_processing import TANDEM
from wakeyard.solver import JobSpec, load
from wakeyard.solver.case import Case
from wakeyard.solver.caution import CAUTION

from .conftest import TINY, shot, submit, wait_state

pytestmark = pytest.mark.timeout(180)

expect = pytest.importorskip("playwright.sync_api", reason="pip install playwright (the test extra)").expect


def fill(page, path: str, value) -> None:
    """Type into the form field bound to spec path ``path`` (ids are f-<path with dashes>)."""
    page.locator(f"#f-{path.replace('.', '-')}").fill(str(value))


def read_csv(text: str) -> tuple[list[str], list[list[float]]]:
    rows = list(csv.reader(io.StringIO(text)))
    return rows[0], [[float(v) for v in r] for r in rows[1:] if r]


def chart_points(page, host: str, series: str) -> list[tuple[float, float]]:
    """Data points drawn for one series, mapped back from pixels through the chart's own axes.

    Coordinates are drawn to 0.01 px, so a value comes back to within 0.005 px (see ``pixel``).
    """
    # the path and the axes in one read: the chart is drawn anew when its card changes size, and a path of one
    # drawing mapped through the axes of the next came out scaled
    d, box = page.locator(f"{host} svg.chart-svg").evaluate(
        """(svg, series) => [svg.querySelector(`path.series[data-series="${series}"]`).getAttribute("d"),
            Object.fromEntries(["x0", "x1", "y0", "y1", "left", "top", "plot-width", "plot-height"]
              .map((k) => [k, Number(svg.getAttribute(`data-${k}`))]))]""",
        series,
    )
    pts = []
    for px, py in re.findall(r"[ML](-?[\d.]+),(-?[\d.]+)", d):
        t = box["x0"] + (float(px) - box["left"]) / box["plot-width"] * (box["x1"] - box["x0"])
        y = box["y0"] + (1 - (float(py) - box["top"]) / box["plot-height"]) * (box["y1"] - box["y0"])
        pts.append((t, y))
    return pts


def pixel(page, host: str) -> tuple[float, float]:
    """Time and value spans of one pixel of the chart (the precision of ``chart_points``)."""
    svg = page.locator(f"{host} svg.chart-svg")
    get = lambda k: float(svg.get_attribute(f"data-{k}"))  # noqa: E731
    return (get("x1") - get("x0")) / get("plot-width"), (get("y1") - get("y0")) / get("plot-height")


def boxes(page, *selectors: str) -> list[dict[str, float]]:
    """The drawn boxes of the first element of each selector, read in one call: the drawing is rebuilt on every
    preview and resize, and an element read on its own a moment later may already be detached (0 by 0)."""
    return page.evaluate(
        """qs => qs.map(q => { const b = document.querySelector(q).getBBox();
                              return {x: b.x, width: b.width, height: b.height}; })""",
        list(selectors),
    )


def test_form_case_queues_runs_and_shows_results(page, api, pair) -> None:
    page.goto("/#/new")
    expect(page.locator("#case-heading")).to_have_text("New case")
    # start from the form's own case, then describe the small test case field by field
    page.locator("#remove-body-0").click()
    expect(page.locator(".body-card")).to_have_count(0)
    page.locator("#new-shape").select_option("circle")
    page.locator("#add-body").click()
    expect(page.locator(".body-card")).to_have_count(1)
    # the 2D-1 benchmark cylinder and fluid (Schäfer & Turek 1996) in a shortened channel, typed in by hand
    fill(page, "title", "Cylinder in a shortened 2D-1 channel (form test)")
    fill(page, "channel.length", 1.0)
    fill(page, "channel.height", 0.41)
    fill(page, "bodies.0.name", "pipe")
    fill(page, "bodies.0.center.0", 0.2)
    fill(page, "bodies.0.center.1", 0.2)
    fill(page, "bodies.0.radius", 0.05)
    page.locator("#fluid-by-viscosity").check()
    fill(page, "fluid.viscosity", 0.001)
    page.locator("#inflow-by-peak").check()
    fill(page, "inflow.peak_velocity", 0.3)
    fill(page, "inflow.ramp_time", 0.2)
    page.locator("#f-mesh-preset").select_option("coarse")
    fill(page, "mesh.scale", 2.0)
    page.locator("#analysis-mode-transient").check()
    page.locator("#f-analysis-scheme").select_option("bdf2-imex")
    fill(page, "analysis.time_step", 0.005)  # a largest CFL number of about 0.8: never split
    fill(page, "analysis.end_time", 0.3)
    fill(page, "analysis.output_interval", 0.1)
    # live figures: Re = (2/3 * 0.3) * 0.1 / 0.001 = 20, blockage 0.1 / 0.41, 60 steps
    expect(page.locator('dd[data-figure="Reynolds number"]')).to_contain_text("20")
    expect(page.locator('dd[data-figure="Blockage ratio"]')).to_contain_text("24.4 %")
    expect(page.locator('dd[data-figure="Time steps"]')).to_contain_text("60")
    # the drawing is to scale: the circle spans 0.1 / 1.0 of the channel's drawn length
    channel, circle = boxes(page, ".case-svg .fluid-area", ".case-svg g.body path")
    assert circle["width"] / channel["width"] == pytest.approx(0.1, rel=0.03)
    assert circle["height"] / channel["height"] == pytest.approx(0.1 / 0.41, rel=0.03)
    # the JSON view is the spec the API receives
    spec = json.loads(page.locator("#spec-json").input_value())
    assert spec["bodies"] == [{"name": "pipe", "shape": "circle", "center": [0.2, 0.2], "radius": 0.05}]
    assert spec["analysis"] == {**TINY["analysis"], "time_step": 0.005}
    shot(page, "01-case-form")

    page.locator("#submit-case").click()
    page.wait_for_url(re.compile(r"#/jobs/\w+"))
    job_id = page.url.rsplit("/", 1)[1]
    # one worker is busy with the pair queued before: this job waits its turn in the queue
    page.goto("/#/queue")
    row = page.locator(f'tr[data-id="{job_id}"]')
    expect(row).to_have_attribute("data-state", "queued")
    expect(row.locator(".progress-cell")).to_contain_text("waiting for a worker")
    expect(row).to_contain_text("local")
    shot(page, "02-queue")

    page.goto(f"/#/jobs/{job_id}")
    badge = page.locator("#job-heading .badge")
    expect(badge).to_have_attribute("data-state", re.compile("queued|running|succeeded"))
    expect(badge).to_have_attribute("data-state", "succeeded", timeout=90_000)
    expect(badge).to_have_text("succeeded")  # the API's word, also in the queue's state filter
    expect(page.locator(".caution")).to_have_text(f"Caution. {CAUTION}")
    summary = page.locator(".summary-table")
    expect(summary).to_contain_text("Reynolds number")
    expect(summary.locator("tr", has_text="Reynolds number").locator("td")).to_have_text("20")
    expect(summary).to_contain_text("pipe: cD mean")

    # the force chart holds every data point of forces.csv
    columns, rows = read_csv(api.get(f"/jobs/{job_id}/files/forces.csv").text)
    assert columns == ["time", "pipe_fx", "pipe_fy", "pipe_cd", "pipe_cl", "time_step"]
    assert len(rows) == 60
    expect(page.locator('#force-chart path.series[data-series="pipe_cd"]')).to_have_count(1)
    dt_px, dy_px = pixel(page, "#force-chart")
    for name in ("pipe_cd", "pipe_cl"):
        drawn = chart_points(page, "#force-chart", name)
        j = columns.index(name)
        assert len(drawn) == len(rows)
        for (t, y), row_ in zip(drawn, rows):
            assert t == pytest.approx(row_[0], abs=0.006 * dt_px)
            assert y == pytest.approx(row_[j], abs=0.006 * dy_px)

    # hover reads values: point at sample 15 and read cD from the tooltip
    svg = page.locator("#force-chart svg.chart-svg")
    box = svg.bounding_box()
    left, width = float(svg.get_attribute("data-left")), float(svg.get_attribute("data-plot-width"))
    x0, x1 = float(svg.get_attribute("data-x0")), float(svg.get_attribute("data-x1"))
    t15 = rows[14][0]
    scale = box["width"] / float(svg.get_attribute("width"))
    page.mouse.move(box["x"] + (left + (t15 - x0) / (x1 - x0) * width) * scale, box["y"] + box["height"] / 2)
    tip = page.locator("#force-chart .chart-tip")
    expect(tip).to_be_visible()
    expect(tip.locator(".tip-time")).to_have_text(f"t = {t15:g} s")
    shown = float(tip.locator('[data-series="pipe_cd"]').inner_text().split(":")[-1])
    assert shown == pytest.approx(rows[14][3], rel=1e-5)

    # the keyboard reads values too: End jumps to the last sample
    svg.focus()
    page.keyboard.press("End")
    expect(tip.locator(".tip-time")).to_have_text(f"t = {rows[-1][0]:g} s")
    page.keyboard.press("ArrowLeft")
    expect(tip.locator(".tip-time")).to_have_text(f"t = {rows[-2][0]:g} s")

    # zoom to a time window by dragging, then back
    page.mouse.move(box["x"] + (left + 0.25 * width) * scale, box["y"] + box["height"] / 2)
    page.mouse.down()
    page.mouse.move(box["x"] + (left + 0.6 * width) * scale, box["y"] + box["height"] / 2, steps=5)
    page.mouse.up()
    zx0, zx1 = float(svg.get_attribute("data-x0")), float(svg.get_attribute("data-x1"))
    assert x0 < zx0 < zx1 < x1
    inside = [r for r in rows if zx0 <= r[0] <= zx1]
    assert len(inside) + 0 <= len(chart_points(page, "#force-chart", "pipe_cd")) <= len(inside) + 2
    page.locator("#force-chart").get_by_role("button", name="Show all").click()
    assert float(svg.get_attribute("data-x0")) == pytest.approx(x0)

    # toggle a series off and on
    legend = page.locator('#force-chart .legend-item[data-series="pipe_cl"]')
    legend.click()
    expect(legend).to_have_attribute("aria-pressed", "false")
    expect(page.locator('#force-chart path.series[data-series="pipe_cl"]')).to_have_count(0)
    legend.click()
    expect(page.locator('#force-chart path.series[data-series="pipe_cl"]')).to_have_count(1)

    # a field picture loads, and the slider and field choice change it
    picture = page.locator("#field-picture")
    expect(picture).to_have_attribute("src", re.compile(r"pictures/speed_000060\.png$"))
    expect(picture).to_have_attribute("alt", re.compile(r"step 60 · t = 0\.3 s$"))  # its row in forces.csv
    page.wait_for_function(
        "() => { const i = document.getElementById('field-picture'); return i.complete && i.naturalWidth > 100; }"
    )
    slider = page.locator("#snapshot")
    slider.focus()
    page.keyboard.press("Home")
    expect(picture).to_have_attribute("src", re.compile(r"pictures/speed_000000\.png$"))
    page.locator("#field-vorticity").check()
    expect(picture).to_have_attribute("src", re.compile(r"pictures/vorticity_000000\.png$"))
    page.wait_for_function(
        "() => { const i = document.getElementById('field-picture'); return i.complete && i.naturalWidth > 100; }"
    )
    expect(page.locator("#picture-caption")).to_contain_text("snapshot 1 of 4")
    # download links point at the service's files
    csv_link = page.get_by_role("link", name="Force history (CSV)")
    expect(csv_link).to_have_attribute("href", f"/api/v1/jobs/{job_id}/files/forces.csv")
    expect(page.get_by_role("link", name=re.compile("zip of VTU"))).to_have_attribute("href", re.compile("fields.zip$"))
    shot(page, "03-job-results")


def test_bad_values_show_their_errors_beside_the_fields(page, api) -> None:
    before = len(api.get("/jobs", params={"limit": 500}).json()["jobs"])
    page.goto("/#/new")
    fill(page, "bodies.0.radius", -0.05)
    expect(page.locator("#f-analysis-time_step")).to_have_count(0)  # error-controlled steps: no step to pick
    fill(page, "analysis.accuracy", "abc")
    page.locator("#submit-case").click()
    radius_error = page.locator("#err-f-bodies-0-radius")
    expect(radius_error).to_be_visible()
    expect(radius_error).to_contain_text("greater than 0")
    expect(page.locator("#f-bodies-0-radius")).to_have_attribute("aria-invalid", "true")
    accuracy_error = page.locator("#err-f-analysis-accuracy")
    expect(accuracy_error).to_be_visible()
    expect(accuracy_error).to_contain_text("number")
    summary = page.locator("#error-summary")
    expect(summary).to_be_visible()
    expect(summary).to_contain_text("Body 1 › radius")
    shot(page, "04-form-errors")
    # fixing a field clears its message; a cross-field problem lands on the body it names
    fill(page, "bodies.0.radius", 0.01)
    expect(radius_error).to_be_hidden()
    fill(page, "analysis.accuracy", 0.001)
    fill(page, "bodies.0.center.1", 0.095)  # the default post (r = 0.01) then crosses the 0.1 m wall
    page.locator("#submit-case").click()
    body_error = page.locator('[data-error-for="bodies.0"]')
    expect(body_error).to_contain_text("not strictly inside the channel")
    assert page.url.endswith("#/new")
    assert len(api.get("/jobs", params={"limit": 500}).json()["jobs"]) == before


def test_cancel_running_and_queued_jobs(page, api) -> None:
    long_case = {
        **TINY,
        "title": "Long run to cancel",
        "analysis": {**TINY["analysis"], "end_time": 1000.0, "output_interval": 100.0},
    }
    running = submit(api, long_case)
    waiting = submit(api, {**long_case, "title": "Queued run to cancel"})
    wait_state(api, running, {"running"}, timeout=90)
    # the second one waits behind it; cancel it from the queue
    page.goto("/#/queue")
    row = page.locator(f'tr[data-id="{waiting}"]')
    expect(row).to_have_attribute("data-state", "queued")
    expect(page.locator(f'tr[data-id="{running}"]')).to_have_attribute("data-state", "running")
    expect(page.locator("#live-state")).to_have_attribute("data-state", "live")
    # cancel asks first: dismissed, the job stays queued
    asked: list[str] = []
    page.once("dialog", lambda d: (asked.append(d.message), d.dismiss()))
    row.get_by_role("button", name="Cancel").click()
    expect(row.get_by_role("button", name="Cancel")).to_be_enabled()
    assert asked and "Queued run to cancel" in asked[0] and "will not run" in asked[0]
    assert api.get(f"/jobs/{waiting}").json()["cancel_requested"] is False
    page.once("dialog", lambda d: d.accept())
    row.get_by_role("button", name="Cancel").click()
    expect(row).to_have_attribute("data-state", "cancelled", timeout=20_000)
    # the running one from its own page: it stops within a few seconds
    page.goto(f"/#/jobs/{running}")
    expect(page.locator("#job-heading .badge")).to_have_attribute("data-state", "running")
    page.once("dialog", lambda d: (asked.append(d.message), d.accept()))
    page.locator("#job-cancel").click()
    expect(page.locator("#job-heading .badge")).to_have_attribute("data-state", "cancelled", timeout=30_000)
    expect(page.locator("#job-cancel")).to_have_count(0)
    assert api.get(f"/jobs/{running}").json()["state"] == "cancelled"
    assert "Long run to cancel" in asked[-1] and "results written so far are kept" in asked[-1]
    # nothing runs now: the queue stops polling
    page.goto("/#/queue")
    expect(page.locator("#live-state")).to_have_attribute("data-state", "idle", timeout=20_000)
    calls: list[str] = []
    page.on("request", lambda r: calls.append(r.url) if "/api/v1/jobs" in r.url else None)
    page.wait_for_timeout(3000)
    assert calls == []
    shot(page, "05-queue-after-cancel")
    # delete asks first, then the job and its files are gone
    page.once("dialog", lambda d: d.dismiss())
    row.get_by_role("button", name="Delete").click()
    expect(row).to_be_visible()
    page.once("dialog", lambda d: d.accept())
    row.get_by_role("button", name="Delete").click()
    expect(row).to_have_count(0)
    assert api.get(f"/jobs/{waiting}").status_code == 404


def test_compare_overlays_two_jobs(page, api, pair) -> None:
    for job_id in pair:
        wait_state(api, job_id, {"succeeded"}, timeout=120)
    page.goto("/#/queue")
    for job_id in pair:
        page.locator(f"#pick-{job_id}").check()
    page.locator("#compare-picked").click()
    page.wait_for_url(re.compile(r"#/compare\?ids="))
    series = page.locator("#compare-chart path.series")
    expect(series).to_have_count(4)  # cD and cL of each job
    for job_id in pair:
        columns, rows = read_csv(api.get(f"/jobs/{job_id}/files/forces.csv").text)
        drawn = chart_points(page, "#compare-chart", f"{job_id}:pipe_cd")
        assert len(drawn) == len(rows)
        dt_px, dy_px = pixel(page, "#compare-chart")
        assert [t for t, _ in drawn] == pytest.approx([r[0] for r in rows], abs=0.006 * dt_px)
        assert [y for _, y in drawn] == pytest.approx([r[3] for r in rows], abs=0.006 * dy_px)
    # two different viscosities: two different drag histories
    a, b = (chart_points(page, "#compare-chart", f"{j}:pipe_cd") for j in pair)
    assert a[-1][1] != pytest.approx(b[-1][1], rel=1e-3)
    table = page.locator("#compare-table")
    expect(table.locator("thead th")).to_have_count(3)
    expect(table).to_contain_text("Compare case 1")
    expect(table).to_contain_text("Compare case 2")
    re_row = table.locator("tr", has_text="Reynolds number").locator("td")
    expect(re_row).to_have_text(["20", "13.33"])
    expect(page.locator(".caution")).to_contain_text("licensed engineer")
    shot(page, "06-compare")


def test_json_spec_round_trip_and_upload(page, base_url, tmp_path) -> None:
    page.context.grant_permissions(["clipboard-read", "clipboard-write"], origin=base_url)
    page.goto("/#/new")
    box = page.locator("#spec-json")
    expect(page.locator("#f-bodies-0-radius")).to_have_value("0.01")  # the starting example has loaded
    # copy puts the spec on the clipboard; paste reads one back into the form
    page.get_by_role("button", name="Copy").click()
    page.wait_for_function("async () => (await navigator.clipboard.readText()).includes('water channel')")
    copied = json.loads(page.evaluate("navigator.clipboard.readText()"))
    assert copied == json.loads(box.input_value())
    copied["bodies"][0]["center"] = [0.3, 0.06]
    page.evaluate("text => navigator.clipboard.writeText(text)", json.dumps(copied))
    page.get_by_role("button", name="Paste").click()
    expect(page.locator("#f-bodies-0-center-0")).to_have_value("0.3")
    expect(page.locator("#f-bodies-0-center-1")).to_have_value("0.06")
    spec = json.loads(box.input_value())
    spec["bodies"][0]["radius"] = 0.015
    spec["channel"]["walls"] = "slip"
    box.fill(json.dumps(spec))
    page.get_by_role("button", name="Apply JSON to form").click()
    expect(page.locator("#f-bodies-0-radius")).to_have_value("0.015")
    expect(page.locator("#f-channel-walls")).to_have_value("slip")
    box.fill("{not json")
    page.get_by_role("button", name="Apply JSON to form").click()
    expect(page.locator("#json-error")).to_contain_text("Not valid JSON")
    # upload a file: a bridge pier with two probes
    pier = {
        "title": "Pier upload",
        "channel": {"length": 16.0, "height": 6.0, "walls": "slip"},
        "bodies": [{"name": "pier", "shape": "rectangle", "center": [4.0, 3.0], "width": 1.6, "height": 0.8}],
        "fluid": {"reynolds": 40},
        "inflow": {"profile": "uniform", "mean_velocity": 0.5},
        "probes": {"pressure_drop": [[2.5, 3.0], [6.0, 3.0]]},
    }
    path = tmp_path / "pier.json"
    path.write_text(json.dumps(pier))
    page.locator("#spec-upload").set_input_files(str(path))
    expect(page.locator("#f-bodies-0-width")).to_have_value("1.6")
    expect(page.locator("#f-fluid-reynolds")).to_have_value("40")
    expect(page.locator(".case-svg .probe")).to_have_count(2)
    expect(page.locator('dd[data-figure="Blockage ratio"]')).to_contain_text("13.3 %")
    assert json.loads(box.input_value()) == pier


def test_a_case_applied_before_the_examples_arrive_is_kept(page) -> None:
    """On a busy service the examples can arrive after someone has applied a case of their own: the starting
    example must not replace it (it did, and a study was then built on the wrong case)."""
    held = []
    page.route("**/api/v1/examples", lambda route: held.append(route))  # hold the examples' answer back
    page.goto("/#/new")
    page.wait_for_function("() => document.querySelector('#example')")
    page.locator("#spec-json").fill(
        json.dumps({"title": "My own pier", "bodies": [{"shape": "circle", "radius": 0.02, "center": [0.3, 0.05]}]})
    )
    page.get_by_role("button", name="Apply JSON to form").click()
    expect(page.locator("#f-title")).to_have_value("My own pier")
    for _ in range(200):  # the page asked for them as it started; the handler runs while Playwright waits
        if held:
            break
        page.wait_for_timeout(50)
    assert len(held) == 1
    held[0].continue_()
    expect(page.locator("#example option")).not_to_have_count(1)  # the examples are offered now
    expect(page.locator("#f-title")).to_have_value("My own pier")
    expect(page.locator("#f-bodies-0-radius")).to_have_value("0.02")


def test_live_figures_come_from_the_services_preview(page, api) -> None:
    """Cells, unknowns, steps and warnings are the solver's (a dry run of its mesher, its rules), not a copy of its
    rules in the page."""
    page.goto("/#/new")
    mesh = page.locator('dd[data-figure="Mesh"]')
    spec = json.loads(page.locator("#spec-json").input_value())
    for preset in ("coarse", "medium"):
        page.locator("#f-mesh-preset").select_option(preset)
        case = Case.build(load({**spec, "mesh": {**spec.get("mesh", {}), "preset": preset}}))
        expect(mesh).to_contain_text(f"{case.cells:,} cells")
        expect(mesh).to_contain_text(f"{case.th.ndofs:,} unknowns")
    # bdf2-adaptive: the service's estimate of the steps
    spec = json.loads(page.locator("#spec-json").input_value())
    steps = api.post("/previews", json=spec).json()["estimate"]["steps"]
    expect(page.locator('dd[data-figure="Time steps"]')).to_contain_text(f"about {steps:,}")
    # a fixed step far past the CFL limit of explicit convection: the service's CFL number and warning
    page.locator("#f-analysis-scheme").select_option("bdf2-imex")
    fill(page, "analysis.time_step", 10)
    spec = json.loads(page.locator("#spec-json").input_value())
    served = api.post("/previews", json=spec).json()
    assert served["estimate"]["cfl"] > 1
    expect(page.locator("ul.warnings")).to_contain_text(served["warnings"][0]["message"])
    expect(page.locator('dd[data-figure="CFL near the bodies"]')).to_contain_text(f"≈ {served['estimate']['cfl']:.2g}")
    fill(page, "analysis.time_step", 0.1)
    expect(page.locator("ul.warnings")).not_to_contain_text("CFL")
    page.locator("#f-analysis-scheme").select_option("bdf2-adaptive")
    # a second post on top of the first: the service's geometry problem is listed while typing, before any submit
    page.locator("#new-shape").select_option("circle")
    page.locator("#add-body").click()
    fill(page, "bodies.1.center.0", spec["bodies"][0]["center"][0])
    fill(page, "bodies.1.center.1", spec["bodies"][0]["center"][1])
    expect(page.locator("ul.warnings")).to_contain_text("overlaps")
    expect(page.locator('[data-error-for="bodies.1"]')).to_contain_text("overlaps")  # beside the body, before a submit
    expect(page.locator("#error-summary")).to_be_hidden()
    expect(page.locator(".case-svg .body-warn")).not_to_have_count(0)  # the drawing marks the body in fault
    expect(mesh).to_contain_text("—")


def test_bodies_move_with_the_keyboard(page) -> None:
    page.goto("/#/new")
    page.locator("#f-bodies-0-center-0").fill("0.2")
    body = page.locator(".case-svg g.body").first
    expect(body).to_be_visible()  # drawn from the service's outline
    body.focus()
    page.keyboard.press("ArrowRight")
    page.keyboard.press("Shift+ArrowUp")
    # steps of 1/100 (Shift: 1/10) of the 0.1 m channel width, from the default post at (0.1, 0.05)
    expect(page.locator("#f-bodies-0-center-0")).to_have_value("0.201")
    expect(page.locator("#f-bodies-0-center-1")).to_have_value("0.06")
    # drag it with the mouse: 0.1 m to the right at the drawing's scale
    channel = page.locator(".case-svg .fluid-area").bounding_box()
    per_metre = channel["width"] / 0.4
    start = page.locator(".case-svg g.body path").first.bounding_box()
    x, y = start["x"] + start["width"] / 2, start["y"] + start["height"] / 2
    page.mouse.move(x, y)
    page.mouse.down()
    page.mouse.move(x + 0.1 * per_metre, y, steps=8)
    page.mouse.up()
    moved = float(page.locator("#f-bodies-0-center-0").input_value())
    # within 0.002 m: the 0.005 m of the former 1 m long example channel, scaled to the 0.4 m one
    assert moved == pytest.approx(0.301, abs=0.002)
    assert float(page.locator("#f-bodies-0-center-1").input_value()) == pytest.approx(0.06, abs=0.002)
    # add and remove bodies of other shapes with the keyboard only
    page.locator("#new-shape").select_option("naca4")
    page.locator("#add-body").press("Enter")
    expect(page.locator("#f-bodies-1-code")).to_have_value("0012")
    expect(page.locator(".case-svg g.body")).to_have_count(2)
    page.locator("#remove-body-1").press("Enter")
    expect(page.locator(".case-svg g.body")).to_have_count(1)


def test_phone_width_has_no_sideways_scrolling(browser, base_url, api, pair) -> None:
    wait_state(api, pair[0], {"succeeded"}, timeout=120)
    context = browser.new_context(base_url=base_url, viewport={"width": 390, "height": 844}, is_mobile=True)
    page = context.new_page()
    try:
        for name, view, ready in (
            ("new", "#/new", ".case-svg g.body"),
            ("queue", "#/queue", "table.jobs tbody tr"),
            ("job", f"#/jobs/{pair[0]}", "#force-chart path.series"),
            ("studies", "#/studies", "#study-base a"),
        ):
            page.goto(f"/{view}")
            expect(page.locator(ready).first).to_be_visible()
            overflow = page.evaluate("document.documentElement.scrollWidth - window.innerWidth")
            assert overflow <= 1, f"{view} is {overflow}px wider than the phone screen"
            shot(page, f"07-phone-{name}")
    finally:
        context.close()


def test_wrong_token_is_reported_and_can_be_forgotten(page) -> None:
    page.goto("/#/queue")
    page.locator("#token").fill("not-a-real-token")
    page.get_by_role("button", name="Save").click()
    expect(page.locator("#view-queue .message")).to_contain_text("token")
    assert page.evaluate("localStorage.getItem('wakeyard.token')") == "not-a-real-token"
    page.get_by_role("button", name="Forget").click()
    expect(page.locator("#view-queue .message")).to_have_text("")
    assert page.evaluate("localStorage.getItem('wakeyard.token')") is None


def test_a_thousand_jobs_are_paged(page) -> None:
    """The page asks for one page at a time and follows the cursor; 1,000 jobs never become 1,000 rows."""
    jobs = [
        {
            "id": f"{i:032x}",
            "state": ["queued", "running", "succeeded", "failed", "cancelled"][i % 5],
            "owner": f"user{i % 7}",
            "title": f"Sweep case {i}",
            "tags": [],
            "spec": {},
            "progress": {"fraction": 0.5, "step": 5, "time": 0.1, "eta_seconds": 30},
            "created_at": "2026-01-01T00:00:00+00:00",
            "started_at": None,
            "finished_at": None,
            "summary": None,
            "error": None,
        }
        for i in range(1000, 0, -1)
    ]
    asked: list[str] = []

    def fulfil(route) -> None:
        from urllib.parse import parse_qs, urlparse

        q = parse_qs(urlparse(route.request.url).query)
        asked.append(route.request.url)
        limit = int(q.get("limit", ["50"])[0])
        start = int(q.get("cursor", ["0"])[0])
        page_jobs = jobs[start : start + limit]
        nxt = str(start + limit) if start + limit < len(jobs) else None
        route.fulfill(json={"jobs": page_jobs, "next_cursor": nxt})

    page.route(re.compile(r".*/api/v1/jobs\?.*"), fulfil)
    page.goto("/#/queue")
    rows = page.locator("table.jobs tbody tr")
    expect(rows).to_have_count(50)
    assert "limit=50" in asked[-1]
    page.locator("#filter-limit").select_option("200")
    expect(rows).to_have_count(200)
    page.locator("#page-next").click()
    expect(rows.first).to_contain_text("Sweep case 800")
    assert "cursor=200" in asked[-1]
    page.locator("#page-prev").click()
    expect(rows.first).to_contain_text("Sweep case 1000")
    # filters go to the service (a new first page), not through the rows in the browser
    with page.expect_request(lambda r: "state=failed" in r.url) as filtered:
        page.locator("#filter-state").select_option("failed")
    assert "cursor" not in filtered.value.url
    with page.expect_request(lambda r: "owner=user3" in r.url) as filtered:
        page.locator("#filter-owner").fill("user3")
    assert "state=failed" in filtered.value.url


def test_rerun_with_edits_queues_a_changed_copy(page, api, pair) -> None:
    original = wait_state(api, pair[0], {"succeeded"}, timeout=120)
    page.goto(f"/#/jobs/{pair[0]}")
    page.locator("#job-edit").click()
    page.wait_for_url(re.compile("#/new$"))
    expect(page.locator(".from-note")).to_contain_text("Compare case 1")
    expect(page.locator("#f-fluid-viscosity")).to_have_value("0.001")
    fill(page, "title", "Compare case 1, finer steps")
    fill(page, "analysis.time_step", 0.005)
    page.locator("#submit-case").click()
    page.wait_for_url(re.compile(r"#/jobs/\w+"))
    copy_id = page.url.rsplit("/", 1)[1]
    assert copy_id != pair[0]
    copy = api.get(f"/jobs/{copy_id}").json()
    api.post(f"/jobs/{copy_id}/cancel")  # only its spec matters here
    assert copy["spec"]["analysis"]["time_step"] == 0.005
    assert copy["spec"]["title"] == "Compare case 1, finer steps"
    unchanged = {k: v for k, v in copy["spec"].items() if k not in ("analysis", "title")}
    assert unchanged == {k: v for k, v in original["spec"].items() if k not in ("analysis", "title")}
    assert api.get(f"/jobs/{pair[0]}").json()["spec"] == original["spec"]


def test_long_force_history_is_thinned_but_keeps_its_extremes(page) -> None:
    """100,000 samples draw as at most a few points per pixel column, and no peak is lost."""
    page.goto("/#/queue")
    result = page.evaluate("""async () => {
        const {LineChart} = await import('/chart.js');
        const host = document.createElement('div');
        host.style.width = '800px';
        document.body.append(host);
        const n = 100000, x = new Array(n), y = new Array(n);
        for (let i = 0; i < n; i++) { x[i] = i * 1e-3; y[i] = Math.sin(x[i]) + (i === 54321 ? 5 : 0); }
        const chart = new LineChart(host, {label: 'test'});
        chart.setSeries([{id: 's', label: 's', x, y}]);
        const svg = host.querySelector('svg.chart-svg');
        const d = svg.querySelector('path.series').getAttribute('d');
        const ys = [...d.matchAll(/[ML]([-\\d.]+),([-\\d.]+)/g)].map(m => Number(m[2]));
        return {points: ys.length, width: Number(svg.dataset.plotWidth), top: Math.min(...ys),
                y1: Number(svg.dataset.y1), y0: Number(svg.dataset.y0), t: Number(svg.dataset.top),
                h: Number(svg.dataset.plotHeight)};
    }""")
    assert result["points"] <= 2 * (result["width"] + 2)
    peak = result["y0"] + (1 - (result["top"] - result["t"]) / result["h"]) * (result["y1"] - result["y0"])
    assert peak == pytest.approx(5 + math.sin(54.321), abs=0.01 * (result["y1"] - result["y0"]))


def test_study_view_shows_points_plot_and_links(page, api) -> None:
    # the 2D-1 benchmark cylinder and fluid (Schäfer & Turek 1996) in a shortened channel
    base = {
        "title": "Pier sweep (web test)",
        "channel": {"length": 1.0, "height": 0.41},
        "bodies": [{"name": "pier", "shape": "circle", "center": [0.2, 0.2], "radius": 0.05}],
        "fluid": {"density": 1.0, "viscosity": 1e-3},
        "mesh": {"preset": "coarse", "scale": 2.0},
    }
    r = api.post(
        "/studies",
        json={"kind": "sweep", "base": base, "vary": [{"path": "inflow.peak_velocity", "values": [0.2, 0.3, 0.45]}]},
    )
    assert r.status_code == 202, r.text
    study = r.json()
    page.goto(f"/#/studies/{study['id']}")
    rows = page.locator("table.study-points tbody tr")
    expect(rows).to_have_count(3)
    expect(page.locator("table.study-points .state-succeeded")).to_have_count(3, timeout=120_000)
    expect(page.locator(".caution").first).to_have_text(f"Caution. {CAUTION}")
    # the drag column falls as the velocity rises (Re 13 -> 30 steady cylinder in a channel)
    headers = page.locator("table.study-points thead th").all_inner_texts()
    assert headers[0] == "inflow.peak_velocity [m/s]"
    cd = [float(rows.nth(i).locator("td").nth(headers.index("pier.cd [-]")).inner_text()) for i in range(3)]
    assert cd[0] > cd[1] > cd[2]
    page.wait_for_function("document.querySelector('img.study-plot')?.naturalWidth > 0")
    shot(page, "08-study-detail")
    rows.nth(1).locator("a").click()
    expect(page).to_have_url(re.compile(r"#/jobs/"))
    page.goto("/#/studies")
    expect(page.locator("table.studies-table")).to_contain_text("Pier sweep (web test)")
    shot(page, "09-studies")


def test_placeholders_drawing_and_footer_follow_the_service(page, api) -> None:
    page.goto("/#/new")
    # the examples are the service's (examples/), the page keeps no copy of them nor of the spec's defaults
    served = api.get("/examples").json()["examples"]
    expect(page.locator("#example option")).to_have_count(1 + len(served))
    offered = page.locator("#example option").evaluate_all("os => os.slice(1).map(o => [o.value, o.textContent])")
    assert offered == [[e["name"], e["title"]] for e in served]
    for dead in ("defaults.js", "geometry.js", "examples.js"):
        assert api.get(f"{page.url.split('/#')[0]}/{dead}").status_code == 404
    page.locator("#example").select_option("bridge_pier")
    expect(page.locator("#f-title")).to_have_value(next(e["title"] for e in served if e["name"] == "bridge_pier"))
    spec = JobSpec()
    expect(page.locator("#f-analysis-newton_tolerance")).to_have_attribute("placeholder", "1e-8")
    # a blank field shows the value the service will use for it, and the drawing uses that same value
    page.locator("#f-channel-height").fill("")
    expect(page.locator("#f-channel-height")).to_have_attribute("placeholder", str(spec.channel.height))
    assert "height" not in json.loads(page.locator("#spec-json").input_value())["channel"]
    # until the case's new preview answers, the drawing keeps the height the last one gave (0.15 m): wait for it.
    # The size is read in the same call that sees it settle: the drawing is rebuilt on every preview and resize,
    # and a rectangle read a moment later may already be detached (its box is then 0 by 0).
    ratio = spec.channel.height / 0.4
    settled = page.wait_for_function(
        """r => { const b = document.querySelector(".case-svg .fluid-area").getBBox();
                  return Math.abs(b.height / b.width - r) < 0.01 * r && {width: b.width, height: b.height}; }""",
        arg=ratio,
    ).json_value()
    assert settled["width"] > 0
    assert settled["height"] / settled["width"] == pytest.approx(ratio, rel=0.01)
    expect(page.locator("#caution-foot")).to_have_text(CAUTION)


def test_a_field_just_cleared_shows_no_stale_value_while_its_preview_is_pending(page, api) -> None:
    """A field just cleared must not show the value removed (as its placeholder, or in the drawing) while the
    service's answer for it blank is on its way: the submitted spec will carry the service's default, not that."""
    page.goto("/#/new")
    page.locator("#example").select_option("bridge_pier")
    pier = next(e["spec"] for e in api.get("/examples").json()["examples"] if e["name"] == "bridge_pier")
    length, height = pier["channel"]["length"], pier["channel"]["height"]
    default = JobSpec().channel.height
    assert height != default
    ratio = "r => { const b = document.querySelector('.case-svg .fluid-area').getBBox(); return Math.abs(b.height / b.width - r) < 0.01 * r; }"  # noqa: E501
    page.wait_for_function(ratio, arg=height / length)
    held, released = [], []

    def hold(route) -> None:  # the service's answers wait until released
        route.continue_() if released else held.append(route)

    page.route("**/api/v1/previews", hold)
    page.locator("#f-channel-height").fill("")
    expect(page.locator("#f-channel-height")).to_have_attribute("placeholder", "")
    page.wait_for_function(ratio, arg=default / length, timeout=5000)  # the channel's default, before any answer
    for _ in range(100):  # the page asks once typing pauses
        if held:
            break
        page.wait_for_timeout(50)
    assert held
    released.append(True)
    for route in held:
        route.continue_()
    expect(page.locator("#f-channel-height")).to_have_attribute("placeholder", str(default))
    assert "height" not in json.loads(page.locator("#spec-json").input_value())["channel"]


def test_the_drawing_shows_the_solvers_outline(page, api) -> None:
    """The guide vane's airfoil is drawn from the outline the service's preview returns (the page has no airfoil
    formula): the same points, scaled to the drawing."""
    page.goto("/#/new")
    page.locator("#example").select_option("guide_vane")
    vane = next(e["spec"] for e in api.get("/examples").json()["examples"] if e["name"] == "guide_vane")
    outline = api.post("/previews", json=vane).json()["outlines"][0]["points"]
    path = page.locator(".case-svg g.body path").first
    expect(page.locator(".case-svg g.body").first).to_have_attribute("aria-label", re.compile(r"^vane, naca4"))
    drawn = [[float(v) for v in xy.split(",")] for xy in re.findall(r"[-\d.]+,[-\d.]+", path.get_attribute("d"))]
    assert len(drawn) == len(outline)

    def unit(points: list[list[float]], flip: bool) -> list[tuple[float, float]]:
        xs, ys = [p[0] for p in points], [p[1] for p in points]
        sx, sy = max(xs) - min(xs), max(ys) - min(ys)
        return [((x - min(xs)) / sx, (max(ys) - y if flip else y - min(ys)) / sy) for x, y in points]

    # the SVG's y axis points down
    for (x0, y0), (x1, y1) in zip(unit(drawn, True), unit(outline, False)):
        assert abs(x0 - x1) < 0.01 and abs(y0 - y1) < 0.01

    # moving it by the keyboard moves the solver's outline with it before the service answers again
    def place() -> tuple[float, float]:  # the outline's left end and width, as shares of the channel's length
        box, ch = boxes(page, ".case-svg g.body path", ".case-svg .fluid-area")
        return (box["x"] - ch["x"]) / ch["width"], box["width"] / ch["width"]

    before = place()
    path.locator("xpath=..").focus()
    page.keyboard.press("Shift+ArrowRight")  # a tenth of the 0.05 m channel height: 0.005 m of its 0.2 m length
    expect(page.locator("#f-bodies-0-leading_edge-0")).to_have_value("0.045")
    after = place()
    assert after[1] == pytest.approx(before[1], rel=0.01) and after[0] - before[0] == pytest.approx(0.025, rel=0.05)


def test_a_quantity_not_computed_is_shown_with_its_reason(page, api) -> None:
    job_id = submit(api, {**TANDEM, "title": "Tandem tubes, wake length undefined"})
    job = wait_state(api, job_id, {"succeeded", "failed"}, timeout=150)
    assert job["state"] == "succeeded", job["error"]
    page.goto(f"/#/jobs/{job_id}")
    row = page.locator(".summary-table tr", has_text="upstream: recirculation length (not computed)")
    expect(row.locator("td")).to_contain_text("reaches downstream")
    length = page.locator(".summary-table tr", has_text="upstream: recirculation length (m)")
    expect(length.locator("td")).to_have_text("—")


def test_heat_form_and_results(page, api) -> None:
    page.goto("/#/new")
    page.locator("#f-heat-on").check()
    fill(page, "heat.inflow_temperature", 15)
    page.locator("#f-bodies-0-thermal-kind").select_option("temperature")
    fill(page, "bodies.0.thermal.temperature", 45)
    page.locator("#f-heat-walls-kind").select_option("heat_flux")
    fill(page, "heat.walls.heat_flux", 200)
    spec = json.loads(page.locator("#spec-json").input_value())
    assert spec["heat"] == {"inflow_temperature": 15, "walls": {"heat_flux": 200}}
    assert spec["bodies"][0]["thermal"] == {"temperature": 45}
    page.locator("#heat-by-prandtl").check()  # a Prandtl number alone gives no conductivity for the wall flux
    page.locator("#submit-case").click()
    expect(page.locator("#err-f-heat-walls-heat_flux")).to_contain_text("needs heat.conductivity")
    page.locator("#f-heat-on").uncheck()
    assert "thermal" not in json.loads(page.locator("#spec-json").input_value())["bodies"][0]

    heated = {
        **TINY,
        "title": "Heated pipe (browser test)",
        "bodies": [{**TINY["bodies"][0], "thermal": {"temperature": 60.0}}],
        "heat": {"inflow_temperature": 20.0},
        "analysis": {**TINY["analysis"], "end_time": 0.1, "output_interval": 0.05},
    }
    job = wait_state(api, submit(api, heated), {"succeeded", "failed"}, timeout=150)
    assert job["state"] == "succeeded", job["error"]
    page.goto(f"/#/jobs/{job['id']}")
    expect(page.locator(".summary-table")).to_contain_text("pipe: Nusselt number mean")
    page.locator("#field-temperature").check()
    expect(page.locator("#field-picture")).to_have_attribute("data-path", re.compile(r"pictures/temperature_\d+\.png"))
    expect(page.locator(".heat-plots figure")).to_have_count(2)
    expect(page.locator(".download-list").first).to_contain_text("Nusselt history (CSV)")
    shot(page, "heat-results")
