"""Tests of ``hxtrain.units.zone_shells``: 1-2 shells in series rated zone by zone.

References: ``rate_exchanger`` with ``shells=N`` (constant cp, one zone per shell: the series
formula of N shells in overall counterflow, Shah & Sekulić, from memory), the closed form
ε = 1 − exp(−NTU) of a pure condensing or boiling side (the series of shells at R = 0 is exactly
that), each shell rated alone from the inlets the chain gives it, the energy balance, and a
network against the same exchanger on cp models. Run with ``-s`` for the figures."""

from __future__ import annotations

import numpy as np
import pytest

from hxtrain.units.enthalpy_curves import EnthalpyCurve, curve_from_model
from hxtrain.units.pntu_rating import rate_exchanger
from hxtrain.units.properties import ConstantCp
from hxtrain.units.water_steam import water_steam_curve
from hxtrain.units.zone_rating import rate_by_zones
from hxtrain.units.zone_shells import shell_ends

RNG = np.random.default_rng(20261203)
STEAM_180 = EnthalpyCurve([180.0, 180.0], [763.0, 2778.0], [0.0, 1.0])


def _liquid(cp):
    return curve_from_model(ConstantCp(cp), (-100.0, 600.0))


@pytest.mark.parametrize("shells", [2, 3, 4])
def test_constant_cp_equals_todays_shells_in_series(shells):
    """Constant cp, N 1-2 shells in series: duty and outlets equal rate_exchanger's with
    shells=N to 1e-9 (relative; measured about 1e-14), R from 0.03 to 30 and R = 1."""
    hot, cold = _liquid(2.3), _liquid(2.6)
    n = 120
    t_hot = RNG.uniform(120.0, 350.0, n)
    t_cold = t_hot - RNG.uniform(5.0, 150.0, n)
    m_hot, m_cold = RNG.uniform(1.0, 60.0, n), RNG.uniform(1.0, 60.0, n)
    m_cold[:10] = m_hot[:10] * 2.3 / 2.6  # R = 1 exactly
    ua = RNG.uniform(0.05, 8.0, n) * np.minimum(m_hot * 2.3, m_cold * 2.6)
    rating = rate_by_zones(hot, cold, hot.enthalpy(t_hot), cold.enthalpy(t_cold), m_hot, m_cold, ua, "tema_e",
                           shells=shells)
    today = rate_exchanger(t_hot, t_cold, m_hot * 2.3, m_cold * 2.6, ua, "tema_e", shells=shells)
    duty_error = np.max(np.abs(rating.duty / today.duty - 1.0))
    t_error = np.max(np.abs(np.r_[rating.t_hot_out - today.t_hot_out, rating.t_cold_out - today.t_cold_out])
                     / np.r_[t_hot - t_cold, t_hot - t_cold])
    print(f"\n{shells} shells: duty {duty_error:.1e}, outlets {t_error:.1e} (relative to the inlet difference)")
    assert duty_error <= 1e-9 and t_error <= 1e-9
    assert not (rating.duty == rate_exchanger(t_hot, t_cold, m_hot * 2.3, m_cold * 2.6, ua, "tema_e").duty).all()


@pytest.mark.parametrize("shells", [2, 3, 5])
@pytest.mark.parametrize("side", ["hot", "cold"])
def test_pure_phase_change_in_shells_against_one_minus_exp(side, shells):
    """A pure condensing vapour (hot) or boiling liquid (cold) on its plateau: every shell has
    R = 0, and N shells at NTU/N each give ε = 1 − exp(−NTU) on the liquid's C (1e-12)."""
    ntu = np.array([1e-4, 0.05, 0.3, 1.0, 2.5, 6.0, 15.0])
    m_liquid, cp = 8.0, 4.2
    c, liquid = m_liquid * cp, _liquid(cp)
    if side == "hot":
        rating = rate_by_zones(STEAM_180, liquid, 2778.0, liquid.enthalpy(30.0), 200.0, m_liquid, ntu * c, "tema_e",
                               shells=shells)
        q_max = c * (180.0 - 30.0)
    else:
        boiling = EnthalpyCurve([120.0, 120.0], [503.8, 2706.2], [0.0, 1.0])
        rating = rate_by_zones(liquid, boiling, liquid.enthalpy(260.0), 503.8, m_liquid, 200.0, ntu * c, "tema_e",
                               shells=shells)
        q_max = c * (260.0 - 120.0)
    error = np.max(np.abs(rating.duty / q_max - (-np.expm1(-ntu))))
    print(f"\n{shells} shells, pure {'condensing' if side == 'hot' else 'boiling'} side: "
          f"|ε - (1 - exp(-NTU))| {error:.1e}")
    assert error <= 1e-12


def test_each_shell_rated_alone_gives_its_own_duty_and_energy_closes():
    """Superheated steam desuperheating, condensing and subcooling against oil in three shells:
    the sides' enthalpy changes are the duty (1e-12); the shells' duties add up to it with
    nothing left over (1e-12 of the duty); each shell uses UA/3; and each shell rated alone by
    zones from the inlets the chain hands it, with UA/3, gives back its own duty (1e-9) — the
    chain is converged on its intermediate enthalpies."""
    steam, oil = water_steam_curve(1000.0, 20.0, 320.0), curve_from_model(ConstantCp(2.4), [0.0, 400.0])
    ua = np.array([5.0, 20.0, 40.0, 60.0])
    h_hot, h_cold = np.full(4, float(steam.enthalpy(300.0))), np.full(4, float(oil.enthalpy(60.0)))
    m_hot, m_cold = np.full(4, 1.5), np.full(4, 12.0)
    rating = rate_by_zones(steam, oil, h_hot, h_cold, m_hot, m_cold, ua, "tema_e", shells=3)
    np.testing.assert_allclose(m_hot * (h_hot - rating.h_hot_out), rating.duty, rtol=1e-12)
    np.testing.assert_allclose(m_cold * (rating.h_cold_out - h_cold), rating.duty, rtol=1e-12)
    profile, width = rating.profile, rating.profile.position.shape[1] // 4
    ends = profile.position[:, width - 1::width]  # the running duty at the hot end of each part
    shell_duties = np.diff(np.c_[np.zeros(4), ends], axis=1)
    np.testing.assert_allclose(ends[:, 2], rating.duty, rtol=1e-12)  # nothing left over
    ua_by_part = profile.ua.reshape(4, -1)
    per_part = [ua_by_part[:, k * width:(k + 1) * width].sum(axis=1) for k in range(3)]
    np.testing.assert_allclose(np.stack(per_part, axis=1), np.repeat(ua[:, None] / 3.0, 3, axis=1), rtol=1e-10)
    worst = 0.0
    for k in range(3):  # part k is shell 3 - k: its cold-end states, its duty
        h_hot_k = rating.h_hot_out + ends[:, k] / m_hot
        h_cold_k = h_cold + (ends[:, k] - shell_duties[:, k]) / m_cold
        alone = rate_by_zones(steam, oil, h_hot_k, h_cold_k, m_hot, m_cold, ua / 3.0, "tema_e")
        worst = max(worst, float(np.max(np.abs(alone.duty / shell_duties[:, k] - 1.0))))
    print(f"\nthree shells by zones: each shell alone against its share of the chain {worst:.1e}")
    assert worst <= 1e-9
    # never past counterflow; not below one shell of the same UA beyond the zone approximation
    # (each zone a 1-2 shell of its own: here R is small in every zone, so the arrangements differ
    # by little, and at UA 5 by 1e-9 the other way)
    counterflow = rate_by_zones(steam, oil, h_hot, h_cold, m_hot, m_cold, ua)
    one_shell = rate_by_zones(steam, oil, h_hot, h_cold, m_hot, m_cold, ua, "tema_e")
    assert (one_shell.duty <= rating.duty * (1.0 + 1e-8)).all() and (rating.duty <= counterflow.duty).all()


def test_a_cross_in_one_of_the_shells_is_found():
    """Oil cooled against a boiling liquid in two shells with a large UA: the cross lies in the
    shell at the hot end, where the boiling side leaves above the oil leaving that shell; the
    exchanger's own outlets do not show it (its cold outlet is below its hot inlet, as always)."""
    boiling = EnthalpyCurve([50.0, 150.0, 150.0, 250.0], [100.0, 300.0, 700.0, 850.0], [0.0, 0.0, 1.0, 1.0])
    oil = _liquid(2.5)
    rating = rate_by_zones(oil, boiling, oil.enthalpy(200.0), boiling.enthalpy(60.0), 4.0, 1.0, 80.0, "tema_e",
                           shells=2)
    giver, taker = shell_ends(rating.profile, 2)
    assert (taker > giver).any(axis=1)[0]
    assert float(rating.t_cold_out[0]) < 200.0


@pytest.mark.parametrize("tube_passes, shells", [(4, 1), (6, 1)])
@pytest.mark.parametrize("shell_side", ["hot", "cold"])
def test_shells_with_four_or_more_passes_below_their_peak_and_past_it(tube_passes, shells, shell_side):
    """1-2N shells (N >= 2), constant cp: where today's rating rises with UA (each shell below
    the NTU at which its P peaks) the zone rating gives rate_exchanger's duty to 1e-9 (relative;
    the lower branch of the inverse is that NTU); where it falls (past the peak, the duty is not
    unique in UA) no number: NaN and ``past_peak``. Both kinds occur in the sample."""
    hot, cold = _liquid(2.3), _liquid(2.6)
    n = 150
    t_hot = RNG.uniform(150.0, 350.0, n)
    t_cold = t_hot - RNG.uniform(20.0, 150.0, n)
    m_hot = RNG.uniform(2.0, 40.0, n)
    m_cold = m_hot * 2.3 / 2.6 * RNG.uniform(0.6, 1.6, n)
    ua = RNG.uniform(0.1, 12.0, n) * np.minimum(m_hot * 2.3, m_cold * 2.6)
    options = dict(tube_passes=tube_passes, shell_side=shell_side, shells=shells)
    today = rate_exchanger(t_hot, t_cold, m_hot * 2.3, m_cold * 2.6, ua, "tema_e", **options)
    slope = rate_exchanger(t_hot, t_cold, m_hot * 2.3, m_cold * 2.6, ua * (1.0 + 1e-6), "tema_e", **options).duty \
        / today.duty - 1.0
    rising, falling = slope > 1e-11, slope < -1e-11
    rating = rate_by_zones(hot, cold, hot.enthalpy(t_hot), cold.enthalpy(t_cold), m_hot, m_cold, ua, "tema_e",
                           tube_passes=tube_passes, shells=shells, shell_is_hot=shell_side == "hot")
    error = np.max(np.abs(rating.duty[rising] / today.duty[rising] - 1.0))
    print(f"\n1-{tube_passes} x{shells}, shell side {shell_side}: {rising.sum()} below the peak within {error:.1e}, "
          f"{falling.sum()} past it refused")
    assert rising.sum() > 20 and falling.sum() > 5
    assert error <= 1e-9 and not rating.past_peak[rising].any()
    assert rating.past_peak[falling].all() and np.isnan(rating.duty[falling]).all()


def test_a_condensing_side_in_a_four_pass_shell_has_no_peak():
    """At R = 0 (a pure condensing side) P = 1 − exp(−NTU) in any shell: no peak, 1e-12."""
    ntu = np.array([0.05, 0.5, 2.0, 6.0, 15.0])
    liquid = _liquid(4.2)
    rating = rate_by_zones(STEAM_180, liquid, 2778.0, liquid.enthalpy(30.0), 200.0, 8.0, ntu * 33.6, "tema_e",
                           tube_passes=4, shell_is_hot=False)
    assert np.max(np.abs(rating.duty / (33.6 * 150.0) + np.expm1(-ntu))) <= 1e-12
    assert not rating.past_peak.any()


def test_four_pass_shells_in_series_are_refused():
    """A shell of a series past its peak has no unique duty for the chain to find: refused."""
    with pytest.raises(ValueError, match="covers one shell"):
        rate_by_zones(STEAM_180, _liquid(4.2), 2778.0, 84.0, 1.0, 1.0, 10.0, "tema_e", tube_passes=4, shells=2)
