"""Tests of ``hxtrain.units.water_steam``: water/steam enthalpy curves from IAPWS-IF97 (the
``iapws`` package) against CoolProp 6+ (test-only reference): its IF97 backend (``IF97::Water``,
the same formulation: agreement limited by the curve's linear interpolation, built to 0.01 kJ/kg
at interval middles) and its default IAPWS-95 backend (``Water``, the scientific formulation
IF97 approximates: agreement limited by IF97 itself, largest near the critical point).

Run with ``-s`` to print the largest disagreements."""

from __future__ import annotations

import numpy as np
import pytest

CoolProp = pytest.importorskip("CoolProp.CoolProp")

from hxtrain.units.water_steam import CRITICAL_PRESSURE_KPA, saturation_temperature, water_steam_curve  # noqa: E402

KELVIN = 273.15
PRESSURES_KPA = [101.325, 500.0, 1000.0, 4000.0, 10000.0, 25000.0]


def _coolprop_h(backend, t_c, pressure_kpa):
    return np.array([CoolProp.PropsSI("H", "T", t + KELVIN, "P", pressure_kpa * 1e3, backend) / 1e3 for t in t_c])


@pytest.mark.parametrize("pressure_kpa", PRESSURES_KPA)
def test_enthalpy_against_coolprop(pressure_kpa):
    """h(T) over 20-500 °C off the plateau: within 0.02 kJ/kg of CoolProp's IF97 and (below the
    critical pressure) 0.3 kJ/kg of its IAPWS-95; at 25 MPa, through the pseudo-critical peak of
    cp, within 4 kJ/kg (0.2 %) of IAPWS-95, IF97's own departure there."""
    curve = water_steam_curve(pressure_kpa, 20.0, 500.0)
    t = np.linspace(20.13, 499.87, 1200)
    h = curve.enthalpy(t)
    assert np.isfinite(h).all()
    if97 = np.max(np.abs(h - _coolprop_h("IF97::Water", t, pressure_kpa)))
    reference = _coolprop_h("Water", t, pressure_kpa)
    iapws95 = np.max(np.abs(h - reference))
    relative = np.max(np.abs(h - reference) / reference)
    print(f"\n{pressure_kpa:8.1f} kPa, {len(curve.t_points)} points: |h - IF97| {if97:.4f}, "
          f"|h - IAPWS-95| {iapws95:.4f} kJ/kg ({relative:.1e} relative)")
    assert if97 <= 0.02
    assert iapws95 <= (0.3 if pressure_kpa < CRITICAL_PRESSURE_KPA else 4.0)
    # T(h) inverts it to within the interpolation error's temperature equivalent
    np.testing.assert_allclose(curve.temperature(h), t, atol=1e-9)


@pytest.mark.parametrize("pressure_kpa", PRESSURES_KPA[:-1])
def test_saturation_plateau_against_coolprop(pressure_kpa):
    """The plateau: saturation temperature and saturated liquid and vapour enthalpies equal
    CoolProp's IF97 to 1e-6 (relative), and lie within IF97's departure from IAPWS-95 (T_sat
    within 0.02 K, h within 0.3 kJ/kg; measured up to 8 mK and 0.2 kJ/kg)."""
    curve = water_steam_curve(pressure_kpa, 20.0, 500.0)
    assert curve.plateaus.sum() == 1
    t_sat = saturation_temperature(pressure_kpa)
    low, high = curve.enthalpy_bounds(t_sat)
    for backend, t_tolerance, h_relative, h_absolute in (("IF97::Water", 1e-6, 1e-6, 0.0), ("Water", 0.02, 0.0, 0.3)):
        reference_t = CoolProp.PropsSI("T", "P", pressure_kpa * 1e3, "Q", 0, backend) - KELVIN
        h_liquid, h_vapour = (CoolProp.PropsSI("H", "P", pressure_kpa * 1e3, "Q", q, backend) / 1e3 for q in (0, 1))
        print(f"\n{pressure_kpa:8.1f} kPa against {backend}: T_sat {t_sat - reference_t:+.1e} K, "
              f"h' {low - h_liquid:+.1e}, h'' {high - h_vapour:+.1e} kJ/kg")
        assert t_sat == pytest.approx(reference_t, abs=t_tolerance)
        assert float(low) == pytest.approx(h_liquid, rel=h_relative, abs=h_absolute)
        assert float(high) == pytest.approx(h_vapour, rel=h_relative, abs=h_absolute)
    # halfway along the plateau: half vaporised, at the saturation temperature
    middle = 0.5 * (low + high)
    assert float(curve.vapour_fraction(middle)) == pytest.approx(0.5, abs=1e-12)
    assert float(curve.temperature(middle)) == t_sat


def test_one_phase_spans():
    """Spans wholly below or above saturation, and above the critical pressure, have no plateau."""
    for pressure, low, high, vapour in ((1000.0, 20.0, 170.0, 0.0), (1000.0, 190.0, 400.0, 1.0),
                                        (25000.0, 20.0, 600.0, 0.0)):
        curve = water_steam_curve(pressure, low, high)
        assert not curve.plateaus.any()
        assert set(curve.q_points.tolist()) == {vapour}


@pytest.mark.parametrize("args, message", [
    ((0.1, 20.0, 100.0), "outside IF97"),
    ((1000.0, 200.0, 100.0), "must rise"),
    ((1000.0, 20.0, 900.0), "must rise within"),
])
def test_bad_spans_are_refused(args, message):
    with pytest.raises(ValueError, match=message):
        water_steam_curve(*args)
