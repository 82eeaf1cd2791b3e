"""GET /api/v1/examples: every case of examples/ as published, also from a normal (non-editable) install."""

from __future__ import annotations

import json
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

import pytest
from fastapi.testclient import TestClient

ROOT = Path(__file__).resolve().parents[2]


def test_every_example_file_is_served_as_published(offline: TestClient) -> None:
    r = offline.get("/api/v1/examples")
    assert r.status_code == 200
    served = {e["name"]: e for e in r.json()["examples"]}
    files = {p.stem: json.loads(p.read_text()) for p in (ROOT / "examples").glob("*.json")}
    assert set(served) == set(files)
    for name, spec in files.items():
        assert served[name]["spec"] == spec and served[name]["title"] == spec["title"]


def test_the_examples_are_in_the_wheel(tmp_path: Path) -> None:
    """A `pip install .` serves them too: the wheel carries examples/*.json as package data of wakeyard.examples.
    The build runs as `pip install .` does (isolated, setuptools from pyproject's build requirements)."""
    source = tmp_path / "source"  # a copy of what the build reads: setuptools leaves build/ where it builds
    source.mkdir()
    for name in ("pyproject.toml", "README.md"):
        shutil.copy(ROOT / name, source / name)
    for folder in ("solver", "core", "api", "worker", "cli", "web", "examples"):
        shutil.copytree(ROOT / folder, source / folder, ignore=shutil.ignore_patterns("__pycache__"))
    build = [sys.executable, "-m", "pip", "wheel", "--no-deps", "-q", "-w", str(tmp_path), str(source)]
    done = subprocess.run(build, capture_output=True, text=True, timeout=300)
    if done.returncode and "No matching distribution found for setuptools" in done.stderr:
        pytest.skip("pip cannot get the build requirement setuptools here (no index and no cache)")
    assert done.returncode == 0, done.stderr
    (wheel,) = tmp_path.glob("wakeyard-*.whl")
    packed = {n for n in zipfile.ZipFile(wheel).namelist() if n.startswith("wakeyard/examples/")}
    assert {f"wakeyard/examples/{p.name}" for p in (ROOT / "examples").glob("*.json")} <= packed
