r"""Weighted least-squares data reconciliation over many time windows: linear constraints by
matrix projection, nonlinear (bilinear) constraints by successive linearization.

Each window w has measurements ``y[w]`` of the measured variables ``x`` with independent errors
of standard deviation ``sigma[w]``, and unmeasured variables ``u``. Reconciliation solves

.. math:: \min_{x, u} (y - x)^T V^{-1} (y - x) \quad \text{s.t.} \quad A x + B u = c
          \quad (\text{or } g(x, u) = 0), \qquad V = \mathrm{diag}(\sigma^2)

A measurement that is NaN in a window is treated, in that window only, as an unmeasured
variable: it is estimated where the others determine it. In the linear case the windows are
grouped by their pattern of missing measurements and each group's constraints are factorized
once; in the nonlinear case each window is linearized at its own point and all windows are
factorized and solved together as stacks (the missing pattern sets the layout of each stack).

Sign convention: ``adjustments = y - x_hat``, what reconciliation takes off each measurement
(positive when the instrument reads high).

References
----------
.. [1] Crowe, C. M., Y. A. Garcia Campos and A. Hrymak. "Reconciliation of process flow rates by
       matrix projection. Part I: linear case." AIChE J. 29 (1983) 881-888 (from memory).
.. [2] Narasimhan, S., and C. Jordache. Data Reconciliation and Gross Error Detection. Gulf,
       2000, chapters 3 (linear) and 5 (nonlinear reconciliation) (from memory).
.. [3] Knepper, J. C., and J. W. Gorman. "Statistical analysis of constrained data sets."
       AIChE J. 26 (1980) 260-264: successive linearization (from memory).
.. [4] Han, S. P. "A globally convergent method for nonlinear programming." J. Optim. Theory
       Appl. 22 (1977) 297-309: the exact-penalty merit function of the step safeguard (from
       memory).
"""

from __future__ import annotations

import numpy as np
from scipy.optimize import OptimizeResult

from .observability import DEFAULT_RANK_TOLERANCE, ConstraintStructure

__all__ = ["ReconciliationResult", "STATUS_MESSAGES", "reconcile_linear", "reconcile_nonlinear"]

STATUS_MESSAGES = {
    0: "reconciled: the constraints hold to the residual tolerance",
    1: "iteration limit reached before the constraints and the step converged",
    2: "the step-size safeguard found no step that lowers the merit function",
    3: "the constraints contradict each other: they cannot all hold for these constants",
    4: "non-finite constraint or Jacobian values",
}
_ARMIJO = 1e-4
_HALVINGS = 40


class ReconciliationResult(OptimizeResult):
    """Result of a reconciliation of W windows (a dict with attribute access, like scipy's).

    Keys (n measured, p unmeasured variables; NaN marks "not determined")
    ----
    x : (W, n) reconciled measured variables; a missing measurement's estimate, or NaN.
    u : (W, p) estimated unmeasured variables; NaN where not observable.
    adjustments : (W, n) ``y - x``; zero for a non-redundant measurement, NaN where missing.
    adjustment_covariance : (W, n, n) covariance of the adjustments.
    covariance : (W, n + p, n + p) covariance of the estimates ``[x, u]`` (linearized in the
        nonlinear case); NaN rows and columns for undetermined variables.
    x_covariance, u_covariance : its diagonal blocks.
    sigma : (W, n) the measurements' standard deviations.
    measured : (W, n) bool, measurements used (present, not eliminated).
    redundant : (W, n) bool, measured and redundant (adjustable).
    x_observable, u_observable : (W, n), (W, p) bool, variables determined by the data.
    degrees_of_freedom : (W,) int, the degree of redundancy: the global test's degrees of freedom.
    statistic : (W,) the global test statistic ``r' (P A V A' P')^+ r`` (``r = P (A y - c)``).
    constraint_residual : (W,) largest scaled constraint residual (``_closure``).
    success, status, message, iterations : per window; ``STATUS_MESSAGES`` gives the codes.
    """

    def put(self, rows, other):
        """Overwrite windows ``rows`` with the windows of ``other`` (same keys), in place."""
        for key, value in other.items():
            if isinstance(value, list):
                for i, row in enumerate(rows):
                    self[key][row] = value[i]
            else:
                self[key][rows] = value
        return self


def _mv(matrix, vector):
    """Stacked matrix-vector product with numpy broadcasting over the leading axes."""
    return (matrix @ vector[..., None])[..., 0]


def _swap(m):
    return np.swapaxes(m, -1, -2)


def _windows(measured, sigma):
    y = np.atleast_2d(np.asarray(measured, dtype=float))
    sigma = np.broadcast_to(np.asarray(sigma, dtype=float), y.shape)
    present = np.isfinite(y)
    if not (np.isfinite(sigma[present]).all() and (sigma[present] > 0.0).all()):
        raise ValueError("every present measurement needs a finite, positive standard deviation")
    return y, np.array(sigma), present


def _layout(a, b, present):
    """Constraints with the missing measurements moved among the unmeasured variables, in one
    shape for every pattern: ``A_w = A * present`` and ``B_w = [B, A * missing]`` (unmeasured
    variable p + i stands in for measured variable i where that one is missing; its column is
    zero, and ignored, where it is present)."""
    return a * present[..., None, :], np.concatenate([b, a * ~present[..., None, :]], axis=-1)


def _closure(g, jx, ju, x, u):
    r"""Largest scaled constraint residual per window: :math:`|g_i| / s_i` with
    :math:`s_i = \sum_j |J_{ij} z_j| + |g_i - (J z)_i|`, the size of the terms that make up
    constraint i (for linear constraints the constant ``c_i`` is the last term)."""
    jz = _mv(jx, x) + _mv(ju, u)
    size = _mv(np.abs(jx), np.abs(x)) + _mv(np.abs(ju), np.abs(u)) + np.abs(g - jz)
    scaled = np.abs(g) / np.where(size > 0.0, size, 1.0)
    return scaled.max(axis=-1, initial=0.0)


def _solve(structure, y, variances, c, present, u_reference, covariances):
    r"""Reconcile windows on factorized constraints (stacks broadcast against the W windows).

    With ``G = T A`` (independent reduced constraints) and ``r = G y - T c``:
    :math:`a = V G^T (G V G^T)^{-1} r`, :math:`\gamma = r^T (G V G^T)^{-1} r`,
    :math:`\mathrm{cov}(a) = V G^T (G V G^T)^{-1} G V`, ``x = y - a``, and the unmeasured
    variables from ``B u = c - A x`` as the minimum-norm change from ``u_reference``.
    """
    s = structure
    residual = _mv(s.reduced, y) - _mv(s.row_map, c)
    weighted = s.reduced * variances[..., None, :]
    # rows that are not constraints get a unit diagonal: their residual is zero, so is their h
    normal = weighted @ _swap(s.reduced) + np.eye(s.kept.shape[-1]) * (~s.kept)[..., None, :]
    h = np.linalg.solve(normal, residual[..., None])[..., 0]
    adjusted = s.redundant & present
    adjustments = np.where(adjusted, _mv(_swap(weighted), h), 0.0)
    x = y - adjustments
    u = u_reference + _mv(s.unmeasured_map, c - _mv(s.a, x) - _mv(s.b, u_reference))
    windows = y.shape[0]
    part = dict(x=x, u=u, adjustments=adjustments, statistic=(residual * h).sum(axis=-1),
                multipliers=_mv(_swap(s.row_map), h), adjusted=adjusted,
                degrees_of_freedom=np.broadcast_to(s.degrees_of_freedom, (windows,)),
                observable=np.broadcast_to(s.observable, (windows, s.observable.shape[-1])))
    if covariances:
        adjustment_cov = _swap(weighted) @ np.linalg.solve(normal, weighted)
        adjustment_cov = adjustment_cov * (adjusted[:, :, None] & adjusted[:, None, :])
        x_cov = variances[:, :, None] * np.eye(y.shape[-1]) - adjustment_cov
        unmeasured_gain = s.unmeasured_map @ s.a  # u = const - gain @ x
        xu = -x_cov @ _swap(unmeasured_gain)
        uu = unmeasured_gain @ x_cov @ _swap(unmeasured_gain)
        part["adjustment_covariance"] = adjustment_cov
        part["joint_covariance"] = np.concatenate([np.concatenate([x_cov, xu], axis=-1),
                                                   np.concatenate([_swap(xu), uu], axis=-1)], axis=-2)
    return part


def _assemble(part, y, sigma, present, p, x_values, u_values, adjustments):
    """The public result of one group of windows: missing measurements read from their stand-in
    unmeasured variables, undetermined values and covariances NaN."""
    windows, n = y.shape
    stand_in = part["observable"][:, p:]
    x_observable = present | stand_in
    u_observable = part["observable"][:, :p].copy()
    known = np.concatenate([x_observable, u_observable], axis=-1)
    index = np.concatenate([np.where(present, np.arange(n), n + p + np.arange(n)),
                            np.broadcast_to(n + np.arange(p), (windows, p))], axis=-1)
    w = np.arange(windows)[:, None, None]
    covariance = part["joint_covariance"][w, index[:, :, None], index[:, None, :]]
    covariance = np.where(known[:, :, None] & known[:, None, :], covariance, np.nan)
    return ReconciliationResult(
        x=np.where(x_observable, x_values, np.nan), u=np.where(u_observable, u_values, np.nan),
        adjustments=np.where(present, adjustments, np.nan),
        adjustment_covariance=part["adjustment_covariance"], covariance=covariance,
        x_covariance=covariance[:, :n, :n], u_covariance=covariance[:, n:, n:], sigma=sigma,
        measured=present, redundant=part["adjusted"], x_observable=x_observable, u_observable=u_observable,
        degrees_of_freedom=np.array(part["degrees_of_freedom"]), statistic=part["statistic"])


def _finish(result, closure, status, iterations):
    result.update(constraint_residual=closure, status=status, success=status == 0,
                  message=[STATUS_MESSAGES[int(k)] for k in status], iterations=iterations)
    return result


def reconcile_linear(measured, sigma, a, b=None, c=None, *, rank_tolerance=DEFAULT_RANK_TOLERANCE,
                     residual_tolerance=1e-9):
    r"""Reconcile measurements with linear constraints ``A x + B u = c`` by matrix projection.

    A matrix ``P`` with ``P B = 0`` (the left null space of ``B``, from its SVD) removes the
    unmeasured variables, leaving ``P A x = P c`` (Crowe et al. [1]_). With ``G`` the independent
    rows of ``P A`` and ``r = G y - P c`` (their constants taken alike):

    .. math:: \hat x = y - V G^T (G V G^T)^{-1} r, \qquad
              \mathrm{cov}(y - \hat x) = W = V G^T (G V G^T)^{-1} G V, \qquad
              \mathrm{cov}(\hat x) = V - W

    and the observable unmeasured variables follow from ``B u = c - A x_hat`` by least squares
    [2]_. Windows share ``A``, ``B``; the structure is factorized once per pattern of missing
    measurements.

    Parameters
    ----------
    measured : array (n,) or (W, n), measurements ``y``; NaN where an instrument gave no value.
    sigma : array broadcastable to (W, n), standard deviations of the measurement errors
        (independent, in the measurements' units), > 0.
    a : array (m, n), coefficients of the measured variables.
    b : array (m, p), coefficients of the unmeasured variables; None for none.
    c : array (m,) or (W, m), constants; None for zero.
    rank_tolerance : relative bound for a zero singular value (see ``observability``).
    residual_tolerance : a window whose scaled constraint residual exceeds it after
        reconciliation has contradictory constraints (status 3).

    Returns
    -------
    ReconciliationResult with a leading window axis (W = 1 for a 1-D ``measured``).

    Examples
    --------
    A splitter ``F1 = F2 + F3``, all measured with equal uncertainty: the imbalance 3 is shared.

    >>> result = reconcile_linear([103.0, 60.0, 40.0], 1.0, [[1.0, -1.0, -1.0]])
    >>> result.x.round(12), round(float(result.statistic[0]), 12)
    (array([[102.,  61.,  41.]]), 3.0)
    """
    y, sigma, present = _windows(measured, sigma)
    windows, n = y.shape
    a = np.asarray(a, dtype=float)
    if a.ndim != 2 or a.shape[1] != n:
        raise ValueError(f"a must be (constraints, {n}); got {a.shape}")
    b = np.zeros((a.shape[0], 0)) if b is None else np.asarray(b, dtype=float)
    c = np.broadcast_to(np.zeros(a.shape[0]) if c is None else np.asarray(c, dtype=float), (windows, a.shape[0]))
    p = b.shape[1]
    y_filled = np.where(present, y, 0.0)
    variances = np.where(present, sigma, 1.0) ** 2
    patterns, group = np.unique(present, axis=0, return_inverse=True)
    result = None
    for k, pattern in enumerate(patterns):
        rows = np.flatnonzero(group.ravel() == k)
        structure = ConstraintStructure.factor(*_layout(a[None], b[None], pattern[None]), rank_tolerance)
        part = _solve(structure, y_filled[rows], variances[rows], c[rows], pattern[None],
                      np.zeros((rows.size, p + n)), covariances=True)
        x_internal = np.where(pattern, part["x"], part["u"][:, p:])
        u_internal = part["u"][:, :p]
        closure = _closure(_mv(a, x_internal) + _mv(b, u_internal) - c[rows], a, b, x_internal, u_internal)
        status = np.where(closure <= residual_tolerance, 0, 3)
        piece = _finish(_assemble(part, y[rows], sigma[rows], present[rows], p, x_internal, u_internal,
                                  part["adjustments"]), closure, status, np.ones(rows.size, dtype=int))
        if result is None:  # allocate every key for all windows from the first group's shapes
            result = ReconciliationResult({key: ([None] * windows if isinstance(v, list) else
                                                 np.empty((windows,) + v.shape[1:], dtype=v.dtype))
                                           for key, v in piece.items()})
        result.put(rows, piece)
    return result


def _evaluate(constraints, jacobian, x, u):
    """Constraint values and Jacobians of all windows, with a per-window finiteness flag."""
    g = np.asarray(constraints(x, u), dtype=float)
    jx, ju = (np.asarray(j, dtype=float) for j in jacobian(x, u))
    windows, n, p = x.shape[0], x.shape[1], u.shape[1]
    m = g.shape[-1]
    if g.shape != (windows, m) or jx.shape != (windows, m, n) or ju.shape != (windows, m, p):
        raise ValueError(f"constraints must return (W, m) and jacobian (W, m, {n}), (W, m, {p}); got "
                         f"{g.shape}, {jx.shape}, {ju.shape}")
    finite = np.isfinite(g).all(-1) & np.isfinite(jx).all((-2, -1)) & np.isfinite(ju).all((-2, -1))
    return g, jx, ju, finite


def _linearized(jx, ju, g, x, u, present, finite, rank_tolerance):
    """The linear problem at the current point: ``A_w x + B_w [u, x] = c`` with the missing
    measurements among the unmeasured; non-finite windows get zero matrices (flagged already)."""
    jx, ju, g = (np.where(finite.reshape((-1,) + (1,) * (v.ndim - 1)), v, 0.0) for v in (jx, ju, g))
    structure = ConstraintStructure.factor(*_layout(jx, ju, present), rank_tolerance)
    return structure, _mv(jx, x) + _mv(ju, u) - g, np.concatenate([u, x], axis=-1)


def reconcile_nonlinear(measured, sigma, constraints, jacobian, unmeasured_start, *, measured_start=None,
                        residual_tolerance=1e-9, step_tolerance=1e-10, max_iterations=100,
                        rank_tolerance=DEFAULT_RANK_TOLERANCE):
    r"""Reconcile measurements with nonlinear (e.g. bilinear) constraints ``g(x, u) = 0`` by
    successive linearization, all windows solved together.

    Each iteration linearizes at the current point ``z_k = (x_k, u_k)``,
    :math:`g_k + J_x (x - x_k) + J_u (u - u_k) = 0`, and solves that linear reconciliation
    (``reconcile_linear``'s projection, batched over the windows); the unmeasured variables
    move by the minimum-norm step, so unobservable ones stay put (Knepper & Gorman [3]_, [2]_).
    Step-size safeguard: the step is halved until the exact-penalty merit
    :math:`\tfrac12 (y - x)^T V^{-1}(y - x) + \sum_i \mu_i |g_i|`, with
    :math:`\mu_i \ge 1.5|\lambda_i|` (multipliers of the linear problem), falls by Armijo's rule
    (Han [4]_). A window has converged (status 0) when its scaled constraint residual
    :math:`\max_i |g_i| / (\sum_j |J_{ij} z_j| + |g_i - (J z)_i|)` is at most
    ``residual_tolerance`` (default 1e-9) and the next step is at most ``step_tolerance`` times
    ``|z_j| + s_j`` in every variable (``s_j``: sigma for a measured variable, the magnitude of
    its start value, or 1, for an unmeasured one).

    Parameters
    ----------
    measured : array (W, n), measurements; NaN where missing (then unmeasured in that window).
    sigma : array broadcastable to (W, n), standard deviations (independent errors), > 0.
    constraints : callable ``(x (W, n), u (W, p)) -> g (W, m)``; called with every window.
    jacobian : callable ``(x, u) -> (dg/dx (W, m, n), dg/du (W, m, p))``.
    unmeasured_start : array (p,) or (W, p), start values of ``u``.
    measured_start : array broadcastable to (W, n), start values where a measurement is missing
        (default: none; then every measurement must be present).
    residual_tolerance, step_tolerance, max_iterations, rank_tolerance : see above.

    Returns
    -------
    ReconciliationResult; ``iterations`` counts linearizations per window. Covariances and the
    global statistic come from the linearization at the solution.

    Examples
    --------
    A mixer of two streams (flows and temperatures measured, outlet flow unmeasured), enthalpy
    balance with one cp: the mixed temperature is pulled to the flow-weighted mean.

    >>> def g(x, u):   # x = [F1, F2, T1, T2, T3], u = [F3]
    ...     f1, f2, t1, t2, t3 = x.T
    ...     return np.stack([f1 + f2 - u[:, 0], f1 * t1 + f2 * t2 - u[:, 0] * t3], axis=-1)
    >>> def jac(x, u):
    ...     f1, f2, t1, t2, t3 = x.T
    ...     one, zero = np.ones_like(f1), np.zeros_like(f1)
    ...     jx = np.stack([np.stack([one, one, zero, zero, zero], -1),
    ...                    np.stack([t1, t2, f1, f2, -u[:, 0]], -1)], axis=-2)
    ...     return jx, np.stack([-one, -t3], -1)[:, :, None]
    >>> r = reconcile_nonlinear([[10.0, 30.0, 300.0, 400.0, 380.0]], [0.1, 0.3, 1.0, 1.0, 1.0],
    ...                         g, jac, [40.0])
    >>> f1, f2, t1, t2, t3 = r.x[0]
    >>> bool(r.success[0]), bool(abs(t3 - (f1 * t1 + f2 * t2) / (f1 + f2)) < 1e-9 * t3)
    (True, True)
    """
    y, sigma, present = _windows(measured, sigma)
    windows, n = y.shape
    u = np.array(np.broadcast_to(np.asarray(unmeasured_start, dtype=float),
                                 (windows, np.shape(unmeasured_start)[-1])))
    p = u.shape[1]
    x = y.copy() if measured_start is None else np.where(present, y, np.broadcast_to(measured_start, y.shape))
    if not (np.isfinite(x).all() and np.isfinite(u).all()):
        raise ValueError("start values must be finite; give measured_start for missing measurements")
    y_filled = np.where(present, y, 0.0)
    variances = np.where(present, sigma, 1.0) ** 2
    x_size = np.where(present, sigma, np.where(x != 0.0, np.abs(x), 1.0))
    u_size = np.where(u != 0.0, np.abs(u), 1.0)
    status = np.full(windows, -1)
    iterations = np.zeros(windows, dtype=int)
    weights = None
    for _ in range(max_iterations):
        g, jx, ju, finite = _evaluate(constraints, jacobian, x, u)
        status[(status < 0) & ~finite] = 4
        active = np.flatnonzero(status < 0)
        if active.size == 0:
            break
        weights = np.zeros_like(g) if weights is None else weights
        iterations[active] += 1
        structure, c, u_ext = _linearized(jx[active], ju[active], g[active], x[active], u[active],
                                          present[active], finite[active], rank_tolerance)
        part = _solve(structure, y_filled[active], variances[active], c, present[active], u_ext,
                      covariances=False)
        dx = np.where(present[active], part["x"], part["u"][:, p:]) - x[active]
        du = part["u"][:, :p] - u[active]
        small = ((np.abs(dx) <= step_tolerance * (np.abs(x[active]) + x_size[active])).all(-1)
                 & (np.abs(du) <= step_tolerance * (np.abs(u[active]) + u_size[active])).all(-1))
        closure = _closure(g[active], jx[active], ju[active], x[active], u[active])
        converged = (closure <= residual_tolerance) & small
        status[active[converged]] = 0
        moving = ~converged
        rows = active[moving]
        step, accepted = _safeguarded_step(constraints, x, u, rows, dx[moving], du[moving], g, jx, ju,
                                           part["multipliers"][moving], weights, y_filled, variances, present)
        x[rows] += step[:, None] * dx[moving]
        u[rows] += step[:, None] * du[moving]
        status[rows[~accepted]] = 2
    status[status < 0] = 1
    g, jx, ju, finite = _evaluate(constraints, jacobian, x, u)
    structure, c, u_ext = _linearized(jx, ju, g, x, u, present, finite, rank_tolerance)
    part = _solve(structure, y_filled, variances, c, present, u_ext, covariances=True)
    # converged windows take the last (negligible) step, so that their adjustments are exactly
    # those of the linearization the covariances and tests come from; kept if it closes
    last_x = np.where(present, part["x"], part["u"][:, p:])
    last_u = part["u"][:, :p]
    g_last, jx_last, ju_last, _ = _evaluate(constraints, jacobian, last_x, last_u)
    closure_last = _closure(g_last, jx_last, ju_last, last_x, last_u)
    take = (status == 0) & (closure_last <= residual_tolerance)
    x, u = np.where(take[:, None], last_x, x), np.where(take[:, None], last_u, u)
    closure = np.where(take, closure_last, _closure(g, jx, ju, x, u))
    result = _assemble(part, y, sigma, present, p, x, u, np.where(take[:, None], part["adjustments"], y_filled - x))
    return _finish(result, closure, status, iterations)


def _safeguarded_step(constraints, x, u, rows, dx, du, g, jx, ju, multipliers, weights, y, variances, present):
    """Step lengths (halving from 1) that satisfy Armijo's rule on the exact-penalty merit, for
    the windows ``rows``; ``weights`` (the penalty weights, kept non-decreasing) is updated."""
    if rows.size == 0:
        return np.ones(0), np.ones(0, dtype=bool)
    jz = _mv(jx[rows], x[rows]) + _mv(ju[rows], u[rows])
    scale = _mv(np.abs(jx[rows]), np.abs(x[rows])) + _mv(np.abs(ju[rows]), np.abs(u[rows])) + np.abs(g[rows] - jz)
    # a floor of one relative unit: constraints with a zero multiplier still count in the merit
    weights[rows] = np.maximum(weights[rows], 1.5 * np.abs(multipliers) + 1.0 / np.where(scale > 0.0, scale, 1.0))
    w, measured = weights[rows], present[rows]

    def merit(xs, gs):
        return 0.5 * (np.where(measured, (y[rows] - xs) ** 2 / variances[rows], 0.0)).sum(-1) + (w * np.abs(gs)).sum(-1)

    start = merit(x[rows], g[rows])
    slope = (np.where(measured, -(y[rows] - x[rows]) / variances[rows], 0.0) * dx).sum(-1) - (w * np.abs(g[rows])).sum(-1)
    step = np.ones(rows.size)
    accepted = np.zeros(rows.size, dtype=bool)
    for _ in range(_HALVINGS):
        trial_x, trial_u = x.copy(), u.copy()
        trial_x[rows] += step[:, None] * dx
        trial_u[rows] += step[:, None] * du
        trial = merit(trial_x[rows], np.asarray(constraints(trial_x, trial_u), dtype=float)[rows])
        # the last term admits round-off in the merit itself once the iterates have settled
        good = np.isfinite(trial) & (trial <= start + _ARMIJO * step * slope + 1e-13 * (1.0 + np.abs(start)))
        accepted |= good
        if accepted.all():
            break
        step = np.where(accepted, step, 0.5 * step)
    return np.where(accepted, step, 0.0), accepted
