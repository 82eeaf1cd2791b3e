"""The Strouhal number from whole lift cycles: sustained, dying and growing oscillations, uneven samples."""

import numpy as np
import pytest

from wakeyard.solver import analysis


def uneven_times(end: float, seed: int = 1) -> np.ndarray:
    """Sample times with steps varying by a factor of four, as error-controlled steps give."""
    steps = np.random.default_rng(seed).uniform(0.002, 0.008, size=int(end / 0.003))
    t = np.concatenate([[0.0], np.cumsum(steps)])
    return t[t <= end]


def test_a_sustained_oscillation_gives_its_frequency_without_a_note():
    t = uneven_times(12.0)
    found = analysis.strouhal(t, 0.3 * np.sin(2 * np.pi * 2.5 * t), length=0.1, velocity=1.0)
    assert found["frequency"] == pytest.approx(2.5, rel=1e-3)
    assert found["strouhal_number"] == pytest.approx(0.25, rel=1e-3)
    assert "note" not in found


def test_a_dying_oscillation_is_not_shedding():
    """A wake below the onset of shedding: the lift swings after the start, then settles (amplitude ratio per cycle
    0.78 here). Reporting its frequency as a Strouhal number would tell the user the body sheds vortices."""
    t = uneven_times(12.0)
    lift = 0.01 + 0.2 * np.exp(-t) * np.sin(2 * np.pi * 4.0 * t)
    found = analysis.strouhal(t, lift, length=0.1, velocity=1.0)
    assert found["strouhal_number"] is None and found["frequency"] is None
    assert "dies out" in found["note"] and "0.78" in found["note"]


def test_a_slowly_dying_oscillation_near_the_onset_still_counts():
    """Within a few per cent per cycle of neutral the oscillation is as good as sustained over the window."""
    t = uneven_times(12.0)
    found = analysis.strouhal(t, np.exp(-0.05 * t) * np.sin(2 * np.pi * 2.0 * t), length=1.0, velocity=1.0)
    assert found["strouhal_number"] == pytest.approx(2.0, rel=1e-3)


def test_a_growing_oscillation_is_reported_with_a_note():
    t = uneven_times(8.0)
    found = analysis.strouhal(t, 1e-3 * np.exp(0.5 * t) * np.sin(2 * np.pi * 3.0 * t), length=1.0, velocity=1.0)
    assert found["frequency"] == pytest.approx(3.0, rel=2e-3)
    assert "still grows" in found["note"]
