"""U from films scaled from a reference in exchangers rated by zones.

References: the in-service rating of today (``rate_in_service``: mean cp over each side's range,
U from the same films at the same point, iterated to its fixed point) for a liquid-only curve equal
to a cp model; the scaling law worked by hand (film ∝ flow^0.6 shell side, ^0.8 tube side, common
practice; resistances in series); the energy balance of the network."""

from __future__ import annotations

import numpy as np
import pytest

from hxtrain.solver.simulation.results import simulate
from hxtrain.units.arrangements import arranged
from hxtrain.units.enthalpy_curves import EnthalpyCurve, curve_from_model
from hxtrain.units.properties import ConstantCp
from hxtrain.units.protocol import Inlets
from hxtrain.units.service_rating import ExchangerSpec, rate_in_service
from hxtrain.units.u_models import ScaledFilms, SideFilm
from hxtrain.units.zone_exchanger import rate_zoned

from test_phase_change_network import _line, _row, _two_stream


def _viscosity(t):
    """An oil-like viscosity, Pa·s, falling with temperature."""
    return 5e-3 * np.exp(-0.015 * (np.asarray(t, dtype=float) - 40.0))


def _films(reference_temperatures=True):
    shell_t, tube_t = (150.0, 90.0) if reference_temperatures else (None, None)
    return ScaledFilms(SideFilm(900.0, 8.0, 0.6, shell_t), SideFilm(1400.0, 12.0, 0.8, tube_t, 15000.0),
                       fouling_shell=2e-4, fouling_tube=3e-4, wall=5e-5, diameter_ratio=19.05 / 14.83)


@pytest.mark.parametrize("arrangement, shells", [("counterflow", 1), ("tema_e", 1), ("tema_e", 3)])
def test_a_liquid_curve_with_films_is_the_in_service_rating(arrangement, shells):
    """A liquid-only curve equal to the cp model (constant cp, written as 500 points 1 K apart, so
    as many zones), U from films with the viscosity correction and the laminar switch: the zone
    rating with U at the mean conditions gives the in-service outlets to 1e-9 K, with the same U.
    (With cp(T) the two differ by method: one mean cp per side against the curve zone by zone.)"""
    hot_model = ConstantCp(2.4, viscosity=_viscosity, conductivity=0.12)
    cold_model = ConstantCp(2.1, viscosity=_viscosity, conductivity=0.11)
    points = np.arange(-50.0, 451.0, 1.0)
    hot, cold = curve_from_model(hot_model, points), curve_from_model(cold_model, points)
    spec = ExchangerSpec(arranged(arrangement), thermal=_films(), area_per_shell=60.0, shells=shells, bypass_cold=0.1)
    t = np.array([[260.0, 60.0], [230.0, 120.0], [300.0, 40.0]])
    m = np.array([[8.0, 12.0], [4.0, 14.0], [6.0, 0.4]])  # the last: laminar tube side
    zoned = rate_zoned(spec, Inlets(t, m, (hot, cold)), {})
    today = rate_in_service(spec, t[:, 0], t[:, 1], m[:, 0], m[:, 1], hot, cold)
    worst = float(np.max(np.abs(np.r_[zoned.t_hot_out - today.rating.t_hot_out,
                                      zoned.t_cold_out - today.rating.t_cold_out])))
    print(f"\n{arrangement} x{shells}: outlets within {worst:.1e} K of the in-service rating")
    assert worst <= 1e-9
    np.testing.assert_allclose(zoned.coefficients.u_service, today.coefficients.u_service, rtol=1e-9)
    assert zoned.coefficients.notes["laminar_tube_side"].tolist() == [False, False, True]


def test_a_flow_change_moves_u_by_the_scaling_law():
    """Steam condensing in the shell against an oil in the tubes, U from films without property
    correction: at the reference flows U = 1/(1/900 + 2e-4 + 5e-5 + (3e-4 + 1/1400)·d_o/d_i);
    at 1.7 times the oil flow the tube film is 1400·1.7^0.8 and the shell film (steam flow
    unchanged) 900, by hand, whatever the zones."""
    ratio = 19.05 / 14.83
    spec = ExchangerSpec(arranged("counterflow"), thermal=_films(reference_temperatures=False), area_per_shell=20.0,
                         shell_side="hot")
    steam = EnthalpyCurve([180.0, 180.0], [763.0, 2778.0], [0.0, 1.0])
    oil = curve_from_model(ConstantCp(2.2), [0.0, 400.0])
    for oil_ratio in (1.0, 1.7):
        t = np.array([[180.0, 50.0]])
        m = np.array([[8.0, 12.0 * oil_ratio]])
        service = rate_zoned(spec, Inlets(t, m, (steam, oil), h=np.array([[2778.0, 110.0]])), {})
        h_tube = 1400.0 * oil_ratio**0.8
        by_hand = 1.0 / (1.0 / 900.0 + 2e-4 + 5e-5 + (3e-4 + 1.0 / h_tube) * ratio)
        assert float(service.coefficients.u_service[0]) == pytest.approx(by_hand, rel=1e-12)
        np.testing.assert_allclose(service.ua, by_hand * 20.0 / 1000.0, rtol=1e-12)


def test_films_in_a_network_rated_by_zones():
    """A constant cp written as a curve that could boil (far above the streams), U from films:
    the network gives today's numbers (1e-9 K) and says where U comes from; U is in the table."""
    exchanger = {"arrangement": "tema_e", "shells": 2, "shell_side": "hot", "area_per_shell": 40,
                 "film": {"shell": 900, "tube": 1400}, "reference_flow": {"shell": 10, "tube": 12},
                 "fouling": {"shell": 0.0002, "tube": 0.0003}}
    today = simulate(_two_stream({"cp": 2.3}, {"cp": 2.6}, exchanger))
    zoned = simulate(_two_stream(_line(2.3, boiling="plateau"), _line(2.6, boiling="plateau"), exchanger))
    for column in ("hot_out_c", "cold_out_c", "duty_kw", "u_service_w_m2_k", "u_clean_w_m2_k"):
        assert abs(_row(zoned)[column] - _row(today)[column]) <= 1e-9 * max(1.0, abs(_row(today)[column]))
    assert "one U for all zones" in _row(zoned)["u_source"]
    assert "rated by zones" in _row(zoned)["u_source"]
