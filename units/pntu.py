"""Thermal relations of two-stream heat exchangers: P–NTU, LMTD and the F factor.

Every relation is written on the basis of one side, called side 1: ``ntu1 = UA / C1``,
``r1 = C1 / C2`` and ``P1 = (T1_in - T1_out) / (T1_in - T2_in)``. Each function says which
physical fluid side 1 is where the arrangement is not symmetric. All functions accept floats or
numpy arrays (broadcast together, typically with a leading batch axis) and return float64 arrays.

The forms are rearranged so that they stay accurate where the textbook forms lose digits:
``r1 -> 1`` (counterflow, shells in series), ``ntu1 -> 0`` and large ``ntu1``; ``expm1`` and
``log1p`` carry the small differences.

References
----------
.. [1] Shah, R. K., and D. P. Sekulić. Fundamentals of Heat Exchanger Design. Wiley, 2003,
       chapter 3 (P-NTU relations, Table 3.6; shells in series, section 3.6). Table and
       section numbers from memory.
.. [2] Incropera, F. P., D. P. DeWitt, T. L. Bergman and A. S. Lavine. Fundamentals of Heat
       and Mass Transfer, 6th ed. Wiley, 2007, Table 11.3 (effectiveness relations).
.. [3] Mason, J. L. "Heat transfer in cross flow." Proc. 2nd U.S. National Congress of Applied
       Mechanics (1954) 801-803: series solution for crossflow, both fluids unmixed.
.. [4] Bowman, R. A., A. C. Mueller and W. M. Nagle. "Mean temperature difference in design."
       Trans. ASME 62 (1940) 283-294: the F factor.
.. [5] Thulukkanam, K. Heat Exchanger Design Handbook, 2nd ed. CRC Press, 2013: 1-N TEMA E
       shell with N even (from memory).
.. [6] Skellam, J. G. "The frequency distribution of the difference between two Poisson variates
       belonging to different populations." J. R. Stat. Soc. 109 (1946) 296 (from memory).
.. [7] Marcum, J. I. "A statistical theory of target detection by pulsed radar." IRE Trans.
       Information Theory 6 (1960): the Q function (from memory).
"""

from __future__ import annotations

import numpy as np

from .arrays import as_arrays, select

# scipy.special loads where crossflow with both fluids unmixed is rated: reading and checking a
# case, which builds exchangers but rates none, does without it (a quarter of a second).

__all__ = [
    "lmtd",
    "p_counterflow",
    "p_parallel_flow",
    "p_tema_e",
    "p_crossflow_unmixed",
    "p_crossflow_one_mixed",
    "p_shells_in_series",
    "ntu_counterflow",
    "f_factor",
]



def _within_bounds(p, r1, limit=None):
    """Clip P1 to its physical range [0, min(1, 1/R1)] = [0, 1/max(1, R1)]: round-off can put a
    saturated P a few ulp above its limit, which would make the F factor's logarithm blow up
    (np.minimum and np.maximum: the same numbers as np.clip, at two thirds of its cost).
    ``limit``: :func:`_p_limit` of ``r1``, where the caller has it."""
    return np.minimum(np.maximum(p, 0.0), _p_limit(r1) if limit is None else limit)


def _p_limit(r1):
    """P1's largest value at R1, min(1, 1/R1), as 1/max(1, R1) (1 where R1 is not a number)."""
    return 1.0 / np.fmax(r1, 1.0)


def _one_minus_exp_over_x(x):
    """(1 - exp(-x)) / x for x >= 0, equal to 1 at x = 0 without a 0/0."""
    x = np.asarray(x, dtype=float)
    safe = np.where(x == 0.0, 1.0, x)
    return np.where(x == 0.0, 1.0, -np.expm1(-safe) / safe)


def lmtd(dt1, dt2):
    r"""Logarithmic mean of two end temperature differences.

    .. math:: \Delta T_{lm} = \frac{\Delta T_1 - \Delta T_2}{\ln(\Delta T_1 / \Delta T_2)}

    Equal differences give that difference (not 0/0); both differences must have the same sign
    (a negative pair gives a negative mean, heat flowing the other way). A zero or sign-changing
    pair has no logarithmic mean: the result is 0.

    >>> float(lmtd(40.0, 20.0))
    28.85390081777927
    >>> float(lmtd(15.0, 15.0))
    15.0
    """
    dt1, dt2 = as_arrays(dt1, dt2)
    same_sign = dt1 * dt2 > 0.0
    a = select(same_sign, np.abs(dt1), 1.0)
    b = select(same_sign, np.abs(dt2), 1.0)
    # mean = b * (a/b - 1) / ln(a/b) = b * expm1(L) / L with L = ln(a/b): exact as L -> 0
    log_ratio = np.log(a / b)
    equal = log_ratio == 0.0
    safe = select(equal, 1.0, log_ratio)
    factor = select(equal, 1.0, np.expm1(safe) / safe)
    return select(same_sign, np.sign(dt1) * b * factor, 0.0)


def p_counterflow(ntu1, r1):
    r"""Temperature effectiveness P1 of a pure counterflow exchanger (symmetric in the sides).

    .. math:: P_1 = \frac{1 - \exp[-NTU_1(1-R_1)]}{1 - R_1 \exp[-NTU_1(1-R_1)]},
              \qquad P_1 = \frac{NTU_1}{1 + NTU_1} \text{ at } R_1 = 1

    Valid for ``ntu1 >= 0`` and ``r1 >= 0`` (R1 above 1 included). Evaluated as
    ``g / (g + exp(-x))`` with ``x = NTU1 (1 - R1)`` and ``g = NTU1 (1 - exp(-x)) / x`` (and the
    mirror form for x < 0), which is exact at R1 = 1 and does not overflow. Refs [1]_ [2]_.

    >>> float(p_counterflow(2.0, 1.0))   # NTU/(1+NTU)
    0.6666666666666666
    >>> round(float(p_counterflow(1.0, 0.5)), 12)
    0.564733401606
    """
    ntu1, r1 = as_arrays(ntu1, r1)
    x = ntu1 * (1.0 - r1)
    a = np.abs(x)
    g = ntu1 * _one_minus_exp_over_x(a)
    tail = np.where(x >= 0.0, np.exp(-a), 1.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(g == 0.0, 0.0, g / (g + tail))


def p_parallel_flow(ntu1, r1):
    r"""Temperature effectiveness P1 of a parallel-flow (co-current) exchanger (symmetric).

    .. math:: P_1 = \frac{1 - \exp[-NTU_1 (1 + R_1)]}{1 + R_1}

    Valid for ``ntu1 >= 0``, ``r1 >= 0``. Refs [1]_ [2]_.

    >>> round(float(p_parallel_flow(1.0, 1.0)), 12)
    0.432332358382
    """
    ntu1, r1 = as_arrays(ntu1, r1)
    return -np.expm1(-ntu1 * (1.0 + r1)) / (1.0 + r1)


def _x_coth(x, scale, twice=None):
    """x * coth(scale * x), with its limit 1/scale at x = 0 (scale > 0; x >= 0), taken as
    x + 2x / expm1(2 scale x): exact as the product goes to 0 (expm1), x where it is large (expm1
    overflows to inf), and on a batch ~25 % cheaper than numpy's tanh. ``twice``: 2 x scale where
    the caller has it (the same number: doubling and halving are exact in binary floating point)."""
    zero = x == 0.0
    limit_taken = zero.any()  # usually not: then no limit to take (three array operations)
    safe = select(zero, 1.0, x) if limit_taken else x
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        below = np.asarray((2.0 * scale if twice is None else twice) * safe)  # an array even for one value
        np.expm1(below, out=below)
        above = 2.0 * safe
        above /= below
        above += safe  # x + 2x / expm1(2 scale x), in place
        return select(zero, 1.0 / select(scale == 0.0, 1.0, scale), above) if limit_taken else above


def p_tema_e(ntu1, r1, tube_passes=2, side1="shell"):
    r"""Temperature effectiveness P1 of one TEMA E shell, one shell pass and an even number of
    tube passes, shell fluid mixed.

    On the tube-fluid basis (t), with :math:`N_1 = N_{tp}/2`:

    .. math:: P_t = 2 \Big/ \Big[1 + R_t + \coth\frac{NTU_t}{2}
              - \frac{1}{N_1}\coth\frac{NTU_t}{2N_1}
              + \frac{\sqrt{1 + N_1^2R_t^2}}{N_1}\coth\frac{NTU_t\sqrt{1 + N_1^2R_t^2}}{2N_1}\Big]

    For two tube passes this is the classic 1-2 relation
    :math:`P_1 = 2 / [1 + R_1 + E\coth(E\,NTU_1/2)]`, :math:`E = \sqrt{1+R_1^2}`, which is
    symmetric in the sides; with four or more passes the relation is not symmetric and
    ``side1`` ("shell" or "tube") says which fluid side 1 is. The shell-basis form is obtained
    by substituting :math:`NTU_t = NTU_s R_s`, :math:`R_t = 1/R_s`, :math:`P_s = P_t/R_s` and
    multiplying through by :math:`R_s`, so that no term divides by a vanishing R.

    Valid for ``ntu1 >= 0``, ``r1 >= 0``, ``tube_passes`` even and >= 2. Refs [1]_ [5]_.

    >>> round(float(p_tema_e(1.0, 1.0)), 12)
    0.462670994062
    """
    ntu1, r1 = as_arrays(ntu1, r1)
    if tube_passes < 2 or tube_passes % 2:
        raise ValueError(f"tube_passes must be an even number >= 2, got {tube_passes}")
    if side1 not in ("shell", "tube"):
        raise ValueError(f"side1 must be 'shell' or 'tube', got {side1!r}")
    n1 = tube_passes / 2.0
    half = ntu1 / 2.0
    with np.errstate(invalid="ignore"):
        denominator_times_ntu = _tema_e_denominator(ntu1, r1, n1, half, side1)
    with np.errstate(invalid="ignore", divide="ignore"):
        return _within_bounds(select(ntu1 == 0.0, 0.0, 2.0 * ntu1 / denominator_times_ntu), r1)


def _tema_e_denominator(ntu1, r1, n1, half, side1):
    """NTU1 times the denominator of the 1-N relation, on the shell or the tube basis."""
    if side1 == "tube":
        e = np.sqrt(1.0 + (n1 * r1) ** 2)
        one = np.ones_like(ntu1)
        # each coth term times ntu1, so ntu1 -> 0 stays finite: ntu*coth(ntu/2) -> 2
        denominator_times_ntu = (
            ntu1 * (1.0 + r1)
            + _x_coth(ntu1, one / 2.0)
            - _x_coth(ntu1, one / (2.0 * n1)) / n1
            + _x_coth(ntu1, e / (2.0 * n1)) * e / n1
        )
    elif n1 == 1.0:  # two tube passes: the two middle terms cancel exactly (and n1 divides nothing)
        e = np.sqrt(r1 * r1 + 1.0)
        denominator_times_ntu = 1.0 + r1  # NTU1 (1 + R1) + e NTU1 coth(e NTU1 / 2), in place
        denominator_times_ntu *= ntu1
        coth_term = _x_coth(ntu1, e / 2.0, twice=e)
        coth_term *= e
        denominator_times_ntu += coth_term
    else:
        e = np.sqrt(r1**2 + n1**2)
        middle = _x_coth(r1, half) - _x_coth(r1, half / n1) / n1
        denominator_times_ntu = ntu1 * (1.0 + r1 + middle) + _x_coth(ntu1, e / (2.0 * n1)) * e / n1
    return denominator_times_ntu


SERIES_TERMS = 20
"""Terms of Mason's series where R·NTU < 1: the terms left out add less than e/21! = 5e-20 of the
first term to the sum, and less than 1/21! = 2e-20 to 1 - P summed from the complementary terms."""
LOG_SATURATION = np.log(1e-17)
"""Where the bound on 1 - P of unmixed crossflow falls below 1e-17, P is 1 to round-off."""
_NODES, _WEIGHTS = np.polynomial.legendre.leggauss(24)
_NODES, _WEIGHTS = 0.5 * (_NODES + 1.0), 0.5 * _WEIGHTS  # on [0, 1]


def p_crossflow_unmixed(ntu1, r1):
    r"""Temperature effectiveness P1 of single-pass crossflow, both fluids unmixed (symmetric).

    Mason's exact series [3]_ with the regularized lower incomplete gamma function
    :math:`\gamma^*(n+1, x) = 1 - e^{-x}\sum_{m=0}^{n} x^m/m!`, on the basis of the side with the
    larger NTU (R <= 1; P1 of the other side follows as R1·P2), with :math:`x = NTU`,
    :math:`y = R\,NTU`:

    .. math:: P = \frac{1}{y}\sum_{n=0}^{\infty} \gamma^*(n+1, x)\,\gamma^*(n+1, y)

    :math:`\gamma^*(n+1, x)` is the probability that a Poisson variable X of mean x exceeds n, so
    the sum is E[min(X, Y)] for independent X, Y of means x and y, and
    :math:`1 - P = E[(Y - X)^+]/y`. With the distribution of Y - X [6]_ and the recurrence
    :math:`k I_k = (z/2)(I_{k-1} - I_{k+1})` this sums to the closed form (derived here; checked
    against the series in 200-digit arithmetic in the tests)

    .. math:: 1 - P = \frac{1}{y}\Big[e^{-(\sqrt x - \sqrt y)^2}
              \big(x\,\tilde I_0(z) + \sqrt{xy}\,\tilde I_1(z)\big)
              - (x - y)\,Q_1(\sqrt{2y}, \sqrt{2x})\Big], \qquad z = 2\sqrt{xy}

    with :math:`\tilde I_k(z) = e^{-z}I_k(z)` and Marcum's function
    :math:`Q_1(a, b) = \int_b^\infty t\,e^{-(t^2+a^2)/2} I_0(at)\,dt` [7]_, which is P(Y >= X).
    At R = 1 it is :math:`P = 1 - \tilde I_0(2NTU) - \tilde I_1(2NTU)`, so P -> 1 as
    :math:`1/\sqrt{\pi NTU}`. Evaluation:

    * y = 0: :math:`1 - e^{-x}`;
    * 0 < y < 1: the series, :data:`SERIES_TERMS` terms (term n is below :math:`e\,y^n/(n+1)!` of
      the first); for x >= 1 as 1 - P from the complementary terms
      :math:`\gamma^*(n+1, y)(1 - \gamma^*(n+1, x))`, so that P near 1 is one minus a sum of
      positive terms and rounds monotonically;
    * y >= 1: the closed form (its two parts cancel by at most a factor 1.5 there), with
      :math:`Q_1` by a Gauss–Legendre rule (:func:`_marcum_q1`): cost independent of NTU;
    * P = 1 where :math:`1 - P \le e^{-(\sqrt x - \sqrt y)^2}/(e\,y\ln\sqrt{x/y}) < 10^{-17}`
      (the bound :math:`d^+ \le e^{\theta d}/(e\theta)` taken in expectation at its best
      :math:`\theta`), and at NTU = inf.

    Valid for ``ntu1 >= 0``, ``r1 >= 0``, up to NTU = inf.

    >>> round(float(p_crossflow_unmixed(1.0, 1.0)), 9)
    0.476222388
    """
    ntu1, r1 = as_arrays(ntu1, r1)
    flip = r1 > 1.0
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        x = np.where(flip, ntu1 * r1, ntu1)
        r = np.where(flip, 1.0 / np.where(flip, r1, 1.0), r1)
        y = np.where(r == 0.0, 0.0, r * x)  # R = 0 stays R = 0 at NTU = inf
        # √x − √y = x(1 − R)/(√x + √y): no cancellation as R -> 1
        gap = x * (1.0 - r) / (np.sqrt(x) + np.sqrt(y))
        log_bound = -gap**2 - 1.0 - np.log(y) - np.log(-0.5 * np.log(r))
    saturated = (log_bound < LOG_SATURATION) | np.isinf(x)
    p = np.full_like(x, np.nan)  # stays NaN only for NaN input
    p[saturated] = 1.0
    p[y == 0.0] = -np.expm1(-x[y == 0.0])
    series = (y > 0.0) & (y < 1.0) & ~saturated
    p[series] = _mason_series(x[series], y[series])
    closed = (y >= 1.0) & ~saturated
    p[closed] = 1.0 - _unmixed_shortfall(x[closed], y[closed], gap[closed])
    p = _within_bounds(np.where(x == 0.0, 0.0, p), r)
    return np.where(flip, p * r, p)


def _mason_series(x, y):
    """P of unmixed crossflow from Mason's series, for 0 < y < 1 (1-d arrays)."""
    from scipy.special import gammainc, gammaincc

    orders = np.arange(1.0, SERIES_TERMS + 1.0)
    y_exceeds = gammainc(orders, y[:, None])
    near_one = x >= 1.0  # P >= 0.47 there: summed as 1 - P, whose terms are all positive
    p = np.empty_like(x)
    p[~near_one] = (gammainc(orders, x[~near_one, None]) * y_exceeds[~near_one]).sum(axis=-1) / y[~near_one]
    shortfall = (gammaincc(orders, x[near_one, None]) * y_exceeds[near_one]).sum(axis=-1) / y[near_one]
    p[near_one] = 1.0 - shortfall
    return p


def _unmixed_shortfall(x, y, gap):
    """1 - P of unmixed crossflow in closed form (see :func:`p_crossflow_unmixed`), y >= 1;
    ``gap`` is √x − √y."""
    from scipy.special import i0e, i1e

    root_xy = np.sqrt(x) * np.sqrt(y)
    z = 2.0 * root_xy
    bessel = np.exp(-gap**2) * (x * i0e(z) + root_xy * i1e(z))
    return (bessel - (x - y) * _marcum_q1(np.sqrt(2.0 * y), np.sqrt(2.0) * gap)) / y


def _marcum_q1(a, b_minus_a):
    r"""Marcum's :math:`Q_1(a, b)` for b >= a >= 0 (1-d arrays), with :math:`d = b - a`:

    .. math:: Q_1 = \int_0^\infty (b+u)\,e^{-(d+u)^2/2}\,\tilde I_0(a(b+u))\,du

    (the definition with t = b + u and :math:`\tilde I_0 = e^{-z}I_0`), by 24-point
    Gauss–Legendre on [0, 60/(d + 6)], past which the Gaussian factor is below 1e-18 of its value
    at u = 0. The integrand is smooth and, but for that factor, slowly varying: the rule's error
    is a few 1e-15 relative, set by the rounding of the nodes themselves (measured against P(Y >= X)
    in 70-digit arithmetic while writing this; P itself is checked in 200 digits in the tests)."""
    from scipy.special import i0e

    d = b_minus_a
    span = 60.0 / (d + 6.0)
    u = span[:, None] * _NODES
    t = (a + d)[:, None] + u
    return span * np.sum(_WEIGHTS * t * np.exp(-0.5 * (d[:, None] + u) ** 2) * i0e(a[:, None] * t), axis=-1)


def p_crossflow_one_mixed(ntu1, r1, side1_mixed):
    r"""Temperature effectiveness P1 of single-pass crossflow with one fluid mixed.

    Side 1 mixed, side 2 unmixed:

    .. math:: P_1 = 1 - \exp(-K/R_1), \qquad K = 1 - \exp(-R_1 NTU_1)

    Side 1 unmixed, side 2 mixed:

    .. math:: P_1 = [1 - \exp(-K R_1)]/R_1, \qquad K = 1 - \exp(-NTU_1)

    Not symmetric: which fluid is mixed matters. Both forms are evaluated as
    ``K/R1 = NTU1 (1 - exp(-R1 NTU1)) / (R1 NTU1)`` and so on, exact at R1 = 0.
    Valid for ``ntu1 >= 0``, ``r1 >= 0``. Refs [1]_ [2]_.

    >>> round(float(p_crossflow_one_mixed(1.0, 0.5, side1_mixed=True)), 12)
    0.544763712015
    """
    ntu1, r1 = as_arrays(ntu1, r1)
    if side1_mixed:
        k_over_r = ntu1 * _one_minus_exp_over_x(r1 * ntu1)
        return -np.expm1(-k_over_r)
    k = -np.expm1(-ntu1)
    return k * _one_minus_exp_over_x(k * r1)


def p_shells_in_series(p_one, r1, shells):
    r"""P1 of ``shells`` identical units in series, connected in overall counterflow.

    .. math:: P_1 = \frac{\left(\frac{1 - R_1P_p}{1 - P_p}\right)^N - 1}
              {\left(\frac{1 - R_1P_p}{1 - P_p}\right)^N - R_1},
              \qquad P_1 = \frac{N P_p}{1 + (N-1)P_p} \text{ at } R_1 = 1

    where :math:`P_p` is one unit's P1 at :math:`NTU_1/N` and the same :math:`R_1`. Evaluated
    as :math:`P_1 = 1/(1 + 1/(u\psi))` with :math:`u = P_p/(1-P_p)`, :math:`y = (1-R_1)u` and
    :math:`\psi = [(1+y)^N - 1]/y` (:math:`\psi = N` at y = 0), so the R1 = 1 limit is the same
    expression, not a special case. Ref [1]_.

    >>> round(float(p_shells_in_series(0.4, 1.0, 2)), 12)   # 2*0.4/(1+0.4)
    0.571428571429
    """
    p_one, r1 = as_arrays(p_one, r1)
    if shells == 1:
        return p_one.copy()
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        u = p_one / (1.0 - p_one)
        y = (1.0 - r1) * u
        zero = y == 0.0
        safe = select(zero, 1.0, y)
        psi = select(zero, float(shells), np.expm1(shells * np.log1p(safe)) / safe)
        p = 1.0 / (1.0 + 1.0 / (u * psi))
        limit = _p_limit(r1)
    # a unit already at its limit (P = 1, or P = 1/R for R > 1) keeps the series there
    p = select(p_one * np.maximum(r1, 1.0) >= 1.0, limit, select(p_one <= 0.0, 0.0, p))
    return _within_bounds(p, r1, limit)


def ntu_counterflow(p1, r1):
    r"""NTU1 a counterflow exchanger needs to reach P1 at R1: the inverse of :func:`p_counterflow`.

    .. math:: NTU_1 = \frac{\ln[(1 - R_1P_1)/(1 - P_1)]}{1 - R_1},
              \qquad NTU_1 = \frac{P_1}{1 - P_1} \text{ at } R_1 = 1

    Evaluated as :math:`u\,\ln(1+z)/z`, :math:`u = P_1/(1-P_1)`, :math:`z = (1-R_1)u`.
    Requires :math:`P_1 < 1` and :math:`R_1P_1 < 1`. Ref [1]_.

    >>> round(float(ntu_counterflow(p_counterflow(1.3, 0.7), 0.7)), 12)
    1.3
    """
    p1, r1 = as_arrays(p1, r1)
    with np.errstate(invalid="ignore", divide="ignore"):
        u = p1 / (1.0 - p1)
        z = (1.0 - r1) * u
        zero = z == 0.0
        safe = select(zero, 1.0, z)
        return u * select(zero, 1.0, np.log1p(safe) / safe)


def f_factor(p1, r1, ntu1):
    r"""LMTD correction factor F of an arrangement that reaches P1 at R1 with NTU1.

    .. math:: F = \frac{Q}{UA\,\Delta T_{lm,cf}} = \frac{NTU_{1,cf}(P_1, R_1)}{NTU_1}

    the counterflow NTU for the same duty and end temperatures over the arrangement's NTU [4]_.
    F = 1 at NTU1 = 0 and at R1 = 0 (the limits, where every arrangement is counterflow-like).
    Where P1 is saturated (at 1 or 1/R1 to round-off) F cannot be resolved from P1; it is
    evaluated two ulp below that bound, finite, not NaN. Same basis for all three arguments.

    >>> round(float(f_factor(p_counterflow(0.8, 0.6), 0.6, 0.8)), 12)
    1.0
    """
    p1, r1, ntu1 = as_arrays(p1, r1, ntu1)
    limit = np.minimum(1.0, 1.0 / np.maximum(r1, 1e-300))
    below = np.nextafter(np.nextafter(limit, 0.0), 0.0)
    p = np.where(p1 >= below, below, p1)
    with np.errstate(invalid="ignore", divide="ignore"):
        f = ntu_counterflow(p, r1) / np.where(ntu1 == 0.0, 1.0, ntu1)
    return np.where((ntu1 == 0.0) | (r1 == 0.0), 1.0, f)
