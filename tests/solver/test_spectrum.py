"""The lift spectrum finds the shedding frequency of a lift history with uneven steps and a start-up transient."""

import numpy as np
import pytest

from wakeyard.solver.spectrum import lift_spectrum


def test_peak_at_the_shedding_frequency_with_its_amplitude() -> None:
    rng = np.random.default_rng(7)
    t = np.cumsum(rng.uniform(0.004, 0.012, 4000))  # uneven steps, as the error control takes them
    f0, amp = 2.5, 0.3
    start_up = 2.0 * np.exp(-t / 1.5)  # a decaying offset the spectrum leaves out with the first half
    lift = start_up + 0.05 + amp * np.sin(2 * np.pi * f0 * t) + 0.02 * np.sin(2 * np.pi * 3 * f0 * t)
    length, velocity = 0.1, 0.2
    s = lift_spectrum(t, lift, length, velocity)
    assert abs(s["peak"]["frequency"] - f0) <= s["resolution"]
    assert s["peak"]["strouhal_number"] == pytest.approx(s["peak"]["frequency"] * length / velocity)
    peak = int(np.argmax(s["amplitude"][1:])) + 1
    assert s["amplitude"][peak] == pytest.approx(amp, rel=0.2)  # within the Hann window's scalloping loss
    assert s["frequency"][-1] > 3 * f0  # the third harmonic is in view
    assert s["from_cycles"]["frequency"] == pytest.approx(f0, rel=1e-3)  # whole cycles: the finer figure


def test_a_drift_is_no_shedding_peak() -> None:
    t = np.linspace(0, 4, 400)
    s = lift_spectrum(t, 0.01 * t, 1.0, 1.0)  # a slowly rising lift, no oscillation
    assert s is not None and s["peak"] is None


def test_a_short_record_has_no_spectrum() -> None:
    t = np.linspace(0, 1, 20)
    assert lift_spectrum(t, np.sin(t), 1.0, 1.0) is None
    assert lift_spectrum(np.array([]), np.array([]), 1.0, 1.0) is None  # a forces.csv with its header only
