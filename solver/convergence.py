"""Convergence of tear-stream temperatures: x = g(x), on arrays of shape (batch, tears).

Stages, switched for the whole batch when progress stops:

1. Wegstein's bounded secant acceleration, per tear variable (Wegstein 1958, Comm. ACM 1(6)):
   ``s = Δg/Δx``, ``q = s/(s - 1)`` bounded to [Q_MIN, Q_MAX], ``x' = q·x + (1 - q)·g(x)``.
   Negative q accelerates a monotone approach; positive q damps an oscillation. The bounds are
   common practice, not from a source.
2. Damped direct substitution, ``x' = x + DAMPING·(g(x) - x)``, when Wegstein stalls or diverges.
3. Newton's method on the residual g(x) - x with a forward-difference Jacobian (all scenarios at
   once, one extra sweep per tear) and step halving: the quasi-Newton fallback for strongly
   coupled blocks.

Every scenario's convergence is tracked on its own; converged scenarios stop moving. After
convergence one Newton step polishes the answer (kept only if it lowers the residual), so that
energy balances close to round-off rather than to the tolerance.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

Q_MIN, Q_MAX = -5.0, 0.9
DAMPING = 0.5
STALL_WINDOW = 15
DAMPED_LIMIT = 40
MAX_POLISH_TEARS = 64


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

    @property
    def success(self) -> bool:
        return bool(np.all(self.converged))


def converge_tears(evaluate, x0, tolerance, max_iterations) -> TearResult:
    """Solve x = evaluate(x) for x of shape (batch, tears); see the module notes for the method."""
    x = np.array(x0, dtype=float)
    g = evaluate(x)
    residual = g - x
    active = ~_small(residual, tolerance)
    history, methods = [], ["wegstein"]
    x_prev = g_prev = None
    stage, stage_start, best = "wegstein", 0, np.inf
    iteration = 0
    while np.any(active) and iteration < max_iterations:
        iteration += 1
        size = np.max(np.abs(residual[active]))
        history.append(np.max(np.abs(residual[active]), axis=0))
        best = min(best, size)
        stalled = iteration - stage_start > STALL_WINDOW and size > 0.5 * np.max(history[-STALL_WINDOW])
        diverging = size > 1e3 * best and np.isfinite(best)
        if stage == "wegstein" and (stalled or diverging or not np.isfinite(size)):
            stage, stage_start = "damped", iteration
        elif stage == "damped" and (iteration - stage_start > DAMPED_LIMIT or (stalled and iteration - stage_start > STALL_WINDOW)):
            stage, stage_start = "newton", iteration
        if methods[-1] != stage:
            methods.append(stage)
        if stage == "wegstein":
            x_new = _wegstein_step(x, g, x_prev, g_prev)
        elif stage == "damped":
            x_new = x + DAMPING * residual
        else:
            x_new = _newton_step(evaluate, x, g, residual, active)
        x_prev, g_prev = x, g
        x = np.where(active[:, None], x_new, x)
        g = evaluate(x)
        residual = g - x
        active = active & ~_small(residual, tolerance)
    converged = _small(residual, tolerance)
    if np.any(converged) and x.shape[1] <= MAX_POLISH_TEARS:
        x, g, residual = _polish(evaluate, x, g, residual, converged)
    return TearResult(x, converged, iteration, np.abs(residual), history, methods)


def _small(residual, tolerance):
    return np.all(np.abs(residual) <= tolerance, axis=1)


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


def _jacobian(evaluate, x, g):
    """d g / d x by forward differences, shape (batch, tears, tears)."""
    n = x.shape[1]
    jac = np.empty(x.shape + (n,))
    for j in range(n):
        step = 1e-6 * np.maximum(1.0, np.abs(x[:, j]))
        shifted = x.copy()
        shifted[:, j] += step
        jac[:, :, j] = (evaluate(shifted) - g) / step[:, None]
    return jac


def _newton_direction(evaluate, x, g, residual):
    system = np.eye(x.shape[1])[None] - _jacobian(evaluate, x, g)
    try:
        return np.linalg.solve(system, residual[..., None])[..., 0]
    except np.linalg.LinAlgError:
        return DAMPING * residual  # singular Jacobian: damped substitution for this step


def _newton_step(evaluate, x, g, residual, active):
    direction = _newton_direction(evaluate, x, g, residual)
    size = np.max(np.abs(residual), axis=1)
    step = np.ones(x.shape[0])
    for _ in range(6):  # halve the step where it does not lower the residual
        trial = x + step[:, None] * direction
        worse = np.max(np.abs(evaluate(trial) - trial), axis=1) >= size
        worse &= active
        if not np.any(worse):
            break
        step = np.where(worse, step / 2.0, step)
    return x + step[:, None] * direction


def _polish(evaluate, x, g, residual, converged):
    trial = x + _newton_direction(evaluate, x, g, residual)
    trial = np.where(converged[:, None], trial, x)
    g_trial = evaluate(trial)
    r_trial = g_trial - trial
    better = np.max(np.abs(r_trial), axis=1) < np.max(np.abs(residual), axis=1)
    keep = better[:, None]
    return np.where(keep, trial, x), np.where(keep, g_trial, g), np.where(keep, r_trial, residual)
