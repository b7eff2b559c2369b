r"""Pressure drop per exchanger side: scaled from a reference, or from geometry (tube side; shell
side by Kern's method or, for a bundle rated by it, the Bell–Delaware method).

SI units: Pa, kg/s, kg/m³, m, Pa·s.

References
----------
.. [1] Kern, D. Q. Process Heat Transfer. McGraw-Hill, 1950, ch. 7: shell-side pressure drop
       :math:`\Delta p = f G_s^2 D_s (N_B + 1)/(2\rho D_e)`, tube-side return losses of four
       velocity heads per pass (from memory).
.. [2] Kakaç, S., H. Liu. Heat Exchangers: Selection, Rating, and Thermal Design, 2nd ed. CRC
       Press, 2002, ch. 8: the exponential fit of Kern's shell-side friction factor (from memory).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from . import bell_delaware
from .arrays import as_arrays
from .films import friction_factor_smooth

__all__ = ["scaled_pressure_drop", "tube_side_pressure_drop", "kern_shell_friction_factor", "kern_shell_pressure_drop",
           "ScaledDrop", "BundleDrop"]



def scaled_pressure_drop(reference_drop, mass_flow, reference_flow, exponent=1.8, density=1.0, reference_density=1.0):
    r"""Pressure drop carried from a reference condition to another flow and density:

    .. math:: \Delta p = \Delta p_{ref}\,(\dot m/\dot m_{ref})^{n}\,(\rho_{ref}/\rho)

    n = 1.8 for turbulent flow at fixed geometry (friction factor ~ Re^-0.2: common practice).

    >>> round(float(scaled_pressure_drop(50.0, 12.0, 10.0)), 6)
    69.42186
    """
    dp, m, m_ref, n, rho, rho_ref = as_arrays(reference_drop, mass_flow, reference_flow, exponent, density, reference_density)
    return dp * np.power(np.maximum(m, 0.0) / m_ref, n) * rho_ref / rho


def tube_side_pressure_drop(mass_flow, tubes, passes, inner_diameter, length, density, viscosity):
    r"""Tube-side pressure drop of one shell (Pa): friction plus four velocity heads per pass [1]_.

    .. math:: \Delta p = N_p\left(f_D \frac{L}{D_i} + 4\right)\frac{\rho v^2}{2},\qquad
              v = \frac{\dot m}{\rho\,(N_t/N_p)\,\pi D_i^2/4}

    with :math:`f_D = 64/Re` (laminar) or the smooth-tube turbulent factor, the larger of the two
    in transition (common practice).

    >>> round(float(tube_side_pressure_drop(20.0, 300, 2, 0.0148, 6.0, 850.0, 1e-3)), 1)
    11496.8
    """
    m, nt, npass, di, length, rho, mu = as_arrays(mass_flow, tubes, passes, inner_diameter, length, density, viscosity)
    area = (nt / npass) * np.pi * di**2 / 4.0
    velocity = m / (rho * area)
    re = np.maximum(rho * velocity * di / mu, 1e-12)
    fd = np.where(re < 2300.0, 64.0 / re, np.maximum(friction_factor_smooth(np.maximum(re, 2300.0)), 64.0 / re))
    return npass * (fd * length / di + 4.0) * rho * velocity**2 / 2.0


def kern_shell_friction_factor(re):
    r"""Kern's shell-side friction factor (dimensionless) as a curve fit of Kern's chart [2]_:

    .. math:: f = \exp(0.576 - 0.19\ln Re_s), \qquad 400 < Re_s \le 10^6

    with :math:`Re_s = G_s D_e/\mu` on Kern's equivalent diameter.

    >>> round(float(kern_shell_friction_factor(1.0e4)), 6)
    0.309139
    """
    (re,) = as_arrays(re)
    return np.exp(0.576 - 0.19 * np.log(re))


def kern_shell_pressure_drop(mass_flow, shell_diameter, baffle_spacing, baffles, pitch, outer_diameter,
                             density, viscosity, layout="triangular"):
    r"""Shell-side pressure drop of one shell by Kern's method [1]_ (Pa), viscosity-ratio factor
    left out:

    .. math:: \Delta p = \frac{f\,G_s^2\,D_s\,(N_B+1)}{2\rho D_e},\qquad G_s = \dot m / A_s

    >>> round(float(kern_shell_pressure_drop(11.0, 0.584, 0.1524, 22, 0.0254, 0.019, 995.0, 0.000803, "square")))
    19229
    """
    from .films import kern_crossflow_area, kern_equivalent_diameter

    m, ds, spacing, nb, pitch, do, rho, mu = as_arrays(mass_flow, shell_diameter, baffle_spacing, baffles, pitch,
                                                outer_diameter, density, viscosity)
    de = kern_equivalent_diameter(pitch, do, layout)
    g = m / kern_crossflow_area(ds, pitch, do, spacing)
    re = np.maximum(g * de / mu, 1.0)
    f = kern_shell_friction_factor(re)
    return f * g**2 * ds * (nb + 1.0) / (2.0 * rho * de)


@dataclass(frozen=True)
class ScaledDrop:
    """One shell's pressure drop scaled from a reference (:func:`scaled_pressure_drop`), as a
    callable (mass flow through one shell kg/s, mean temperature °C, fluid) -> Pa. The density
    correction applies where the fluid has a density; otherwise it is 1."""

    reference_drop: float
    reference_flow: float
    reference_temperature: float | None = None

    def __call__(self, mass_flow, temperature, fluid):
        rho = fluid.density(temperature)
        rho_ref = fluid.density(self.reference_temperature) if self.reference_temperature is not None else None
        if rho is None or rho_ref is None:
            rho = rho_ref = 1.0
        return scaled_pressure_drop(self.reference_drop, mass_flow, self.reference_flow, 1.8, rho, rho_ref)


@dataclass(frozen=True)
class BundleDrop:
    """One shell's pressure drop on the ``side`` ("tube" or "shell") of a tube bundle (any object
    with the :class:`hxtrain.units.u_models.TubeBundle` fields), as a callable (mass flow through
    one shell kg/s, mean temperature °C, fluid) -> Pa."""

    bundle: object
    side: str

    def __call__(self, mass_flow, temperature, fluid):
        b, rho, mu = self.bundle, fluid.density(temperature), fluid.viscosity(temperature)
        if self.side == "tube":
            return tube_side_pressure_drop(mass_flow, b.tubes, b.tube_passes, b.tube_inner_diameter, b.tube_length,
                                           rho, mu)
        if getattr(b, "shell_side_method", "kern") == "bell_delaware":
            cp, k = 1000.0 * fluid.cp(temperature), fluid.conductivity(temperature)
            return bell_delaware.shell_side_bell_delaware(mass_flow, rho, mu, cp, 1.0 if k is None else k,
                                                          b.baffled_shell).pressure_drop
        return kern_shell_pressure_drop(mass_flow, b.shell_inner_diameter, b.baffle_spacing, b.baffles, b.tube_pitch,
                                        b.tube_outer_diameter, rho, mu, getattr(b, "kern_layout", b.layout))
