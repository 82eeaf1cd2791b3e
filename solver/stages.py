"""Which stage of a run an unexpected exception came from, named for the person reading the failure."""

from __future__ import annotations

import traceback
from pathlib import Path

# Innermost match wins. Modules shared by several stages (linear algebra, probes) are not listed: their caller is.
_BY_FUNCTION = {
    ("case", "build"): "setting up the case",
    ("case", "force_row"): "computing the forces",
    ("run", "_statistics"): "post-processing",
    ("run", "_common_summary"): "post-processing",
    ("run", "_start"): "starting the time loop",
    ("run", "_checkpoint"): "writing a checkpoint",
}
_BY_MODULE = {
    "meshing": "meshing",
    "steady": "the steady solve",
    "transient": "time stepping",
    "analysis": "post-processing",
    "recirculation": "post-processing",
    "pictures": "drawing pictures",
    "output": "writing result files",
}
_PACKAGE = Path(__file__).resolve().parent


def failed_stage(err: BaseException) -> str:
    """Name of the stage of :func:`solver.run` in which ``err`` was raised (``"the run"`` when unknown)."""
    stage = "the run"
    for frame in traceback.extract_tb(err.__traceback__):
        path = Path(frame.filename).resolve()
        if path.parent != _PACKAGE:
            continue
        module = path.stem
        stage = _BY_FUNCTION.get((module, frame.name), _BY_MODULE.get(module, stage))
    return stage
