"""Grid convergence index against the worked example of Celik, Ghia, Roache and Freitas (2008), "Procedure for
estimation and reporting of uncertainty due to discretization in CFD applications", J. Fluids Eng. 130, 078001,
Table 1 (three grids of 18000, 8000 and 4500 cells in 2D). The table's values are as recalled in the project's
reference notes, not re-read here (no copy of the paper's table was reachable with our search tool)."""

import math

import pytest

from wakeyard.solver.verification import grid_convergence


def test_celik_2008_worked_example():
    h = tuple((1 / n) ** 0.5 for n in (18000, 8000, 4500))  # 2D: h = (1/N)^(1/2), so r21 = 1.5, r32 = 1.333
    g = grid_convergence(h, (6.063, 5.972, 5.863))
    # published (Celik et al. 2008, Table 1, recalled): p = 1.53, phi_ext21 = 6.1685, e_a21 = 1.5 %,
    # e_ext21 = 1.7 %, GCI_fine21 = 2.2 %; each tolerance is half a unit of the last published digit (project choice)
    assert g.observed_order == pytest.approx(1.53, abs=0.005)
    assert g.extrapolated == pytest.approx(6.1685, abs=5e-4)
    assert 100 * g.approximate_error == pytest.approx(1.5, abs=0.05)
    assert 100 * g.extrapolated_error == pytest.approx(1.7, abs=0.05)
    assert 100 * g.gci_fine == pytest.approx(2.2, abs=0.05)
    assert g.monotone


def test_oscillatory_convergence_is_flagged():
    g = grid_convergence((1.0, 2.0, 4.0), (1.0, 1.1, 0.9))
    assert not g.monotone


def test_exact_second_order_data_extrapolates_to_the_limit():
    h = (0.5, 1.0, 2.0)
    g = grid_convergence(h, tuple(3.0 + 0.2 * x**2 for x in h))
    assert g.observed_order == pytest.approx(2.0, rel=1e-9)
    assert g.extrapolated == pytest.approx(3.0, rel=1e-12)


def test_identical_values_give_no_order():
    g = grid_convergence((1.0, 2.0, 4.0), (2.0, 2.0, 2.0))
    assert math.isnan(g.observed_order) and g.reason == "the value does not change between grids"


def test_round_off_differences_give_no_order_with_the_reason():
    """Values equal to the last few bits (as a reused or grid-independent quantity) must not look converged."""
    g = grid_convergence((1.0, 2.0, 4.0), (5.5, 5.5 + 3e-15, 5.5 - 4e-15))
    assert math.isnan(g.observed_order) and math.isnan(g.gci_fine)
    assert "round-off" in g.reason
    real = grid_convergence((1.0, 2.0, 4.0), (5.5 + 1e-7, 5.5 + 4e-7, 5.5 + 1.6e-6))  # small but real: an order
    assert real.observed_order == pytest.approx(2.0, rel=1e-6) and real.reason is None


def test_zero_finest_value_gives_order_but_no_relative_error():
    """A lift coefficient that is 0 on the finest grid (a symmetric body) once divided by zero."""
    h = (0.5, 1.0, 2.0)
    g = grid_convergence(h, tuple(0.2 * x**2 - 0.05 for x in h))  # 0 on the finest grid, second order
    assert g.observed_order == pytest.approx(2.0, rel=1e-9) and g.extrapolated == pytest.approx(-0.05, rel=1e-9)
    assert math.isnan(g.approximate_error) and math.isnan(g.gci_fine) and "finest-grid value is 0" in g.reason


def test_differences_that_do_not_shrink_give_no_order():
    """A ratio of differences of exactly 1 (no convergence at all) once divided by zero."""
    g = grid_convergence((1.0, 2.0, 4.0), (1.0, 1.1, 1.2))
    assert math.isnan(g.observed_order) and math.isnan(g.gci_fine) and g.extrapolated == 1.0
    assert "does not shrink" in g.reason and g.monotone
    g = grid_convergence((1.0, 2.0, 4.0), (1.0, 1.1, 1.0))  # oscillating with equal steps
    assert math.isnan(g.observed_order) and not g.monotone


def test_mesh_study_extrapolates_2d1_drag_towards_reference(tmp_path):
    # benchmark 2D-1 (Schäfer & Turek 1996): cD = 5.57953523384 from the FEATFLOW group's online reference values,
    # digits recalled (see tests/solver/test_benchmarks.py for the exact source note). The bounds below
    # (observed order > 2, GCI < 1e-4, extrapolation closer than the finest mesh) are project choices.
    from wakeyard.solver import run
    from wakeyard.solver.results import parse
    from wakeyard.solver.study import convergence, expand

    reference = 5.57953523384
    base = {
        "channel": {"length": 2.2, "height": 0.41},
        "bodies": [{"name": "cylinder", "shape": "circle", "center": [0.2, 0.2], "radius": 0.05}],
        "fluid": {"density": 1.0, "viscosity": 1e-3},
        "mesh": {"preset": "coarse", "scale": 2.0},
    }
    points = expand({"kind": "mesh-convergence", "base": base, "levels": 3})
    assert [v["mesh.refinements"] for v, _ in points] == [0, 1, 2]
    summaries = [run(spec, tmp_path / str(k)) for k, (_, spec) in enumerate(points)]
    cells = [s["mesh"]["cells"] for s in summaries]
    assert cells[1] == 4 * cells[0] and cells[2] == 4 * cells[1]  # constant refinement ratio 2
    result = convergence([parse(s) for s in summaries], area=2.2 * 0.41 - math.pi * 0.05**2)["cylinder.cd"]
    finest = summaries[-1]["bodies"][0]["drag_coefficient"]
    assert abs(result["extrapolated"] - reference) < abs(finest - reference)
    assert result["observed_order"] > 2
    assert result["gci_fine"] < 1e-4
