"""Tests of ``hxtrain.units.enthalpy_curves``: the table's rules, the plateau, the inverse pair
T(h)/h(T), and that a single-phase curve serves the solver as today's fluid models do.

References: closed forms (a constant cp, the lever rule on a pure fluid's plateau) and today's
fluid models (``units/properties.py``) through the same network solve; the stated interpolation
error bound (dcp/dT)·Δ²/8 of a piecewise-linear h(T) against an exact quadratic enthalpy."""

from __future__ import annotations

import numpy as np
import pytest

from hxtrain.network.demos import demo_case_path
from hxtrain.solver.simulation.benchmark import fixed_property_variant
from hxtrain.solver.simulation.results import simulate
from hxtrain.network.case import load_case
from hxtrain.units.enthalpy_curves import EnthalpyCurve, curve_from_model
from hxtrain.units.properties import Blend, ConstantCp, PolynomialCp, petroleum_fraction

WATER_1_ATM = dict(temperatures=[90.0, 100.0, 100.0, 120.0], enthalpies=[377.0, 419.1, 2675.6, 2716.2],
                   vapour_fractions=[0.0, 0.0, 1.0, 1.0])


def test_constant_cp_as_a_curve_gives_todays_numbers():
    """A constant-cp fluid tabulated as a curve: h(T), T(h), cp and mean cp equal ConstantCp's
    to 1e-12 (relative), inside the table and beyond it."""
    fluid = ConstantCp(2.37)
    curve = curve_from_model(fluid, [-20.0, 35.0, 120.0, 260.0, 410.0])
    t = np.linspace(-60.0, 480.0, 1001)
    assert curve.constant_cp
    np.testing.assert_allclose(curve.enthalpy(t), fluid.enthalpy(t), rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(curve.temperature(fluid.enthalpy(t)), t, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(curve.cp(t), fluid.cp(t), rtol=1e-12)
    np.testing.assert_allclose(curve.mean_cp(t, t[::-1]), fluid.mean_cp(t, t[::-1]), rtol=1e-12)
    assert not curve.outside_range(t[(t >= -20.0) & (t <= 410.0)]).any()
    assert curve.outside_range(np.array([-20.1, 410.1])).all()


def test_constant_cp_network_unchanged_with_curves():
    """The crude demo at constant cp and fixed UA gives the same stream temperatures (to 1e-9 K)
    with every fluid replaced by its constant-cp curve: the solver's enthalpy(T), cp and T(h)
    keep working on a single-phase curve."""
    case = fixed_property_variant(demo_case_path("crude_preheat"))
    before = simulate(case).streams["temperature_c"].to_numpy()
    for name, fluid in list(case.fluids.items()):
        case.fluids[name] = curve_from_model(fluid, [-50.0, 20.0, 100.0, 250.0, 400.0, 600.0])
    after = simulate(case).streams["temperature_c"].to_numpy()
    difference = np.max(np.abs(after - before))
    print(f"\nconstant-cp crude demo, fluids as curves: largest stream temperature change {difference:.2e} K")
    assert difference <= 1e-9


def test_varying_cp_network_with_sampled_curves():
    """The crude demo as shipped (cp rising with T, U from films) with each cp-model fluid sampled
    as a curve every 5 K: stream temperatures within 0.1 K of the polynomial models. The enthalpy is
    off by at most (dcp/dT)·Δ²/8 = 0.004·25/8 ≈ 0.013 kJ/kg (a few mK), but cp is stepwise,
    off by up to (dcp/dT)·Δ/2 = 0.01 kJ/kg·K (0.4 %), which moves the films' Prandtl numbers
    and so U: measured 0.033 K at most."""
    case = load_case(demo_case_path("crude_preheat"))
    before = simulate(case).streams["temperature_c"].to_numpy()
    for name, fluid in list(case.fluids.items()):
        if isinstance(fluid, EnthalpyCurve):
            continue  # the pre-flash drum's curves are curves already
        low, high = fluid.valid_range
        case.fluids[name] = curve_from_model(fluid, np.linspace(low, high, int((high - low) / 5.0) + 2),
                                             valid_range=fluid.valid_range)
    after = simulate(case).streams["temperature_c"].to_numpy()
    difference = np.max(np.abs(after - before))
    print(f"\ncrude demo, fluids sampled every 5 K: largest stream temperature change {difference:.2e} K")
    assert 0.0 < difference <= 0.1


def test_interpolation_error_within_the_stated_bound():
    """Piecewise-linear h(T) of a linear-cp oil (exact h quadratic) is off by at most
    (dcp/dT)·Δ²/8 between points Δ apart, reached at the middles."""
    oil = petroleum_fraction(0.86, 11.9)
    spacing = 20.0
    curve = curve_from_model(oil, np.arange(20.0, 381.0, spacing))
    t = np.linspace(20.0, 380.0, 3601)
    bound = float(oil.coefficients[1]) * spacing ** 2 / 8.0
    error = np.max(np.abs(curve.enthalpy(t) - oil.enthalpy(t)))
    assert error <= bound * (1 + 1e-9)
    assert error >= 0.99 * bound


def test_plateau_of_a_pure_fluid():
    """On a saturation plateau: T constant, q by the lever rule, cp infinite, h(T) refused (NaN)
    with its two bounds given; off it h(T) and T(h) are inverse."""
    water = EnthalpyCurve(**WATER_1_ATM)
    h = np.linspace(419.1, 2675.6, 11)
    np.testing.assert_array_equal(water.temperature(h), 100.0)
    np.testing.assert_allclose(water.vapour_fraction(h), (h - 419.1) / (2675.6 - 419.1), rtol=1e-14, atol=1e-15)
    low, high = water.enthalpy_bounds(np.array([95.0, 100.0, 110.0]))
    np.testing.assert_allclose(low, [398.05, 419.1, 2695.9], rtol=1e-14)
    np.testing.assert_allclose(high, [398.05, 2675.6, 2695.9], rtol=1e-14)
    assert np.isnan(water.enthalpy(100.0)) and np.isinf(water.cp(100.0))
    t = np.array([91.0, 99.999, 100.001, 119.0])
    np.testing.assert_allclose(water.temperature(water.enthalpy(t)), t, rtol=1e-13)


def test_beyond_the_table():
    """Extended with the end intervals' slopes (flagged outside the range); beyond an end that is
    a plateau nothing is known: NaN."""
    water = EnthalpyCurve(**WATER_1_ATM)
    assert water.outside_range(np.array([80.0, 130.0])).all()
    np.testing.assert_allclose(water.enthalpy(np.array([80.0, 130.0])), [377.0 - 42.1, 2716.2 + 20.3], rtol=1e-14)
    steam_only = EnthalpyCurve([180.0, 180.0], [763.0, 2778.0], [0.0, 1.0])
    assert np.isnan(steam_only.temperature(np.array([700.0, 2800.0]))).all()
    assert np.isnan(steam_only.enthalpy_bounds(170.0)[0])
    assert float(steam_only.temperature(1500.0)) == 180.0


def test_blend_with_a_curve():
    """A curve mixes like today's models: ideal mixing adds the enthalpies (each fluid's own
    reference cancels in the balance)."""
    oil = PolynomialCp([1.9, 0.0035])
    curve = curve_from_model(ConstantCp(4.18), [0.0, 100.0, 200.0])
    blend = Blend([oil, curve], [0.3, 0.7])
    t = np.array([40.0, 150.0])
    np.testing.assert_allclose(blend.enthalpy(t), 0.3 * oil.enthalpy(t) + 0.7 * 4.18 * t, rtol=1e-13)
    np.testing.assert_allclose(blend.temperature(blend.enthalpy(t)), t, rtol=1e-12)


@pytest.mark.parametrize("table, message", [
    (dict(temperatures=[10.0], enthalpies=[1.0]), "at least two rows"),
    (dict(temperatures=[10.0, 20.0, 30.0], enthalpies=[1.0, 5.0, 5.0]), "row 2: enthalpy must rise"),
    (dict(temperatures=[10.0, 20.0, 19.0], enthalpies=[1.0, 5.0, 6.0]), "row 2: temperature must not fall"),
    (dict(temperatures=[10.0, 20.0], enthalpies=[1.0, 5.0], vapour_fractions=[0.0, 1.2]), "row 1: vapour fraction"),
    (dict(temperatures=[10.0, np.nan], enthalpies=[1.0, 5.0]), "row 1: temperature is not a finite"),
    (dict(temperatures=[10.0, 20.0], enthalpies=[1.0, 5.0, 6.0]), "one of each per row"),
])
def test_bad_tables_are_refused_naming_the_row(table, message):
    with pytest.raises(ValueError, match=message):
        EnthalpyCurve(**table)


@pytest.mark.parametrize("coefficients", [[1.75, 0.0037], [2.1, 0.0], [2.0, -0.002], [-0.5, 0.01],
                                          [1.6, 0.004, 2e-6]])
def test_a_polynomial_fluid_gives_back_the_temperature_of_its_enthalpy(coefficients):
    """T(h(T)) = T to 1e-9 K over -50 to 400 °C on the rising branch (cp > 0): by the quadratic's
    root for a linear cp (written to subtract no near-equal numbers, checked here with cp falling
    to zero at 50 °C and with cp falling with T), by Newton's iteration for a higher degree; NaN
    for an enthalpy no temperature of the physical range has."""
    fluid = PolynomialCp(coefficients)
    t = np.linspace(-50.0, 400.0, 2001)
    t = t[fluid.cp(t) > 1e-3]
    assert np.max(np.abs(fluid.temperature(fluid.enthalpy(t)) - t)) < 1e-9
    assert np.isnan(fluid.temperature(np.array([-1e9, np.nan]))).all()
