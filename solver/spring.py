"""Spring-mounted bodies: each body's equation ``m s'' + c s' + k s = F`` coupled to the flow within every step.

The body's displacement ``s`` and velocity ``v`` (per axis, zero along a held axis) are advanced with the same
variable-step BDF2 formula as the flow, so the pair stays second order. The coupling is partitioned: the stepper
guesses the new displacement, moves the mesh there, solves the flow, takes the fluid's force from it and solves
the body's (linear) equation for a new displacement, and repeats until the guess stops changing. The fluid's
added mass makes plain repetition diverge when the body is lighter than its added mass, so each repeat is relaxed
with Aitken's factor (Kuttler & Wall 2008, Comput. Mech. 43:61, recalled from memory), started from
``m* / (m* + C_a)``: the factor that cancels a potential-flow added mass ``C_a = 1`` (a circle's, a classical
result) at once.
"""

from __future__ import annotations

import math

import numpy as np

from .forces import BodyForces
from .motion import SpringMount

MAX_REPEATS = 30
STEPS_PER_PERIOD = 50  # the longest step resolves the fastest natural period with this many steps (BDF2's phase)


class SpringBody:
    """One spring-mounted body: its constants and the displacement/velocity the mesh asks for."""

    def __init__(self, name: str, mount: SpringMount, fluid_mass: float, natural_frequency: float):
        self.name, self.mount = name, mount
        self.mass = mount.mass_ratio * fluid_mass  # per unit length, kg/m
        omega = 2 * math.pi * natural_frequency
        self.stiffness = self.mass * omega**2
        self.damping = 2 * mount.damping_ratio * self.mass * omega
        self.natural_frequency = natural_frequency
        self.free = mount.free()
        self.state = mount.start()  # sx, sy, vx, vy: the newest accepted, or the trial while a step is tried

    def offset(self, t: float) -> np.ndarray:
        """The displacement the mesh takes (the state's time is the stepper's business)."""
        return self.state[:2].copy()

    def rate(self, t: float) -> np.ndarray:
        return self.state[2:].copy()

    def solve(self, force: np.ndarray, a0h: float, qs: np.ndarray, qv: np.ndarray) -> np.ndarray:
        """``(s, v)`` at the new level from BDF2 ``v = a0h s + qs``, ``v' = a0h v + qv`` and the body's equation."""
        m, c, k = self.mass, self.damping, self.stiffness
        s = self.free * (force - m * (a0h * qs + qv) - c * qs) / (m * a0h**2 + c * a0h + k)
        return np.r_[s, a0h * s + qs]


class SpringCoupling:
    """All spring-mounted bodies of a case, with the levels their BDF2 formula needs (newest first)."""

    def __init__(self, bodies: list[SpringBody], forces: BodyForces):
        self.bodies, self.forces = bodies, forces
        self.levels = [np.concatenate([b.state for b in bodies])]
        self.coefficients = (1.0, -1.0, 0.0, 1.0)  # a0, a1, a2 and the step of the current attempt
        lightest = min(b.mount.mass_ratio for b in bodies)
        self.first_relaxation = lightest / (lightest + 1.0)

    def longest_step(self) -> float:
        return 1.0 / (STEPS_PER_PERIOD * max(b.natural_frequency for b in self.bodies))

    def begin(self, h: float, a0: float, a1: float, a2: float, guess: np.ndarray) -> np.ndarray:
        """Start an attempt of step ``h`` with BDF2 weights ``a``; ``guess`` the predicted new state."""
        self.coefficients = (a0, a1, a2, h)
        return guess[self._displacements()]

    def set_trial(self, s: np.ndarray) -> np.ndarray:
        """Put the bodies at displacements ``s`` (with their BDF2 velocities); the trial state."""
        a0, a1, a2, h = self.coefficients
        y = self._full(s)
        older = self.levels[1] if len(self.levels) > 1 else self.levels[0]
        history = (a1 * self.levels[0] + a2 * older) / h
        v = a0 / h * y + history
        idx = self._displacements()
        y[idx + 2] = v[idx]
        for k, body in enumerate(self.bodies):
            body.state = y[4 * k : 4 * k + 4].copy()
        return y

    def respond(self, x: np.ndarray, convection: np.ndarray, dudt: np.ndarray) -> np.ndarray:
        """The displacements the fluid's force on the flow ``x`` drives the bodies to."""
        a0, a1, a2, h = self.coefficients
        older = self.levels[1] if len(self.levels) > 1 else self.levels[0]
        history = (a1 * self.levels[0] + a2 * older) / h
        forces = self.forces.evaluate(x, convection, dudt)
        out = []
        for k, body in enumerate(self.bodies):
            q = history[4 * k : 4 * k + 4]
            out.append(body.solve(np.array(forces[body.name]), a0 / h, q[:2], q[2:]))
        return np.concatenate(out)[self._displacements()]

    def accept(self, y: np.ndarray) -> None:
        self.levels = [y.copy(), *self.levels][:3]

    def restart(self) -> None:
        self.levels = self.levels[:1]

    def restore_current(self) -> None:
        """Put the bodies back at the newest accepted state (after a failed attempt)."""
        for k, body in enumerate(self.bodies):
            body.state = self.levels[0][4 * k : 4 * k + 4].copy()

    def _displacements(self) -> np.ndarray:
        return np.concatenate([4 * k + np.arange(2) for k in range(len(self.bodies))])

    def _full(self, s: np.ndarray) -> np.ndarray:
        y = np.zeros(4 * len(self.bodies))
        y[self._displacements()] = s
        return y

    def state(self) -> dict[str, np.ndarray]:
        levels = self.levels + [self.levels[0]] * (3 - len(self.levels))
        return {"body_levels": np.array(levels), "body_level_count": np.array(len(self.levels))}

    def restore(self, state: dict[str, np.ndarray]) -> None:
        self.levels = [np.array(v) for v in state["body_levels"][: int(state["body_level_count"])]]
        self.restore_current()


def aitken(omega: float, previous: np.ndarray | None, change: np.ndarray) -> float:
    """Aitken's next relaxation factor from the last two changes (the first keeps ``omega``)."""
    if previous is None:
        return omega
    diff = change - previous
    denominator = float(diff @ diff)
    return omega if denominator == 0.0 else -omega * float(previous @ diff) / denominator
