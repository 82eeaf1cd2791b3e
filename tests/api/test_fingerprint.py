"""Result reuse keys on the solver's code: a fix to any solver file changes the key, without a version bump."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

from tests.helpers import tiny
from wakeyard import solver
from wakeyard.api import submission
from wakeyard.api.fingerprint import code_fingerprint, solver_fingerprint


def test_any_change_to_a_solver_file_changes_the_fingerprint(tmp_path: Path) -> None:
    copy = tmp_path / "solver"
    shutil.copytree(Path(solver.__file__).parent, copy, ignore=shutil.ignore_patterns("__pycache__"))
    before = code_fingerprint(copy)
    assert solver_fingerprint().startswith(before + ";")  # the installed solver's files, as copied
    assert code_fingerprint(copy) == before
    steady = copy / "steady.py"
    steady.write_text(steady.read_text() + "\n# a fix that forgot the version bump\n")
    assert code_fingerprint(copy) != before
    steady.rename(copy / "steady_renamed.py")
    assert code_fingerprint(copy) not in (before, code_fingerprint(tmp_path / "nothing"))


def test_the_spec_hash_changes_with_the_solver_fingerprint(monkeypatch: pytest.MonkeyPatch) -> None:
    spec = solver.load(tiny()).model_dump(mode="json")
    now = submission.spec_hash(spec)
    assert submission.spec_hash(spec) == now
    monkeypatch.setattr(submission, "solver_fingerprint", lambda: "another solver")
    assert submission.spec_hash(spec) != now
