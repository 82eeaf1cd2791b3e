"""The one-way arrows between the packages: cli → api | worker → core → solver; api and worker never import each
other, and importing the API starts no worker machinery."""

from __future__ import annotations

import ast
import subprocess
import sys
from pathlib import Path

import pytest

from wakeyard import api, cli, core, solver, worker

PACKAGES = {"solver": solver, "core": core, "api": api, "worker": worker, "cli": cli}
MAY_IMPORT = {
    "solver": set(),
    "core": {"solver"},
    "api": {"core", "solver"},
    "worker": {"core", "solver"},
    "cli": {"api", "worker", "core", "solver"},
}


def _ours(name: str) -> str | None:
    """The package of ours that an absolute module name belongs to (``wakeyard.core.store`` → ``core``); a bare
    ``core.store`` (importable only from a source checkout, never when installed) counts as ``(bare) core``."""
    parts = name.split(".")
    if parts[0] == "wakeyard" and len(parts) > 1:
        return parts[1] if parts[1] in PACKAGES else None
    return f"(bare) {parts[0]}" if parts[0] in PACKAGES else None


def imported(package: str) -> dict[str, set[str]]:
    """Every package of ours that a file of ``package`` imports (module level or inside functions)."""
    folder = Path(PACKAGES[package].__file__).parent
    found: dict[str, set[str]] = {}
    for path in folder.rglob("*.py"):
        for node in ast.walk(ast.parse(path.read_text(), str(path))):
            names = []
            if isinstance(node, ast.Import):
                names = [a.name for a in node.names]
            elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module == "wakeyard":
                names = [f"wakeyard.{a.name}" for a in node.names]  # from wakeyard import solver
            elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
                names = [node.module]
            for name in names:
                if (ours := _ours(name)) is not None and ours != package:
                    found.setdefault(ours, set()).add(path.relative_to(folder).as_posix())
    return found


@pytest.mark.parametrize("package", list(PACKAGES))
def test_each_package_imports_only_the_layers_below(package: str) -> None:
    wrong = {k: sorted(v) for k, v in imported(package).items() if k not in MAY_IMPORT[package]}  # bare ones too
    assert wrong == {}, f"{package} imports {wrong}"


def test_the_check_sees_imports_inside_functions() -> None:
    assert "worker" in imported("cli") and "api" in imported("cli")  # cli imports them lazily, in functions


def test_importing_the_api_loads_no_worker_code() -> None:
    w = worker.__name__
    code = f"import sys, {api.__name__}.app; print([m for m in sys.modules if m == {w!r} or m.startswith({w!r} + '.')])"
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert done.returncode == 0, done.stderr
    assert done.stdout.strip() == "[]"


def test_blas_runs_one_thread_without_environment_variables() -> None:
    """``core.blas`` limits the BLAS loaded by the solver in the process itself, whatever the environment says."""
    code = (
        "from core.blas import one_blas_thread; one_blas_thread(); from threadpoolctl import threadpool_info; "
        "print(sorted({(i['internal_api'], i['num_threads']) for i in threadpool_info()}))"
    )
    env = {"PATH": "/usr/bin:/bin", "OPENBLAS_NUM_THREADS": "4", "OMP_NUM_THREADS": "4", "MKL_NUM_THREADS": "4"}
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120, env=env)
    assert done.returncode == 0, done.stderr
    pools = eval(done.stdout)  # a printed list of (library, threads)
    assert pools and all(threads == 1 for _, threads in pools), pools
