"""Every example case (examples/*.json, which the page offers through GET /api/v1/examples) is valid as published
and runs to success.

Transient examples are run for a few of their own time steps only (CI time); their full length is checked
against the service's default limits, so the published spec itself is accepted as it stands.
"""

import copy
import json
from pathlib import Path

import numpy as np
import pytest

from wakeyard.solver import Limits, check_limits, load, run

ROOT = Path(__file__).resolve().parents[2]


def all_examples() -> dict[str, dict]:
    return {f"examples/{p.name}": json.loads(p.read_text()) for p in sorted((ROOT / "examples").glob("*.json"))}


EXAMPLES = all_examples()


def test_the_examples_are_found():
    # the page's starting case and one example of each kind of run and shape family it demonstrates
    assert {f"examples/{n}.json" for n in ("lab_post", "bridge_pier", "rod_pair", "guide_vane")} <= set(EXAMPLES)


@pytest.mark.parametrize("name", sorted(EXAMPLES))
def test_example_is_valid_as_published(name):
    check_limits(load(EXAMPLES[name]), Limits())


def distinct_runs() -> dict[str, dict]:
    """One run per distinct case: examples that differ only in their title are run once."""
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
