"""Step-size control from local error estimates: a PI controller with bounded growth.

The controller is Gustafsson's PI controller (K. Gustafsson, 1991, "Control theoretic techniques for
stepsize selection in explicit Runge-Kutta methods", ACM TOMS 17:533-554; gains 0.3/k and 0.4/k as in
Hairer & Wanner, "Solving ODEs II", 2nd ed., 1996, section IV.2). The error is measured per unit time
(error per unit step), so with a second-order scheme it behaves like ``h**2`` and ``k = 2``.

A step ratio in the dead band [1, 1.2) keeps the step unchanged (common practice in implicit ODE codes):
an unchanged step keeps the stored factorisation a good preconditioner.
"""

from __future__ import annotations

from dataclasses import dataclass

ORDER = 2
SAFETY = 0.9
MAX_GROWTH = 2.0
MAX_SHRINK = 0.2
DEAD_BAND = (1.0, 1.2)


@dataclass
class PIController:
    """Next step sizes from the scaled error ``err`` (accepted when ``err <= 1``).

    Examples
    --------
    >>> c = PIController()
    >>> c.accepted(0.01, 0.2)  # a ratio of 1.15: in the dead band, the step stays
    0.01
    >>> round(c.accepted(0.01, 0.05), 4)  # a much smaller error, and falling: grow
    0.0186
    >>> round(c.rejected(0.01, 4.0), 4)  # four times the tolerance: retry smaller
    0.0045
    """

    previous_error: float | None = None

    def accepted(self, h: float, err: float) -> float:
        err = max(err, 1e-10)
        ratio = SAFETY * err ** (-0.3 / ORDER)
        if self.previous_error is not None:
            ratio *= (self.previous_error / err) ** (0.4 / ORDER)
        self.previous_error = err
        ratio = min(max(ratio, MAX_SHRINK), MAX_GROWTH)
        return h if DEAD_BAND[0] <= ratio < DEAD_BAND[1] else h * ratio

    def rejected(self, h: float, err: float) -> float:
        """Plain (integral) control after a rejection: the PI history describes the step that failed."""
        return h * min(max(SAFETY * err ** (-1 / ORDER), MAX_SHRINK), 0.9)
