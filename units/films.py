"""Film heat-transfer coefficients: tube side (Dittus–Boelter, Gnielinski, laminar), shell side
(Kern's method), and the scaling of a reference film coefficient with flow and properties.

All functions take floats or numpy arrays (broadcast, leading batch axis) and return arrays.
SI units: diameters and lengths m, viscosity Pa·s, conductivity W/m·K, cp J/kg·K, h W/m²·K.

References
----------
.. [1] Gnielinski, V. "New equations for heat and mass transfer in turbulent pipe and channel
       flow." Int. Chem. Eng. 16 (1976) 359-368.
.. [2] Gnielinski, V. "Ein neues Berechnungsverfahren für die Wärmeübertragung im
       Übergangsbereich zwischen laminarer und turbulenter Rohrströmung." Forsch. Ingenieurwes.
       61 (1995) 240-248: linear interpolation in Re across 2300-10^4 (from memory).
.. [3] Dittus, F. W., L. M. K. Boelter. Univ. Calif. Publ. Eng. 2 (1930) 443; Winterton, R. H. S.
       "Where did the Dittus and Boelter equation come from?" Int. J. Heat Mass Transfer 41 (1998)
       809-810 (exponent 0.4 heating, 0.3 cooling).
.. [4] Sieder, E. N., G. E. Tate. "Heat transfer and pressure drop of liquids in tubes."
       Ind. Eng. Chem. 28 (1936) 1429-1435.
.. [5] Kern, D. Q. Process Heat Transfer. McGraw-Hill, 1950, ch. 7 (shell side: equivalent
       diameter, crossflow area, j_H = 0.36 Re^0.55). From memory.
.. [6] Filonenko, G. K. (1954), the smooth-tube friction factor used with [1]_.
"""

from __future__ import annotations

import numpy as np

from .arrays import as_arrays, as_floats

__all__ = [
    "LAMINAR_LIMIT",
    "TURBULENT_LIMIT",
    "friction_factor_smooth",
    "nusselt_dittus_boelter",
    "nusselt_gnielinski",
    "nusselt_laminar",
    "nusselt_tube_side",
    "kern_equivalent_diameter",
    "kern_crossflow_area",
    "nusselt_kern_shell",
    "reynolds",
    "prandtl",
    "scaled_film_coefficient",
    "property_correction",
    "log_property_correction",
]

LAMINAR_LIMIT = 2300.0
"""Tube-side Reynolds number below which flow is taken as laminar (common practice)."""
TURBULENT_LIMIT = 1.0e4
"""Tube-side Reynolds number above which flow is fully turbulent ([2]_)."""



def reynolds(mass_flow, diameter, flow_area, viscosity):
    r"""Reynolds number from a mass flow: :math:`Re = \dot m D / (A\,\mu)`.

    >>> round(float(reynolds(2.0, 0.02, 0.01, 1e-3)), 6)
    4000.0
    """
    mass_flow, diameter, flow_area, viscosity = as_arrays(mass_flow, diameter, flow_area, viscosity)
    return mass_flow * diameter / (flow_area * viscosity)


def prandtl(cp, viscosity, conductivity):
    r"""Prandtl number :math:`Pr = c_p \mu / k` (cp in J/kg·K).

    >>> round(float(prandtl(2000.0, 1e-3, 0.1)), 9)
    20.0
    """
    cp, viscosity, conductivity = as_arrays(cp, viscosity, conductivity)
    return cp * viscosity / conductivity


def friction_factor_smooth(re):
    r"""Darcy friction factor of a smooth tube, turbulent flow (Filonenko [6]_, as used in [1]_):

    .. math:: f_D = (1.82\log_{10} Re - 1.64)^{-2}, \qquad 10^4 \le Re \le 5\cdot10^6

    >>> round(float(friction_factor_smooth(1e5)), 6)
    0.017969
    """
    (re,) = as_arrays(re)
    return (1.82 * np.log10(re) - 1.64) ** -2


def nusselt_dittus_boelter(re, pr, heating=True):
    r"""Dittus–Boelter correlation for fully turbulent flow in a smooth tube [3]_:

    .. math:: Nu = 0.023\,Re^{0.8}\,Pr^{n}, \quad n = 0.4 \text{ (fluid heated)}, 0.3 \text{ (cooled)}

    Valid for :math:`Re > 10^4`, :math:`0.6 < Pr < 160`, L/D > 10.

    >>> round(float(nusselt_dittus_boelter(1e5, 7.0)), 6)
    500.918478
    """
    re, pr = as_arrays(re, pr)
    return 0.023 * re**0.8 * pr ** (0.4 if heating else 0.3)


def nusselt_gnielinski(re, pr, fd=None):
    r"""Gnielinski's correlation for turbulent and transitional flow in a tube [1]_:

    .. math:: Nu = \frac{(f_D/8)(Re - 1000)\,Pr}{1 + 12.7\,(f_D/8)^{1/2}(Pr^{2/3} - 1)}

    with the smooth-tube friction factor of :func:`friction_factor_smooth` unless ``fd`` is
    given. Valid for :math:`3000 \le Re \le 5\cdot10^6`, :math:`0.5 \le Pr \le 2000`.

    >>> round(float(nusselt_gnielinski(1e5, 7.0)), 6)
    598.533881
    """
    re, pr = as_arrays(re, pr)
    fd = friction_factor_smooth(re) if fd is None else np.asarray(fd, dtype=float)
    eighth = fd / 8.0
    return eighth * (re - 1000.0) * pr / (1.0 + 12.7 * np.sqrt(eighth) * (pr ** (2.0 / 3.0) - 1.0))


def nusselt_laminar(re, pr, diameter, length):
    r"""Laminar flow in a tube with a developing temperature profile, Sieder–Tate form [4]_,
    bounded below by the fully developed constant-wall-temperature value:

    .. math:: Nu = \max\left[1.86\,(Re\,Pr\,D/L)^{1/3},\; 3.66\right]

    Valid for Re < 2300 (the viscosity-ratio factor is left to the caller).

    >>> round(float(nusselt_laminar(1000.0, 50.0, 0.02, 6.0)), 6)
    10.235974
    """
    re, pr, diameter, length = as_arrays(re, pr, diameter, length)
    return np.maximum(1.86 * np.cbrt(re * pr * diameter / length), 3.66)


def nusselt_tube_side(re, pr, diameter, length):
    r"""Tube-side Nusselt number over all regimes.

    * Re <= 2300: :func:`nusselt_laminar`;
    * Re >= 10^4: :func:`nusselt_gnielinski`;
    * in between: linear interpolation in Re between the laminar value at 2300 and the
      Gnielinski value at 10^4, as proposed by Gnielinski [2]_.

    >>> round(float(nusselt_tube_side(6150.0, 5.0, 0.02, 6.0)), 6)
    38.058871
    """
    re, pr, diameter, length = as_arrays(re, pr, diameter, length)
    lam = nusselt_laminar(np.minimum(re, LAMINAR_LIMIT), pr, diameter, length)
    turb = nusselt_gnielinski(np.maximum(re, TURBULENT_LIMIT), pr)
    weight = np.clip((re - LAMINAR_LIMIT) / (TURBULENT_LIMIT - LAMINAR_LIMIT), 0.0, 1.0)
    # lam is the value at min(Re, 2300) and turb at max(Re, 10^4): outside the transition band
    # the blend is the pure laminar or turbulent value
    return (1.0 - weight) * lam + weight * turb


def kern_equivalent_diameter(pitch, outer_diameter, layout="triangular"):
    r"""Kern's shell-side equivalent diameter [5]_ (m).

    .. math:: D_e = \frac{4(P_T^2 - \pi D_o^2/4)}{\pi D_o} \text{ (square pitch)},\qquad
              D_e = \frac{4(0.43P_T^2 - 0.5\pi D_o^2/4)}{0.5\pi D_o} \text{ (triangular)}

    >>> round(float(kern_equivalent_diameter(0.0254, 0.01905, "square")), 6)
    0.02407
    """
    pitch, do = as_arrays(pitch, outer_diameter)
    if layout == "square":
        return 4.0 * (pitch**2 - np.pi * do**2 / 4.0) / (np.pi * do)
    if layout == "triangular":
        return 4.0 * (0.43 * pitch**2 - 0.5 * np.pi * do**2 / 4.0) / (0.5 * np.pi * do)
    raise ValueError(f"layout must be 'square' or 'triangular', got {layout!r}")


def kern_crossflow_area(shell_diameter, pitch, outer_diameter, baffle_spacing):
    r"""Kern's shell-side crossflow area at the shell centre line [5]_ (m²):
    :math:`A_s = D_s (P_T - D_o) B / P_T`.

    >>> round(float(kern_crossflow_area(0.584, 0.0254, 0.019, 0.1524)), 8)
    0.0224256
    """
    ds, pitch, do, spacing = as_arrays(shell_diameter, pitch, outer_diameter, baffle_spacing)
    return ds * (pitch - do) * spacing / pitch


def nusselt_kern_shell(re, pr):
    r"""Kern's shell-side correlation [5]_, based on the equivalent diameter:

    .. math:: Nu = 0.36\,Re^{0.55}\,Pr^{1/3}

    (the viscosity-ratio factor :math:`(\mu/\mu_w)^{0.14}` is left to the caller). Valid for
    :math:`2\cdot10^3 < Re < 10^6` with 25 % baffle cut.

    >>> round(float(nusselt_kern_shell(2e4, 10.0)), 6)
    179.970918
    """
    re, pr = as_arrays(re, pr)
    return 0.36 * re**0.55 * np.cbrt(pr)


def scaled_film_coefficient(h_ref, mass_flow, reference_flow, exponent, property_ratio=1.0):
    r"""A reference film coefficient carried to another flow:

    .. math:: h = h_{ref}\,(\dot m/\dot m_{ref})^{n}\,\phi

    with n = 0.8 for turbulent tube-side flow (Dittus–Boelter form) and n = 0.6 for shell-side
    crossflow over tube banks (Kern's Re^0.55, rounded: common practice), and :math:`\phi` the
    property correction (see :func:`property_correction`). A side with no flow has h = 0.

    >>> round(float(scaled_film_coefficient(1000.0, 12.0, 10.0, 0.8)), 6)
    1157.031005
    """
    h_ref, m, m_ref, n, phi = as_floats(h_ref, mass_flow, reference_flow, exponent, property_ratio)
    with np.errstate(divide="ignore"):  # no flow: ln 0 = -inf, and exp(-inf) = 0
        # exp(n ln x) rather than x**n: on a batch a third cheaper (see log_property_correction)
        return h_ref * np.exp(n * np.log(np.maximum(m, 0.0) / m_ref)) * phi


def log_property_correction(exponent, log_viscosity_ratio, cp_ratio=1.0, conductivity_ratio=1.0):
    r"""ln φ of :func:`property_correction` from ln(μ/μ_ref) (which an Andrade fluid gives
    without an exp and a log) and the ratios of cp and conductivity to their reference values:
    the solver's form, φ = exp(ln φ), since on a batch numpy's exp and log run several times
    faster than its power and cube root (14 and 17-24 ns an element against ~5 on a 2-core x86
    machine):

    .. math:: \ln\phi = (1/3 - n)\ln(\mu/\mu_{ref}) + \tfrac13\ln(c_p/c_{p,ref})
              + \tfrac23\ln(k/k_{ref})

    >>> round(float(log_property_correction(0.8, np.log(2.0))), 6)
    -0.323469
    """
    n, log_mu, cp, k = as_floats(exponent, log_viscosity_ratio, cp_ratio, conductivity_ratio)
    log_phi = (1.0 / 3.0 - n) * log_mu
    if cp.ndim or cp != 1.0:  # a constant cp or conductivity leaves its term 0: no log over the batch
        term = np.log(cp)
        term /= 3.0
        log_phi = log_phi + term
    if k.ndim or k != 1.0:
        term = np.log(k)
        term *= 2.0 / 3.0
        log_phi = log_phi + term
    return log_phi


def property_correction(exponent, viscosity, reference_viscosity, cp=1.0, reference_cp=1.0,
                        conductivity=1.0, reference_conductivity=1.0):
    r"""Property factor for :func:`scaled_film_coefficient`, from Nu ∝ Re^n Pr^{1/3}:

    .. math:: \phi = (\mu/\mu_{ref})^{1/3 - n}\,(c_p/c_{p,ref})^{1/3}\,(k/k_{ref})^{2/3}

    >>> round(float(property_correction(0.8, 2e-3, 1e-3)), 6)
    0.723635
    """
    mu, mu_ref, cp, cp_ref, k, k_ref = as_floats(viscosity, reference_viscosity, cp, reference_cp, conductivity,
                                                 reference_conductivity)
    return np.exp(log_property_correction(exponent, np.log(mu / mu_ref), cp / cp_ref, k / k_ref))
