r"""Back-calculation of an exchanger's condition from its four terminal temperatures and two flows:
duty, UA by the inverse P–NTU relation of its arrangement, the service U, the clean U at the same
operating point, and the fouling resistance.

.. math::

    Q = \dot m_h (h_h(T_{h,i}) - h_h(T_{h,o})), \qquad
    C_h = \frac{Q}{T_{h,i} - T_{h,o}}, \quad C_c = \frac{Q}{T_{c,o} - T_{c,i}},

    P_1 = \frac{T_{1,i} - T_{1,o}}{T_{h,i} - T_{c,i}}, \quad R_1 = \frac{C_1}{C_2}, \quad
    UA = \mathrm{NTU}_1(P_1, R_1)\, C_1, \qquad
    R_f = \frac{1}{U_{service}} - \frac{1}{U_{clean}},

with side 1 the side of the smaller C (R1 <= 1, where the inverse relations are well
conditioned), C the mean heat-capacity rate over each side's actual range (so that the P–NTU
duty is the enthalpy change), and U_clean from the exchanger's own film model at the flows and
side mean temperatures of this operating point — never the design-point U: a throughput cut
lowers U through the films, and read against a design U it would look like fouling.

With a bypass the measured outlets are after the bypass re-mixes; the exchanger proper's outlet
follows from the enthalpy balance of that mixing, :math:`h_x = (h_{mix} - b\,h_{in})/(1 - b)`, with
the bypass fraction ``b`` the case gives.

References
----------
.. [1] Shah, R. K., and D. P. Sekulić. Fundamentals of Heat Exchanger Design. Wiley, 2003,
       chapter 3 (P-NTU relations and their inverses) (from memory).
.. [2] Kern, D. Q. Process Heat Transfer. McGraw-Hill, 1950, chapter 6: fouling (dirt) factors
       as the difference of the inverses of dirty and clean coefficients (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .arrays import as_arrays
from .pntu_inverse import ntu_from_p

__all__ = ["ExchangerCondition", "back_calculate", "exchanger_proper_outlet"]


@dataclass
class ExchangerCondition:
    """What the terminal temperatures and flows say about an exchanger, arrays over the batch.
    NaN where the data cannot give a value (see ``reason``)."""

    duty: np.ndarray
    """kW, from the hot side's enthalpy change through the exchanger proper."""
    duty_imbalance: np.ndarray
    """kW, hot side's duty less the cold side's (zero for reconciled data)."""
    p_hot: np.ndarray
    r_hot: np.ndarray
    ua: np.ndarray
    """kW/K, all shells together."""
    u_service: np.ndarray
    """W/m²·K referred to the tube outside area; NaN without an area."""
    u_clean: np.ndarray
    """W/m²·K at this operating point from the film model; NaN without one."""
    fouling: np.ndarray
    """m²·K/W, 1/U_service - 1/U_clean; negative values are kept (the clean model is optimistic
    or an instrument is wrong), never clipped."""
    films: dict
    """The clean film model at this operating point, where it gives them: ``h_shell``, ``h_tube``
    (W/m²·K), ``re_tube``; and the side mean temperatures ``t_mean_shell``, ``t_mean_tube`` (°C)
    — what a threshold fouling model needs."""
    reason: np.ndarray
    """Text per scenario, "" where every value could be found."""


def exchanger_proper_outlet(fluid, t_in, t_mixed, bypass):
    """Outlet temperature of the exchanger proper (°C) from the side's outlet after its bypass
    re-mixed, by the enthalpy balance of the mixing; ``bypass`` is the fraction of the side's flow
    routed around the exchanger (0 <= bypass < 1).

    >>> from hxtrain.units.properties import ConstantCp
    >>> float(exchanger_proper_outlet(ConstantCp(2.0), 100.0, 80.0, 0.5))
    60.0
    """
    t_in, t_mixed, bypass = as_arrays(t_in, t_mixed, bypass)
    if np.all(bypass == 0.0):
        return t_mixed
    through = bypass < 1.0  # a side bypassed whole has no exchanger outlet: NaN
    h = (fluid.enthalpy(t_mixed) - bypass * fluid.enthalpy(t_in)) / np.where(through, 1.0 - bypass, 1.0)
    return np.where(through, fluid.temperature(h, guess=t_mixed), np.nan)


def back_calculate(spec, t_hot_in, t_hot_out, t_cold_in, t_cold_out, m_hot, m_cold, fluid_hot, fluid_cold):
    """The condition of an exchanger described by ``spec`` (an ``ExchangerSpec``: arrangement,
    shells, shell side, mixed side, bypasses, area and U model) from its terminal temperatures
    (°C, after any bypass) and flows (kg/s, whole exchanger).

    Returns an :class:`ExchangerCondition`. A value is NaN, with its reason, where the hot side
    does not enter hotter than the cold side, a side's temperature change has the wrong sign or
    is zero, P is beyond what the arrangement can reach at that R, or the exchanger has no
    area (a fixed UA) or no clean model (a fixed U) for the values that need them.
    """
    t_hi, t_ho, t_ci, t_co, m_h, m_c = as_arrays(t_hot_in, t_hot_out, t_cold_in, t_cold_out, m_hot, m_cold)
    t_ho = exchanger_proper_outlet(fluid_hot, t_hi, t_ho, spec.bypass_hot)
    t_co = exchanger_proper_outlet(fluid_cold, t_ci, t_co, spec.bypass_cold)
    m_hx, m_cx = m_h * (1.0 - spec.bypass_hot), m_c * (1.0 - spec.bypass_cold)
    with np.errstate(invalid="ignore", divide="ignore"):
        duty_hot = m_hx * (fluid_hot.enthalpy(t_hi) - fluid_hot.enthalpy(t_ho))
        duty_cold = m_cx * (fluid_cold.enthalpy(t_co) - fluid_cold.enthalpy(t_ci))
        duty = 0.5 * (duty_hot + duty_cold)
        span = t_hi - t_ci
        drop_hot, rise_cold = t_hi - t_ho, t_co - t_ci
        sane = (span > 0.0) & (drop_hot > 0.0) & (rise_cold > 0.0) & (duty > 0.0)
        c_hot = np.where(sane, duty / np.where(sane, drop_hot, 1.0), np.nan)
        c_cold = np.where(sane, duty / np.where(sane, rise_cold, 1.0), np.nan)
        hot_basis = c_hot <= c_cold
        c1 = np.where(hot_basis, c_hot, c_cold)
        c2 = np.where(hot_basis, c_cold, c_hot)
        p1 = np.where(hot_basis, drop_hot, rise_cold) / np.where(span > 0.0, span, np.nan)
        r1 = c1 / c2
        basis_side = np.where(hot_basis, "hot", "cold")
        flags = {"basis_is_shell": basis_side == spec.shell_side, "tube_passes": spec.tube_passes,
                 "shells": spec.shells,
                 "basis_is_mixed": None if spec.mixed_side is None else basis_side == spec.mixed_side}
        ntu1 = ntu_from_p(np.where(sane, p1, 0.5), np.where(sane, r1, 0.5), spec.arrangement, **flags)
        ntu1 = np.where(sane, ntu1, np.nan)
        ua = ntu1 * c1
        area = spec.total_area
        u_service = ua * 1000.0 / area if area else np.full_like(ua, np.nan)
        u_clean, films = _clean_u(spec, m_hx, m_cx, 0.5 * (t_hi + t_ho), 0.5 * (t_ci + t_co), fluid_hot, fluid_cold,
                                  ua.shape)
        fouling = 1.0 / u_service - 1.0 / u_clean
    reason = np.full(ua.shape, "", dtype=object)
    reason[~np.isfinite(fouling)] = "no clean film model (U is fixed)" if not spec.fouling else "no value"
    reason[sane & ~np.isfinite(ntu1)] = "P is beyond what this arrangement can reach at this R"
    reason[~sane] = "the temperatures do not describe heat flowing from the hot to the cold side"
    known = np.all(np.isfinite([t_hi, t_ho, t_ci, t_co, m_h, m_c]), axis=0)
    reason[~known] = ("not determined: a temperature or flow at the exchanger is neither measured nor found by the "
                      "balances")
    return ExchangerCondition(duty, duty_hot - duty_cold, np.where(sane, drop_hot / span, np.nan),
                              np.where(sane, c_hot / c_cold, np.nan), ua, u_service, u_clean, fouling, films, reason)


def _clean_u(spec, m_hot, m_cold, t_mean_hot, t_mean_cold, fluid_hot, fluid_cold, shape):
    """U of the clean exchanger at this operating point (W/m²·K) and its films; NaN and no films
    without a film model."""
    if spec.ua is not None or not spec.fouling:
        return np.full(shape, np.nan), {}
    shell_hot = spec.shell_side == "hot"
    per_shell = 1.0 / spec.shells_in_parallel
    m_shell, m_tube = (m_hot, m_cold) if shell_hot else (m_cold, m_hot)
    t_shell, t_tube = (t_mean_hot, t_mean_cold) if shell_hot else (t_mean_cold, t_mean_hot)
    f_shell, f_tube = (fluid_hot, fluid_cold) if shell_hot else (fluid_cold, fluid_hot)
    coefficients = spec.thermal.evaluate(m_shell * per_shell, m_tube * per_shell, t_shell, t_tube, f_shell, f_tube)
    films = {"t_mean_shell": np.broadcast_to(t_shell, shape), "t_mean_tube": np.broadcast_to(t_tube, shape)}
    for key, value in (("h_shell", coefficients.h_shell), ("h_tube", coefficients.h_tube),
                       ("re_tube", coefficients.reynolds_tube)):
        if value is not None:
            films[key] = np.broadcast_to(value, shape)
    return np.broadcast_to(coefficients.u_clean, shape), films
