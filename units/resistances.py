r"""Overall heat-transfer coefficient from resistances in series, all referred to the tube
outside area (the area an exchanger's data sheet quotes).

.. math::
    \frac{1}{U_o} = \frac{1}{h_o} + R_{f,o} + R_w + R_{f,i}\frac{D_o}{D_i}
                  + \frac{1}{h_i}\frac{D_o}{D_i},
    \qquad R_w = \frac{D_o \ln(D_o/D_i)}{2 k_w}

(o: shell side, outside the tubes; i: tube side). SI units: h and U in W/m²·K, resistances in
m²·K/W, diameters in m, wall conductivity in W/m·K.

References
----------
.. [1] Incropera, F. P., et al. Fundamentals of Heat and Mass Transfer. Wiley, eq. 11.5 (from memory).
.. [2] Kern, D. Q. Process Heat Transfer. McGraw-Hill, 1950, ch. 6 (clean and design
       coefficients, dirt factors; from memory).
.. [3] TEMA Standards, 10th ed., 2019, section RGP-T-2.4 (fouling resistances; from memory).
"""

from __future__ import annotations

import numpy as np

from .arrays import as_arrays, as_floats, select

__all__ = ["wall_resistance", "overall_coefficient", "films_from_clean_coefficient"]



def wall_resistance(outer_diameter, inner_diameter, conductivity):
    r"""Conduction resistance of a tube wall referred to the outside area (m²·K/W):
    :math:`R_w = D_o\ln(D_o/D_i)/(2k_w)`.

    >>> round(float(wall_resistance(0.01905, 0.01483, 45.0)), 10)
    5.30045e-05
    """
    do, di, k = as_arrays(outer_diameter, inner_diameter, conductivity)
    return do * np.log(do / di) / (2.0 * k)


def overall_coefficient(h_shell, h_tube, fouling_shell=0.0, fouling_tube=0.0, wall=0.0, diameter_ratio=1.0):
    r"""Overall coefficient U referred to the outside area (W/m²·K) from the resistances.

    ``diameter_ratio`` is D_o/D_i (tube-side resistances are per inside area, so they scale by
    it). A zero film coefficient (a side without flow) gives U = 0; one that is not a number, NaN.

    >>> round(float(overall_coefficient(1000.0, 2000.0, 0.0002, 0.0001, 5e-5, 1.25)), 6)
    500.0
    """
    hs, ht, rfs, rft, rw, ratio = as_floats(h_shell, h_tube, fouling_shell, fouling_tube, wall, diameter_ratio)
    with np.errstate(divide="ignore"):
        total = 1.0 / hs  # summed in place, in the order written: 1/h_s + R_fs + R_w + R_ft·ratio + ratio/h_t
        total += rfs
        total += rw
        total += rft * ratio
        total += ratio / ht
    return select((hs <= 0.0) | (ht <= 0.0), 0.0, 1.0 / total)  # a film not known (NaN) leaves U not known


def films_from_clean_coefficient(clean_u, shell_fraction, wall=0.0, diameter_ratio=1.0):
    r"""Film coefficients (h_shell, h_tube) consistent with a clean overall coefficient.

    The clean resistance less the wall, :math:`1/U_{clean} - R_w`, is split between the films:
    a fraction ``shell_fraction`` on the shell-side film, the rest on the tube-side film
    (referred to the outside area, so :math:`h_i = (D_o/D_i) / [(1-x)(1/U_{clean} - R_w)]`).

    >>> hs, ht = films_from_clean_coefficient(500.0, 0.6, 5e-5, 1.25)
    >>> round(float(overall_coefficient(hs, ht, wall=5e-5, diameter_ratio=1.25)), 9)
    500.0
    """
    u, x, rw, ratio = as_arrays(clean_u, shell_fraction, wall, diameter_ratio)
    films = 1.0 / u - rw
    if np.any(films <= 0.0):
        raise ValueError("the wall resistance alone exceeds the clean resistance 1/U")
    return 1.0 / (x * films), ratio / ((1.0 - x) * films)
