"""Error-controlled time stepping: variable-step BDF2, linearly implicit, with a predictor's error estimate.

Each step solves the BDF2 equations with convection linearised about the velocity extrapolated from the
two previous levels (a linear system, stable at large steps). An explicit predictor, the quadratic through
the last three levels, differs from the solution by a multiple of the local error; that difference (Milne's
device, e.g. Hairer, Norsett & Wanner, "Solving ODEs I", 1993, section III.5; for incompressible flow with
variable steps, Kay, Gresho, Griffiths & Silvester 2010, SIAM J. Sci. Comput. 32:111) measures the error,
and :class:`~solver.stepsize.PIController` picks the next step. On a moving mesh (:mod:`solver.ale`) every attempt
first moves the mesh to its new time, so each stage sits on the prescribed motion exactly. The step also keeps its
CFL number at most :data:`MAX_CFL`. The estimate measures the error of the flow that is there; it cannot see a mode
that is not yet there, such as the asymmetric seed from which shedding grows in a symmetric start, and long steps
damp that seed and shift when shedding sets in. Measured on 2D-3 (medium mesh, default accuracy), lift maximum
against the reference: +0.2 % with the cap at 2, +0.9 % at 4, +3.3 % at 8 (the drag maximum within 0.003 % in all
three). On 2D-2 the cap hardly binds beyond 2 (5043 steps at 4, 4909 at 8, 8757 at 2). A step whose error is too
large, or whose linear solve fails, is retried smaller. Where the boundary data's time derivatives jump (the
breakpoints of a table time law, the end of a ramp) a step ends exactly and the scheme starts afresh, as from rest:
stepping across a kink would drive the error estimate, and the step, to nothing.

The linear system changes every step but slowly. A factorisation of an earlier step's matrix corrects
the predictor (preconditioned defect correction: a residual, a solve with stored factors, a residual) until
the remaining error is well below the step's error tolerance; usually one solve does. The matrix is
factored again only when that correction contracts slowly. A checkpoint renews the factorisation, so a run
resumed from it repeats the uninterrupted run bit for bit.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np
import scipy.sparse as sp

from .errors import Diverged
from .linear import RepeatedSolver
from .navier_stokes import NavierStokes
from .spring import MAX_REPEATS, SpringCoupling, aitken
from .stepsize import PIController
from .transient import StepResult, StepStatistics, bdf2_coefficients

LINEAR_SHARE = 0.3  # the linear solve's remaining error, as a share of the step's error tolerance
RENEW_AFTER = 20  # corrections beyond the first of each step, since the last factorisation, that buy a new one
MAX_CORRECTIONS = 4
SMALLEST_STEP = 1e-9  # in units of the convective time L/U
COUPLING_TOLERANCE = 1e-6  # a spring body's guess holds when its response moves it less than this share
SMALLEST_MOTION = 1e-12  # ... of its largest displacement, or of this share of the reference length
FIRST_STEP = 1e-3  # the first step, in convective times L/U, when the spec gives none
MAX_CFL = 2.0  # largest CFL number of a step: beyond it the error estimate misses how convection is resolved


class StepTooSmall(Diverged):
    """The error control asked for a step too small to make progress."""


@dataclass
class Scales:
    """What makes the error dimensionless: the reference velocity U and the convective time L/U."""

    velocity: float
    time: float


class AdaptiveBDF2:
    """Advance a Navier-Stokes state by accepted steps whose error per unit time stays below ``accuracy``.

    ``accuracy`` bounds the local error of the velocity relative to U, per convective time unit ``L/U``: the
    global error then grows about in proportion to it. The error is the root mean square over the velocity
    unknowns (common practice in ODE codes), not an area integral: the mesh is finest where the flow changes
    fastest (at the bodies, in the wake), and there an error counts, as it does for the forces.

    Examples
    --------
    >>> from skfem import MeshTri
    >>> from solver.taylor_hood import TaylorHood
    >>> from solver.boundary import Dirichlet
    >>> th = TaylorHood(MeshTri().refined(2))
    >>> wall = th.velocity.get_dofs().all()
    >>> fixed = np.r_[wall, th.nu + wall, 2 * th.nu]
    >>> ns = NavierStokes(th, 1.0, Dirichlet(fixed, np.zeros(th.ndofs), np.zeros(th.ndofs)))
    >>> s = AdaptiveBDF2(ns, ns.stokes(), 1e-3, Scales(1.0, 1.0), first_step=0.01)
    >>> r = s.step(t_end=1.0)
    >>> (s.t, float(abs(r.x).max()))
    (0.01, 0.0)
    """

    def __init__(
        self,
        ns: NavierStokes,
        x0: np.ndarray,
        accuracy: float,
        scales: Scales,
        first_step: float,
        breakpoints: list[float] | None = None,
        cfl: Callable[[np.ndarray, float], float] | None = None,
        springs: SpringCoupling | None = None,
    ):
        self.ns, self.accuracy, self.scales, self.springs = ns, accuracy, scales, springs
        th = ns.th
        zero = sp.csr_matrix((th.npr, th.npr))
        self.mass = sp.block_diag([th.mass, th.mass, zero], format="csr")
        self.velocity_free = ns.free[ns.free < 2 * th.nu]
        self.levels = [x0.copy()]  # newest first: x_n, x_{n-1}, x_{n-2}
        self.steps: list[float] = []  # newest first: h_n, h_{n-1}
        self.t, self.n, self.h, self.first_step = 0.0, 0, first_step, first_step
        self.breakpoints = np.array(sorted(breakpoints or []), dtype=float)
        self.cfl = cfl
        self.controller = PIController()
        self.stats = StepStatistics()
        self.solver = RepeatedSolver(ns.free)
        self.factored_alpha: float | None = None  # None: factor before the next solve
        self.extra_corrections = 0
        self.trial_springs = np.zeros(0)  # the spring-mounted bodies' state of the step being tried
        self.coupling_failed = False  # the last attempt failed because the bodies' repeats did not settle

    @property
    def x(self) -> np.ndarray:
        """The newest accepted state."""
        return self.levels[0]

    def step(self, t_end: float) -> StepResult:
        """One accepted step, not beyond ``t_end`` (the last steps are shortened to land on it)."""
        later = self.breakpoints[self.breakpoints > self.t + SMALLEST_STEP * self.scales.time]
        stop = min(t_end, later[0]) if len(later) else t_end
        if self.cfl is not None:  # from the current velocity, as the step starts
            self.h = min(self.h, MAX_CFL / max(self.cfl(self.x, 1.0), 1e-300))
        if self.springs is not None:
            self.h = min(self.h, self.springs.longest_step())
        while True:
            h = self._clipped(self.h, stop)
            if h < SMALLEST_STEP * self.scales.time:
                raise StepTooSmall(self._too_small(h))
            self.coupling_failed = False
            attempt = self._attempt(h) if self.springs is None else self._coupled_attempt(h)
            if attempt is None:  # the linear solve failed, or the body coupling did not settle
                self.stats.rejected += 1
                self.h = 0.25 * h
                continue
            result, err = attempt
            if err is not None and err > 1.0:
                self.stats.rejected += 1
                self.h = self.controller.rejected(h, err)
                continue
            self._accept(result.x, h)
            if err is not None and h == self.h:  # a step shortened to reach t_end says nothing about the error
                self.h = self.controller.accepted(h, err)
            if stop < t_end and self.t >= stop - SMALLEST_STEP * self.scales.time:
                self._restart(stop)
            return result

    def _too_small(self, h: float) -> str:
        """Why the steps shrank to nothing: the spring coupling's repeats when those failed last, else the error."""
        if self.coupling_failed and self.springs is not None:
            bodies = ", ".join(
                f"{b.name} (mass ratio {b.mount.mass_ratio:g}, damping ratio {b.mount.damping_ratio:g})"
                for b in self.springs.bodies
            )
            return (
                f"the spring-mounted bodies' coupling with the flow did not converge in {MAX_REPEATS} repeats at "
                f"t = {self.t:.6g} s, even with steps of {h:.3g} s: {bodies}. A light or undamped body on a coarse "
                "mesh is the usual cause: try a larger mass_ratio or damping_ratio, or a finer mesh"
            )
        return (
            f"the error control could not meet analysis.accuracy = {self.accuracy:g} at t = {self.t:.6g} s "
            f"with steps above {h:.3g} s: check the inflow's time law for jumps, or try a larger accuracy"
        )

    def _restart(self, t: float) -> None:
        """Start afresh from the newest level, as at a breakpoint: one backward Euler step, a short step."""
        self.t = t
        self.levels, self.steps = self.levels[:1], []
        if self.springs is not None:
            self.springs.restart()
        self.h = min(self.h, self.first_step)
        self.controller.previous_error = None

    def _clipped(self, h: float, t_end: float) -> float:
        left = t_end - self.t
        if h >= left * (1 - 1e-12):
            return left
        return 0.5 * left if h > 0.5 * left else h  # two halves rather than a sliver at the end

    def _coefficients(self, h: float) -> tuple[float, float, float]:
        """BDF2 weights of this step (backward Euler while there is no older level)."""
        return bdf2_coefficients(h / self.steps[0]) if len(self.levels) > 1 else (1.0, -1.0, 0.0)

    def _milne(self, h: float) -> float:
        """The factor that turns (solution - predictor) into the local error (needs three levels)."""
        a0, a1, a2 = self._coefficients(h)
        h1, h2 = self.steps
        corrector = (a1 * h**3 + a2 * (h + h1) ** 3) / (6 * a0)
        extrapolation = -h * (h + h1) * (h + h1 + h2) / 6
        return corrector / (corrector - extrapolation)

    def _coupled_attempt(self, h: float) -> tuple[StepResult, float | None] | None:
        """A step with spring-mounted bodies: guess their displacement, solve the flow on the mesh moved there,
        let the fluid's force drive the bodies, repeat (Aitken-relaxed) until the guess holds (:mod:`solver.spring`).

        The bodies' velocities join the error estimate, relative to U like the flow's."""
        springs = self.springs
        assert springs is not None
        a0, a1, a2 = self._coefficients(h)
        y0 = springs.levels[0]
        if len(springs.levels) == 3:
            guess_state = self._quadratic(springs.levels, h)
        else:
            guess_state = y0.copy()
            guess_state[0::4] += h * y0[2::4]
            guess_state[1::4] += h * y0[3::4]
        guess = springs.begin(h, a0, a1, a2, guess_state)
        omega, previous = springs.first_relaxation, None
        for _ in range(MAX_REPEATS):
            trial = springs.set_trial(guess)
            self.ns.move_to(self.t + h, again=True)
            attempt = self._attempt(h)
            if attempt is None:
                break
            result, err = attempt
            change = springs.respond(result.x, result.convection, result.dudt) - guess
            scale = max(float(np.abs(guess).max()), SMALLEST_MOTION * self.scales.velocity * self.scales.time)
            if float(np.abs(change).max()) <= COUPLING_TOLERANCE * scale:
                self.trial_springs = trial
                if err is not None and len(springs.levels) == 3:
                    local = self._milne(h) * (trial - guess_state)
                    velocities = np.concatenate([local[4 * k + 2 : 4 * k + 4] for k in range(len(springs.bodies))])
                    err = max(err, self._rms(velocities) / (self.accuracy * h / self.scales.time))
                return result, err
            omega = aitken(omega, previous, change)
            guess, previous = guess + omega * change, change
        else:
            self.coupling_failed = True
        springs.restore_current()
        return None

    def _attempt(self, h: float) -> tuple[StepResult, float | None] | None:
        if self.ns.moves:  # a moving mesh: this stage's equations live where the mesh is at its time
            self.ns.move_to(self.t + h)
            th = self.ns.th
            self.mass = sp.block_diag([th.mass, th.mass, sp.csr_matrix((th.npr, th.npr))], format="csr")
        x = self.levels[0]
        a0, a1, a2 = self._coefficients(h)
        if len(self.levels) == 1:
            advecting = x
        else:
            ratio = h / self.steps[0]
            advecting = (1 + ratio) * x - ratio * self.levels[1]
        older = self.levels[1] if len(self.levels) > 1 else x
        history = -(a1 * x + a2 * older) / h
        predictor = self._predictor(h) if len(self.levels) == 3 else advecting
        alpha = a0 / h
        solved = self._solve(alpha, self.mass @ history, predictor, advecting, h)
        if solved is None:
            return None
        solution, convection = solved
        dudt = alpha * solution - history
        err = None
        if len(self.levels) == 3:
            local = self._milne(h) * (solution - predictor)
            err = self._norm(local) / (self.accuracy * h / self.scales.time)
        return StepResult(solution, convection, dudt), err

    def _predictor(self, h: float) -> np.ndarray:
        """The quadratic through the last three levels, at the new time."""
        return self._quadratic(self.levels, h)

    def _quadratic(self, levels: list[np.ndarray], h: float) -> np.ndarray:
        h1, h2 = self.steps
        x0, x1, x2 = levels
        w0 = (h + h1) * (h + h1 + h2) / (h1 * (h1 + h2))
        w1 = -h * (h + h1 + h2) / (h1 * h2)
        w2 = h * (h + h1) / ((h1 + h2) * h2)
        return w0 * x0 + w1 * x1 + w2 * x2

    def _solve(
        self, alpha: float, rhs: np.ndarray, guess: np.ndarray, advecting: np.ndarray, h: float
    ) -> tuple[np.ndarray, np.ndarray] | None:
        """The step's solution from ``guess``, and its convection term; None when it cannot be solved."""
        ns, free = self.ns, self.ns.free
        x = guess.copy()
        bc = ns.dirichlet.values(self.t + h)
        x[ns.dirichlet.dofs] = bc[ns.dirichlet.dofs]

        def residual(z: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
            conv = ns.convection(z, advecting=advecting)
            return (rhs - alpha * (self.mass @ z) - ns.stokes_matrix @ z - conv)[free], conv

        r, _ = residual(x)
        if self.factored_alpha is not None and 0.7 < alpha / self.factored_alpha < 1.4:
            target = LINEAR_SHARE * self.accuracy * h / self.scales.time
            for k in range(MAX_CORRECTIONS):
                delta = self.solver.solve_free(r)
                x[free] += delta
                self.stats.solves += 1
                r_new, conv = residual(x)
                contraction = float(np.linalg.norm(r_new)) / max(float(np.linalg.norm(r)), 1e-300)
                if not np.isfinite(contraction) or contraction > 0.5:
                    break
                if k:
                    self.extra_corrections += 1
                    if self.extra_corrections > RENEW_AFTER:
                        self.factored_alpha = None  # slow corrections cost about a factorisation: factor next step
                # the free unknowns are sorted, velocities first: the correction's velocity part leads it
                if contraction * self._rms(delta[: len(self.velocity_free)]) <= target:
                    return x, conv
                r = r_new
            r, _ = residual(x)
        self._factor(alpha, advecting)  # none stored, or too far off: factor this step's matrix
        x[free] += self.solver.solve_free(r)
        if not np.isfinite(x).all():
            return None
        return x, ns.convection(x, advecting=advecting)

    def _factor(self, alpha: float, advecting: np.ndarray) -> None:
        th = self.ns.th
        self.solver.factor(th.saddle_point(alpha * th.mass + self.ns.oseen_blocks(advecting)))
        self.factored_alpha = alpha
        self.extra_corrections = 0
        self.stats.factorisations += 1
        self.stats.solves += 1

    def _norm(self, x: np.ndarray) -> float:
        """Root mean square of the free velocity unknowns, relative to U (prescribed values are not computed)."""
        return self._rms(x[self.velocity_free])

    def _rms(self, v: np.ndarray) -> float:
        return float(np.sqrt(np.mean(v**2)) / self.scales.velocity)

    def _accept(self, x: np.ndarray, h: float) -> None:
        self.levels = [x, *self.levels][:3]
        self.steps = [h, *self.steps][:2]
        if self.springs is not None:
            self.springs.accept(self.trial_springs)
        self.t += h
        self.n += 1
        self.stats.record(h)

    def renew_factorisation(self) -> None:
        """Analyse and factor afresh before the next step, as a run resumed here will: the two then stay identical.

        The analysis too: PARDISO's pivoting order depends on the values of the matrix it analysed.
        """
        self.solver.close()
        self.factored_alpha = None

    def state(self) -> dict[str, np.ndarray]:
        """Everything a resumed run needs to repeat this one exactly (arrays, for a checkpoint file)."""
        levels = np.array(self.levels + [self.levels[0]] * (3 - len(self.levels)))
        steps = np.array(self.steps + [0.0] * (2 - len(self.steps)))
        previous = self.controller.previous_error
        return {
            "levels": levels,
            "level_count": np.array(len(self.levels)),
            "steps": steps,
            "clock": np.array([self.t, self.h, np.nan if previous is None else previous]),
            "step": np.array(self.n),
            **self.stats.state(),
            **(self.springs.state() if self.springs is not None else {}),
        }

    def restore(self, state: dict[str, np.ndarray]) -> None:
        if self.springs is not None:
            self.springs.restore(state)
        count = int(state["level_count"])
        self.levels = [np.array(v) for v in state["levels"][:count]]
        self.steps = [float(h) for h in state["steps"][: max(count - 1, 0)]]
        t, h, previous = (float(v) for v in state["clock"])
        self.t, self.h, self.n = t, h, int(state["step"])
        self.controller.previous_error = None if np.isnan(previous) else previous
        self.stats.restore(state)
        self.renew_factorisation()
