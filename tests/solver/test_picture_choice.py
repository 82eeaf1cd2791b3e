"""Field pictures: one per output interval up to the cap, evenly spread past it, as the preview says beforehand."""

import re

from wakeyard.solver import run
from wakeyard.solver.picture_choice import MAX_PICTURES, chosen
from wakeyard.solver.preview import preview

from .test_runs import SMALL


def test_past_the_cap_every_kth_snapshot_is_drawn_ending_on_the_last() -> None:
    for count in range(0, 200):
        pick = chosen(count)
        assert len(pick) <= MAX_PICTURES
        if count <= MAX_PICTURES:
            assert pick == list(range(count))
        else:
            gaps = {b - a for a, b in zip(pick, pick[1:])}
            assert len(gaps) == 1 and pick[-1] == count - 1  # evenly spaced, the final state included
            assert pick[0] < gaps.pop() and len(pick) > MAX_PICTURES // 2  # no room for one more, none wasted


def test_a_run_draws_what_its_preview_announced(tmp_path) -> None:
    # 39 steps of 0.01 s, a snapshot every 0.013 s: 31 snapshots, more than the cap
    spec = {
        **SMALL,
        "probes": {},
        "analysis": {**SMALL["analysis"], "time_step": 0.01, "end_time": 0.39, "output_interval": 0.013},
    }
    plan = preview(spec)["estimate"]["pictures"]
    assert plan == {"snapshots": 31, "drawn": 16, "every": 2, "cap": MAX_PICTURES}
    run(spec, tmp_path)
    saved = sorted(int(re.search(r"(\d+)", p.stem)[1]) for p in (tmp_path / "fields").glob("step_*.npz"))
    drawn = sorted(int(re.search(r"(\d+)", p.stem)[1]) for p in (tmp_path / "pictures").glob("vorticity_*.png"))
    assert len(saved) == plan["snapshots"] and len(drawn) == plan["drawn"]
    assert drawn == saved[:: plan["every"]] and drawn[-1] == 39  # every second snapshot, ending on the last step
