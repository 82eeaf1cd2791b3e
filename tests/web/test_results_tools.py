"""The result views as working tools: one download of everything, and compare with colours per body and spec diffs."""

from __future__ import annotations

import io
import json
import re
import zipfile
from pathlib import Path

import pytest

from wakeyard.solver import load, picture_choice
from wakeyard.solver.caution import CAUTION
from wakeyard.solver.picture_choice import MAX_PICTURES

from .conftest import TINY, shot, submit, wait_state

pytestmark = pytest.mark.timeout(180)

expect = pytest.importorskip("playwright.sync_api", reason="pip install playwright (the test extra)").expect

# two tubes one behind the other in the small test channel, with a title longer than a legend button once was
TWIN = {
    **TINY,
    "title": "Two tubes one behind the other in a short channel (compare test)",
    "bodies": [
        {"name": "front", "shape": "circle", "center": [0.2, 0.2], "radius": 0.05},
        {"name": "rear", "shape": "circle", "center": [0.5, 0.2], "radius": 0.03},
    ],
    "analysis": {**TINY["analysis"], "output_interval": 0.3},
}


def test_everything_downloads_as_one_zip(page, api, pair) -> None:
    job_id = pair[0]
    wait_state(api, job_id, {"succeeded"}, timeout=120)
    listed = {f["path"] for f in api.get(f"/jobs/{job_id}/files").json()["files"]} - {"fields.zip"}
    assert {"forces.csv", "summary.json", "spec.json"} <= listed
    page.goto(f"/#/jobs/{job_id}")
    link = page.locator("#download-all")
    expect(link).to_have_text("Everything (zip of all files)")
    with page.expect_download() as got:
        link.click()
    download = got.value
    archive = zipfile.ZipFile(io.BytesIO(Path(download.path()).read_bytes()))
    assert set(archive.namelist()) == listed | {"CAUTION.txt"}
    assert archive.read("forces.csv") == api.get(f"/jobs/{job_id}/files/forces.csv").content
    assert " ".join(archive.read("CAUTION.txt").decode().split()) == f"Caution: {CAUTION}"
    assert download.suggested_filename.endswith("all-files.zip")
    # the mesh picture is shown with the results
    mesh = page.locator("#mesh-picture")
    expect(mesh).to_have_attribute("alt", re.compile("close-up of each body"))
    page.wait_for_function("document.querySelector('#mesh-picture').naturalWidth > 300")
    # a job with no files yet has nothing to zip: a clear 404, not an empty archive
    missing = api.get("/jobs/no-such-job/files/all-files.zip")
    assert missing.status_code == 404 and missing.json()["detail"][0]["field"] == "job_id"


def test_compare_colours_each_body_labels_in_full_and_lists_spec_differences(page, api, pair) -> None:
    twin = submit(api, TWIN)
    for job_id in (*pair, twin):
        wait_state(api, job_id, {"succeeded"}, timeout=150)
    ids = [*pair, twin]
    page.goto(f"/#/compare?ids={','.join(ids)}")
    series = page.locator("#compare-chart path.series")
    expect(series).to_have_count(8)  # cD and cL of one body, one body, two bodies

    def stroke(key: str) -> str:
        return page.locator(f'#compare-chart path.series[data-series="{key}"]').get_attribute("stroke")

    owners = [f"{pair[0]}:pipe", f"{pair[1]}:pipe", f"{twin}:front", f"{twin}:rear"]
    colours = [stroke(f"{o}_cd") for o in owners]
    assert len(set(colours)) == 4, colours  # one colour per body and job
    assert [stroke(f"{o}_cl") for o in owners] == colours  # lift shares its body's colour, dashed
    # the summary table's header shows the same colours, one swatch per body
    twin_head = page.locator(f'#compare-table thead th[data-id="{twin}"] .swatch')
    expect(twin_head).to_have_count(2)
    swatches = [twin_head.nth(i).evaluate("e => getComputedStyle(e).backgroundColor") for i in range(2)]
    assert swatches == [rgb(c) for c in colours[2:]]
    # the legend carries the whole title, and says it again as a tooltip
    item = page.locator(f'#compare-chart .legend-item[data-series="{twin}:front_cd"]')
    expect(item).to_contain_text(TWIN["title"])
    expect(item).to_have_attribute("title", f"{TWIN['title']} ({twin[:8]}) · front cD: click to hide")
    box, host = item.bounding_box(), page.locator("#compare-chart").bounding_box()
    assert box["x"] + box["width"] <= host["x"] + host["width"] + 1  # wraps inside the chart, not cut or overflowing
    # the spec fields that differ, one row each, one column per job
    diff = page.locator("#spec-diff")
    expect(diff.locator("thead th")).to_have_count(4)
    nu = diff.locator('tr[data-field="fluid.viscosity"] td')
    expect(nu).to_have_text(["0.001", "0.0015", "0.001"])
    rows = diff.locator("tbody tr")
    fields = {rows.nth(i).get_attribute("data-field") for i in range(rows.count())}
    assert "bodies.1.radius" in fields and "bodies.0.center" not in fields and "title" not in fields
    assert "analysis.output_interval" not in fields and "channel.length" not in fields
    shot(page, "12-compare-bodies")
    # two cases alike but for their titles: said so
    clone = api.post(f"/jobs/{pair[0]}/clone", json={"title": "Same case, other title"})
    assert clone.status_code == 202, clone.text
    page.goto(f"/#/compare?ids={pair[0]},{clone.json()['id']}")
    expect(page.locator("#spec-same")).to_have_text("The cases are the same apart from their titles.")


def test_the_form_says_how_many_pictures_a_run_draws(page) -> None:
    page.goto("/#/new")
    figure = page.locator('dd[data-figure="Field pictures"]')
    kinds = []
    for interval in (0.05, 1000.0):  # many snapshots of the form's case, then just its start and end
        page.locator("#f-analysis-output_interval").fill(str(interval))
        page.locator("#f-analysis-output_interval").blur()
        expect(page.locator("#spec-json")).to_have_value(re.compile(rf'"output_interval": {interval:g}\b'))
        plan = picture_choice.plan(load(json.loads(page.locator("#spec-json").input_value())))
        expect(figure).to_contain_text(f"{plan['drawn']} of each field")
        kinds.append(plan["every"] > 1)
        if plan["every"] > 1:
            expect(figure).to_contain_text(
                f"of {plan['snapshots']:,} snapshots: at most {MAX_PICTURES} per field, evenly"
            )
        else:
            expect(figure).to_contain_text(f"one per snapshot (at most {MAX_PICTURES} per field)")
    assert kinds == [True, False]
    expect(page.locator("#hint-f-analysis-output_interval")).to_contain_text("one picture of each field per snapshot")


def test_blank_fields_show_the_services_values_and_the_figures_settle(page, api) -> None:
    """What a blank field will become is the service's normalised spec, shown as the field's placeholder."""
    page.goto("/#/new")
    for path in ("channel.length", "analysis.end_time", "fluid.density"):
        page.locator(f"#f-{path.replace('.', '-')}").fill("")
    page.locator("#f-channel-height").focus()
    figures = page.locator("dl.figures")
    expect(figures).to_have_attribute("aria-busy", "false")  # the preview of this very spec has arrived
    sent = json.loads(page.locator("#spec-json").input_value())
    assert "length" not in sent.get("channel", {})  # blank: left to the service
    normal = api.post("/previews", json=sent).json()["spec"]
    blanks = page.locator('input[data-kind="number"]')
    checked = 0
    for i in range(blanks.count()):
        field = blanks.nth(i)
        if field.input_value().strip():
            continue
        value = normal
        for part in field.get_attribute("data-path").split("."):
            value = value.get(part) if isinstance(value, dict) else None
        if isinstance(value, int | float) and not isinstance(value, bool):
            assert float(field.get_attribute("placeholder")) == value, field.get_attribute("data-path")
            checked += 1
    assert checked >= 3
    length = float(page.locator("#f-channel-length").get_attribute("placeholder"))
    assert length == normal["channel"]["length"]


def rgb(hex_colour: str) -> str:
    """#1f6f8b as the browser's computed style writes it: rgb(31, 111, 139)."""
    r, g, b = (int(hex_colour[i : i + 2], 16) for i in (1, 3, 5))
    return f"rgb({r}, {g}, {b})"
