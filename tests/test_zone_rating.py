"""Tests of ``hxtrain.units.zone_rating``: zone-by-zone rating along enthalpy curves.

References: ``rate_exchanger`` (one zone, constant cp: today's rating, exactly), the closed form
ε = 1 − exp(−NTU) of a pure condensing or boiling side, an independent quadrature of
UA = ∫ dQ/ΔT along the counterflow profile (scipy), the energy balance, the second law and a
brute-force scan of the profile for the internal pinch; a surface condenser worked by hand (water
heated 15 -> 75 °C by steam condensing at 100 °C: NTU = ln(85/25)). No published multi-zone worked
example was found to check against. Run with ``-s`` for the figures."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.integrate import quad

from hxtrain.units.enthalpy_curves import EnthalpyCurve, curve_from_model
from hxtrain.units.pntu_rating import rate_exchanger
from hxtrain.units.properties import ConstantCp
from hxtrain.units.water_steam import water_steam_curve
from hxtrain.units.zone_rating import duty_limit, shell_f, rate_by_zones, zone_profile

RNG = np.random.default_rng(20261202)
STEAM_180 = EnthalpyCurve([180.0, 180.0], [763.0, 2778.0], [0.0, 1.0])


def _liquid(cp, points=(-100.0, 600.0)):
    return curve_from_model(ConstantCp(cp), points)


def _random_cases(n):
    t_hot = RNG.uniform(120.0, 350.0, n)
    t_cold = t_hot - RNG.uniform(5.0, 150.0, n)
    m_hot, m_cold = RNG.uniform(1.0, 60.0, n), RNG.uniform(1.0, 60.0, n)
    ua = RNG.uniform(0.05, 8.0, n) * np.minimum(m_hot * 2.3, m_cold * 2.6)
    return t_hot, t_cold, m_hot, m_cold, ua


@pytest.mark.parametrize("arrangement, points", [
    ("counterflow", (-100.0, 600.0)),
    ("counterflow", (-100.0, 97.0, 153.5, 230.0, 301.0, 600.0)),
    ("tema_e", (-100.0, 600.0)),
    ("tema_e", (-100.0, 97.0, 153.5, 230.0, 301.0, 600.0)),
    ("tema_e", tuple(np.arange(-100.0, 601.0, 1.0))),
])
def test_one_cp_equals_todays_rating(arrangement, points):
    """Constant cp on both sides (one zone, or several zones of one cp, up to 700 in a 1-2 shell:
    the F of the terminal temperatures keeps it the 1-2 shell however many zones): duty and
    outlet temperatures equal rate_exchanger's to 1e-12 (relative), R from 0.03 to 30, R = 1 too."""
    hot, cold = _liquid(2.3, points), _liquid(2.6, points)
    t_hot, t_cold, m_hot, m_cold, ua = _random_cases(400)
    m_cold[:20] = m_hot[:20] * 2.3 / 2.6  # R = 1 exactly
    rating = rate_by_zones(hot, cold, hot.enthalpy(t_hot), cold.enthalpy(t_cold), m_hot, m_cold, ua, arrangement)
    today = rate_exchanger(t_hot, t_cold, m_hot * 2.3, m_cold * 2.6, ua, arrangement)
    duty_error = np.max(np.abs(rating.duty / today.duty - 1.0))
    t_error = np.max(np.abs(np.r_[rating.t_hot_out - today.t_hot_out, rating.t_cold_out - today.t_cold_out])
                     / np.r_[t_hot - t_cold, t_hot - t_cold])
    print(f"\n{arrangement}, {len(points) - 1} cp intervals: duty {duty_error:.1e}, outlets {t_error:.1e} "
          "(relative to the inlet difference)")
    assert duty_error <= 1e-12 and t_error <= 1e-12
    # the UA itself is met to the duty's round-off times dUA/dQ, large at high NTU
    np.testing.assert_allclose(rating.ua_used, ua, rtol=1e-10)


@pytest.mark.parametrize("arrangement", ["counterflow", "tema_e"])
@pytest.mark.parametrize("side", ["hot", "cold"])
def test_pure_phase_change_against_one_minus_exp(side, arrangement):
    """A pure condensing vapour (hot) or boiling liquid (cold) on its plateau against a liquid:
    R = 0, ε = 1 − exp(−NTU) on the liquid's C, to 1e-13 (every arrangement at R = 0)."""
    ntu = np.array([1e-4, 0.05, 0.3, 1.0, 2.5, 6.0, 15.0])
    m_liquid, cp = 8.0, 4.2
    c = m_liquid * cp
    liquid = _liquid(cp)
    if side == "hot":
        # enough steam that the plateau never ends: the heat all comes from condensing
        rating = rate_by_zones(STEAM_180, liquid, 2778.0, liquid.enthalpy(30.0), 200.0, m_liquid, ntu * c, arrangement)
        q_max = c * (180.0 - 30.0)
    else:
        boiling = EnthalpyCurve([120.0, 120.0], [503.8, 2706.2], [0.0, 1.0])
        rating = rate_by_zones(liquid, boiling, liquid.enthalpy(260.0), 503.8, m_liquid, 200.0, ntu * c, arrangement)
        q_max = c * (260.0 - 120.0)
    error = np.max(np.abs(rating.duty / q_max - (-np.expm1(-ntu))))
    print(f"\n{arrangement}, pure {'condensing' if side == 'hot' else 'boiling'} side: |ε - (1 - exp(-NTU))| {error:.1e}")
    assert error <= 1e-13


def test_surface_condenser_worked_by_hand():
    """Water 200 kg/h, 15 -> 75 °C, steam condensing at 100 °C (latent heat 2160 kJ/kg), cp 4:
    by hand, ε = 60/85 and NTU = ln(85/25) = 1.22378 (condensing side: R = 0). Rated with that
    NTU the water leaves at 75 °C (1e-9 K), and the condensate is the duty over the latent heat."""
    water = _liquid(4.0)
    steam = EnthalpyCurve([100.0, 100.0], [419.0, 419.0 + 2160.0], [0.0, 1.0])
    m_water = 200.0 / 3600.0
    ntu = np.log(85.0 / 25.0)
    rating = rate_by_zones(steam, water, 419.0 + 2160.0, water.enthalpy(15.0), 1.0, m_water, ntu * m_water * 4.0)
    print(f"\nsurface condenser: water outlet {float(rating.t_cold_out[0]):.12f} °C (by hand 75)")
    assert float(rating.t_cold_out[0]) == pytest.approx(75.0, abs=1e-9)
    condensed = float(rating.duty[0]) / 2160.0
    assert float(rating.q_hot_out[0]) == pytest.approx(1.0 - condensed, rel=1e-12)


def _superheated_steam_heater(ua=(5.0, 25.0, 50.0, 75.0, 100.0)):
    """Superheated steam at 10 bar, 300 °C, 1.5 kg/s, desuperheating, condensing and subcooling
    against 12 kg/s of oil (cp 2.4) from 60 °C, pinched at the dew point. Near the pinch the UA
    needed rises as ln(1/(Q_max − Q)): close enough to the limit a UA is met only to the
    round-off of Q times a large dUA/dQ, and far past it the duty is the limit itself in double
    precision (see test_pinched_duty_is_the_limit)."""
    steam = water_steam_curve(1000.0, 20.0, 320.0)
    oil = curve_from_model(ConstantCp(2.4), [0.0, 400.0])
    ua = np.array(ua)
    n = len(ua)
    args = (steam, oil, np.full(n, float(steam.enthalpy(300.0))), np.full(n, float(oil.enthalpy(60.0))),
            np.full(n, 1.5), np.full(n, 12.0), ua)
    return args, rate_by_zones(*args)


def test_energy_closure_and_ua_shares():
    """Each side's enthalpy change is the duty (1e-12); the zones' UA shares add to the UA."""
    (steam, oil, h_hot, h_cold, m_hot, m_cold, ua), rating = _superheated_steam_heater()
    np.testing.assert_allclose(m_hot * (h_hot - rating.h_hot_out), rating.duty, rtol=1e-12)
    np.testing.assert_allclose(m_cold * (rating.h_cold_out - h_cold), rating.duty, rtol=1e-12)
    np.testing.assert_allclose(rating.profile.ua.sum(axis=1), ua, rtol=1e-12)
    assert (np.count_nonzero(rating.profile.ua, axis=1)[-3:] >= 3).all()  # desuperheat, condense, subcool
    # the same heater as a 1-2 shell, zone by zone: closed the same way, and below counterflow
    shell = rate_by_zones(steam, oil, h_hot, h_cold, m_hot, m_cold, ua, "tema_e")
    np.testing.assert_allclose(m_hot * (h_hot - shell.h_hot_out), shell.duty, rtol=1e-12)
    np.testing.assert_allclose(shell.profile.ua.sum(axis=1), ua, rtol=1e-12)
    assert (shell.duty < rating.duty).all() and (shell.approach > rating.approach).all()


def test_pinched_duty_is_the_limit():
    """A UA far beyond what the pinch lets the exchanger use: the duty is the limit to 1e-12 and
    the internal approach zero to round-off, never negative."""
    _, rating = _superheated_steam_heater((3000.0, 30000.0))
    np.testing.assert_allclose(rating.duty, rating.duty_limit, rtol=1e-12)
    assert ((rating.approach >= -1e-9) & (rating.approach <= 1e-6)).all()


def test_zone_sum_against_quadrature():
    """Counterflow UA = ∫ dQ/(T_hot − T_cold) along the profile, integrated independently (scipy
    quad over the exchanger, breakpoints given) at the duty found: equals the UA to 1e-8."""
    (steam, oil, h_hot, h_cold, m_hot, m_cold, ua), rating = _superheated_steam_heater()
    for i in range(len(ua)):
        h_hot_out = float(rating.h_hot_out[i])

        def inverse_difference(x):
            return 1.0 / float(steam.temperature(h_hot_out + x / m_hot[i]) - oil.temperature(h_cold[i] + x / m_cold[i]))

        breaks = [float(x) for x in rating.profile.position[i] if 0.0 < x < rating.duty[i]]
        integral, _ = quad(inverse_difference, 0.0, float(rating.duty[i]), points=breaks or None, limit=200,
                           epsabs=0.0, epsrel=1e-12)
        assert integral == pytest.approx(ua[i], rel=1e-8)


def test_second_law_and_internal_pinch():
    """No heat flows uphill anywhere (every zone boundary hot above cold); the smallest internal
    approach is found (against a 20 001-point scan of the profile) and, for steam condensing
    against oil heated close to it, lies inside the exchanger at the dew point, below both end
    differences."""
    (steam, oil, h_hot, h_cold, m_hot, m_cold, ua), rating = _superheated_steam_heater()
    profile = rating.profile
    assert ((profile.t_hot - profile.t_cold) >= -1e-9).all()
    assert (rating.duty <= rating.duty_limit * (1 + 1e-12)).all()
    i = len(ua) - 1  # UA 100 kW/K: the steam leaves subcooled
    x = np.linspace(0.0, float(rating.duty[i]), 20001)
    scan = steam.temperature(float(rating.h_hot_out[i]) + x / m_hot[i]) - oil.temperature(h_cold[i] + x / m_cold[i])
    # the scan's grid misses the pinch by up to 0.19 kW there: a few mK above the exact minimum
    assert scan.min() - 0.01 <= float(rating.approach[i]) <= scan.min() + 1e-12
    ends = (scan[0], scan[-1])
    t_pinch_hot = float(steam.temperature(float(rating.h_hot_out[i]) + rating.pinch_position[i] / m_hot[i]))
    print(f"\nsteam heater, UA {ua[i]:.0f} kW/K: internal approach {float(rating.approach[i]):.3f} K at "
          f"{t_pinch_hot:.2f} °C steam; end differences {ends[0]:.2f}, {ends[1]:.2f} K")
    assert float(rating.approach[i]) < min(ends) - 1.0
    assert t_pinch_hot == pytest.approx(float(steam.t_points[:-1][steam.plateaus][0]), abs=1e-9)
    assert float(rating.pinch_position[i]) == pytest.approx(
        float(rating.duty[i]) - m_hot[i] * (h_hot[i] - float(steam.h_points[1:][steam.plateaus][0])), rel=1e-12)
    assert float(rating.q_hot_out[i]) == 0.0 and float(rating.t_hot_out[i]) < 179.0


def test_cross_inside_a_zone_is_detected():
    """At a duty past the limit the profile crosses inside (at the dew point) while both ends
    still have positive differences: the approach is negative there and no UA reaches it."""
    (steam, oil, h_hot, h_cold, m_hot, m_cold, ua), rating = _superheated_steam_heater()
    too_much = rating.duty_limit[:1] * 1.05
    crossed = zone_profile(steam, oil, h_hot[:1], h_cold[:1], m_hot[:1], m_cold[:1], too_much)
    differences = crossed.t_hot - crossed.t_cold
    assert differences[0, 0] > 0.0 and differences[0, -1] > 0.0
    assert float(crossed.approach[0]) < 0.0 and np.isinf(crossed.ua_needed[0])


def test_duty_limit_is_the_pinch_at_zero():
    """At the duty limit the smallest difference along the exchanger is zero (to round-off)."""
    (steam, oil, h_hot, h_cold, m_hot, m_cold, ua), _ = _superheated_steam_heater()
    for m_oil in (5.0, 40.0, 400.0):
        limit = duty_limit(steam, oil, h_hot[:1], h_cold[:1], m_hot[:1], np.array([m_oil]))
        profile = zone_profile(steam, oil, h_hot[:1], h_cold[:1], m_hot[:1], np.array([m_oil]), limit)
        assert abs(float(profile.approach[0])) <= 1e-9


def test_reversed_and_idle_scenarios():
    """A hot-side stream entering colder takes heat (negative duty, the swapped rating's); no
    flow on a side or no UA gives no duty. One batch holds them all."""
    hot, cold = _liquid(2.3), _liquid(2.6)
    t_hot = np.array([200.0, 80.0, 200.0, 200.0])
    t_cold = np.array([100.0, 150.0, 100.0, 100.0])
    m_hot, m_cold, ua = np.array([5.0, 5.0, 0.0, 5.0]), np.array([4.0, 4.0, 4.0, 4.0]), np.array([20.0, 20.0, 20.0, 0.0])
    rating = rate_by_zones(hot, cold, hot.enthalpy(t_hot), cold.enthalpy(t_cold), m_hot, m_cold, ua)
    today = rate_exchanger(t_hot, t_cold, m_hot * 2.3, m_cold * 2.6, ua)
    np.testing.assert_allclose(rating.duty, today.duty, rtol=1e-12, atol=1e-12)
    np.testing.assert_allclose(rating.t_hot_out[:2], today.t_hot_out[:2], rtol=1e-12)
    assert rating.reversed.tolist() == [False, True, False, False]
    assert rating.duty[1] < 0.0 and rating.duty[2] == 0.0 and rating.duty[3] == 0.0


def test_table_end_stops_the_duty():
    """Saturated steam given down to saturated liquid only: the duty stops at full condensation
    and the UA it needs (ua_used) is below the UA given, which says the table ended."""
    water = _liquid(4.2)
    rating = rate_by_zones(STEAM_180, water, 2778.0, water.enthalpy(20.0), 1.0, 10.0, np.array([10.0, 40.0]))
    assert float(rating.duty[1]) == pytest.approx(2015.0, rel=1e-12)
    assert float(rating.ua_used[0]) == pytest.approx(10.0, rel=1e-12) and float(rating.ua_used[1]) < 40.0


def test_inlet_beyond_a_plateau_end_gives_no_number():
    """An inlet enthalpy past the end of a table that ends on its plateau (superheat the table
    does not know): NaN, not a duty."""
    water = _liquid(4.2)
    rating = rate_by_zones(STEAM_180, water, np.array([2778.0, 2790.0]), water.enthalpy(20.0), 1.0, 10.0, 10.0)
    assert np.isfinite(rating.duty[0]) and np.isnan(rating.duty[1]) and np.isnan(rating.t_hot_out[1])


def test_arrangements_not_covered_are_refused():
    with pytest.raises(ValueError, match="zone rating covers counterflow, tema_e"):
        zone_profile(STEAM_180, _liquid(4.2), 2778.0, 84.0, 1.0, 1.0, 10.0, "crossflow")
    with pytest.raises(ValueError, match="tema_e covers two tube passes or more; got 1"):
        rate_by_zones(STEAM_180, _liquid(4.2), 2778.0, 84.0, 1.0, 1.0, 10.0, "tema_e", tube_passes=1)


def test_one_two_shell_f_against_the_closed_form():
    """F of a 1-2 shell from its terminal temperatures against the closed form of Bowman, Mueller
    & Nagle (1940) (from memory: F = S/(R−1)·ln((1−P)/(1−PR)) / ln((2−P(R+1−S))/(2−P(R+1+S))),
    S = √(R²+1)), on either side's basis, to 1e-12; 1 where one side is isothermal; 0 past the
    largest P a 1-2 shell reaches, P_max = 2/(1+R+S)."""
    t_hot_in, t_cold_in = 200.0, 50.0
    p = RNG.uniform(0.02, 0.9, 300)
    r = RNG.uniform(0.05, 1.0, 300)
    s = np.sqrt(r * r + 1.0)
    reachable = p < 2.0 / (1.0 + r + s) * (1.0 - 1e-9)
    with np.errstate(invalid="ignore"):  # past P_max the closed form has no value
        closed = s / (r - 1.0) * np.log((1.0 - p) / (1.0 - p * r)) / np.log((2.0 - p * (r + 1.0 - s))
                                                                             / (2.0 - p * (r + 1.0 + s)))
    span = t_hot_in - t_cold_in
    by_cold = shell_f(t_hot_in, t_hot_in - p * r * span, t_cold_in, t_cold_in + p * span)
    by_hot = shell_f(t_hot_in, t_hot_in - p * span, t_cold_in, t_cold_in + p * r * span)
    error = max(np.max(np.abs(by_cold - closed)[reachable]), np.max(np.abs(by_hot - closed)[reachable]))
    print(f"\n1-2 F against Bowman et al.: {error:.1e}")
    assert error <= 1e-12
    assert (by_cold[~reachable] == 0.0).all() and reachable.sum() > 100 and (~reachable).sum() > 10
    assert float(shell_f(180.0, 180.0, 40.0, 120.0)) == 1.0 == float(shell_f(180.0, 150.0, 120.0, 120.0))




def test_two_shells_in_series_are_rated_in_few_zone_profiles(monkeypatch):
    """A feed boiling in two 1-2 shells against hot oil. Each shell's duty is an inner solve
    whose root lies close to what is left of the duty, where the UA needed rises steeply; the
    bracketed solve had crept up on it, halving the distance a step (1,499 zone profiles for these
    three scenarios); the secant through the latest trials, kept in the bracket, needs under a
    third of that. The duties are the series' own: each shell uses UA/2 (1e-10 of the UA)."""
    import hxtrain.units.zone_shells as zone_shells

    feed = EnthalpyCurve([20, 150, 165, 180, 195, 200, 260], [0.0, 300.0, 380.0, 470.0, 540.0, 560.0, 680.0],
                         [0, 0, 0.3, 0.65, 0.95, 1, 1])
    oil = curve_from_model(ConstantCp(2.6), [0.0, 400.0])
    profiles = []
    original = zone_shells.zone_profile
    monkeypatch.setattr(zone_shells, "zone_profile", lambda *a, **k: profiles.append(1) or original(*a, **k))
    ua = np.array([40.0, 40.0, 80.0])
    rating = rate_by_zones(oil, feed, oil.enthalpy(np.full(3, 280.0)), feed.enthalpy(np.array([150.0, 170.0, 190.0])),
                           30.0, 10.0, ua, "tema_e", shells=2, shell_is_hot=False)
    assert len(profiles) < 500
    width = rating.profile.position.shape[1] // 3
    per_shell = rating.profile.ua.reshape(3, -1)[:, :2 * width].reshape(3, 2, width).sum(axis=2)
    np.testing.assert_allclose(per_shell, np.repeat(ua[:, None] / 2.0, 2, axis=1), rtol=1e-10)
