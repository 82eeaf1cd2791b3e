"""A test-only pause in the worker: the solver parks after its checkpoint at step >= N until it is killed.

The kill -9 tests must find a job mid-run however fast the machine is. ``Worker(..., hold=Hold(folder, N))``
puts a ``sitecustomize`` into the folder and the folder on ``PYTHONPATH``, so every Python process of the
worker (the supervisor's children too) installs the hold at start-up. It wraps the checkpoint write of
``solver.run`` so that the first process to reach step N writes ``held`` (its pid and step) into the folder
and then sleeps. Only the first one holds: the attempt that resumes the job afterwards runs through.
"""

from __future__ import annotations

import importlib
import json
import os
import time
from dataclasses import dataclass
from pathlib import Path
from typing import Any

ROOT = Path(__file__).resolve().parents[1]
FOLDER_VARIABLE, STEP_VARIABLE = "WAKEYARD_TEST_HOLD_DIR", "WAKEYARD_TEST_HOLD_STEP"


@dataclass(frozen=True)
class Hold:
    folder: Path
    step: int

    def environment(self) -> dict[str, str]:
        self.folder.mkdir(parents=True, exist_ok=True)
        (self.folder / "sitecustomize.py").write_text("from tests import hold\n\nhold.install()\n")
        path = os.pathsep.join(filter(None, [str(self.folder), str(ROOT), os.environ.get("PYTHONPATH")]))
        return {FOLDER_VARIABLE: str(self.folder), STEP_VARIABLE: str(self.step), "PYTHONPATH": path}

    def wait_held(self, timeout: float = 120.0) -> dict[str, int]:
        """Block until a worker process is parked at the hold; returns its ``{"pid", "step"}``."""
        marker, deadline = self.folder / "held", time.monotonic() + timeout
        while not marker.exists():
            if time.monotonic() > deadline:
                raise AssertionError(f"no worker reached step {self.step} within {timeout} s")
            time.sleep(0.05)
        return json.loads(marker.read_text())


def install() -> None:
    """Wrap ``solver.run._Transient._checkpoint`` in this process (and the pool processes it forks)."""
    run = importlib.import_module("wakeyard.solver.run")  # the module: ``solver.run`` the attribute is the function

    folder, step = Path(os.environ[FOLDER_VARIABLE]), int(os.environ[STEP_VARIABLE])
    original = run._Transient._checkpoint

    def checkpoint_then_hold(self: Any, stepper: Any) -> None:
        original(self, stepper)
        if stepper.n < step:
            return
        try:  # the first process past the step takes the hold; exclusive creation decides who
            open(folder / "taken", "x").close()
        except FileExistsError:
            return
        (folder / ".held").write_text(json.dumps({"pid": os.getpid(), "step": stepper.n}))
        (folder / ".held").rename(folder / "held")  # appears whole
        while True:  # until the test kills this process
            time.sleep(1.0)

    run._Transient._checkpoint = checkpoint_then_hold
