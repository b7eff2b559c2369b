r"""P–NTU relations of the shell-and-tube arrangements beyond the 1-2N TEMA E shell, crossflow
with both fluids mixed, and identical units in series in overall parallel flow.

Conventions are those of :mod:`.pntu`: side 1 is the basis, ``ntu1 = UA/C1``, ``r1 = C1/C2``,
``P1 = (T1_in - T1_out)/(T1_in - T2_in)``; ``side1`` ("shell" or "tube") says which fluid side 1
is. Every relation here is evaluated through the basis-free ratio

.. math:: \Phi = \frac{Q}{UA\,(T_{1,in} - T_{2,in})} = \frac{P_1}{NTU_1} = \frac{P_2}{NTU_2}

written in the NTUs of the two fluids, ``a`` (shell) and ``b`` (tube), so that one expression
serves both bases and every R1 >= 0 (no change of basis, no division by R1): P1 = NTU1·Φ.
The published closed forms are rearranged (derivations in the docstrings) so that they stay
accurate at R1 = 1 and the other removable singularities, as NTU1 -> 0, at NTU1 = 1e8 (no
overflow) and at R1 = 0, where P1 = 1 - exp(-NTU1). All functions accept floats or numpy arrays
(broadcast together) and return float64 arrays. Shell fluid mixed over each cross section
throughout (the TEMA X shell excepted), uniform U, constant heat-capacity rates.

Several of these arrangements pass through a maximum P1 at a finite NTU1 (a temperature cross
inside the shell sends heat back): TEMA J with 2 or 4 tube passes, TEMA F with 8 or more (its
1-4 halves do), the 1-3 TEMA E shell at small R1 (a shallow dip), crossflow with both fluids
mixed, and units in series in overall parallel flow.

References
----------
.. [1] Shah, R. K., and D. P. Sekulić. Fundamentals of Heat Exchanger Design. Wiley, 2003,
       chapter 3, Table 3.6 (P1-NTU1 formulas of the TEMA E, G, H and J shells and of crossflow)
       and section 3.6 (units in series). Table and section numbers from memory.
.. [2] Pignotti, A., and R. K. Shah. "Effectiveness-number of transfer units relationships for
       heat exchanger complex flow arrangements." Int. J. Heat Mass Transfer 35 (1992)
       1275-1291 (from memory).
.. [3] Thulukkanam, K. Heat Exchanger Design Handbook, 2nd ed. CRC Press, 2013: TEMA E, G, H and
       J shell relations (from memory).
.. [4] Kern, D. Q. Process Heat Transfer. McGraw-Hill, 1950: the 2-4 exchanger (one F shell)
       as two 1-2 shells in series in counterflow (from memory).
.. [5] Pignotti, A. "Flow reversibility of heat exchangers." J. Heat Transfer 106 (1984)
       361-368: P is unchanged when both fluids reverse (from memory).
"""

from __future__ import annotations

import numpy as np

from . import pntu
from .arrays import as_arrays
from .pntu import _one_minus_exp_over_x as _phi
from .pntu import _within_bounds

__all__ = [
    "p_tema_e_one_tube_pass",
    "p_tema_e_three_tube_passes",
    "p_tema_f",
    "p_tema_g",
    "p_tema_h",
    "p_tema_j",
    "p_tema_x",
    "p_crossflow_both_mixed",
    "p_shells_in_series_parallel_flow",
    "ARRANGEMENT",
]


# --- shared pieces: the basis, 1-1 zones, the end -------------------------------------------
def _ntus(ntu1, r1, side1, sides=("shell", "tube")):
    """NTUs (a, b) of the fluids named ``sides`` from side 1's NTU and R."""
    if side1 not in sides:
        raise ValueError(f"side1 must be one of {sides}, got {side1!r}")
    ntu1, r1 = as_arrays(ntu1, r1)
    other = ntu1 * r1
    return (ntu1, other) if side1 == sides[0] else (other, ntu1)


def _finish(ntu1, r1, phi):
    """P1 = NTU1·Φ, zero at NTU1 = 0, clipped to [0, min(1, 1/R1)] against round-off."""
    ntu1, r1 = as_arrays(ntu1, r1)
    with np.errstate(over="ignore"):  # 1/R1 of a subnormal R1 is inf, a harmless bound
        return _within_bounds(np.where(ntu1 == 0.0, 0.0, ntu1 * phi), r1)


def _counterflow_zone(a, b):
    """Φ of a 1-1 counterflow zone with fluid NTUs a and b, and its complements 1 - aΦ, 1 - bΦ.
    With s, l the smaller and larger NTU: Φ = φ(l-s)/(1 + sφ(l-s)), 1 - lΦ = e^-(l-s)/(1 + sφ),
    1 - sΦ = 1/(1 + sφ), φ(x) = (1 - e^-x)/x: no cancellation, no overflow."""
    small, gap = np.minimum(a, b), np.abs(a - b)
    f = _phi(gap)
    den = 1.0 + small * f
    tail = np.exp(-gap) / den
    return f / den, np.where(a >= b, tail, 1.0 / den), np.where(a >= b, 1.0 / den, tail)


def _parallel_zone(a, b):
    """Φ = φ(a+b) of a 1-1 parallel-flow zone and its complements 1 - aΦ, 1 - bΦ."""
    s = a + b
    e = np.exp(-s)
    safe = np.where(s == 0.0, 1.0, s)
    return _phi(s), np.where(s == 0.0, 1.0, (b + a * e) / safe), np.where(s == 0.0, 1.0, (a + b * e) / safe)


# --- TEMA E ---------------------------------------------------------------------------------
def p_tema_e_one_tube_pass(ntu1, r1, counterflow=True):
    r"""Temperature effectiveness P1 of a TEMA E shell with one tube pass (a 1-1 shell).

    With one shell pass and one tube pass the two fluids run the length of the shell once each:
    the shell is a pure counterflow exchanger (shell and tube fluids entering at opposite ends,
    ``counterflow=True``) or a pure parallel-flow one (same end), whether or not the shell fluid
    is mixed over the cross section. Cross baffles make the shell fluid cross the tubes between
    them, but with the usual number of baffles the shell is rated as counterflow overall (common
    practice; few baffles and a short shell make it worse):

    .. math:: P_1 = \frac{1 - e^{-NTU_1(1-R_1)}}{1 - R_1e^{-NTU_1(1-R_1)}} \quad\text{or}\quad
              P_1 = \frac{1 - e^{-NTU_1(1+R_1)}}{1 + R_1}

    Symmetric in the sides (side 1 either fluid). Valid for ``ntu1 >= 0``, ``r1 >= 0``.
    Evaluated by :func:`.pntu.p_counterflow` and :func:`.pntu.p_parallel_flow`. Ref [1]_.

    >>> round(float(p_tema_e_one_tube_pass(1.0, 1.0 / 3.0)), 12)
    0.587050065403
    """
    return pntu.p_counterflow(ntu1, r1) if counterflow else pntu.p_parallel_flow(ntu1, r1)


def p_tema_e_three_tube_passes(ntu1, r1, side1="shell"):
    r"""Temperature effectiveness P1 of a 1-3 TEMA E shell, shell fluid mixed, the shell fluid
    flowing against the first tube pass (two of the three passes in counterflow).

    Published on the shell basis (s) [1]_ [2]_: :math:`P_s = [1 - C/(AC + B^2)]/R_s` with
    :math:`X_i = e^{\lambda_i NTU_s/3}/(2\delta)`, :math:`\lambda_{1,2} = -3/2 \pm
    [9/4 + R_s(R_s - 1)]^{1/2}`, :math:`\lambda_3 = R_s`, :math:`\delta = \lambda_1 - \lambda_2`,

    .. math:: A = \tfrac{X_1(R_s+\lambda_1)(R_s-\lambda_2)}{2\lambda_1} - X_3\delta
              - \tfrac{X_2(R_s+\lambda_2)(R_s-\lambda_1)}{2\lambda_2} + \tfrac{1}{1-R_s},\;
              B = X_1(R_s-\lambda_2) - X_2(R_s-\lambda_1) + X_3\delta,\;
              C = X_2(3R_s+\lambda_1) - X_1(3R_s+\lambda_2) + X_3\delta

    In the shell and tube NTUs a, b, with :math:`\Delta = a\delta = [(2b-a)^2 + 8a^2]^{1/2}`,
    :math:`\mu_1 = a\lambda_1/3 = 2b(b-a)/[3(\Delta+3a)]`, :math:`\mu_2 = -(\Delta+3a)/6`,
    :math:`e_i = e^{\mu_i}` and :math:`X = (e_1 - 1)/\mu_1` (1 at R = 1), clearing the
    denominators and reducing with :math:`\Delta^2 = (2b-a)^2 + 8a^2` gives (derived here; the
    :math:`X_3^2` terms cancel exactly, and with them the 1/(1 - R) and 1/R singularities)

    .. math:: \Phi = \frac{e^{b/3}N_3 + N_0}{e^{b/3}D_3 + D_0}, \qquad
              M = \Delta(9a - 2b) + 27a^2 - 12ab + 12b^2

    .. math:: N_3 = b^2\Delta(3\Delta + 7a + 2b)X + \tfrac32 M(\Delta+3a)(1 - e_2), \quad
              N_0 = (\Delta+3a)[b\Delta^2Xe_2 + \tfrac32 M(e_1 - e_2)]

    .. math:: D_3 = b^3\Delta(3\Delta + 7a + 2b)X + \tfrac32(\Delta+3a)[(\Delta+3a)\Delta^2
              + bM(1 - e_2)], \quad
              D_0 = (\Delta+3a)[b^2\Delta^2Xe_2 + \tfrac32 aMe_1 - 3b\Delta(a - 2b)e_2]

    Every term has one sign but :math:`3b\Delta(a-2b)e_2`, which the :math:`aMe_1` term
    bounds. The exponentials are scaled by :math:`e^{-\max(\mu_1, 0)}` and both sums divided by
    :math:`e^{b/3}` (:math:`\mu_1 \le b/3`): nothing overflows at any NTU.

    Not symmetric: ``side1`` is "shell" or "tube". Valid for ``ntu1 >= 0``, ``r1 >= 0``. At
    small R_s P1 has a shallow dip (about 2e-3 near NTU_s = 20 at R_s = 0.1) on its slow way
    to its limit.

    >>> round(float(p_tema_e_three_tube_passes(1.0, 1.0 / 3.0)), 12)
    0.570862488899
    """
    a, b = _ntus(ntu1, r1, side1)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        d = np.sqrt((2.0 * b - a) ** 2 + 8.0 * a * a)
        d3a = d + 3.0 * a
        mu1, mu2 = 2.0 * b * (b - a) / (3.0 * d3a), -d3a / 6.0
        lead = np.maximum(mu1, 0.0)  # terms linear in e1, e2 and 1 are scaled by e^-lead
        sigma, e1 = np.exp(-lead), np.exp(mu1 - lead)
        e2, one_e2 = np.exp(mu2 - lead), -sigma * np.expm1(mu2)  # sigma e2, sigma (1 - e2)
        x = _phi(np.abs(mu1))  # sigma (e1 - 1)/mu1
        e1_e2 = -e1 * np.expm1(mu2 - mu1)  # sigma (e1 - e2)
        m = d * (9.0 * a - 2.0 * b) + 27.0 * a * a - 12.0 * a * b + 12.0 * b * b
        l_x = b * b * d * (3.0 * d + 7.0 * a + 2.0 * b) * x
        n3 = l_x + 1.5 * m * d3a * one_e2
        d3 = b * l_x + 1.5 * d3a * (d3a * d * d * sigma + b * m * one_e2)
        n0 = d3a * (b * d * d * x * e2 + 1.5 * m * e1_e2 * sigma)
        d0 = d3a * (b * b * d * d * x * e2 + (1.5 * a * m * e1 - 3.0 * b * d * (a - 2.0 * b) * e2) * sigma)
        w = np.exp(lead - b / 3.0)  # N = e3 N3 + N0 and D = e3 D3 + D0, divided by e3 e^lead
        phi = (n3 + w * n0) / (d3 + w * d0)
    return _finish(ntu1, r1, phi)


# --- TEMA F ---------------------------------------------------------------------------------
def p_tema_f(ntu1, r1, tube_passes=4, side1="shell"):
    r"""Temperature effectiveness P1 of a TEMA F shell (two shell passes separated by a
    longitudinal baffle), taken as two TEMA E shells in series in overall counterflow.

    Each shell pass holds half the tube passes, so the shell is rated as two 1-(N/2) E shells
    (shell fluid mixed) each with NTU1/2, joined in counterflow [1]_ [4]_:

    .. math:: P_1 = \frac{X^2 - 1}{X^2 - R_1}, \qquad X = \frac{1 - R_1P_p}{1 - P_p},
              \qquad P_p = P_{1,E}(NTU_1/2, R_1)

    With two tube passes each shell pass holds one: the two 1-1 halves make a pure counterflow
    exchanger. With four, the F shell is the classic 2-4 exchanger. This assumes an ideal
    longitudinal baffle: leakage of shell fluid past the baffle and heat conducted across it
    make a real F shell perform worse than this (common practice: many designers avoid the F
    shell or rate it below these values for that reason). With 8 or more tube passes the 1-4
    halves pass through a maximum P, and so does the F shell.

    ``tube_passes`` is 2 or a multiple of 4 (each half an E shell with an even number of
    passes); ``side1`` "shell" or "tube" (symmetric for 2 and 4 tube passes). Valid for
    ``ntu1 >= 0``, ``r1 >= 0``; evaluated with :func:`.pntu.p_tema_e` and
    :func:`.pntu.p_shells_in_series` (exact at R1 = 1).

    >>> round(float(p_tema_f(1.0, 1.0)), 12)
    0.489878251421
    """
    if tube_passes == 2:
        _ntus(ntu1, r1, side1)  # checks side1
        return pntu.p_counterflow(ntu1, r1)
    if tube_passes < 4 or tube_passes % 4:
        raise ValueError(f"tube_passes must be 2 or a multiple of 4, got {tube_passes}")
    ntu1, r1 = as_arrays(ntu1, r1)
    half = pntu.p_tema_e(ntu1 / 2.0, r1, tube_passes // 2, side1=side1)
    return pntu.p_shells_in_series(half, r1, 2)


# --- TEMA G ---------------------------------------------------------------------------------
def p_tema_g(ntu1, r1, tube_passes=2, side1="shell"):
    r"""Temperature effectiveness P1 of a TEMA G (split-flow) shell, shell fluid mixed.

    The shell fluid enters at mid-length, splits, runs to both ends on one side of the
    longitudinal baffle and returns on the other to the outlet at mid-length. Published on the
    shell basis [1]_ [3]_; a, b are the shell and tube NTUs (:math:`a = NTU_s`, :math:`b = R_sa`).

    Two tube passes, the first in the half where the shell fluid returns to its outlet (the
    overall counterflow orientation), shell and tube fluids mixed in each pass at the cross
    section:

    .. math:: P_s = \frac{B - \alpha^2}{A + 2 + R_sB},\;
              A = -\frac{2R_s(1-\alpha)^2}{2+R_s},\; B = \frac{4 - \beta(2+R_s)}{2-R_s},\;
              \alpha = e^{-NTU_s(2+R_s)/4},\; \beta = e^{-NTU_s(2-R_s)/2}

    rearranged here (:math:`c = (2a+b)/4`, :math:`w = a - b/2`, :math:`\varphi(x) = (1-e^{-x})/x`,
    :math:`\varphi(w)` written as :math:`f/m` with :math:`f = \varphi(|w|)`,
    :math:`m = e^{\min(w, 0)}` so that nothing overflows; exact at R_s = 2):

    .. math:: \Phi = \frac{m\,\varphi(2c) + f}{m[2 - ab\,\varphi(c)^2/4] + b f}

    One tube pass (the tubes above and below the baffle two separate streams, each mixed), with
    :math:`P_p`, :math:`P_c` the parallel- and counterflow values at :math:`(NTU_s/2, R_s)`:
    :math:`P_s = P_p + P_c - P_pP_c(1+R_s) + R_sP_pP_c^2`, evaluated as
    :math:`\Phi = [\Phi_p(1 - P_c)(1 - R_sP_c) + \Phi_c]/2` (symmetric in the sides).

    ``tube_passes`` 1 or 2; ``side1`` "shell" or "tube". Valid for ``ntu1 >= 0``, ``r1 >= 0``.

    >>> round(float(p_tema_g(1.0, 1.0 / 3.0)), 12)
    0.582423877813
    """
    a, b = _ntus(ntu1, r1, side1)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        if tube_passes == 1:
            phi_p, _, _ = _parallel_zone(a / 2.0, b / 2.0)
            phi_c, comp_a, comp_b = _counterflow_zone(a / 2.0, b / 2.0)
            phi = 0.5 * (phi_p * comp_a * comp_b + phi_c)
        elif tube_passes == 2:
            c, w = (2.0 * a + b) / 4.0, a - b / 2.0
            m, f = np.exp(np.minimum(w, 0.0)), _phi(np.abs(w))
            phi = (m * _phi(2.0 * c) + f) / (m * (2.0 - a * b * _phi(c) ** 2 / 4.0) + b * f)
        else:
            raise ValueError(f"tube_passes must be 1 or 2, got {tube_passes}")
    return _finish(ntu1, r1, phi)


# --- TEMA H ---------------------------------------------------------------------------------
def p_tema_h(ntu1, r1, tube_passes=2, side1="shell"):
    r"""Temperature effectiveness P1 of a TEMA H (double split-flow) shell, shell fluid mixed.

    Two split-flow sections side by side: the shell fluid enters at two nozzles, each stream
    splits, runs on one side of the longitudinal baffles and returns on the other. Published on
    the shell basis [1]_ [3]_; a, b are the shell and tube NTUs.

    Two tube passes (the first in the half where the shell fluid returns), fluids mixed in each
    pass at the cross section, :math:`\alpha = NTU_s(4+R_s)/8`, :math:`\beta = NTU_s(4-R_s)/8`:

    .. math:: P_s = \frac{1}{R_s}\Big[1 - \frac{(1-D)^4}{B - 4G/R_s}\Big],\;
              B = (1+H)(1+E)^2,\; G = (1-D)^2(D^2+E^2) + D^2(1+E)^2

    .. math:: D = \frac{1-e^{-\alpha}}{4/R_s + 1},\; E = \frac{1-e^{-\beta}}{4/R_s - 1},\;
              H = \frac{1-e^{-2\beta}}{4/R_s - 1}

    Here :math:`D = bd`, :math:`E = be`, :math:`H = bh` with :math:`d = \varphi(\alpha)/8`,
    :math:`e = \varphi(\beta)/8`, :math:`h = \varphi(2\beta)/4`, so that (derived here)

    .. math:: \Phi = \frac{h(1+E)^2 + e(2+E) + d(2-D)[1 + (1-D)^2] - 4ag}{B - 4abg},
              \qquad g = G/b^2

    with numerator and denominator multiplied by :math:`\varepsilon^4`,
    :math:`\varepsilon = e^{\min(\beta, 0)}`, where β < 0 (R_s > 4) would overflow.

    One tube pass (the tube fluid in two separate streams above and below the baffles), with
    :math:`A = P_p(NTU_s/2, R_s/2)`, :math:`B = P_c(NTU_s/2, R_s/2)`:
    :math:`P_s = E[1 + (1 - BR_s/2)(1 - AR_s/2 + ABR_s)] - AB(1 - BR_s/2)`,
    :math:`E = (A + B - ABR_s/2)/2`.

    ``tube_passes`` 1 or 2; ``side1`` "shell" or "tube". Valid for ``ntu1 >= 0``, ``r1 >= 0``.

    >>> round(float(p_tema_h(1.0, 1.0 / 3.0)), 12)
    0.582443780313
    """
    a, b = _ntus(ntu1, r1, side1)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        if tube_passes == 1:
            phi_p, _, q_p = _parallel_zone(a / 2.0, b / 4.0)
            phi_c, _, q_c = _counterflow_zone(a / 2.0, b / 4.0)  # q: 1 - the tube-side P of a zone
            big_a = a / 2.0 * phi_p
            e = (phi_p * q_c + phi_c) / 4.0
            phi = e * (1.0 + q_c * (q_p + 2.0 * big_a * (1.0 - q_c))) - a / 4.0 * phi_p * phi_c * q_c
        elif tube_passes == 2:
            alpha, beta = (4.0 * a + b) / 8.0, (4.0 * a - b) / 8.0
            d = _phi(alpha) / 8.0
            big_d = b * d
            eps = np.exp(np.minimum(beta, 0.0))
            e, h = _phi(np.abs(beta)) / 8.0, _phi(2.0 * np.abs(beta)) / 4.0
            eps2, one_e = eps * eps, eps + b * e  # eps (1 + E)
            g = (1.0 - big_d) ** 2 * (eps2 * eps2 * d * d + eps2 * e * e) + eps2 * d * d * one_e**2
            numerator = (h * one_e**2 + eps2 * e * (2.0 * eps + b * e)
                         + eps2 * eps2 * d * (2.0 - big_d) * (1.0 + (1.0 - big_d) ** 2) - 4.0 * a * g)
            phi = numerator / ((eps2 + b * h) * one_e**2 - 4.0 * a * b * g)
        else:
            raise ValueError(f"tube_passes must be 1 or 2, got {tube_passes}")
    return _finish(ntu1, r1, phi)


# --- TEMA J ---------------------------------------------------------------------------------
def p_tema_j(ntu1, r1, tube_passes=2, side1="shell"):
    r"""Temperature effectiveness P1 of a TEMA J (divided-flow) shell, shell fluid mixed.

    The shell fluid enters at mid-length and leaves at both ends, or enters at both ends and
    leaves at mid-length: the same P1 either way, since reversing both fluids leaves P
    unchanged [5]_ and reversing the tube fluid alone only mirrors the shell (checked in the
    tests against the differential equations of both). Published on the shell basis [1]_ [3]_,
    a, b the shell and tube NTUs, :math:`A = e^{NTU_s}`.

    One tube pass: the shell halves are two 1-1 zones (one parallel, one counterflow) at
    :math:`(NTU_s, R_s/2)` with the tube fluid through both, the same as the 1-2 plate
    exchanger: :math:`\Phi = [\Phi_p + \Phi_c(1 - b\Phi_p/2)]/2`.

    Two and four tube passes, :math:`\lambda = (1 + R_s^2/N_{tp}^2)^{1/2}`:

    .. math:: P_s = \Big[1 + T + \lambda\frac{A^\lambda + 1}{A^\lambda - 1}
              - \frac{2\lambda A^{(1+\lambda)/2}}{\lambda - 1 + (1+\lambda)A^\lambda}
              \Big(1 + \frac{\lambda A^{(\lambda-1)/2}}{A^\lambda - 1}\Big)\Big]^{-1}

    with :math:`T = R_s/2` (two passes) or :math:`T = (R_s/4)(1 + 3e^{R_sNTU_s/2})/(1 +
    e^{R_sNTU_s/2})` (four). With :math:`\kappa = \lambda a = (a^2 + b^2/N_{tp}^2)^{1/2}`,
    :math:`u = e^{-\kappa}`, :math:`v = e^{-(\kappa-a)/2}`, :math:`\rho = a/\kappa` this is
    (derived here; bounded terms only, exact at NTU -> 0 and on both bases)

    .. math:: \Phi = \varphi(\kappa) \Big/ \Big[(a + aT)\varphi(\kappa) + 1 + u
              - \frac{2v[a\varphi(\kappa) + e^{-(\kappa+a)/2}]}{(1-\rho)u + 1 + \rho}\Big]

    ``tube_passes`` 1, 2 or 4; ``side1`` "shell" or "tube". Valid for ``ntu1 >= 0``,
    ``r1 >= 0``. With 2 or 4 tube passes P1 passes through a maximum (near NTU_s = 7.5 at
    R_s = 0.1, near 1 at R_s = 5) and falls at larger NTU (a temperature cross inside each half
    of the shell): at R_s = 0.1 from 0.947 to 0.488 as NTU_s -> inf.

    >>> round(float(p_tema_j(1.0, 1.0 / 3.0)), 12)
    0.568887823232
    """
    a, b = _ntus(ntu1, r1, side1)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        if tube_passes == 1:
            phi_p, _, comp_p = _parallel_zone(a, b / 2.0)
            phi_c, _, _ = _counterflow_zone(a, b / 2.0)
            phi = 0.5 * (phi_p + phi_c * comp_p)
        elif tube_passes in (2, 4):
            c = b / tube_passes
            kappa = np.hypot(a, c)
            rho = np.where(kappa > 0.0, a / np.where(kappa > 0.0, kappa, 1.0), 1.0)
            u, v = np.exp(-kappa), np.exp(-0.5 * c * c / (kappa + a))
            f = _phi(kappa)
            if tube_passes == 2:
                t = b / 2.0
            else:
                tail = np.exp(-b / 2.0)
                t = b / 4.0 * (3.0 + tail) / (1.0 + tail)
            crossing = 2.0 * v * (a * f + np.exp(-0.5 * (kappa + a))) / ((1.0 - rho) * u + 1.0 + rho)
            phi = f / ((a + t) * f + 1.0 + u - crossing)
        else:
            raise ValueError(f"tube_passes must be 1, 2 or 4, got {tube_passes}")
    return _finish(ntu1, r1, phi)


# --- TEMA X and crossflow -------------------------------------------------------------------
def p_tema_x(ntu1, r1, side1="shell", shell_mixed=False):
    r"""Temperature effectiveness P1 of a TEMA X (crossflow) shell with one tube pass.

    The shell fluid crosses the tube bundle once, with no baffles to mix it along the shell;
    each tube carries its own fluid (tube fluid unmixed). Taken as single-pass crossflow [1]_:
    shell fluid unmixed (``shell_mixed=False``, many tube rows) is crossflow with both fluids
    unmixed (:func:`.pntu.p_crossflow_unmixed`, symmetric); ``shell_mixed=True`` is crossflow
    with the shell fluid mixed and the tube fluid unmixed (:func:`.pntu.p_crossflow_one_mixed`):

    .. math:: P_s = 1 - \exp(-K/R_s), \quad K = 1 - \exp(-R_sNTU_s)

    ``side1`` "shell" or "tube". Valid for ``ntu1 >= 0``, ``r1 >= 0``. X shells with several
    tube passes (passes stacked across the shell flow, the shell fluid not mixed between them)
    have no closed form here.

    >>> round(float(p_tema_x(1.0, 0.5, shell_mixed=True)), 12)
    0.544763712015
    """
    _ntus(ntu1, r1, side1)  # checks side1
    if not shell_mixed:
        return pntu.p_crossflow_unmixed(ntu1, r1)
    return pntu.p_crossflow_one_mixed(ntu1, r1, side1_mixed=(side1 == "shell"))


def p_crossflow_both_mixed(ntu1, r1):
    r"""Temperature effectiveness P1 of single-pass crossflow with both fluids mixed (symmetric).

    .. math:: P_1 = \Big(\frac{1}{K_1} + \frac{R_1}{K_2} - \frac{1}{NTU_1}\Big)^{-1},
              \quad K_1 = 1 - e^{-NTU_1}, \quad K_2 = 1 - e^{-R_1NTU_1}

    Evaluated as :math:`P_1 = NTU_1/[g(NTU_1) + g(R_1NTU_1) - 1]`, :math:`g(x) = x/(1-e^{-x})`
    (g(0) = 1): no difference of large terms as NTU1 -> 0, exact at R1 = 0 (1 - exp(-NTU1)).
    Valid for ``ntu1 >= 0``, ``r1 >= 0``. P1 passes through a maximum at finite NTU1 and falls
    to 1/(1 + R1) as NTU1 -> inf. Refs [1]_ [2]_.

    >>> round(float(p_crossflow_both_mixed(1.0, 1.0)), 12)
    0.46211715726
    """
    ntu1, r1 = as_arrays(ntu1, r1)
    with np.errstate(divide="ignore"):
        phi = 1.0 / (1.0 / _phi(ntu1) + 1.0 / _phi(ntu1 * r1) - 1.0)
    return _finish(ntu1, r1, phi)


def p_shells_in_series_parallel_flow(p_one, r1, shells):
    r"""P1 of ``shells`` identical units in series, connected in overall parallel flow.

    Both fluids pass the units in the same order; across each unit the inlet temperature
    difference falls by the factor :math:`1 - (1 + R_1)P_p`, so [1]_

    .. math:: P_1 = \frac{1 - [1 - (1 + R_1)P_p]^N}{1 + R_1}

    where :math:`P_p` is one unit's P1 at :math:`NTU_1/N` and the same :math:`R_1` (any
    arrangement, either basis, as long as :math:`P_p` and R1 share it). As N -> inf it tends
    to the parallel-flow relation, :math:`[1 - e^{-NTU_1(1+R_1)}]/(1+R_1)`, with an error of
    order :math:`N^{-2}` (every unit has :math:`P_p = x - (1+R_1)x^2/2 + O(x^3)`,
    :math:`x = NTU_1/N`). Evaluated with
    ``expm1``/``log1p`` where the factor is positive. Valid for ``0 <= p_one``,
    ``p_one·max(1, r1) <= 1``.

    >>> round(float(p_shells_in_series_parallel_flow(0.4, 1.0, 2)), 12)  # (1 - 0.2^2)/2
    0.48
    """
    p_one, r1 = as_arrays(p_one, r1)
    if shells < 1:
        raise ValueError(f"shells must be >= 1, got {shells}")
    drop = (1.0 + r1) * p_one  # fraction of the inlet difference one unit removes
    # 1 - (1 - drop)^N: through log1p where drop is small (no cancellation), directly above 1/2
    gone = np.where(drop > 0.5, 1.0 - (1.0 - drop) ** shells, -np.expm1(shells * np.log1p(-np.minimum(drop, 0.5))))
    with np.errstate(over="ignore"):
        return _within_bounds(gone / (1.0 + r1), r1)


_SHELL = "side1: 'shell' or 'tube'"
ARRANGEMENT = {
    "tema_e_one_tube_pass": (
        p_tema_e_one_tube_pass, "1-1 TEMA E shell in counterflow (pure counterflow); ntu1, r1 "
        "(counterflow=False: parallel flow)", "Shah & Sekulić (2003) Table 3.6"),
    "tema_e_three_tube_passes": (
        p_tema_e_three_tube_passes, f"1-3 TEMA E, shell fluid mixed, against the first tube pass; ntu1, r1, {_SHELL}",
        "Shah & Sekulić (2003) Table 3.6; Pignotti & Shah (1992)"),
    "tema_f": (
        p_tema_f, f"TEMA F, ideal longitudinal baffle, as two E shells in counterflow; ntu1, r1, tube_passes "
        f"(2 or a multiple of 4), {_SHELL}", "Kern (1950); Shah & Sekulić (2003) sec. 3.6"),
    "tema_g": (
        p_tema_g, f"TEMA G split flow, shell fluid mixed; ntu1, r1, tube_passes (1 or 2), {_SHELL}",
        "Shah & Sekulić (2003) Table 3.6"),
    "tema_h": (
        p_tema_h, f"TEMA H double split flow, shell fluid mixed; ntu1, r1, tube_passes (1 or 2), {_SHELL}",
        "Shah & Sekulić (2003) Table 3.6"),
    "tema_j_one_inlet": (
        p_tema_j, f"TEMA J divided flow, one shell inlet and two outlets; ntu1, r1, tube_passes (1, 2 or 4), {_SHELL}",
        "Shah & Sekulić (2003) Table 3.6"),
    "tema_j_two_inlets": (
        p_tema_j, "TEMA J divided flow, two shell inlets and one outlet: the same relation as one inlet "
        f"(flow reversal); ntu1, r1, tube_passes (1, 2 or 4), {_SHELL}",
        "Shah & Sekulić (2003) Table 3.6; Pignotti (1984)"),
    "tema_x": (
        p_tema_x, f"TEMA X crossflow shell, one tube pass, tubes unmixed; ntu1, r1, {_SHELL}, shell_mixed (bool)",
        "Shah & Sekulić (2003) Table 3.6 (crossflow)"),
    "crossflow_both_mixed": (
        p_crossflow_both_mixed, "single-pass crossflow, both fluids mixed (symmetric); ntu1, r1",
        "Shah & Sekulić (2003) Table 3.6"),
}
"""Each arrangement: (function, description with the arguments it takes, published source).
Units in series are combinators of these (:func:`.pntu.p_shells_in_series`,
:func:`p_shells_in_series_parallel_flow`) and are not listed."""
