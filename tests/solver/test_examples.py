"""Every example case (examples/*.json and the page's web/examples.js) is valid as published and runs to success.

Transient examples are run for a few of their own time steps only (CI time); their full length is checked
against the service's default limits, so the published spec itself is accepted as it stands.
"""

import copy
import json
from pathlib import Path

import json5
import numpy as np
import pytest

from wakeyard.solver import Limits, check_limits, load, run

ROOT = Path(__file__).resolve().parents[2]


def page_examples() -> dict[str, dict]:
    """The EXAMPLES object of web/examples.js (a JavaScript object literal)."""
    text = (ROOT / "web" / "examples.js").read_text()
    literal = text.split("export const EXAMPLES = ", 1)[1].split("\n};\n", 1)[0] + "\n}"
    return {f"web:{key}": value["spec"] for key, value in json5.loads(literal).items()}


def all_examples() -> dict[str, dict]:
    files = {f"examples/{p.name}": json.loads(p.read_text()) for p in sorted((ROOT / "examples").glob("*.json"))}
    return {**files, **page_examples()}


EXAMPLES = all_examples()


def test_the_examples_are_found():
    assert len([k for k in EXAMPLES if k.startswith("examples/")]) >= 3
    assert {"web:post", "web:pier", "web:rods", "web:vane"} <= set(EXAMPLES)


@pytest.mark.parametrize("name", sorted(EXAMPLES))
def test_example_is_valid_as_published(name):
    check_limits(load(EXAMPLES[name]), Limits())


def distinct_runs() -> dict[str, dict]:
    """One run per distinct case: a page example identical to a file example is run once."""
    seen, out = set(), {}
    for name, spec in sorted(EXAMPLES.items()):
        key = load(spec).model_dump_json(exclude={"title"})
        if key not in seen:
            seen.add(key)
            out[name] = spec
    return out


@pytest.mark.parametrize("name", sorted(distinct_runs()))
def test_example_runs_to_success(tmp_path, name):
    spec = copy.deepcopy(EXAMPLES[name])
    analysis = spec.setdefault("analysis", {})
    if analysis.get("mode") == "transient":
        loaded = load(spec)
        # three fixed steps, or about ten error-controlled ones (the first is 1e-3 convective times)
        short = 3 * (loaded.analysis.time_step or 3e-3 * loaded.reference_length() / loaded.reference_velocity())
        analysis.update(end_time=short, output_interval=short)
    summary = run(spec, tmp_path)
    assert json.loads((tmp_path / "status.json").read_text())["state"] == "succeeded"
    assert [b["name"] for b in summary["bodies"]] == [b.name for b in load(spec).bodies]
    for body in summary["bodies"]:
        cd = body["drag_coefficient"]
        assert np.isfinite(cd if isinstance(cd, float) else cd["mean"])
