r"""P–NTU relations of air-cooled exchangers: a bundle of tube rows crossed by air, by the
number of tube rows and of process (tube-side) passes.

The model behind the published forms [1]_ [2]_ [3]_: air flows across the rows one after the
other and is unmixed along the tubes; each row is one tube deep, so the process fluid in it has
one temperature across the air path (it changes along the tube); the process fluid is mixed in
the headers between passes, each pass holding rows/passes rows in parallel, and enters in the
row where the air leaves (counter-crossflow); U is uniform. One row is then crossflow with the
air unmixed and the process fluid mixed.

**Basis.** The published forms are written here on the air side: side 1 is the **air**,
:math:`NTU_1 = UA/C_{air}`, :math:`R_1 = C_{air}/C_{process}`, :math:`K = 1 - e^{-NTU_1/N}` with
N the rows. (ht's ``temperature_effectiveness_air_cooler`` labels its side 1 the process fluid;
the forms reproduce the row-by-row model only with side 1 the air, and that is checked against
the model's differential equations in the tests.) :func:`p_air_cooler` gives either side.

Supported: N rows with one pass (N = 1 to 10, Schedwill [1]_), N rows with N passes (N = 2 to
5, Nicole [2]_ as given in [3]_; N = 4 derived here, see :func:`_xi_rise`), 4 rows with 2
passes [2]_ [3]_.

References
----------
.. [1] Schedwill, H. "Thermische Auslegung von Kreuzstromwärmeaustauschern." Fortschr.-Ber.
       VDI Reihe 6, Nr. 19, VDI-Verlag, 1968 (as given in [3]_; from memory).
.. [2] Nicole, F. J. L. "Mean temperature difference for heat exchanger design." CSIR Special
       Report Chem. 223, Pretoria, 1972 (as given in [3]_; from memory).
.. [3] Thulukkanam, K. Heat Exchanger Design Handbook, 2nd ed. CRC Press, 2013, chapter 2
       (air-cooled exchangers; from memory).
"""

from __future__ import annotations

from math import comb, factorial

import numpy as np

from .arrays import as_arrays
from .pntu import _one_minus_exp_over_x as _phi
from .pntu import _within_bounds

__all__ = ["AIR_COOLER_PASSES", "supported", "p_air_cooler_air_basis", "p_air_cooler"]

MAX_ROWS_ONE_PASS = 10
AIR_COOLER_PASSES = {1: tuple(range(1, MAX_ROWS_ONE_PASS + 1)), 2: (2, 4), 3: (3,), 4: (4,), 5: (5,)}
"""Tube passes -> the tube rows rated with them."""


def supported(rows, passes) -> bool:
    """Whether (rows, passes) has a relation here."""
    return rows in AIR_COOLER_PASSES.get(passes, ())


def _one_pass(ntu, r, rows):
    r"""Schedwill's N rows, one pass [1]_, air basis:

    .. math:: P_1 = \frac{1}{R}\left\{1 - \left[\frac{Ne^{NKR}}{1 + \sum_{i=1}^{N-1}
              \sum_{j=0}^{i}\binom{i}{j}K^je^{-(i-j)NTU/N}\sum_{k=0}^{j}\frac{(NKR)^k}{k!}}
              \right]^{-1}\right\}

    With :math:`y = NKR`, :math:`q = e^{-NTU/N}` and :math:`\sum_j\binom{i}{j}K^jq^{i-j} = 1`,
    this is (rearranged here; every term bounded, exact at R = 0)

    .. math:: P_1 = K\Big[N\varphi(y) - \sum_{i=1}^{N-1}\sum_{j=1}^{i}\binom{i}{j}K^jq^{i-j}
              \sum_{k=1}^{j}\frac{e^{-y}y^{k-1}}{k!}\Big], \qquad \varphi(y) = \frac{1-e^{-y}}{y}
    """
    k = -np.expm1(-ntu / rows)
    q = np.exp(-ntu / rows)
    y = rows * k * r
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        log_y = np.log(y)
        # e^-y y^(k-1)/k! for k = 1..N-1, exact at y = 0 (only k = 1 survives)
        terms = [np.where(y == 0.0, 1.0 if m == 1 else 0.0, np.exp((m - 1) * log_y - y)) / factorial(m)
                 for m in range(1, rows)]
    inner = np.cumsum(np.stack(terms), axis=0) if terms else None  # inner[j-1] = sum over k = 1..j
    total = np.zeros_like(y)
    for i in range(1, rows):
        for j in range(1, i + 1):
            total = total + comb(i, j) * k**j * q ** (i - j) * inner[j - 1]
    return k * (rows * _phi(y) - total)


def _xi_rise(ntu, r, rows, passes):
    r"""(ξ - 1)/R and ξ, both scaled by :math:`e^{-MKR}` (M the largest multiple of KR in an
    exponent, so that nothing overflows), for the forms :math:`P_1 = (1 - 1/ξ)/R` of N rows with
    N passes and of 4 rows with 2 passes [2]_ [3]_. With :math:`h = 1 - K/2`,
    :math:`E_m = (e^{mKR} - 1)/R`:

    * 2-2: :math:`ξ = K/2 + h\,e^{2KR}`, so :math:`(ξ-1)/R = hE_2`;
    * 3-3: :math:`ξ = K[1 - K/4 - RKh]e^{KR} + h^2e^{3KR}`;
    * 4-4: :math:`ξ = \frac K2(1 - \frac K2 + \frac{K^2}{4}) + Kh(1 - 2RKh)e^{2KR} + h^3e^{4KR}`,
      derived here from the row model (the same model reproduces the published 2-2, 3-3, 5-5
      and 4-2 forms exactly); the form printed in [3]_ and reproduced in ht,
      :math:`Kh[1 - \frac R8Kh\,e^{2KR}]` in place of the middle term, does not give
      :math:`P_1 = 1 - e^{-NTU_1}` at R = 0 and is not used;
    * 5-5: :math:`ξ = \{K(1 - \frac34K + \frac{K^2}{2} - \frac{K^3}{8}) - RK^2[1 - K +
      \frac34K^2 - \frac14K^3 - \frac R2K^2h^2]\}e^{KR} + [K(1 - \frac34K + \frac{K^3}{16}) -
      3RK^2h^3]e^{3KR} + h^4e^{5KR}`;
    * 4 rows, 2 passes: :math:`ξ = \{\frac R2K^3(4 - K + 2RK^2) + e^{4KR} + g(1 - e^{4KR})\}
      /(1 + RK^2)^2`, :math:`g = K(1 - \frac K2 + \frac{K^2}{8})`.

    The constant parts of each ξ sum to 1, so ξ - 1 is written with the :math:`E_m` and the
    terms in R divided out: no cancellation as R -> 0."""
    k = -np.expm1(-ntu / rows)
    h = 1.0 - 0.5 * k
    kr = k * r
    top = {(2, 2): 2, (3, 3): 3, (4, 4): 4, (5, 5): 5, (4, 2): 4}[(rows, passes)]

    def e(m):  # e^{(m - M)KR}
        return np.exp((m - top) * kr)

    def rise(m):  # E_m e^{-MKR} = (1 - e^{-mKR})/R · e^{(m - M)KR}, = mK at R = 0
        return m * k * _phi(m * kr) * e(m)

    if (rows, passes) == (2, 2):
        return h * rise(2), 0.5 * k * e(0) + h * e(2)
    if (rows, passes) == (3, 3):
        c1 = k * (1.0 - 0.25 * k)
        return c1 * rise(1) - k * k * h * e(1) + h * h * rise(3), (c1 - r * k * k * h) * e(1) + h * h * e(3)
    if (rows, passes) == (4, 4):
        c0, c2 = 0.5 * k * (1.0 - 0.5 * k + 0.25 * k * k), k * h
        return (c2 * rise(2) - 2.0 * k * k * h * h * e(2) + h**3 * rise(4),
                c0 * e(0) + c2 * (1.0 - 2.0 * r * k * h) * e(2) + h**3 * e(4))
    if (rows, passes) == (5, 5):
        k2, k3 = k * k, k**3
        c1 = k * (1.0 - 0.75 * k + 0.5 * k2 - 0.125 * k3)
        c3 = k * (1.0 - 0.75 * k + k3 / 16.0)
        b1 = -k2 * (1.0 - k + 0.75 * k2 - 0.25 * k3) + 0.5 * r * k2 * k2 * h * h  # (e^KR coefficient - c1)/R
        b3 = -3.0 * k2 * h**3
        rise_sum = c1 * rise(1) + c3 * rise(3) + h**4 * rise(5) + b1 * e(1) + b3 * e(3)
        return rise_sum, (c1 + r * b1) * e(1) + (c3 + r * b3) * e(3) + h**4 * e(5)
    g = k * (1.0 - 0.5 * k + 0.125 * k * k)
    square = (1.0 + r * k * k) ** 2
    rise_sum = ((1.0 - g) * rise(4) + (2.0 * k**3 - 0.5 * k**4 - 2.0 * k * k + r * (k**5 - k**4)) * e(0)) / square
    xi = (0.5 * r * k**3 * (4.0 - k + 2.0 * r * k * k) * e(0) + (1.0 - g) * e(4) + g * e(0)) / square
    return rise_sum, xi


def p_air_cooler_air_basis(ntu_air, r_air, rows, passes):
    r"""Temperature effectiveness of the **air**, :math:`P_1 = (t_{air,out} - t_{air,in})/
    (T_{process,in} - t_{air,in})`, of an air cooler with ``rows`` tube rows and ``passes``
    process passes, at :math:`NTU_1 = UA/C_{air}` and :math:`R_1 = C_{air}/C_{process}`.

    One pass: Schedwill's series (:func:`_one_pass`). Several passes: :math:`P_1 = (1 - 1/ξ)/R_1`
    evaluated as :math:`[(ξ-1)/R_1]/ξ` (:func:`_xi_rise`). Valid for ``ntu_air >= 0``,
    ``r_air >= 0`` and the (rows, passes) of :data:`AIR_COOLER_PASSES` [1]_ [2]_ [3]_.

    >>> round(float(p_air_cooler_air_basis(2.0, 0.5, 2, 2)), 12)  # ht 1.2 gives 0.7523072855817072
    0.752307285582
    >>> round(float(p_air_cooler_air_basis(1.0, 0.0, 3, 1)), 12)  # R = 0: 1 - exp(-NTU)
    0.632120558829
    """
    if not supported(rows, passes):
        raise ValueError(f"no air-cooler relation for {rows} tube rows and {passes} passes; rated: "
                         + "; ".join(f"{p} pass(es) with {', '.join(map(str, rs))} rows"
                                     for p, rs in AIR_COOLER_PASSES.items()))
    ntu, r = as_arrays(ntu_air, r_air)
    with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
        if passes == 1:
            p = _one_pass(ntu, r, rows)
        else:
            rise, xi = _xi_rise(ntu, r, rows, passes)
            p = rise / xi
    return _within_bounds(np.where(ntu == 0.0, 0.0, p), r)


def p_air_cooler(ntu1, r1, rows, passes, side1="air"):
    r"""P1 of an air cooler on either side: ``side1`` "air" (:func:`p_air_cooler_air_basis`) or
    "process" (the tube-side fluid), from the air basis by :math:`NTU_{air} = NTU_1R_1`,
    :math:`R_{air} = 1/R_1`, :math:`P_1 = R_{air}P_{air}`; at R1 = 0 (air flow without limit)
    :math:`P_1 = 1 - e^{-NTU_1}`.

    >>> round(float(p_air_cooler(1.0, 2.0, 2, 2, side1="process")), 12)  # = 2 P_air(2, 0.5)
    0.376153642791
    """
    if side1 == "air":
        return p_air_cooler_air_basis(ntu1, r1, rows, passes)
    if side1 != "process":
        raise ValueError(f"side1 must be 'air' or 'process', got {side1!r}")
    ntu1, r1 = as_arrays(ntu1, r1)
    flowing = r1 > 0.0
    with np.errstate(divide="ignore", over="ignore"):
        r_air = np.where(flowing, 1.0 / np.where(flowing, r1, 1.0), 1.0)
        p = r_air * p_air_cooler_air_basis(ntu1 * np.where(flowing, r1, 0.0), r_air, rows, passes)
    return _within_bounds(np.where(flowing, p, -np.expm1(-ntu1)), r1)
