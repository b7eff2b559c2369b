r"""Inverse P–NTU relations: NTU1 from P1 and R1, for back-calculating UA from plant data.

Duty and the four terminal temperatures give P1 and R1 (heat-capacity rates from the flows);
the relations here give the NTU1, and so UA = NTU1·C1, that the exchanger must have. The
conventions are those of :mod:`.pntu` (side 1: ``ntu1 = UA/C1``, ``r1 = C1/C2``,
``P1 = (T1_in - T1_out)/(T1_in - T2_in)``) and the dispatch :func:`ntu_from_p` mirrors the
rating's ``p_one_unit`` (the registry, ``units/arrangements.py``), so that
``ntu_from_p(p_one_unit(ntu, r, arrangement, **f), r, arrangement, **f)`` gives ``ntu`` back.

A P1 that the arrangement cannot reach at that R1 — at or above :func:`p_supremum` — has no
NTU1: the result is NaN, never a clipped value, and :func:`p_supremum` says where the limit is.
So is a negative P1 (heat flowing the other way, or measurement noise): no UA >= 0 gives it.
Within an ulp or two of the supremum, where rounding has already taken away what tells P1 from
it (R1·P1 rounding to 1 in counterflow, say), the result may be NaN as well.

Closed forms: counterflow (:func:`.pntu.ntu_counterflow`) and what is counterflow unit by unit
(the 1-1 E shell, the 1-1 plate, a plate with equal passes all in counterflow, the F shell with
two tube passes), parallel flow and its like, the 1-2 TEMA E shell and crossflow with one fluid
mixed (either side); N shells in series in overall counterflow reduced to one shell. Root
finding (:func:`.ntu_solver.solve_ntu`): crossflow with both fluids unmixed and the 1-N TEMA E
shell with N >= 4. Every other arrangement of the registry, and units joined in overall
parallel flow, by the search of :mod:`.pntu_inverse_search`. Where P1 passes through a maximum
at finite NTU1 (a temperature cross inside a shell, or in the next unit, sends heat back), a
P1 above the NTU1 -> inf limit is reached twice, and ``branch`` chooses the root; the
back-calculation takes the lower one and a P1 beyond the maximum has no NTU1 (NaN).

References
----------
.. [1] Shah, R. K., and D. P. Sekulić. Fundamentals of Heat Exchanger Design. Wiley, 2003,
       chapter 3 (P-NTU relations, Table 3.6; explicit NTU formulas for counterflow, parallel
       flow, the 1-2 shell and crossflow with one fluid mixed; shells in series, section 3.6).
       From memory.
.. [2] Bowman, R. A., A. C. Mueller and W. M. Nagle. "Mean temperature difference in design."
       Trans. ASME 62 (1940) 283-294: the 1-2 shell's limit P1 = 2/(1 + R1 + sqrt(1 + R1^2)).
"""

from __future__ import annotations

import numpy as np

from . import pntu
from .arrangements import arranged, basic_equivalent, single_pass_aware
from .arrays import as_arrays
from .ntu_solver import p_maximum, solve_ntu
from .pntu_inverse_search import ntu_by_search, supremum_by_search

__all__ = [
    "ntu_from_p",
    "p_supremum",
    "ntu_parallel_flow",
    "ntu_tema_e",
    "ntu_crossflow_unmixed",
    "ntu_crossflow_one_mixed",
    "p_one_unit_of_series",
    "reached_twice",
]


def _log_ratio(z):
    """-ln(1 - z)/z, equal to 1 at z = 0 (z < 1)."""
    safe = np.where(z == 0.0, 0.5, z)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(z == 0.0, 1.0, -np.log1p(-safe) / safe)


def _reachable(ntu, p1, r1, p_sup):
    """NaN where P1 is negative or not below its supremum (and where the inputs are NaN), and
    where a closed form overflows: P1 within an ulp of the supremum, e.g. R1·P1 rounding to 1."""
    return np.where((p1 >= 0.0) & (r1 >= 0.0) & (p1 < p_sup) & np.isfinite(ntu), ntu, np.nan)


def _counterflow_sup(r1):
    with np.errstate(divide="ignore"):
        return np.minimum(1.0, 1.0 / r1)


def _one_two_shell_sup(r1):
    return 2.0 / (1.0 + r1 + np.hypot(1.0, r1))


def ntu_parallel_flow(p1, r1):
    r"""NTU1 of a parallel-flow exchanger: the inverse of :func:`.pntu.p_parallel_flow`.

    .. math:: NTU_1 = -\frac{\ln[1 - P_1(1 + R_1)]}{1 + R_1}

    Reachable for :math:`0 \le P_1 < 1/(1 + R_1)`; NaN otherwise. Symmetric in the sides. [1]_

    >>> round(float(ntu_parallel_flow(pntu.p_parallel_flow(0.8, 0.6), 0.6)), 12)
    0.8
    """
    p1, r1 = as_arrays(p1, r1)
    with np.errstate(invalid="ignore", divide="ignore"):
        ntu = -np.log1p(-p1 * (1.0 + r1)) / (1.0 + r1)
    return _reachable(ntu, p1, r1, 1.0 / (1.0 + r1))


def ntu_tema_e(p1, r1, tube_passes=2, side1="shell", branch="lower"):
    r"""NTU1 of one TEMA E shell (one shell pass, an even number of tube passes, shell fluid
    mixed): the inverse of :func:`.pntu.p_tema_e`, same arguments.

    Two tube passes, closed form (symmetric in the sides), with :math:`E = \sqrt{1 + R_1^2}`:

    .. math:: NTU_1 = \frac{1}{E}\ln\frac{2 - P_1(1 + R_1 - E)}{2 - P_1(1 + R_1 + E)}
              = \frac{1}{E}\,\mathrm{ln1p}\!\left(\frac{2P_1E}{2 - P_1(1 + R_1 + E)}\right)

    reachable for :math:`P_1 < 2/(1 + R_1 + E)` [1]_ [2]_. Four or more tube passes: no closed
    form; solved with :func:`.ntu_solver.solve_ntu`. There P1 has a maximum at finite NTU1
    (:func:`p_supremum`); a P1 between the NTU1 -> inf limit and that maximum is reached at two
    NTU1, ``branch="lower"`` returning the smaller and ``"upper"`` the larger (NaN where P1 is
    below the limit, which only the rising side reaches).

    >>> round(float(ntu_tema_e(0.58, 1/3)), 10)   # Shah & Sekulić's form; ht gives 1.0381979241
    1.0381979241
    >>> round(float(ntu_tema_e(pntu.p_tema_e(1.5, 0.8, 4, "tube"), 0.8, 4, "tube")), 12)
    1.5
    """
    if branch not in ("lower", "upper"):
        raise ValueError(f"branch must be 'lower' or 'upper', got {branch!r}")
    p1, r1 = as_arrays(p1, r1)
    if tube_passes == 2:
        e = np.hypot(1.0, r1)
        with np.errstate(invalid="ignore", divide="ignore"):
            ntu = np.log1p(2.0 * p1 * e / (2.0 - p1 * (1.0 + r1 + e))) / e
        return _reachable(ntu, p1, r1, _one_two_shell_sup(r1))
    pntu.p_tema_e(0.0, 0.0, tube_passes, side1)  # checks tube_passes and side1
    limit = _tema_e_limit(r1, tube_passes, side1)
    ntu = np.full(p1.shape, np.nan)
    # below the limit (and at R1 = 0, where P1 rises monotonically) P1 has one root, on the
    # rising side: the lower branch; the upper branch exists at R1 = 0 only as that same root
    rising = (r1 == 0.0) | ((p1 < limit) if branch == "lower" else False)
    if rising.any():
        ntu[rising] = solve_ntu(pntu.p_tema_e, p1[rising], r1[rising], p_sup=limit[rising],
                                tube_passes=tube_passes, side1=side1)
    top = (p1 >= limit) & (r1 > 0.0)
    p_max, ntu_at_max = p_maximum(pntu.p_tema_e, r1[top], tube_passes=tube_passes, side1=side1)
    ntu[top] = solve_ntu(pntu.p_tema_e, p1[top], r1[top], p_sup=p_max, ntu_at_sup=ntu_at_max, branch=branch,
                         tube_passes=tube_passes, side1=side1)
    return ntu


def _tema_e_limit(r1, tube_passes, side1):
    r"""P1 of the 1-N shell as NTU1 -> inf (the limit of :func:`.pntu.p_tema_e`, N1 = N/2):

    .. math:: P_{shell} = \frac{2}{1 + R(2 - 1/N_1) + \sqrt{R^2 + N_1^2}/N_1}, \qquad
              P_{tube} = \frac{2}{2 + R - 1/N_1 + \sqrt{1 + N_1^2R^2}/N_1}

    (each coth -> 1), which is 2/(1 + R + sqrt(1 + R²)) for N1 = 1 on either basis."""
    n1 = tube_passes / 2.0
    if side1 == "shell":
        return 2.0 / (1.0 + r1 * (2.0 - 1.0 / n1) + np.hypot(r1, n1) / n1)
    return 2.0 / (2.0 + r1 - 1.0 / n1 + np.hypot(1.0, n1 * r1) / n1)


def ntu_crossflow_unmixed(p1, r1):
    r"""NTU1 of single-pass crossflow with both fluids unmixed: the inverse of
    :func:`.pntu.p_crossflow_unmixed` (symmetric), by :func:`.ntu_solver.solve_ntu`.

    Reachable for :math:`P_1 < \min(1, 1/R_1)`, approached as NTU1 -> inf (slowly: at R1 = 1,
    :math:`1 - P_1 \approx 1/\sqrt{\pi NTU_1}`).

    >>> round(float(ntu_crossflow_unmixed(pntu.p_crossflow_unmixed(3.0, 1.0), 1.0)), 12)
    3.0
    """
    p1, r1 = as_arrays(p1, r1)
    return solve_ntu(pntu.p_crossflow_unmixed, p1, r1, p_sup=_counterflow_sup(r1))


def ntu_crossflow_one_mixed(p1, r1, side1_mixed):
    r"""NTU1 of single-pass crossflow with one fluid mixed: the inverse of
    :func:`.pntu.p_crossflow_one_mixed`. Not symmetric: which fluid is mixed matters.

    Side 1 mixed (:math:`P_1 = 1 - e^{-K/R_1}`, :math:`K = 1 - e^{-R_1NTU_1}`), with
    :math:`q = -\ln(1 - P_1)`:

    .. math:: NTU_1 = -\frac{\ln(1 - R_1q)}{R_1}, \quad \text{reachable for } P_1 < 1 - e^{-1/R_1}

    Side 1 unmixed, side 2 mixed (:math:`P_1 = [1 - e^{-KR_1}]/R_1`, :math:`K = 1 - e^{-NTU_1}`):

    .. math:: NTU_1 = -\ln\Big[1 + \frac{\ln(1 - R_1P_1)}{R_1}\Big], \quad
              \text{reachable for } P_1 < (1 - e^{-R_1})/R_1

    Both are evaluated as :math:`z\,(-\ln(1-z)/z)` so that R1 = 0 is the limit, not 0/0. [1]_

    >>> round(float(ntu_crossflow_one_mixed(pntu.p_crossflow_one_mixed(1.0, 0.5, True), 0.5, True)), 12)
    1.0
    """
    p1, r1 = as_arrays(p1, r1)
    with np.errstate(invalid="ignore", divide="ignore"):
        if side1_mixed:
            q = -np.log1p(-p1)
            ntu = q * _log_ratio(r1 * q)
        else:
            k = p1 * _log_ratio(r1 * p1)
            ntu = -np.log1p(-k)
    return _reachable(ntu, p1, r1, _one_mixed_sup(r1, side1_mixed))


def _one_mixed_sup(r1, side1_mixed):
    """P1 of crossflow with one fluid mixed as NTU1 -> inf: 1 - exp(-1/R1) with side 1 mixed,
    (1 - exp(-R1))/R1 with side 2 mixed (1 at R1 = 0 either way)."""
    with np.errstate(divide="ignore"):
        if side1_mixed:
            return np.where(r1 == 0.0, 1.0, -np.expm1(-1.0 / np.where(r1 == 0.0, 1.0, r1)))
    return pntu._one_minus_exp_over_x(r1)


def p_one_unit_of_series(p1, r1, shells):
    r"""P1 of one of ``shells`` identical units in series (overall counterflow) that gives the
    series P1: the inverse of :func:`.pntu.p_shells_in_series`.

    .. math:: P_p = \frac{X^{1/N} - 1}{X^{1/N} - R_1}, \quad X = \frac{1 - R_1P_1}{1 - P_1};
              \qquad P_p = \frac{P_1}{N - (N - 1)P_1} \text{ at } R_1 = 1

    evaluated as :math:`u_p = u\,\mathrm{expm1}(\mathrm{ln1p}(z)/N)/z`, :math:`u = P_1/(1-P_1)`,
    :math:`z = (1-R_1)u`, :math:`P_p = u_p/(1+u_p)` (:math:`u_p = u/N` at z = 0, the R1 = 1
    form), so that R1 = 1 is the same expression. NaN where P1 is negative or not below
    :math:`\min(1, 1/R_1)`. The NTU1 of the series is N times the unit's NTU1 at P_p. [1]_

    >>> round(float(p_one_unit_of_series(pntu.p_shells_in_series(0.4, 1.0, 2), 1.0, 2)), 12)
    0.4
    """
    p1, r1 = as_arrays(p1, r1)
    if shells == 1:
        return _reachable(p1.copy(), p1, r1, np.inf)
    with np.errstate(invalid="ignore", divide="ignore"):
        u = p1 / (1.0 - p1)
        z = (1.0 - r1) * u
        safe = np.where(z == 0.0, 1.0, z)
        u_unit = u * np.where(z == 0.0, 1.0 / shells, np.expm1(np.log1p(safe) / shells) / safe)
        p_unit = u_unit / (1.0 + u_unit)
    return _reachable(p_unit, p1, r1, _counterflow_sup(r1))


def _flag_split(flag, p1, r1, when_true, when_false):
    """Evaluate ``when_true`` where the boolean ``flag`` holds and ``when_false`` elsewhere,
    each only on its own elements (the inverse of ``np.where`` on two forward relations)."""
    flag, p1, r1 = np.broadcast_arrays(np.asarray(flag, dtype=bool), p1, r1)
    out = np.empty(p1.shape)
    out[flag] = when_true(p1[flag], r1[flag])
    out[~flag] = when_false(p1[~flag], r1[~flag])
    return out


def ntu_from_p(p1, r1, arrangement, *, basis_is_shell=None, basis_is_mixed=None, tube_passes=2, shells=1,
               branch="lower"):
    """NTU1 that gives P1 at R1 for ``arrangement``, on the basis side given by the flags.

    The inverse of the rating's ``p_one_unit`` (same arrangement names and flags) and, with
    ``shells`` > 1, of the units joined in series on top of it (in overall counterflow, or in
    parallel flow where the arrangement's ``shells_flow`` says so): NTU1 is then that of all the
    shells together (UA of the series over C1).

    Parameters
    ----------
    p1, r1 : array_like
        Temperature effectiveness and heat-capacity ratio of the basis side (broadcast).
    arrangement : str or Arranged
        A name of the registry (``units/arrangements.py``), or an arrangement with its options.
    basis_is_shell : array_like of bool
        Whether the basis side is the shell fluid (for a plate, the ``shell_side`` stream):
        required where the relation is not symmetric in the sides.
    basis_is_mixed : array_like of bool or None
        ``crossflow``: whether the basis side is the mixed fluid; None for both fluids unmixed.
    tube_passes : int
        Tube passes per shell, for the arrangements that take them.
    shells : int
        Identical shells or units in series.
    branch : {"lower", "upper"}
        Which root where P1 is reached at more than one NTU1 (the arrangements whose P1 passes
        through a maximum at finite NTU1: see :func:`ntu_tema_e` and
        :mod:`.pntu_inverse_search`): "lower" the smallest, "upper" the largest (NaN where P1
        is reached only once); ignored by the relations that rise monotonically.

    Returns
    -------
    ntu1 : ndarray
        NaN where P1 < 0 or P1 >= :func:`p_supremum` (not reachable at that R1).

    >>> round(float(ntu_from_p(0.5, 0.8, "crossflow", basis_is_mixed=True, shells=2)), 12)
    0.935397884627
    """
    if branch not in ("lower", "upper"):
        raise ValueError(f"branch must be 'lower' or 'upper', got {branch!r}")
    p1, r1 = as_arrays(p1, r1)
    a = arranged(arrangement)
    passes = single_pass_aware(a, tube_passes)
    flags = dict(basis_is_shell=basis_is_shell, basis_is_mixed=basis_is_mixed, tube_passes=passes)
    if shells > 1 and a.shells_flow == "parallel_flow":
        return ntu_by_search(p1, r1, a, units=shells, branch=branch, **flags)
    if shells > 1:
        p_unit = p_one_unit_of_series(p1, r1, shells)
        ntu = shells * ntu_from_p(p_unit, r1, a, **flags, branch=branch)
        # the series P1 against the series supremum itself, so that P1 >= p_supremum gives NaN
        # also where the inverse of the series rounds the unit's P1 to just below its own
        unit_sup, _ = _unit_supremum(r1, a, flags, np.where(np.isfinite(ntu), p_unit, -np.inf))
        return np.where(p1 < pntu.p_shells_in_series(unit_sup, r1, shells), ntu, np.nan)
    basic = basic_equivalent(a, passes)
    if basic == "counterflow":
        with np.errstate(invalid="ignore", divide="ignore"):
            return _reachable(pntu.ntu_counterflow(p1, r1), p1, r1, _counterflow_sup(r1))
    if basic == "parallel_flow":
        return ntu_parallel_flow(p1, r1)
    if a.name == "tema_e" and passes % 2 == 0:
        if passes == 2:
            return ntu_tema_e(p1, r1, 2)
        if basis_is_shell is None:
            raise ValueError("tema_e with 4 or more tube passes needs basis_is_shell (the relation is not symmetric)")
        return _flag_split(basis_is_shell, p1, r1,
                           lambda p, r: ntu_tema_e(p, r, passes, "shell", branch),
                           lambda p, r: ntu_tema_e(p, r, passes, "tube", branch))
    if a.name == "crossflow" and not a.options["both_mixed"]:
        if basis_is_mixed is None:
            return ntu_crossflow_unmixed(p1, r1)
        return _flag_split(basis_is_mixed, p1, r1,
                           lambda p, r: ntu_crossflow_one_mixed(p, r, True),
                           lambda p, r: ntu_crossflow_one_mixed(p, r, False))
    return ntu_by_search(p1, r1, a, branch=branch, **flags)


def p_supremum(r1, arrangement, *, basis_is_shell=None, basis_is_mixed=None, tube_passes=2, shells=1,
               return_ntu=False):
    r"""The largest P1 the arrangement reaches at R1 (same flags as :func:`ntu_from_p`).

    Where P1 rises monotonically this is its limit as NTU1 -> inf, never reached: counterflow
    and crossflow unmixed :math:`\min(1, 1/R_1)`, parallel flow :math:`1/(1+R_1)`, the 1-2
    shell :math:`2/(1 + R_1 + \sqrt{1+R_1^2})`, crossflow with side 1 mixed
    :math:`1 - e^{-1/R_1}` and with side 2 mixed :math:`(1 - e^{-R_1})/R_1`; for the other
    arrangements the relation at NTU1 = 1e50. The 1-N shell with N >= 4 and the other
    arrangements that pass through a maximum reach their largest P1 at a finite NTU1 (found by
    :func:`.ntu_solver.p_maximum`, or by the scan of :mod:`.pntu_inverse_search`); that P1 is
    reached there. Shells in series in counterflow: the series P1 of units at their supremum;
    in parallel flow: the maximum of the series itself.

    With ``return_ntu``, also the NTU1 (of the series) where the supremum is reached, inf
    where it is the limit.

    >>> round(float(p_supremum(1.0, "tema_e")), 12)   # 2/(2 + sqrt 2)
    0.585786437627
    >>> p, ntu = p_supremum(1.0, "tema_e", tube_passes=4, basis_is_shell=True, return_ntu=True)
    >>> round(float(p), 9), round(float(ntu), 3)
    (0.569120996, 3.266)
    """
    (r1,) = as_arrays(r1)
    a = arranged(arrangement)
    flags = dict(basis_is_shell=basis_is_shell, basis_is_mixed=basis_is_mixed,
                 tube_passes=single_pass_aware(a, tube_passes))
    if shells > 1 and a.shells_flow == "parallel_flow":
        p, ntu = supremum_by_search(r1, a, units=shells, **flags)
    else:
        p, ntu = _unit_supremum(r1, a, flags, np.inf)
        if shells > 1:
            p, ntu = pntu.p_shells_in_series(p, r1, shells), ntu * shells
    return (p, ntu) if return_ntu else p


def _unit_supremum(r1, a, flags, p_unit):
    """Supremum of one unit's P1 and where it is reached. The maximum at finite NTU of the 1-N
    shell (N >= 4) and of the other peaked relations is searched for only where ``p_unit`` is at
    or above the NTU -> inf limit; elsewhere that limit is returned, which is all a P1 below it
    needs to be compared with."""
    tube_passes = flags["tube_passes"]
    basic = basic_equivalent(a, tube_passes)
    if basic == "counterflow" or (a.name == "crossflow" and not a.options["both_mixed"]
                                  and flags["basis_is_mixed"] is None):
        p = _counterflow_sup(r1)
    elif basic == "parallel_flow":
        p = 1.0 / (1.0 + r1)
    elif a.name == "tema_e" and tube_passes == 2:
        p = _one_two_shell_sup(r1)
    elif a.name == "tema_e" and tube_passes % 2 == 0:
        if flags["basis_is_shell"] is None:
            raise ValueError("tema_e with 4 or more tube passes needs basis_is_shell (the relation is not symmetric)")
        shell, r1, p_unit = np.broadcast_arrays(np.asarray(flags["basis_is_shell"], dtype=bool), r1, p_unit)
        p, ntu = np.empty(r1.shape), np.full(r1.shape, np.inf)
        for side, where in (("shell", shell), ("tube", ~shell)):
            p[where] = _tema_e_limit(r1[where], tube_passes, side)
            hump = where & (p_unit >= p) & (r1 > 0.0)
            p_max, at = p_maximum(pntu.p_tema_e, r1[hump], tube_passes=tube_passes, side1=side)
            p[hump], ntu[hump] = np.maximum(p_max, p[hump]), np.where(p_max > p[hump], at, np.inf)
        return np.where(r1 >= 0.0, p, np.nan), ntu
    elif a.name == "crossflow" and not a.options["both_mixed"]:
        mixed, r1 = np.broadcast_arrays(np.asarray(flags["basis_is_mixed"], dtype=bool), r1)
        p = np.where(mixed, _one_mixed_sup(r1, True), _one_mixed_sup(r1, False))
    else:
        p_unit = None if np.all(np.isinf(p_unit)) else p_unit
        p, ntu = supremum_by_search(r1, a, p1=p_unit, **flags)
        return np.where(r1 >= 0.0, p, np.nan), ntu
    return np.where(r1 >= 0.0, p, np.nan), np.full(np.shape(p), np.inf)


def reached_twice(p1, r1, arrangement, **flags):
    """Where P1 is reached at two (or more) NTU1: between the NTU1 -> inf limit and the maximum
    of an arrangement that passes through one (flags of :func:`ntu_from_p`). There the inverse
    gives the lower root by default; an exchanger running past its maximum needs the upper one,
    which the terminal temperatures alone cannot tell.

    >>> bool(reached_twice(0.55, 1.0, "tema_e", tube_passes=4, basis_is_shell=True))
    False
    >>> bool(reached_twice(0.565, 1.0, "tema_e", tube_passes=4, basis_is_shell=True))
    True
    """
    lower = ntu_from_p(p1, r1, arrangement, **flags)
    upper = ntu_from_p(p1, r1, arrangement, branch="upper", **flags)
    return np.isfinite(upper) & (upper > lower * (1.0 + 1e-9))
