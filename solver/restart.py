"""The file names of a run's restart state in its job folder, in one place: the solver writes and reads them, the API
hides them from the result files, and a remote worker uploads them so that another box can resume the run."""

from __future__ import annotations

FLOW_CHECKPOINT = "checkpoint.npz"
HEAT_CHECKPOINT = "heat_checkpoint.npz"  # the temperature beside the flow, same step
RESTART_FILES = (FLOW_CHECKPOINT, HEAT_CHECKPOINT)
