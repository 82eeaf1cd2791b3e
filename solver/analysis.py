"""Statistics of force histories: whole-cycle windows, Strouhal number, periodicity.

The samples may be unevenly spaced (error-controlled time steps): means are time averages (trapezoidal rule),
so a stretch of short steps does not weigh more than a stretch of long ones.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np


def up_crossings(t: np.ndarray, signal: np.ndarray, level: float) -> np.ndarray:
    """Times where ``signal`` crosses ``level`` upwards, linearly interpolated."""
    s = signal - level
    i = np.nonzero((s[:-1] < 0) & (s[1:] >= 0))[0]
    return t[i] - s[i] * (t[i + 1] - t[i]) / (s[i + 1] - s[i])


@dataclass
class Cycles:
    """Whole oscillation cycles found in a signal (``starts`` has one more entry than cycles)."""

    starts: np.ndarray

    @property
    def count(self) -> int:
        return max(len(self.starts) - 1, 0)

    @property
    def periods(self) -> np.ndarray:
        return np.diff(self.starts)


def find_cycles(t: np.ndarray, signal: np.ndarray, min_relative_amplitude: float = 1e-3) -> Cycles:
    """Cycles of the last half of the record, delimited by up-crossings of its mean.

    A signal whose swing is below ``min_relative_amplitude`` of its size (or
    below 1e-8) is treated as steady: no cycles.
    """
    if len(t) < 8:
        return Cycles(np.array([]))
    tail = t >= t[0] + 0.5 * (t[-1] - t[0])
    s = signal[tail]
    swing = float(np.ptp(s))
    if swing < max(min_relative_amplitude * float(np.abs(s).max()), 1e-8):
        return Cycles(np.array([]))
    return Cycles(up_crossings(t[tail], s, time_mean(t[tail], s)))


def time_mean(t: np.ndarray, values: np.ndarray) -> float:
    """Average over time of samples at times ``t`` (trapezoidal rule); the plain mean for a single sample.

    Examples
    --------
    >>> time_mean(np.array([0.0, 1.0, 1.1, 1.2, 2.0]), np.array([0.0, 1.0, 1.0, 1.0, 1.0]))
    0.75
    """
    if len(t) < 2 or t[-1] <= t[0]:
        return float(np.mean(values))
    return float(np.trapezoid(values, t) / (t[-1] - t[0]))


def window_stats(t: np.ndarray, values: np.ndarray) -> dict[str, float]:
    """Time mean, extremes, half the peak-to-peak swing and the RMS of the fluctuation."""
    mean = time_mean(t, values)
    return {
        "mean": mean,
        "min": float(values.min()),
        "max": float(values.max()),
        "amplitude": float(0.5 * np.ptp(values)),
        "rms": float(np.sqrt(max(time_mean(t, (values - mean) ** 2), 0.0))),
    }


def analysis_window(t: np.ndarray, cycles: Cycles, last: int = 5) -> np.ndarray:
    """Mask of the samples in the last ``last`` whole cycles, else the last half of the record."""
    if cycles.count >= 1:
        a, b = cycles.starts[-min(last, cycles.count) - 1], cycles.starts[-1]
        return (t >= a) & (t <= b)
    return t >= t[0] + 0.5 * (t[-1] - t[0])


def is_periodic(t: np.ndarray, signal: np.ndarray, cycles: int, tolerance: float) -> bool:
    """True when the last ``cycles`` cycles agree in period, mean and amplitude within ``tolerance``.

    Differences are relative to the mean period and to the amplitude.
    """
    found = find_cycles(t, signal)
    if found.count < cycles + 1:
        return False
    starts = found.starts[-cycles - 1 :]
    periods = np.diff(starts)
    means, amps = [], []
    for a, b in zip(starts[:-1], starts[1:]):
        inside = (t >= a) & (t <= b)
        part = signal[inside]
        means.append(time_mean(t[inside], part))
        amps.append(0.5 * np.ptp(part))
    amp = max(float(np.mean(amps)), 1e-30)
    return bool(
        np.ptp(periods) <= tolerance * periods.mean()
        and np.ptp(means) <= tolerance * amp
        and np.ptp(amps) <= tolerance * amp
    )


DECAYING = 0.9  # amplitude ratio per cycle below which a lift oscillation is dying out, not shedding
GROWING = 1.1  # and above which it is still growing towards its saturated state


def cycle_amplitudes(t: np.ndarray, signal: np.ndarray, cycles: Cycles) -> np.ndarray:
    """Half the peak-to-peak swing of ``signal`` within each whole cycle."""
    return np.array([0.5 * np.ptp(signal[(t >= a) & (t <= b)]) for a, b in zip(cycles.starts[:-1], cycles.starts[1:])])


def strouhal(t: np.ndarray, lift: np.ndarray, length: float, velocity: float) -> dict[str, float | str | None]:
    """Shedding frequency from whole lift cycles; the spread of the periods states its resolution.

    A lift oscillation that dies out cycle by cycle (the wake settling to a steady state, below the onset of
    shedding) is not shedding: no Strouhal number then, and ``note`` says why. One still growing is reported,
    with a note that the run may end before the oscillation saturates.

    Examples
    --------
    >>> t = np.linspace(0.0, 20.0, 4001)
    >>> round(strouhal(t, np.sin(2 * np.pi * t), 1.0, 1.0)["strouhal_number"], 6)
    1.0
    >>> dying = strouhal(t, np.exp(-0.5 * t) * np.sin(2 * np.pi * t), 1.0, 1.0)
    >>> dying["strouhal_number"] is None, dying["note"][:31]
    (True, 'the lift oscillation dies out: ')
    """
    cycles = find_cycles(t, lift)
    found: dict[str, float | str | None] = {
        "strouhal_number": None,
        "frequency": None,
        "frequency_resolution": None,
        "cycles": cycles.count,
        "method": "up-crossings of the mean lift",
    }
    if cycles.count < 2:
        return found
    amplitudes = cycle_amplitudes(t, lift, cycles)[-min(5, cycles.count) :]
    ratio = float((amplitudes[-1] / max(amplitudes[0], 1e-300)) ** (1.0 / (len(amplitudes) - 1)))
    if ratio < DECAYING:
        found["note"] = (
            f"the lift oscillation dies out: its amplitude falls to {ratio:.2f} of itself each cycle, so the wake "
            "settles to a steady state (no vortex shedding)"
        )
        return found
    last = cycles.periods[-min(5, cycles.count) :]
    f = 1.0 / float(last.mean())
    spread = float(last.std()) * f * f if len(last) > 1 else float(np.diff(t).max()) * f * f
    found |= {"strouhal_number": f * length / velocity, "frequency": f, "frequency_resolution": spread}
    found["cycles"] = int(len(last))
    if ratio > GROWING:
        found["note"] = (
            f"the lift oscillation still grows ({ratio:.2f} times each cycle): the shedding has not settled; a longer "
            "run (or analysis.until_periodic) gives its saturated state"
        )
    return found
