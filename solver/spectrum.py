"""The amplitude spectrum of a body's lift coefficient: where the shedding peak lies, beside the Strouhal number
from whole cycles."""

from __future__ import annotations

from typing import Any

import numpy as np
from scipy.signal import periodogram

from . import analysis

MIN_SAMPLES = 16
MIN_PEAK_BIN = 2  # a shedding peak has at least two cycles in the window


def lift_spectrum(t: np.ndarray, lift: np.ndarray, length: float, velocity: float) -> dict[str, Any] | None:
    """Spectrum of the last half of the record (the start-up transient left out, as ``analysis.find_cycles`` does),
    resampled to even steps (adaptive steps vary), mean removed, Hann window; ``None`` when too short.

    The peak's Strouhal number is only as fine as one frequency bin (``resolution``); the one from whole cycles
    (``analysis.strouhal``) is the finer figure and is returned beside it.
    """
    if len(t) < MIN_SAMPLES:
        return None
    keep = t >= t[0] + (t[-1] - t[0]) / 2
    tt, y = t[keep], lift[keep]
    if len(tt) < MIN_SAMPLES or tt[-1] <= tt[0]:
        return None
    dt = (tt[-1] - tt[0]) / (len(tt) - 1)
    even = np.interp(tt[0] + dt * np.arange(len(tt)), tt, y)
    f, power = periodogram(even, fs=1 / dt, window="hann", detrend="constant", scaling="spectrum")
    amplitude = np.sqrt(2 * power)  # a sine of amplitude A shows as A at its bin
    peak = 1 + int(np.argmax(amplitude[1:]))
    shown = min(len(f), max(64, 4 * peak))  # the shedding peak and its first harmonics, not every bin to Nyquist
    return {
        "frequency": f[:shown].tolist(),
        "amplitude": amplitude[:shown].tolist(),
        "resolution": float(f[1]),
        # the lowest bin is one cycle over the whole window: a drift, not shedding
        "peak": {"frequency": float(f[peak]), "strouhal_number": float(f[peak]) * length / velocity}
        if peak >= MIN_PEAK_BIN
        else None,
        "from_cycles": analysis.strouhal(t, lift, length, velocity),
    }
