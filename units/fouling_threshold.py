r"""Threshold fouling of crude oil: the Ebert–Panchal rate, Polley's modification, and their
thresholds (the conditions at which deposition and removal balance and fouling stops).

Ebert and Panchal's model [1]_ [2]_: the fouling rate is a chemical deposition term, Arrhenius in
the film temperature, less a removal term that goes with the wall shear stress,

.. math:: \frac{dR_f}{dt} = \alpha\,Re^{\beta}\,Pr^{-0.33}\exp\!\Big(-\frac{E}{R_gT_{film}}\Big)
          - \gamma\,\tau_w

(the Prandtl exponent is published as -0.33, often written -1/3). Below the *threshold* — the
film temperature and velocity at which the two terms cancel — an exchanger does not foul.
Polley et al. [3]_ replaced the film temperature with the wall temperature and the removal term
with one in :math:`Re^{0.8}`, and fixed :math:`\beta = -0.8`.

Units (hxtrain's choice for fouling, see :mod:`.fouling_models`): time in **days**, fouling
resistance in m²·K/W, so rates are in m²·K/W per day; :math:`\alpha` in m²·K/W per day,
:math:`\gamma` in m²·K/W per day per Pa (Ebert–Panchal) or m²·K/W per day (Polley);
temperatures in **K** (the Arrhenius term needs absolute temperature); E in J/mol; shear stress
in Pa. Literature values quoted per hour or per second convert by 24 or 86 400 (and per kW by
1000). The constants are fitted to a crude and a rig; none are built in: they are inputs.

The film temperature, Reynolds number and wall shear stress are supplied by the caller at each
time step (the network sets them from its solution); :func:`film_temperature` and
:func:`blasius_wall_shear_stress` are the published ways to form them from bulk and wall
temperatures and a tube-side velocity.

References
----------
.. [1] Ebert, W., and C. B. Panchal. "Analysis of Exxon crude-oil-slip-stream coking data." In
       Fouling Mitigation of Industrial Heat-Exchange Equipment, Begell House, New York, 1997,
       451-460 (conference San Luis Obispo 1995). From memory.
.. [2] Panchal, C. B., W. C. Kuru, C. F. Liao, W. A. Ebert and J. W. Palen. "Threshold
       conditions for crude oil fouling." In Understanding Heat Exchanger Fouling and its
       Mitigation, Begell House, 1999, 273-279 (film temperature T_b + 0.55 (T_w - T_b)). From
       memory.
.. [3] Polley, G. T., D. I. Wilson, B. L. Yeap and S. J. Pugh. "Evaluation of laboratory crude
       oil threshold fouling data for application to refinery pre-heat trains." Applied Thermal
       Engineering 22 (2002) 777-788. From memory.
.. [4] Blasius, H. "Das Ähnlichkeitsgesetz bei Reibungsvorgängen in Flüssigkeiten."
       Forschungsheft 131, VDI, 1913: Fanning friction factor 0.0791 Re^-0.25 of smooth tubes,
       about 4e3 < Re < 1e5 (from memory).
"""

from __future__ import annotations

import numpy as np

from .arrays import as_floats

__all__ = [
    "GAS_CONSTANT",
    "PRANDTL_EXPONENT",
    "film_temperature",
    "blasius_wall_shear_stress",
    "ebert_panchal_rate",
    "ebert_panchal_fouling",
    "ebert_panchal_threshold_temperature",
    "ebert_panchal_threshold_velocity",
    "polley_rate",
    "polley_fouling",
    "polley_threshold_reynolds",
]

GAS_CONSTANT = 8.314462618
"""Molar gas constant R_g, J/(mol·K) (CODATA 2018, exact by the SI definition)."""
PRANDTL_EXPONENT = -0.33
"""Exponent of Pr in the deposition term as published in [1]_ and [3]_."""
FILM_WALL_WEIGHT = 0.55
"""Weight of the wall temperature in Ebert and Panchal's film temperature [2]_."""
BLASIUS_SHEAR = 0.0791 / 2.0
"""tau_w = (f_F/2) rho u^2 with the Fanning factor f_F = 0.0791 Re^-1/4 [4]_."""
POLLEY_BETA = -0.8
"""Reynolds exponent of deposition in Polley et al.'s form [3]_ (removal goes as Re^0.8)."""


def film_temperature(t_bulk, t_wall, wall_weight=FILM_WALL_WEIGHT):
    r"""Film temperature of the threshold model, :math:`T_{film} = T_b + 0.55\,(T_w - T_b)` [2]_.

    Any temperature unit (K for the Arrhenius term). ``wall_weight`` 0.5 gives the arithmetic
    mean film temperature used elsewhere.

    >>> float(film_temperature(500.0, 600.0))
    555.0
    """
    t_bulk, t_wall, weight = as_floats(t_bulk, t_wall, wall_weight)
    return t_bulk + weight * (t_wall - t_bulk)


def blasius_wall_shear_stress(velocity, density, viscosity, diameter):
    r"""Wall shear stress of turbulent flow in a smooth tube, Pa:

    .. math:: \tau_w = \frac{f_F}{2}\rho u^2, \qquad f_F = 0.0791\,Re^{-1/4},
              \qquad Re = \rho u d/\mu

    Blasius [4]_, valid about :math:`4\cdot10^3 < Re < 10^5`. Velocity in m/s, density kg/m³,
    viscosity Pa·s, diameter m.

    >>> round(float(blasius_wall_shear_stress(2.0, 800.0, 1e-3, 0.02)), 6)   # Re = 32000
    9.462567
    """
    u, rho, mu, d = as_floats(velocity, density, viscosity, diameter)
    re = rho * u * d / mu
    return BLASIUS_SHEAR * re**-0.25 * rho * u**2


def _arrhenius(activation_energy, temperature):
    """exp(-E/(R_g T)), T in K."""
    return np.exp(-activation_energy / (GAS_CONSTANT * temperature))


def ebert_panchal_rate(re, pr, t_film, tau_w, alpha, beta, activation_energy, gamma):
    r"""Net fouling rate of the Ebert–Panchal threshold model [1]_, m²·K/W per day.

    .. math:: \frac{dR_f}{dt} = \alpha\,Re^{\beta}\,Pr^{-0.33}
              \exp\!\Big(-\frac{E}{R_gT_{film}}\Big) - \gamma\,\tau_w

    Parameters
    ----------
    re, pr : array_like
        Reynolds and Prandtl numbers of the fouling stream (tube side in [1]_).
    t_film : array_like
        Film temperature, K (:func:`film_temperature`).
    tau_w : array_like
        Wall shear stress, Pa.
    alpha : array_like
        Deposition constant, m²·K/W per day.
    beta : array_like
        Reynolds exponent of deposition (-0.66 in [1]_'s fit, from memory).
    activation_energy : array_like
        E, J/mol (68 kJ/mol in [1]_'s fit, from memory).
    gamma : array_like
        Removal constant, m²·K/W per day per Pa.

    Returns
    -------
    ndarray
        The net rate; negative below the threshold, where the published model predicts no
        fouling (the integrators in :mod:`.fouling_models` hold R_f there, they remove nothing).

    Fitted to turbulent tube-side crude data (Re ~ 1e4 to 1e5, film 200-400 °C in [1]_); the
    constants belong to the crude and the rig they were fitted on.

    >>> rate = ebert_panchal_rate(3e4, 20.0, 550.0, 10.0, 1.4e4, -0.66, 68e3, 1e-7)
    >>> round(float(rate), 10)
    1.0133e-06
    """
    re, pr, t, tau, alpha, beta, e, gamma = as_floats(re, pr, t_film, tau_w, alpha, beta, activation_energy, gamma)
    return alpha * re**beta * pr**PRANDTL_EXPONENT * _arrhenius(e, t) - gamma * tau


def ebert_panchal_fouling(t, re, pr, t_film, tau_w, alpha, beta, activation_energy, gamma, r_f0=0.0):
    r"""Fouling resistance after ``t`` days of the Ebert–Panchal model at constant conditions,
    m²·K/W: linear growth at the net rate above the threshold, none below it,

    .. math:: R_f(t) = R_{f0} + \max\!\Big(\frac{dR_f}{dt}, 0\Big)\,t

    (:func:`ebert_panchal_rate` for the rate and the units of the arguments).

    >>> round(float(ebert_panchal_fouling(100.0, 3e4, 20.0, 550.0, 10.0, 1.4e4, -0.66, 68e3, 1e-7)), 8)
    0.00010133
    """
    rate = ebert_panchal_rate(re, pr, t_film, tau_w, alpha, beta, activation_energy, gamma)
    t, r_f0 = as_floats(t, r_f0)
    return r_f0 + np.maximum(rate, 0.0) * t


def ebert_panchal_threshold_temperature(re, pr, tau_w, alpha, beta, activation_energy, gamma):
    r"""Film temperature, K, at which the Ebert–Panchal rate is zero (the threshold at given
    flow): the inverse of :func:`ebert_panchal_rate` in :math:`T_{film}`,

    .. math:: T_{film}^* = \frac{E}{R_g\,\ln\!\big[\alpha\,Re^{\beta}Pr^{-0.33}/(\gamma\tau_w)\big]}

    A hotter film fouls, a cooler one does not. Where removal outweighs deposition at any
    temperature (the logarithm <= 0) there is no threshold: inf.

    >>> t = ebert_panchal_threshold_temperature(3e4, 20.0, 10.0, 1.4e4, -0.66, 68e3, 1e-7)
    >>> abs(float(ebert_panchal_rate(3e4, 20.0, t, 10.0, 1.4e4, -0.66, 68e3, 1e-7))) < 1e-20
    True
    """
    re, pr, tau, alpha, beta, e, gamma = as_floats(re, pr, tau_w, alpha, beta, activation_energy, gamma)
    with np.errstate(divide="ignore"):
        log_ratio = (np.log(alpha) + beta * np.log(re) + PRANDTL_EXPONENT * np.log(pr)
                     - np.log(gamma) - np.log(tau))
        return np.where(log_ratio > 0.0, e / (GAS_CONSTANT * np.where(log_ratio > 0.0, log_ratio, 1.0)), np.inf)


def ebert_panchal_threshold_velocity(t_film, density, viscosity, diameter, pr, alpha, beta, activation_energy, gamma):
    r"""Tube-side velocity, m/s, at which the Ebert–Panchal rate is zero at a given film
    temperature, with the Blasius wall shear stress (:func:`blasius_wall_shear_stress`); faster
    flow does not foul, slower does.

    With :math:`Re = ku`, :math:`k = \rho d/\mu` and :math:`\tau_w = c\,\rho k^{-1/4}u^{7/4}`,
    :math:`c = 0.0791/2`, deposition equals removal at

    .. math:: u^* = \left[\frac{\alpha\,k^{\beta + 1/4}\,Pr^{-0.33}
              \exp(-E/R_gT_{film})}{c\,\gamma\,\rho}\right]^{1/(7/4 - \beta)}

    (:math:`\beta < 7/4`). Units as in :func:`ebert_panchal_rate`; density kg/m³, viscosity
    Pa·s, diameter m. Check that Re at u* lies within the Blasius range (about 4e3 to 1e5).

    >>> u = ebert_panchal_threshold_velocity(560.0, 800.0, 1e-3, 0.02, 20.0, 1.4e4, -0.66, 68e3, 1e-7)
    >>> round(float(u), 6)
    3.000993
    """
    t, rho, mu, d, pr, alpha, beta, e, gamma = as_floats(
        t_film, density, viscosity, diameter, pr, alpha, beta, activation_energy, gamma)
    k = rho * d / mu
    # in logarithms: the bracket spans many decades (the Arrhenius factor alone ~1e-7)
    log_bracket = (np.log(alpha) + (beta + 0.25) * np.log(k) + PRANDTL_EXPONENT * np.log(pr)
                   - e / (GAS_CONSTANT * t) - np.log(BLASIUS_SHEAR * gamma * rho))
    return np.exp(log_bracket / (1.75 - beta))


def polley_rate(re, pr, t_wall, alpha, activation_energy, gamma):
    r"""Net fouling rate of Polley et al.'s modified threshold model [3]_, m²·K/W per day:

    .. math:: \frac{dR_f}{dt} = \alpha\,Re^{-0.8}\,Pr^{-0.33}
              \exp\!\Big(-\frac{E}{R_gT_w}\Big) - \gamma\,Re^{0.8}

    with the wall temperature :math:`T_w` (K) in place of the film temperature and removal in
    :math:`Re^{0.8}` in place of the shear stress. :math:`\alpha` and :math:`\gamma` in m²·K/W
    per day, E in J/mol. Negative below the threshold (see :func:`ebert_panchal_rate`).

    >>> round(float(polley_rate(3e4, 20.0, 600.0, 2.5e4, 68e3, 2.5e-10)), 12)
    1.977325e-06
    """
    re, pr, t, alpha, e, gamma = as_floats(re, pr, t_wall, alpha, activation_energy, gamma)
    return alpha * re**POLLEY_BETA * pr**PRANDTL_EXPONENT * _arrhenius(e, t) - gamma * re**-POLLEY_BETA


def polley_fouling(t, re, pr, t_wall, alpha, activation_energy, gamma, r_f0=0.0):
    r"""Fouling resistance after ``t`` days of Polley et al.'s model at constant conditions:
    :math:`R_f = R_{f0} + \max(dR_f/dt, 0)\,t` (:func:`polley_rate`).

    >>> round(float(polley_fouling(100.0, 3e4, 20.0, 600.0, 2.5e4, 68e3, 2.5e-10)), 10)
    0.0001977325
    """
    rate = polley_rate(re, pr, t_wall, alpha, activation_energy, gamma)
    t, r_f0 = as_floats(t, r_f0)
    return r_f0 + np.maximum(rate, 0.0) * t


def polley_threshold_reynolds(t_wall, pr, alpha, activation_energy, gamma):
    r"""Reynolds number at which Polley et al.'s rate is zero at a given wall temperature:

    .. math:: Re^* = \left[\frac{\alpha\,Pr^{-0.33}\exp(-E/R_gT_w)}{\gamma}\right]^{1/1.6}

    Faster flow (higher Re) does not foul. Units as in :func:`polley_rate`.

    >>> re = polley_threshold_reynolds(600.0, 20.0, 2.5e4, 68e3, 2.5e-10)
    >>> abs(float(polley_rate(re, 20.0, 600.0, 2.5e4, 68e3, 2.5e-10))) < 1e-20
    True
    """
    t, pr, alpha, e, gamma = as_floats(t_wall, pr, alpha, activation_energy, gamma)
    log_ratio = np.log(alpha) + PRANDTL_EXPONENT * np.log(pr) - e / (GAS_CONSTANT * t) - np.log(gamma)
    return np.exp(log_ratio / (-2.0 * POLLEY_BETA))
