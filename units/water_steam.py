r"""Water and steam at one pressure as an enthalpy curve, from IAPWS-IF97.

The properties come from the ``iapws`` package (J. J. Gómez Romera's implementation of the IAPWS
releases, maintained on PyPI; a runtime dependency for steam heaters and boiler feed water).
Enthalpies keep the IAPWS reference (internal energy and entropy of the liquid zero at the triple
point), which CoolProp shares.

The curve :func:`water_steam_curve` builds has liquid points up to the saturation temperature,
the saturation plateau (saturated liquid, q = 0, and saturated vapour, q = 1, at one
temperature) and vapour points above it; at or above the critical pressure (22.064 MPa) there
is no plateau. Points are spaced at most ``step`` apart in temperature, closer near saturation
and the critical point where cp changes fastest, so that the linear interpolation of
:mod:`.enthalpy_curves` stays within its stated error (see the tests against CoolProp).

References
----------
.. [1] Wagner, W., et al. "The IAPWS Industrial Formulation 1997 for the Thermodynamic Properties
       of Water and Steam." J. Eng. Gas Turbines Power 122 (2000) 150-182.
.. [2] IAPWS R7-97(2012), Revised Release on the IAPWS Industrial Formulation 1997.
"""

from __future__ import annotations

import numpy as np

from .enthalpy_curves import EnthalpyCurve

__all__ = ["water_steam_curve", "saturation_temperature", "CRITICAL_PRESSURE_KPA", "IF97_RANGE"]

CRITICAL_PRESSURE_KPA = 22064.0
"""Critical pressure of water, kPa (IAPWS)."""

IF97_RANGE = (0.0, 800.0)
"""Temperatures (°C) of IF97 regions 1-3 used here (region 5, above 800 °C, is left out: no
heat-exchanger network stream in a process plant needs it)."""

KELVIN = 273.15


def saturation_temperature(pressure_kpa):
    """Saturation temperature (°C) of water at ``pressure_kpa`` (kPa, 0.611-22064) by IF97.

    >>> round(saturation_temperature(101.325), 4)
    99.9743
    """
    from iapws.iapws97 import _TSat_P

    _check_pressure(pressure_kpa)
    return float(_TSat_P(pressure_kpa / 1000.0)) - KELVIN


def _check_pressure(pressure_kpa):
    if not 0.611657 <= pressure_kpa <= 100000.0:
        raise ValueError(f"water/steam pressure {pressure_kpa} kPa is outside IF97's 0.611657-100000 kPa")


def _state_enthalpy(t_c, pressure_mpa, quality=None):
    """IF97 specific enthalpy (kJ/kg) at (T, P), or of saturated liquid/vapour (quality 0 or 1)."""
    from iapws import IAPWS97

    state = IAPWS97(P=pressure_mpa, x=quality) if quality is not None else IAPWS97(T=t_c + KELVIN, P=pressure_mpa)
    if not state.status:
        raise ValueError(f"IF97 has no state at {t_c} °C and {pressure_mpa * 1000.0} kPa: {state.msg}")
    return float(state.h)


def _branch(t_from, t_to, p, step, tolerance, h_ends=(None, None)):
    """Temperatures and IF97 enthalpies from ``t_from`` to ``t_to`` at one phase: at most
    ``step`` apart, and each interval halved until the enthalpy at its middle lies within
    ``tolerance`` of the straight line between its ends (closest near saturation and the
    pseudo-critical peak of cp, where h bends most). Returns lists (T, h)."""
    count = max(2, int(np.ceil((t_to - t_from) / step)) + 1)
    temperatures = np.linspace(t_from, t_to, count)
    points = [(t, _state_enthalpy(t, p)) for t in temperatures[1:-1]]
    points = [(t_from, h_ends[0] if h_ends[0] is not None else _state_enthalpy(t_from, p)), *points,
              (t_to, h_ends[1] if h_ends[1] is not None else _state_enthalpy(t_to, p))]
    out = [points[0]]
    pending = points[:0:-1]  # right to left, so that pop() walks left to right
    while pending:
        (t0, h0), (t1, h1) = out[-1], pending[-1]
        middle = 0.5 * (t0 + t1)
        h_middle = _state_enthalpy(middle, p)
        if abs(h_middle - 0.5 * (h0 + h1)) > tolerance and t1 - t0 > 1e-3:
            pending.append((middle, h_middle))
        else:
            out.append(pending.pop())
    return [t for t, _ in out], [h for _, h in out]


def water_steam_curve(pressure_kpa, t_low, t_high, step=10.0, tolerance=0.01):
    """Water and steam at ``pressure_kpa`` between ``t_low`` and ``t_high`` as an enthalpy curve.

    Parameters
    ----------
    pressure_kpa : float
        Absolute pressure, kPa (IF97: 0.611657 to 100 000 kPa).
    t_low, t_high : float
        Temperature span, °C, within :data:`IF97_RANGE`; ``t_low < t_high``. Where the saturation
        temperature lies within the span the curve holds the saturation plateau.
    step : float
        Largest temperature interval between points, K.
    tolerance : float
        Largest departure of IF97's enthalpy at an interval's middle from the straight line
        between its ends, kJ/kg: intervals are halved until it holds (down to 1 mK).

    Returns
    -------
    EnthalpyCurve
        T in °C, h in kJ/kg (IAPWS reference), vapour mass fraction; ``pressure`` in kPa.

    Examples
    --------
    >>> curve = water_steam_curve(1000.0, 150.0, 250.0)
    >>> t_sat = saturation_temperature(1000.0)
    >>> round(t_sat, 3), [round(float(h), 1) for h in curve.enthalpy_bounds(t_sat)]
    (179.886, [762.7, 2777.1])
    """
    _check_pressure(pressure_kpa)
    if not IF97_RANGE[0] <= t_low < t_high <= IF97_RANGE[1]:
        raise ValueError(f"water/steam span {t_low}-{t_high} °C must rise within {IF97_RANGE[0]}-{IF97_RANGE[1]} °C")
    if step <= 0.0:
        raise ValueError(f"step must be positive, got {step} K")
    p = pressure_kpa / 1000.0
    supercritical = pressure_kpa >= CRITICAL_PRESSURE_KPA
    t_sat = None if supercritical else saturation_temperature(pressure_kpa)
    if t_sat is not None and t_low < t_sat < t_high:
        h_liquid_sat, h_vapour_sat = _state_enthalpy(t_sat, p, 0.0), _state_enthalpy(t_sat, p, 1.0)
        t_liquid, h_liquid = _branch(t_low, t_sat, p, step, tolerance, (None, h_liquid_sat))
        t_vapour, h_vapour = _branch(t_sat, t_high, p, step, tolerance, (h_vapour_sat, None))
        temperatures, enthalpies = t_liquid + t_vapour, h_liquid + h_vapour
        fractions = [0.0] * len(t_liquid) + [1.0] * len(t_vapour)
    else:
        # one phase throughout: liquid below saturation, vapour above, or above the critical pressure
        temperatures, enthalpies = _branch(t_low, t_high, p, step, tolerance)
        vapour = t_sat is not None and t_low >= t_sat
        fractions = [1.0 if vapour else 0.0] * len(temperatures)
    return EnthalpyCurve(temperatures, enthalpies, fractions, pressure=pressure_kpa, name="water/steam")


def saturation_enthalpies(pressure_kpa):
    """Specific enthalpies (kJ/kg, IAPWS reference) of saturated liquid and saturated vapour at
    ``pressure_kpa`` (kPa, below the critical pressure) by IF97; their difference is the latent
    heat of condensation.

    >>> [round(h, 1) for h in saturation_enthalpies(1000.0)]
    [762.7, 2777.1]
    """
    _check_pressure(pressure_kpa)
    if pressure_kpa >= CRITICAL_PRESSURE_KPA:
        raise ValueError(f"water at {pressure_kpa} kPa is at or above its critical pressure: it does not condense")
    p = pressure_kpa / 1000.0
    return _state_enthalpy(0.0, p, 0.0), _state_enthalpy(0.0, p, 1.0)
