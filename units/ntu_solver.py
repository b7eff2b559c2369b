"""NTU from P by root finding, for P–NTU relations without a closed-form inverse.

:func:`solve_ntu` inverts any vectorized forward relation ``forward(ntu1, r1, **flags) -> P1``
element by element, all elements at once (numpy only, no Python loop over elements): a bracket
in :math:`s = \\ln NTU_1` is found from the counterflow NTU (a lower bound: no two-stream
arrangement beats counterflow, [1]_) and closed by Chandrupatla's method [2]_, inverse quadratic
interpolation safeguarded by bisection, which keeps the bracket and converges superlinearly.
:func:`p_maximum` finds the largest P of relations that pass through a maximum at finite NTU
(the 1-N TEMA E shell with N >= 4, crossflow with both fluids mixed, and other arrangements whose
parallel-flow parts start taking heat back), so that either branch can be inverted.

References
----------
.. [1] Shah, R. K., and D. P. Sekulić. Fundamentals of Heat Exchanger Design. Wiley, 2003,
       section 3.6: counterflow has the highest effectiveness at given NTU and R (from memory).
.. [2] Chandrupatla, T. R. "A new hybrid quadratic/bisection algorithm for finding the zero of a
       nonlinear function without using derivatives." Advances in Engineering Software 28 (1997)
       145-149 (from memory).
.. [3] Kiefer, J. "Sequential minimax search for a maximum." Proc. Amer. Math. Soc. 4 (1953)
       502-506: golden-section search (from memory).
"""

from __future__ import annotations

import numpy as np

from .arrays import as_arrays
from .pntu import ntu_counterflow

__all__ = ["solve_ntu", "p_maximum"]

EPS = np.finfo(float).eps
NTU_CEILING = 1e50
"""NTU past which :func:`solve_ntu` stops looking for a P it has not reached (NaN)."""
MAX_ITERATIONS = 200
"""Chandrupatla steps at most; measured need: 18 at most over 100 000 random points (R 0-5,
NTU 1e-4-200, crossflow unmixed and 1-N shells on either branch)."""
GOLDEN = (np.sqrt(5.0) - 1.0) / 2.0


class _Elements:
    """The forward relation evaluated in ``s = ln NTU`` on a subset of elements, addressed by
    flat index: R and array-valued flags are broadcast to one shape and flattened once."""

    def __init__(self, forward, r1, flags):
        self.forward = forward
        self.r1 = np.ascontiguousarray(r1).ravel()
        self.scalar_flags = {k: v for k, v in flags.items() if np.ndim(v) == 0}
        self.array_flags = {k: np.ascontiguousarray(np.broadcast_to(v, np.shape(r1))).ravel()
                            for k, v in flags.items() if np.ndim(v) > 0}

    def p(self, s, index):
        flags = dict(self.scalar_flags, **{k: v[index] for k, v in self.array_flags.items()})
        with np.errstate(over="ignore"):
            return np.asarray(self.forward(np.exp(s), self.r1[index], **flags), dtype=float)


def solve_ntu(forward, p1, r1, *, p_sup=None, ntu_at_sup=None, branch="lower", rtol=1e-13, **flags):
    r"""NTU1 at which ``forward(ntu1, r1, **flags)`` equals P1, for any P–NTU relation.

    The inverse of a forward relation with no closed-form inverse, to make one in a line:
    ``ntu = solve_ntu(p_tema_g, p, r, p_sup=..., side1="shell")``.

    Parameters
    ----------
    forward : callable
        ``forward(ntu1, r1, **flags)`` -> P1, vectorized, defined for ``0 <= ntu1 < inf``,
        P1 = 0 at NTU1 = 0 and never above counterflow's P1 (true of every two-stream
        arrangement); increasing in NTU1, or increasing up to one maximum at ``ntu_at_sup``.
    p1, r1 : array_like
        Temperature effectiveness and heat-capacity ratio of side 1 (broadcast).
    p_sup : array_like, optional
        The largest P1 the relation reaches at each R1 (see :func:`p_maximum`): P1 >= p_sup
        gives NaN without a search. Without it a P1 not reached below NTU1 = 1e50 gives NaN.
    ntu_at_sup : array_like, optional
        Where that largest P1 is reached, for relations with a maximum at finite NTU1 (inf or
        None: reached only as NTU1 -> inf). Then P1 is reached twice where it lies above the
        NTU1 -> inf limit, and ``branch`` says which root: ``"lower"`` (the smaller NTU1, on the
        rising side) or ``"upper"`` (beyond the maximum; NaN where P1 is not reached there).
    rtol : float
        Required agreement ``|forward(ntu1) - P1| <= rtol * P1`` at the answer. The search itself
        runs until the bracket in ln NTU1 is a few ulp wide, so the NTU1 returned is as close to
        the root as the forward relation's own rounding allows.
    **flags
        Passed to ``forward``; array-valued flags are broadcast with P1 and R1.

    Returns
    -------
    ntu1 : ndarray
        NaN where P1 < 0, P1 >= p_sup, P1 or R1 is NaN, or the search did not converge.

    >>> from hxtrain.units.pntu import p_crossflow_unmixed
    >>> round(float(solve_ntu(p_crossflow_unmixed, p_crossflow_unmixed(2.5, 0.7), 0.7)), 12)
    2.5
    """
    if branch not in ("lower", "upper"):
        raise ValueError(f"branch must be 'lower' or 'upper', got {branch!r}")
    if ntu_at_sup is not None and p_sup is None:
        raise ValueError("ntu_at_sup needs p_sup, the value of the maximum")
    shape = np.broadcast_shapes(np.shape(p1), np.shape(r1), *(np.shape(v) for v in flags.values()))
    p, r = (np.array(np.broadcast_to(a, shape)) for a in as_arrays(p1, r1))
    elements = _Elements(forward, r, flags)
    ntu = np.full(p.shape, np.nan)
    valid = (p >= 0.0) & (r >= 0.0)
    if p_sup is not None:
        p_sup = np.broadcast_to(np.asarray(p_sup, dtype=float), p.shape)
        valid &= p < p_sup
    ntu[valid & (p == 0.0)] = 0.0
    todo = np.flatnonzero(valid & (p > 0.0))
    peak = None if ntu_at_sup is None else np.broadcast_to(np.asarray(ntu_at_sup, dtype=float), p.shape)
    if peak is not None and branch == "upper":
        hump = todo[np.isfinite(peak.ravel()[todo])]
        ntu.ravel()[hump] = _solve(elements, p.ravel(), p_sup.ravel(), peak.ravel(), hump, "upper", rtol)
        todo = todo[~np.isfinite(peak.ravel()[todo])]  # rising relation at these R: one root
    ntu.ravel()[todo] = _solve(elements, p.ravel(), None if p_sup is None else p_sup.ravel(),
                               None if peak is None else peak.ravel(), todo, "lower", rtol)
    return ntu


def _solve(elements, p, p_sup, peak, index, branch, rtol):
    """NTU for the flat element indices ``index`` (P > 0, below any known supremum)."""
    if index.size == 0:
        return np.empty(0)
    target = p[index]

    def g(s, where):
        return elements.p(s, index[where]) - target[where]

    every = np.arange(index.size)
    if branch == "upper":
        s_lo = np.log(peak[index])
        g_lo = p_sup[index] - target
        s_hi, g_hi, found = _expand(g, s_lo, g_lo, every, direction=+1.0)
    else:
        with np.errstate(invalid="ignore", divide="ignore"):
            guess = ntu_counterflow(target, elements.r1[index])
        guess = np.where(np.isfinite(guess) & (guess > 0.0), guess, target)
        s_lo = np.log(guess)
        g_lo = g(s_lo, every)
        if peak is not None:  # never start past the maximum
            past = np.isfinite(peak[index]) & (s_lo >= np.log(peak[index]))
            s_lo[past] = np.log(target[past]) - np.log(2.0)
            g_lo[past] = g(s_lo[past], every[past])
        upward = g_lo < 0.0
        s_hi, g_hi = s_lo.copy(), g_lo.copy()
        found = ~upward & (g_lo == 0.0)
        if peak is not None:  # the maximum closes the bracket from above
            hump = upward & np.isfinite(peak[index])
            s_hi[hump], g_hi[hump], found[hump] = np.log(peak[index][hump]), (p_sup[index] - target)[hump], True
            upward &= ~hump
        for direction, mask in ((+1.0, upward), (-1.0, ~upward & ~found)):
            sub = np.flatnonzero(mask)
            s_new, g_new, ok = _expand(g, s_lo[sub], g_lo[sub], sub, direction)
            s_hi[sub], g_hi[sub], found[sub] = s_new, g_new, ok
    s = np.full(index.size, np.nan)
    exact = found & ((g_hi == 0.0) | (g_lo == 0.0))
    s[exact] = np.where(g_hi[exact] == 0.0, s_hi[exact], s_lo[exact])
    search = np.flatnonzero(found & ~exact)
    s[search] = _chandrupatla(g, s_lo[search], g_lo[search], s_hi[search], g_hi[search], search, target, rtol)
    return np.exp(s)


def _expand(g, s0, g0, where, direction):
    """From ``s0`` (g = g0 != 0), steps in ``direction``, each twice the last, until g changes
    sign: returns the far end, its g and whether a sign change was found between NTU 5e-324
    and NTU_CEILING."""
    s_end, g_end = s0.copy(), g0.copy()
    found = np.zeros(s0.size, dtype=bool)
    step = np.full(s0.size, np.log(2.0))
    active = np.arange(s0.size)
    limit = np.log(NTU_CEILING) if direction > 0 else np.log(5e-324)
    while active.size:
        s_try = s_end[active] + direction * step[active]
        g_try = g(s_try, where[active])
        crossed = np.sign(g_try) != np.sign(g0[active])
        crossed &= ~np.isnan(g_try)
        s_end[active], g_end[active] = s_try, g_try
        found[active[crossed]] = True
        step[active] *= 2.0
        out = (s_try > limit) if direction > 0 else (s_try < limit)
        active = active[~crossed & ~out & ~np.isnan(g_try)]
    return s_end, g_end, found


def _chandrupatla(g, a, g_a, b, g_b, where, target, rtol):
    """Chandrupatla's bracketing iteration on every element at once; a and b bracket a sign
    change of g. Returns ln NTU of the end with the smaller |g|, NaN where that |g| still
    exceeds ``rtol * P``."""
    c, g_c = a.copy(), g_a.copy()
    with np.errstate(invalid="ignore", divide="ignore"):  # first step: the secant through the ends
        t = np.clip(np.nan_to_num(g_a / (g_a - g_b), nan=0.5), 0.01, 0.99)
    best, g_best = a.copy(), g_a.copy()
    active = np.arange(a.size)
    for _ in range(MAX_ITERATIONS):
        if not active.size:
            break
        x = a[active] + t[active] * (b[active] - a[active])
        g_x = g(x, where[active])
        same = np.sign(g_x) == np.sign(g_a[active])
        # the end that keeps the sign change becomes b; the one dropped becomes c
        c[active] = np.where(same, a[active], b[active])
        g_c[active] = np.where(same, g_a[active], g_b[active])
        b[active] = np.where(same, b[active], a[active])
        g_b[active] = np.where(same, g_b[active], g_a[active])
        a[active], g_a[active] = x, g_x
        closer = np.abs(g_a[active]) < np.abs(g_b[active])
        best[active] = np.where(closer, a[active], b[active])
        g_best[active] = np.where(closer, g_a[active], g_b[active])
        width = np.abs(b[active] - a[active])
        tol = 4.0 * EPS * np.maximum(1.0, np.abs(best[active]))
        # done at a bracket a few ulp wide, or where P is matched to its last bit (the error in
        # NTU is then the forward relation's own rounding times the conditioning)
        done = (np.abs(g_best[active]) <= EPS * target[where[active]]) | (width <= tol) | np.isnan(g_x)
        keep = active[~done]
        t[keep] = _next_fraction(a[keep], g_a[keep], b[keep], g_b[keep], c[keep], g_c[keep], tol[~done] / width[~done])
        active = keep
    converged = np.abs(g_best) <= rtol * target[where]
    return np.where(converged, best, np.nan)


def _next_fraction(a, g_a, b, g_b, c, g_c, relative_tol):
    """Chandrupatla's step: inverse quadratic interpolation through (a, b, c) where it is
    safe (the criterion on xi and phi), bisection otherwise, kept at least half a tolerance
    away from the ends of the bracket so that it always shrinks."""
    with np.errstate(invalid="ignore", divide="ignore"):
        xi = (a - b) / (c - b)
        phi = (g_a - g_b) / (g_c - g_b)
        quadratic = (1.0 - np.sqrt(1.0 - xi) < phi) & (phi < np.sqrt(xi))
        alpha = (c - a) / (b - a)
        t = g_a / (g_b - g_a) * g_c / (g_b - g_c) + alpha * g_a / (g_c - g_a) * g_b / (g_c - g_b)
    t = np.where(quadratic & np.isfinite(t), t, 0.5)
    low = np.minimum(0.5 * relative_tol, 0.5)
    return np.clip(t, low, 1.0 - low)


def p_maximum(forward, r1, *, ntu_range=(1e-3, 1e7), **flags):
    r"""Largest P1 of a relation that passes through a maximum at finite NTU1, and where.

    A coarse scan in ln NTU1 (two points a decade across ``ntu_range``) finds the best point;
    golden-section search [3]_ between its neighbours then closes in on the maximum until the
    interval in ln NTU1 is below 1e-9 wide (P1 is then within ~1e-18 of the maximum, the
    relation being flat there). The relation is assumed to have at most one maximum.

    Returns
    -------
    p_max, ntu_at_max : ndarray
        Where the relation still rises at the end of ``ntu_range`` (no maximum at finite NTU1),
        ``p_max`` is its value there and ``ntu_at_max`` is inf: such a relation's supremum is
        its limit as NTU1 -> inf, which the caller should give in closed form.

    >>> from hxtrain.units.pntu import p_tema_e
    >>> p, ntu = p_maximum(p_tema_e, 1.0, tube_passes=4)
    >>> round(float(p), 9), round(float(ntu), 3)
    (0.569120996, 3.266)
    """
    (r,) = as_arrays(r1)
    shape = np.broadcast_shapes(r.shape, *(np.shape(v) for v in flags.values()))
    elements = _Elements(forward, np.broadcast_to(r, shape), flags)
    size = elements.r1.size
    grid = np.linspace(np.log(ntu_range[0]), np.log(ntu_range[1]), int(2 * np.log10(ntu_range[1] / ntu_range[0])) + 1)
    every = np.arange(size)
    scan = np.stack([elements.p(np.full(size, s), every) for s in grid], axis=-1)
    top = np.argmax(scan, axis=-1)
    p_max = scan[every, top]
    ntu_max = np.full(size, np.inf)
    interior = np.flatnonzero(p_max > scan[:, -1])  # still rising (or flat at its limit) otherwise
    a, b = grid[np.maximum(top[interior] - 1, 0)], grid[top[interior] + 1]
    x1, x2 = b - GOLDEN * (b - a), a + GOLDEN * (b - a)
    f1, f2 = elements.p(x1, interior), elements.p(x2, interior)
    while np.max(b - a, initial=0.0) > 1e-9:
        left = f1 > f2  # the maximum lies in [a, x2]
        b = np.where(left, x2, b)
        a = np.where(left, a, x1)
        x_new = np.where(left, b - GOLDEN * (b - a), a + GOLDEN * (b - a))
        f_new = elements.p(x_new, interior)
        x1, x2, f1, f2 = (np.where(left, x_new, x2), np.where(left, x1, x_new),
                          np.where(left, f_new, f2), np.where(left, f1, f_new))
    # the value returned is one the relation attains, at the NTU returned: P below it is reached
    better = f1 >= f2
    p_max[interior] = np.where(better, f1, f2)
    ntu_max[interior] = np.exp(np.where(better, x1, x2))
    return p_max.reshape(shape), ntu_max.reshape(shape)
