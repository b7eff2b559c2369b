r"""NTU from P by search, for every arrangement of the registry without a closed-form inverse.

The forward relation is the rating's own (:func:`.arrangements.p_exchanger`: one unit's P1 at
NTU1/N, N units joined in counterflow or parallel flow), so an arrangement added to the registry
is inverted with no code of its own. How the search goes depends on the shape of P1(NTU1) at
fixed R1, which the registry states (:class:`.arrangements.Arrangement`, ``shape``):

* ``rising``: one root below the limit :math:`P_\infty` (P1 at NTU1 = 1e50, where
  :func:`.ntu_solver.solve_ntu` stops looking), found by :func:`.ntu_solver.solve_ntu`;
* ``peak``: P1 rises to a maximum at finite NTU1 (:func:`.ntu_solver.p_maximum`) and falls to
  :math:`P_\infty`. Below :math:`P_\infty` one root; between :math:`P_\infty` and the maximum
  two, the rising one (``branch="lower"``) and the falling one (``"upper"``); above, none;
* ``dip``: P1 rises to a maximum, falls to a shallow minimum and rises again to
  :math:`P_\infty` (the 1-3 TEMA E shell with the shell fluid the smaller C and R1 below about
  0.35: a dip of at most 2.4e-3 in P1 at NTU1 ~ 7-250), or has more extrema still (units joined
  in parallel flow). Several roots: a scan of P1 on a grid of 16 points a decade in NTU1 (1e-9
  to 1e9, then 1e50) brackets each crossing, and bisection in ln NTU1 closes the first
  (``"lower"``) or the last (``"upper"``). Two crossings closer together than a grid step (a P1
  within the last part of a dip's depth) are not told apart.

Everywhere ``"upper"`` is NaN where P1 is reached only once, and both are NaN where it is not
reached at all (P1 < 0, or at or above the supremum): never a clipped value.

References
----------
.. [1] Shah, R. K., and D. P. Sekulić. Fundamentals of Heat Exchanger Design. Wiley, 2003,
       chapter 3: P1 of an arrangement never exceeds that of counterflow at the same NTU1 and
       R1, so the counterflow NTU1 is a lower bound of every root (from memory).
"""

from __future__ import annotations

import numpy as np

from .arrangements import arranged, p_exchanger
from .arrays import as_arrays
from .ntu_solver import NTU_CEILING, p_maximum, solve_ntu

__all__ = ["ntu_by_search", "supremum_by_search", "shape_of"]

GRID = np.concatenate([np.logspace(-9.0, 9.0, 16 * 18 + 1), [NTU_CEILING]])
"""NTU1 grid of the scan for relations with a dip (16 points a decade: the dip of the 1-3
shell spans at least a factor 1.14 in NTU1, two grid steps)."""
BISECTIONS = 80
"""Halvings of a bracket in ln NTU1: from a grid step (or 1e9 to 1e50) to a few ulp."""


def shape_of(arrangement, units, tube_passes):
    """The shape of P1(NTU1) of ``units`` units of the arrangement. Units joined in parallel flow
    pass through a maximum whatever one unit does, and where one unit itself passes through a
    maximum the series can fall and rise again (two crossflow cores with both fluids mixed at
    R1 = 0.1: up to 0.909 near NTU1 = 10, down to 0.9076, up to the limit 1/1.1): they are
    searched by the scan."""
    a = arranged(arrangement)
    if units > 1 and a.shells_flow == "parallel_flow":
        return "dip"
    passes = 1 if a.line.tube_passes == (1,) else tube_passes
    return a.line.shape(passes, a.options)


def _flags(arrangement, units, flags, shape, where=None):
    """Flags for the forward relation, array-valued ones broadcast to ``shape`` (and taken at
    ``where``)."""
    out = {"arrangement": arranged(arrangement), "units": units}
    for key, value in flags.items():
        if value is not None and np.ndim(value) > 0:
            value = np.broadcast_to(np.asarray(value), shape)
            value = value if where is None else value[where]
        out[key] = value
    return out


def _limit(r1, flags):
    """P1 as NTU1 -> inf, to round-off: the relation at NTU1 = 1e50."""
    with np.errstate(all="ignore"):
        return np.array(p_exchanger(np.full(np.shape(r1), NTU_CEILING), r1, **flags), dtype=float)


def _peak(r1, flags, candidates):
    """The maximum of a ``peak`` relation where ``candidates`` (elements whose P may lie above
    the limit) and where it is reached; the limit and inf elsewhere."""
    limit = _limit(r1, flags)
    p, ntu = limit.copy(), np.full(r1.shape, np.inf)
    sub = candidates & (r1 > 0.0)
    if sub.any():
        sub_flags = {k: (v[sub] if isinstance(v, np.ndarray) and v.shape == r1.shape else v) for k, v in flags.items()}
        p_max, at = p_maximum(p_exchanger, r1[sub], **sub_flags)
        above = p_max > limit[sub]
        p[sub], ntu[sub] = np.where(above, p_max, limit[sub]), np.where(above, at, np.inf)
    return p, ntu, limit


def _flat(shape, flags):
    """The flags with their array values flattened (for the scan, which works on rows)."""
    return {k: (v.ravel() if isinstance(v, np.ndarray) and v.shape == shape else v) for k, v in flags.items()}


def _scan(r1, flags):
    """P1 on :data:`GRID` for every element of the 1-d ``r1``, (elements, grid points)."""
    with np.errstate(all="ignore"):
        return np.stack([p_exchanger(np.full(r1.shape, n), r1, **flags) for n in GRID], axis=-1)


def supremum_by_search(r1, arrangement, *, units=1, p1=None, **flags):
    """The largest P1 the arrangement reaches at R1 and the NTU1 (of all units) where it is
    reached (inf where it is the limit as NTU1 -> inf). With ``p1``, a maximum at finite NTU1 is
    searched for only where P1 is at or above the limit (elsewhere the limit is all a P1 below
    it needs to be compared with)."""
    (r1,) = as_arrays(r1)
    shape = r1.shape if p1 is None else np.broadcast_shapes(r1.shape, np.shape(p1))
    r1 = np.array(np.broadcast_to(r1, shape))
    forward_flags = _flags(arrangement, units, flags, shape)
    kind = shape_of(arrangement, units, flags.get("tube_passes", 2))
    if kind == "rising":
        return _limit(r1, forward_flags), np.full(shape, np.inf)
    if kind == "peak":
        candidates = np.ones(shape, bool) if p1 is None else np.broadcast_to(p1, shape) >= _limit(r1, forward_flags)
        p, ntu, _ = _peak(r1, forward_flags, candidates)
        return p, ntu
    scan = _scan(r1.ravel(), _flat(shape, forward_flags))
    top = np.argmax(scan, axis=-1)
    return scan.max(axis=-1).reshape(shape), np.where(top == GRID.size - 1, np.inf, GRID[top]).reshape(shape)


def ntu_by_search(p1, r1, arrangement, *, units=1, branch="lower", **flags):
    """NTU1 of all ``units`` units together at which the arrangement reaches P1 at R1 (flags of
    :func:`.arrangements.p_one_unit`); ``branch`` as in the module docstring."""
    if branch not in ("lower", "upper"):
        raise ValueError(f"branch must be 'lower' or 'upper', got {branch!r}")
    p1, r1 = as_arrays(p1, r1)
    p1, r1 = (np.array(np.broadcast_to(a, np.broadcast_shapes(p1.shape, r1.shape))) for a in (p1, r1))
    forward_flags = _flags(arrangement, units, flags, p1.shape)
    kind = shape_of(arrangement, units, flags.get("tube_passes", 2))
    if kind == "rising":
        if branch == "upper":
            return np.full(p1.shape, np.nan)
        return solve_ntu(p_exchanger, p1, r1, p_sup=_limit(r1, forward_flags), **forward_flags)
    if kind == "peak":
        limit = _limit(r1, forward_flags)
        p_sup, at, limit = _peak(r1, forward_flags, p1 >= limit)
        ntu = solve_ntu(p_exchanger, p1, r1, p_sup=p_sup, ntu_at_sup=at, branch=branch, **forward_flags)
        # the falling root exists only above the limit: below it only the rising side reaches P1
        return ntu if branch == "lower" else np.where(p1 >= limit, ntu, np.nan)
    flat = _ntu_by_scan(p1.ravel(), r1.ravel(), _flat(p1.shape, forward_flags), branch)
    return flat.reshape(p1.shape)


def _ntu_by_scan(p1, r1, flags, branch):
    """The first (or, where there are several, the last) crossing of P1 on the scan, closed by
    bisection; below the scan's first point P1 rises from 0 alone: :func:`solve_ntu`. 1-d."""
    scan = _scan(r1, flags)
    ntu = np.full(p1.shape, np.nan)
    valid = (p1 >= 0.0) & (p1 < scan.max(axis=-1))
    ntu[valid & (p1 == 0.0)] = 0.0
    below = valid & (p1 > 0.0) & (p1 < scan[:, 0])  # a root under NTU1 = 1e-9, where P1 ~ NTU1
    if below.any() and branch == "lower":
        sub = {k: (v[below] if isinstance(v, np.ndarray) and v.shape == p1.shape else v) for k, v in flags.items()}
        ntu[below] = solve_ntu(p_exchanger, p1[below], r1[below], p_sup=scan[below, 0], ntu_at_sup=GRID[0], **sub)
    above = scan >= p1[:, None]
    crossings = above[:, 1:] != above[:, :-1]
    count = crossings.sum(axis=-1)
    todo = valid & (p1 > scan[:, 0]) & (count > 0) & ((count > 1) if branch == "upper" else True)
    if not todo.any():
        return ntu
    step = np.argmax(crossings[todo], axis=-1) if branch == "lower" else (
        crossings.shape[1] - 1 - np.argmax(crossings[todo][:, ::-1], axis=-1))
    sub = {k: (v[todo] if isinstance(v, np.ndarray) and v.shape == p1.shape else v) for k, v in flags.items()}
    ntu[todo] = _bisect(p1[todo], r1[todo], GRID[step], GRID[step + 1], sub)
    return ntu


def _bisect(target, r1, low, high, flags):
    """The NTU1 in [low, high] where P1 crosses ``target`` (one crossing, either direction), by
    halving the bracket in ln NTU1 until it is a few ulp wide."""
    lo, hi = np.log(low), np.log(high)
    with np.errstate(all="ignore"):
        rising = p_exchanger(high, r1, **flags) >= target
        for _ in range(BISECTIONS):
            mid = 0.5 * (lo + hi)
            past = (p_exchanger(np.exp(mid), r1, **flags) >= target) == rising
            hi, lo = np.where(past, mid, hi), np.where(past, lo, mid)
            if np.all(hi - lo <= 4.0 * np.finfo(float).eps * np.maximum(1.0, np.abs(hi))):
                break
    return np.exp(0.5 * (lo + hi))
