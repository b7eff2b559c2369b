"""Convergence of tear-stream temperatures: x = g(x), on arrays of shape (batch, tears).

Stages, switched for the whole batch when progress stops:

1. Quasi-Newton on the residual F(x) = g(x) - x: a forward-difference Jacobian (one extra sweep
   per tear, of just the units that tear reaches where the caller can sweep part of a block),
   then Broyden's rank-one update after every step (Broyden 1965, Math. Comp. 19), a fresh
   Jacobian whenever a step gains less than :data:`REFRESH_RATIO`, and step halving where a full
   step does not lower the residual. With constant cp and fixed UA the sweep is affine in
   the tears and the first full step is the answer; with cp(T) and U(T) it is nearly so. Used
   first when a block has at most :data:`NEWTON_FIRST_TEARS` tears (its Jacobian is cheap).
2. Wegstein's bounded secant acceleration, per tear variable (Wegstein 1958, Comm. ACM 1(6)):
   ``s = Δg/Δx``, ``q = s/(s - 1)`` bounded to [Q_MIN, Q_MAX], ``x' = q·x + (1 - q)·g(x)``.
   Negative q accelerates a monotone approach; positive q damps an oscillation. The bounds are
   common practice, not from a source. Used first on blocks with many tears.
3. Damped direct substitution, ``x' = x + DAMPING·(g(x) - x)``, when Wegstein stalls or diverges.
4. The quasi-Newton stage again, as the last resort for strongly coupled blocks.

Far from the answer the sweeps need not be exact: each iteration lets the units stop their own
iterations (an exchanger's passes on cp(T) and U(T)) at :data:`FORCING` times the present
residual (:func:`hxtrain.units.protocol.outlets_within`), an inexact Newton method (Dembo,
Eisenstat & Steihaug 1982, SIAM J. Numer. Anal. 19). A scenario stops iterating only when its
residual is within the tolerance by more than the precision its sweep was allowed; the last
iterations are exact, and where the last was not, the answer is swept again exactly before
convergence is judged and the answer polished.

Every scenario's convergence is tracked on its own; converged scenarios stop moving. After
convergence one Newton step polishes the answer (kept only if it lowers the residual), so that
energy balances close to round-off rather than to the tolerance; scenarios already far inside
the tolerance are left as they are.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from hxtrain.units.arrays import abs_max_last
from hxtrain.units.protocol import outlets_within

Q_MIN, Q_MAX = -5.0, 0.9
DAMPING = 0.5
STALL_WINDOW = 15
DAMPED_LIMIT = 40
MAX_POLISH_TEARS = 64
NEWTON_FIRST_TEARS = 16
REFRESH_RATIO = 0.25
HALVINGS = 6
FD_STEP = 1e-2
"""Relative forward-difference step. Large enough that on an affine sweep (constant cp, fixed
UA) the Jacobian is exact to about 1e-13, so the first step lands on the answer; the curvature
of a real sweep over a few kelvin only slows the quasi-Newton rate a little."""
FORCING = 1e-3
"""The units' own iterations may stop at this times the largest residual of the scenarios still
iterating (an inexact Newton forcing term; Dembo, Eisenstat & Steihaug 1982); below
:data:`EXACT_BELOW` K the sweeps are exact. An exchanger that stops on a change below the
allowed precision is closer than that by its contraction (about 0.01 a pass), so a
forward-difference Jacobian column (step about 3 K at 300 °C) stays good to well below the
quasi-Newton's own rate. Measured on the crude demo as shipped (cp(T), film U; three tears), on
flow, supply-temperature and fouling batches: the tear iterations and residuals of exact sweeps,
and 16 % fewer exchanger passes than at 1e-4 (5,465 against 6,485 over 27 batches); at 3e-3
and at 1e-2 the iteration took a fifth step."""
START_PRECISION = 1e-1
"""K: what the first sweep from a guess may leave in the units' own iterations (a guess is
typically tens of kelvin off, and the precision its residual allows is about FORCING times
that). Where the guess turns out close, the sweep is made again (:data:`CLOSE_GUESS`)."""
CLOSE_GUESS = 1.0
"""K: a first residual below this (a guess from an earlier solution) has the first sweep made
again at the precision that residual needs, before anything is decided from it: the first
sweep was then looser than that by more than START_PRECISION / (FORCING x CLOSE_GUESS) = 100."""
EXACT_BELOW = 1e-7
"""K: a precision below this asks for exact sweeps (the units' own tolerance, ~3e-10 K at 300 °C):
the last iterations, whose residuals (below 1e-3 K) decide convergence and polishing, are exact."""
POLISH_BELOW = 1e-4
"""A converged scenario whose next Newton step would move it less than this fraction of the
tolerance is not polished (the step is the error estimate: it includes the amplification by a
strong recycle, which the residual alone does not show)."""


@dataclass
class TearResult:
    """Outcome of converging one block's tears over the batch."""

    x: np.ndarray
    converged: np.ndarray
    iterations: int
    residual: np.ndarray
    history: list = field(default_factory=list)
    """Per iteration, the largest |g(x) - x| of each tear over the scenarios still iterating."""
    methods: list = field(default_factory=list)
    evaluations: int = 0
    """Sweeps of the block (evaluations of g), Jacobian columns and step halvings included."""
    taken: np.ndarray | None = None
    """Per scenario, the iterations it took part in (None: ``iterations`` for every one)."""
    held: np.ndarray | None = None
    """Segments whose temperatures are held within the tolerance of what their units compute,
    where more than the tears are (a block converged on all its segments); None: the tears."""
    computed: np.ndarray | None = None
    """(batch, held segments) what the producing units compute for the held segments at x."""

    @property
    def success(self) -> bool:
        return bool(np.all(self.converged))


class _Counted:
    """g with a count of its evaluations, made with the units' own iterations stopped at
    ``precision`` K (0: exact); ``error``: how far (K) the last sweep may lie from the exact one
    (0 unless some unit did stop early)."""

    def __init__(self, evaluate, one_tear=None):
        self.evaluate, self.one_tear = evaluate, one_tear
        self.count, self.precision, self.error = 0, 0.0, 0.0

    def __call__(self, x, changed=None):
        """g(x); ``changed``: the one tear in which x differs from the last point swept whole
        (a Jacobian column), swept by ``one_tear`` where given."""
        self.count += 1
        with outlets_within(self.precision) as record:
            g = self.evaluate(x) if changed is None or self.one_tear is None else self.one_tear(x, changed)
        self.error = record.kelvin if record.used else 0.0  # a unit stopped early: good to its precision only
        return g

    @property
    def loose(self) -> bool:
        """Whether the last sweep was not exact."""
        return self.error > 0.0

    def within(self, size):
        """Allow the precision that a largest residual of ``size`` K needs (see :data:`FORCING`)."""
        wanted = FORCING * float(size)
        self.precision = wanted if np.isfinite(wanted) and wanted >= EXACT_BELOW else 0.0


def converge_tears(evaluate, x0, tolerance, max_iterations, one_tear=None) -> TearResult:
    """Solve x = evaluate(x) for x of shape (batch, tears); see the module notes for the method.
    ``one_tear(x, j)``, where given, is evaluate(x) for an x that differs from the point last
    evaluated whole only in tear j: the forward-difference Jacobian's columns, which a sweep of just
    the units that tear reaches can give."""
    evaluate = _Counted(evaluate, one_tear)
    x = np.array(x0, dtype=float)
    evaluate.precision = START_PRECISION
    g = evaluate(x)
    residual = g - x
    evaluate.within(np.max(np.abs(residual), initial=0.0))
    if evaluate.loose and evaluate.precision < FORCING * CLOSE_GUESS:  # a close guess: swept again as closely as it needs
        g = evaluate(x)
        residual = g - x
    active = ~_small(residual, tolerance - evaluate.error)
    stages = ["newton", "wegstein", "damped", "newton"] if x.shape[1] <= NEWTON_FIRST_TEARS else ["wegstein", "damped", "newton"]
    history, methods = [], [stages[0]]
    newton = _QuasiNewton()
    x_prev = g_prev = None
    stage_start, best = 0, np.inf
    iteration = 0
    taken = np.zeros(x.shape[0], int)
    while np.any(active) and iteration < max_iterations:
        iteration += 1
        taken += active
        size = np.max(np.abs(residual[active]))
        evaluate.within(size)
        history.append(np.max(np.abs(residual[active]), axis=0))
        best = min(best, size)
        if len(methods) < len(stages) and _stuck(methods[-1], iteration - stage_start, size, best, history, newton):
            methods.append(stages[len(methods)])
            stage_start, newton = iteration, _QuasiNewton()
        stage = methods[-1]
        g_new = None
        if stage == "newton":
            x_new, g_new = newton.step(evaluate, x, g, residual, active)
        elif stage == "wegstein":
            x_new = _wegstein_step(x, g, x_prev, g_prev)
        else:
            x_new = x + DAMPING * residual
        x_prev, g_prev = x, g
        x = np.where(active[:, None], x_new, x)
        g = evaluate(x) if g_new is None else np.where(active[:, None], g_new, g)
        residual = g - x
        # a scenario whose tears or their sweep left the numbers (a unit met a state no
        # temperature has) cannot come back by any step: it stops here, not converged
        active = active & ~_small(residual, tolerance - evaluate.error) & np.isfinite(abs_max_last(residual))
    evaluate.precision = 0.0
    if evaluate.loose:  # what is decided and kept from here on comes from an exact sweep
        g = evaluate(x)
        residual = g - x
    converged = _small(residual, tolerance)
    if np.any(converged) and x.shape[1] <= MAX_POLISH_TEARS:
        x, g, residual = _polish(evaluate, x, g, residual, converged, newton.matrix, POLISH_BELOW * tolerance)
    return TearResult(x, converged, iteration, np.abs(residual), history, methods, evaluations=evaluate.count,
                      computed=g, taken=taken)


def _stuck(stage, steps, size, best, history, newton):
    """Whether the current stage has stopped making progress."""
    if not np.isfinite(size) or (size > 1e3 * best and np.isfinite(best)):
        return True
    stalled = steps > STALL_WINDOW and size > 0.5 * np.max(history[-STALL_WINDOW])
    if stage == "newton":
        return newton.failed or stalled
    if stage == "damped":
        return steps > DAMPED_LIMIT or (stalled and steps > STALL_WINDOW)
    return stalled


def _small(residual, tolerance):
    return abs_max_last(residual) <= tolerance


def _wegstein_step(x, g, x_prev, g_prev):
    if x_prev is None:
        return g
    dx = x - x_prev
    moved = np.abs(dx) > 1e-12 * (1.0 + np.abs(x))
    with np.errstate(divide="ignore", invalid="ignore"):
        slope = np.where(moved, (g - g_prev) / np.where(moved, dx, 1.0), 0.0)
        q = np.where(slope == 1.0, Q_MIN, slope / (slope - 1.0))
    q = np.clip(np.nan_to_num(q, nan=0.0), Q_MIN, Q_MAX)
    return q * x + (1.0 - q) * g


def _newton_matrix(evaluate, x, g):
    """I - dg/dx by forward differences, shape (batch, tears, tears): the Jacobian of -F."""
    n = x.shape[1]
    jac = np.empty(x.shape + (n,))
    for j in range(n):
        step = FD_STEP * np.maximum(1.0, np.abs(x[:, j]))
        shifted = x.copy()
        shifted[:, j] += step
        jac[:, :, j] = (evaluate(shifted, changed=j) - g) / step[:, None]
    return np.eye(n)[None] - jac


def _solve(matrix, residual):
    """The Newton direction d with matrix·d = residual, per scenario; a singular matrix gets the
    least-squares (pseudo-inverse) direction instead of stopping the batch."""
    try:
        return np.linalg.solve(matrix, residual[..., None])[..., 0]
    except np.linalg.LinAlgError:
        return (np.linalg.pinv(matrix) @ residual[..., None])[..., 0]


class _QuasiNewton:
    """Newton steps with a Broyden-updated matrix and step halving; ``failed`` once a step from a
    fresh Jacobian lowers no scenario's residual."""

    def __init__(self):
        self.matrix, self.fresh, self.failed, self.refresh = None, False, False, False

    def step(self, evaluate, x, g, residual, active):
        """(x', g(x')) after one step; scenarios no longer active stay where they are."""
        if self.matrix is None or (self.refresh and not self.fresh):
            self.matrix, self.fresh = _newton_matrix(evaluate, x, g), True
        direction = _solve(self.matrix, residual)
        size = abs_max_last(residual)
        step = np.ones(x.shape[0])
        for _ in range(HALVINGS + 1):
            trial = np.where(active[:, None], x + step[:, None] * direction, x)
            g_trial = evaluate(trial)
            trial_size = abs_max_last(g_trial - trial)
            worse = active & ~(trial_size < size)
            if not np.any(worse):
                break
            step = np.where(worse, step / 2.0, step)
        gained = active & (trial_size < size)
        self.failed = self.fresh and not np.any(gained)
        self.refresh = bool(np.any(active & (trial_size > REFRESH_RATIO * size)))
        self._broyden(trial - x, (g_trial - trial) - residual, gained)
        self.fresh = False
        return trial, g_trial

    def _broyden(self, s, y, where):
        """Broyden's update of M ≈ I - dg/dx from the step s and the change y of F = g - x."""
        ss = np.einsum("bi,bi->b", s, s)
        use = where & (ss > 0.0)
        correction = (y + np.einsum("bij,bj->bi", self.matrix, s)) / np.where(use, ss, 1.0)[:, None]
        self.matrix = self.matrix - np.where(use[:, None, None], correction[:, :, None] * s[:, None, :], 0.0)


def _polish(evaluate, x, g, residual, converged, matrix, negligible):
    """One Newton step from the converged x, kept where it lowers the residual. With a Newton
    matrix at hand the step is known before any sweep: scenarios whose step is below
    ``negligible`` (K) are already that close to the answer and are left alone; without one (the
    Wegstein path) the Jacobian is made and every converged scenario is polished."""
    known = matrix is not None
    direction = _solve(matrix if known else _newton_matrix(evaluate, x, g), residual)
    needed = converged & (abs_max_last(direction) > negligible) if known else converged
    if not np.any(needed):
        return x, g, residual
    trial = np.where(needed[:, None], x + direction, x)
    g_trial = evaluate(trial)
    r_trial = g_trial - trial
    better = abs_max_last(r_trial) < abs_max_last(residual)
    keep = better[:, None]
    return np.where(keep, trial, x), np.where(keep, g_trial, g), np.where(keep, r_trial, residual)
