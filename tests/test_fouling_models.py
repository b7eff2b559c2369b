"""Tests of the fouling models, ``hxtrain.units.fouling_models`` and ``fouling_threshold``.

References, named beside each check:

* identities of the published forms: the asymptotic model's half-life (Kern & Seaton 1959),
  the threshold model's linear growth at constant conditions, zero net rate at the threshold;
* an independent integration: ``scipy.integrate.solve_ivp`` (tight tolerances) of the rate
  forms, against the integrated forms and the step integrator;
* ChEDL ``fluids.friction.Blasius`` for the smooth-tube friction factor behind the wall shear
  stress;
* the shape of the published threshold plots (Ebert & Panchal 1997; Panchal et al. 1999: film
  temperature against velocity, fouling above the curve, none below, the curve rising with
  velocity) with Ebert and Panchal's fitted exponents beta = -0.66 and E = 68 kJ/mol, from
  memory. No published numerical rate is checked: the fitted alpha and gamma of those papers
  were not at hand, and the alpha and gamma below are illustrative (a hot-end rate of ~1e-6
  m²K/W per day, common practice for the order of crude fouling).
"""

from __future__ import annotations

import numpy as np
import pytest
from fluids.friction import Blasius
from scipy.integrate import solve_ivp

from hxtrain.units.fouling_models import (
    MODELS,
    asymptotic_fouling,
    asymptotic_fouling_rate,
    asymptotic_fouling_time,
    integrate_fouling,
    linear_fouling,
)
from hxtrain.units.fouling_threshold import (
    GAS_CONSTANT,
    blasius_wall_shear_stress,
    ebert_panchal_fouling,
    ebert_panchal_rate,
    ebert_panchal_threshold_temperature,
    ebert_panchal_threshold_velocity,
    film_temperature,
    polley_fouling,
    polley_rate,
    polley_threshold_reynolds,
)

EP = dict(alpha=1.4e4, beta=-0.66, activation_energy=68e3, gamma=1e-7)
"""beta and E as fitted by Ebert & Panchal (1997) to the Exxon slip-stream data (from memory);
alpha (m²K/W per day) and gamma (m²K/W per day per Pa) illustrative."""
POLLEY = dict(alpha=2.5e4, activation_energy=68e3, gamma=2.5e-10)
CRUDE = dict(density=800.0, viscosity=1e-3, diameter=0.02, pr=20.0)
"""A light crude at about 250 °C in a 20 mm tube (illustrative)."""


def _reynolds(u):
    return CRUDE["density"] * u * CRUDE["diameter"] / CRUDE["viscosity"]


def _tau(u):
    return blasius_wall_shear_stress(u, CRUDE["density"], CRUDE["viscosity"], CRUDE["diameter"])


# ---------------------------------------------------------------------------------------------
# Asymptotic and linear models
# ---------------------------------------------------------------------------------------------
@pytest.mark.parametrize("r_f0", (0.0, 2e-4))
def test_asymptotic_half_life(r_f0):
    """Kern & Seaton (1959) identity: R_f(tau ln 2) = R_f0 + R_inf/2, and each further
    half-life halves the remaining distance to the asymptote (1e-14)."""
    tau, r_inf = np.array([3.0, 80.0, 900.0]), np.array([1e-4, 5e-4, 2e-3])
    half = tau * np.log(2.0)
    np.testing.assert_allclose(asymptotic_fouling(half, r_inf, tau, r_f0), r_f0 + r_inf / 2, rtol=1e-14)
    np.testing.assert_allclose(asymptotic_fouling(3 * half, r_inf, tau, r_f0), r_f0 + r_inf * 7 / 8, rtol=1e-14)
    np.testing.assert_allclose(asymptotic_fouling_time(r_f0 + r_inf / 2, r_inf, tau, r_f0), half, rtol=1e-14)


def test_asymptotic_time_is_the_inverse_and_nan_beyond_the_asymptote():
    """asymptotic_fouling_time inverts asymptotic_fouling (identity, 1e-12 up to 4 time
    constants; further out R_f sits within rounding of the asymptote and t is ill-conditioned)
    and is NaN for an R_f the model never reaches."""
    t = np.array([0.0, 1e-6, 5.0, 200.0, 600.0])
    r = asymptotic_fouling(t, 5e-4, 150.0, 1e-4)
    np.testing.assert_allclose(asymptotic_fouling_time(r, 5e-4, 150.0, 1e-4), t, rtol=1e-12, atol=1e-12)
    assert np.all(np.isnan(asymptotic_fouling_time(np.array([6.1e-4, 7e-4, 0.5e-4]), 5e-4, 150.0, 1e-4)))


@pytest.mark.parametrize("model", ("linear", "asymptotic", "ebert_panchal", "polley"))
def test_integrated_form_equals_an_ode_solution_of_the_rate_form(model):
    """Independent path: scipy solve_ivp (DOP853, rtol 1e-12) of each model's rate form at
    constant conditions, against its integrated form, 1e-9 relative over 0-400 days."""
    t = np.linspace(0.0, 400.0, 9)
    cases = {
        "linear": (dict(rate=2e-6, r_f0=1e-4), {}, lambda: linear_fouling(t, 2e-6, 1e-4)),
        "asymptotic": (dict(r_inf=5e-4, tau=90.0, r_f0=1e-4), {}, lambda: asymptotic_fouling(t, 5e-4, 90.0, 1e-4)),
        "ebert_panchal": (dict(EP, r_f0=0.0), dict(re=3e4, pr=20.0, t_film=550.0, tau_w=10.0),
                          lambda: ebert_panchal_fouling(t, 3e4, 20.0, 550.0, 10.0, **EP)),
        "polley": (dict(POLLEY, r_f0=0.0), dict(re=3e4, pr=20.0, t_wall=600.0),
                   lambda: polley_fouling(t, 3e4, 20.0, 600.0, **POLLEY)),
    }
    parameters, conditions, closed = cases[model]
    rate = MODELS[model].rate
    ode = solve_ivp(lambda _, y: rate(y, **parameters, **conditions), (0.0, 400.0), [parameters["r_f0"]],
                    t_eval=t, method="DOP853", rtol=1e-12, atol=1e-18)
    np.testing.assert_allclose(ode.y[0], closed(), rtol=1e-9, atol=1e-15)
    assert closed()[-1] > closed()[0]  # the case does foul


@pytest.mark.parametrize("model", ("linear", "asymptotic", "ebert_panchal", "polley"))
def test_integrator_at_constant_conditions_equals_the_closed_form(model):
    """The step integrator on an uneven grid (steps of 0.5 to 100 days) with conditions held
    constant equals the integrated form (threshold model: its closed-form linear growth) at
    every grid time, 1e-13 relative."""
    t = np.cumsum(np.concatenate([[0.0], [0.5, 3.0, 100.0, 7.0, 40.0, 0.5, 60.0]]))
    n = t.size - 1
    if model == "linear":
        r = integrate_fouling(model, t, dict(rate=2e-6, r_f0=1e-4))
        expected = linear_fouling(t, 2e-6, 1e-4)
    elif model == "asymptotic":
        r = integrate_fouling(model, t, dict(r_inf=5e-4, tau=90.0, r_f0=1e-4))
        expected = asymptotic_fouling(t, 5e-4, 90.0, 1e-4)
    elif model == "ebert_panchal":
        conditions = dict(re=np.full(n, 3e4), pr=np.full(n, 20.0), t_film=np.full(n, 550.0), tau_w=np.full(n, 10.0))
        r = integrate_fouling(model, t, EP, conditions)
        expected = ebert_panchal_fouling(t, 3e4, 20.0, 550.0, 10.0, **EP)
    else:
        r = integrate_fouling(model, t, POLLEY, dict(re=[3e4], pr=[20.0], t_wall=[600.0]))
        expected = polley_fouling(t, 3e4, 20.0, 600.0, **POLLEY)
    np.testing.assert_allclose(r, expected, rtol=1e-13, atol=1e-20)


def test_integrator_with_changing_conditions_sums_the_step_rates():
    """Identity: with conditions held within each step, the threshold model's R_f is R_f0 plus
    the sum of max(rate_k, 0)·dt_k (steps below the threshold add nothing, remove nothing).
    Vectorized over 3 exchangers × 4 scenarios, equal to per-element sums (1e-13)."""
    rng = np.random.default_rng(3)
    t = np.concatenate([[0.0], np.cumsum(rng.uniform(1.0, 30.0, 12))])
    t_film = rng.uniform(480.0, 600.0, (3, 4, 12))
    u = rng.uniform(0.8, 3.0, (3, 4, 12))
    alpha = np.array([[1.0e4], [1.4e4], [2.0e4]])  # per exchanger, broadcast over scenarios
    r = integrate_fouling("ebert_panchal", t, dict(EP, alpha=alpha, r_f0=5e-5),
                          dict(re=_reynolds(u), pr=np.full((1, 1, 1), 20.0), t_film=t_film, tau_w=_tau(u)))
    assert r.shape == (3, 4, 13)
    rates = ebert_panchal_rate(_reynolds(u), 20.0, t_film, _tau(u), alpha[..., None], -0.66, 68e3, 1e-7)
    assert (rates < 0).any() and (rates > 0).any()  # both sides of the threshold are exercised
    growth = np.cumsum(np.maximum(rates, 0) * np.diff(t), axis=-1)
    expected = 5e-5 + np.concatenate([np.zeros((3, 4, 1)), growth], axis=-1)
    np.testing.assert_allclose(r, expected, rtol=1e-13)
    assert np.all(np.diff(r, axis=-1) >= 0.0)


def test_asymptotic_integrator_with_changing_time_constant_matches_an_ode():
    """Per-step conditions for the asymptotic model (tau given per step) against solve_ivp of the
    rate form with the same piecewise-constant tau (1e-9)."""
    t = np.array([0.0, 20.0, 50.0, 120.0, 300.0])
    tau = np.array([40.0, 200.0, 60.0, 500.0])
    r = integrate_fouling("asymptotic", t, dict(r_inf=6e-4, r_f0=0.0), dict(tau=tau))

    def rhs(time, y):
        k = min(np.searchsorted(t, time, side="right") - 1, tau.size - 1)
        return asymptotic_fouling_rate(y, 6e-4, tau[k])

    ode = solve_ivp(rhs, (0.0, 300.0), [0.0], t_eval=t, method="DOP853", rtol=1e-12, atol=1e-18,
                    max_step=5.0)
    np.testing.assert_allclose(r, ode.y[0], rtol=1e-9, atol=1e-15)


# ---------------------------------------------------------------------------------------------
# Thresholds
# ---------------------------------------------------------------------------------------------
def test_blasius_shear_stress_against_fluids():
    """tau_w = f_D/8 · rho u² with ChEDL fluids.friction.Blasius (Darcy 0.3164 Re^-0.25), 1e-14."""
    for u in (0.5, 1.0, 2.0, 4.0):
        re = _reynolds(u)
        expected = Blasius(re) / 8.0 * CRUDE["density"] * u**2
        assert float(_tau(u)) == pytest.approx(expected, rel=1e-14)


@pytest.mark.parametrize("t_film", (500.0, 540.0, 580.0, 620.0))
def test_zero_rate_exactly_at_the_threshold_velocity(t_film):
    """Identity: at the threshold velocity the deposition and removal terms of the Ebert–Panchal
    rate are equal (net rate below 1e-12 of either), positive just below it, negative above."""
    u = float(ebert_panchal_threshold_velocity(t_film, **CRUDE, **EP))
    net = float(ebert_panchal_rate(_reynolds(u), CRUDE["pr"], t_film, _tau(u), **EP))
    removal = EP["gamma"] * float(_tau(u))
    assert abs(net) <= 1e-12 * removal
    assert ebert_panchal_rate(_reynolds(0.99 * u), CRUDE["pr"], t_film, _tau(0.99 * u), **EP) > 0.0
    assert ebert_panchal_rate(_reynolds(1.01 * u), CRUDE["pr"], t_film, _tau(1.01 * u), **EP) < 0.0


def test_threshold_temperature_and_polley_threshold_reynolds_are_zeros_of_the_rate():
    """Identity: the threshold film temperature (Ebert–Panchal) and threshold Reynolds number
    (Polley et al.) give a net rate below 1e-12 of the removal term; no threshold (inf) where
    removal outweighs deposition at any temperature."""
    for re in (1e4, 3e4, 1e5):
        t = float(ebert_panchal_threshold_temperature(re, 20.0, 10.0, **EP))
        assert abs(float(ebert_panchal_rate(re, 20.0, t, 10.0, **EP))) <= 1e-12 * EP["gamma"] * 10.0
    assert np.isinf(ebert_panchal_threshold_temperature(3e4, 20.0, 1e9, **EP))
    for t_wall in (550.0, 600.0, 650.0):
        re = float(polley_threshold_reynolds(t_wall, 20.0, **POLLEY))
        assert abs(float(polley_rate(re, 20.0, t_wall, **POLLEY))) <= 1e-12 * POLLEY["gamma"] * re**0.8


def test_threshold_curve_has_the_published_shape():
    """Ebert & Panchal (1997) and Panchal et al. (1999) threshold plots (from memory): in the
    plane of velocity and film temperature the threshold is a rising curve — a faster flow
    tolerates a hotter film — with fouling (positive rate) above it and none below. Checked on
    the curve from ebert_panchal_threshold_velocity with the published exponents, and the
    Arrhenius slope of deposition: d ln(rate)/dT = E/(R T²)."""
    t_film = np.linspace(500.0, 620.0, 25)
    u = ebert_panchal_threshold_velocity(t_film, **CRUDE, **EP)
    assert np.all(np.diff(u) > 0.0)
    for dt, sign in ((+5.0, 1.0), (-5.0, -1.0)):
        rate = ebert_panchal_rate(_reynolds(u), CRUDE["pr"], t_film + dt, _tau(u), **EP)
        assert np.all(np.sign(rate) == sign)
    t1, t2 = 540.0, 560.0
    deposition = lambda t: ebert_panchal_rate(3e4, 20.0, t, 0.0, **EP)  # noqa: E731 (no removal)
    assert float(np.log(deposition(t2) / deposition(t1))) == pytest.approx(
        EP["activation_energy"] / GAS_CONSTANT * (1 / t1 - 1 / t2), rel=1e-12)


def test_rate_monotonicity():
    """Properties of the published forms (E > 0, beta < 0, gamma > 0): the Ebert–Panchal rate
    rises with film temperature, falls with wall shear stress and with Re at fixed shear; the
    threshold velocity rises with film temperature; Polley's rate falls with Re and rises with
    wall temperature."""
    t = np.linspace(450.0, 700.0, 51)
    assert np.all(np.diff(ebert_panchal_rate(3e4, 20.0, t, 10.0, **EP)) > 0.0)
    tau = np.linspace(0.0, 100.0, 51)
    assert np.all(np.diff(ebert_panchal_rate(3e4, 20.0, 560.0, tau, **EP)) < 0.0)
    re = np.logspace(3.5, 6, 51)
    assert np.all(np.diff(ebert_panchal_rate(re, 20.0, 560.0, 10.0, **EP)) < 0.0)
    assert np.all(np.diff(polley_rate(re, 20.0, 600.0, **POLLEY)) < 0.0)
    assert np.all(np.diff(polley_rate(3e4, 20.0, t, **POLLEY)) > 0.0)


def test_fouling_never_decreases_and_stays_below_the_asymptote():
    """Monotonicity of the integrated forms: R_f non-decreasing in time for every model with
    non-negative constants; the asymptotic model stays below R_f0 + R_inf."""
    t = np.linspace(0.0, 3000.0, 301)
    r = asymptotic_fouling(t, 5e-4, 200.0, 1e-4)
    assert np.all(np.diff(r) > 0.0) and np.all(r < 6e-4)
    assert np.all(np.diff(linear_fouling(t, 1e-6)) > 0.0)
    cold = ebert_panchal_fouling(t, 3e4, 20.0, 450.0, 10.0, **EP)  # below its threshold
    assert np.all(cold == 0.0)


def test_film_temperature():
    """Panchal et al. (1999), from memory: T_film = T_b + 0.55 (T_w - T_b); 0.5 is the mean."""
    assert float(film_temperature(500.0, 600.0)) == pytest.approx(555.0, rel=1e-15)
    assert float(film_temperature(500.0, 600.0, 0.5)) == 550.0


# ---------------------------------------------------------------------------------------------
# Parameter tables and the integrator's checks
# ---------------------------------------------------------------------------------------------
@pytest.mark.parametrize("name", list(MODELS))
def test_parameter_tables_describe_what_the_model_takes(name):
    """Each model's table names exactly the keywords its rate and step take (a fitter can be
    generic): every value at the middle of its bounds integrates; r_f0 comes first; bounds are
    ordered and units given."""
    model = MODELS[name]
    assert model.parameters[0].name == "r_f0"
    for q in model.parameters + model.conditions:
        assert q.bounds[0] < q.bounds[1] and q.unit and q.meaning
    middle = {q.name: (q.bounds[0] + q.bounds[1]) / 2 if np.isfinite(q.bounds[1]) else 1.0
              for q in model.parameters + model.conditions}
    parameters = {q.name: middle[q.name] for q in model.parameters}
    conditions = {q.name: [middle[q.name]] * 3 for q in model.conditions}
    r = integrate_fouling(model, [0.0, 1.0, 2.0, 3.0], parameters, conditions)
    assert r.shape == (4,) and np.all(np.isfinite(r))


def test_integrator_refuses_missing_unknown_and_misshaped_values():
    with pytest.raises(ValueError, match="missing"):
        integrate_fouling("asymptotic", [0.0, 1.0], dict(r_inf=1e-4))
    with pytest.raises(ValueError, match="unknown"):
        integrate_fouling("linear", [0.0, 1.0], dict(rate=1e-6, tau=3.0))
    with pytest.raises(ValueError, match="twice"):
        integrate_fouling("linear", [0.0, 1.0], dict(rate=1e-6), dict(rate=[1e-6]))
    with pytest.raises(ValueError, match="steps"):
        integrate_fouling("linear", [0.0, 1.0, 2.0], {}, dict(rate=[1e-6, 1e-6, 1e-6]))
    with pytest.raises(ValueError, match="decrease"):
        integrate_fouling("linear", [0.0, 2.0, 1.0], dict(rate=1e-6))
