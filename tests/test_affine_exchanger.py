"""An exchanger with constant cp on both sides and a U that does not follow the operating point
is linear in its inlet temperatures: its outlets are kept as fixed fractions of the inlet
difference, found once per flows (speed only). The independent path is the full in-service
rating (``Exchanger.rate``), called with the same inlets: they must agree to round-off of the
inlet difference, in every arrangement the fixed-property demos use, with bypasses, reversed
inlets (heat flows the other way), a side without flow and UA = 0; and the kept fractions must
follow every change of flows and parameters."""

import numpy as np
import pytest

from hxtrain.network import build_network, load_case
from hxtrain.solver import demo_case_path
from hxtrain.solver.demos import DEMO_CASES
from hxtrain.solver.simulation.benchmark import fixed_property_variant
from hxtrain.units.exchanger_model import Exchanger
from hxtrain.units.protocol import Inlets

ROUND_OFF = 1e-13
"""Kelvin per kelvin of inlet difference: a few ulp of 1."""


def _exchangers(name):
    net = build_network(fixed_property_variant(demo_case_path(name)))
    return net, [(n, u) for n, u in net.units.items() if isinstance(u, Exchanger)]


def _inlets(net, name, rng, batch=400):
    fluids = tuple(net.fluids[s] for s in net.inlets[name])
    t = rng.uniform(20.0, 380.0, (batch, 2))  # about half the scenarios with the "cold" side hotter
    m = rng.uniform(0.0, 1.6, (batch, 2)) * net.flow[0, net.inlets[name]]
    m[:7, 0] = 0.0  # a side without flow
    m[7:14, 1] = 0.0
    return Inlets(t, m, fluids)


def _full(unit, inlets):
    x = unit.rate(inlets, details=False).rating
    return np.stack([x.t_hot_out, x.t_cold_out], axis=1)


def _assert_agree(unit, inlets):
    fast = unit.outlet_temperatures(inlets)
    scale = np.abs(inlets.t[:, :1] - inlets.t[:, 1:])
    assert np.all(np.abs(fast - _full(unit, inlets)) <= ROUND_OFF * (1.0 + scale))


@pytest.mark.parametrize("name", DEMO_CASES)
def test_kept_fractions_equal_the_full_rating(name):
    rng = np.random.default_rng(20261203)
    net, exchangers = _exchangers(name)
    assert exchangers
    for tag, unit in exchangers:
        assert unit._affine_fractions(_inlets(net, tag, rng)) is not None  # the fast path is taken
        for _ in range(2):  # new flows: the kept fractions are found again
            _assert_agree(unit, _inlets(net, tag, rng))


@pytest.mark.parametrize("name", DEMO_CASES)
def test_kept_fractions_follow_parameters(name):
    """A bypass opened, a UA (or U) changed, UA = 0: each after the fractions were kept."""
    rng = np.random.default_rng(7)
    net, exchangers = _exchangers(name)
    for tag, unit in exchangers:
        inlets = _inlets(net, tag, rng)
        _assert_agree(unit, inlets)
        unit.set_parameter("bypass.hot", rng.uniform(0.0, 0.6, inlets.batch))
        _assert_agree(unit, inlets)
        changed = "ua" if unit.spec.ua is not None else "u"
        unit.set_parameter(changed, rng.uniform(0.0, 2.0, inlets.batch) * (unit.spec.ua if changed == "ua"
                                                                              else unit.spec.thermal.u))
        _assert_agree(unit, inlets)
        unit.set_parameter(changed, np.zeros(inlets.batch))
        _assert_agree(unit, inlets)
        np.testing.assert_array_equal(unit.outlet_temperatures(inlets), inlets.t)  # no UA: no heat moves


def test_the_fast_path_is_not_taken_where_cp_varies():
    net = build_network(load_case(demo_case_path("crude_preheat")))
    tag, unit = next((n, u) for n, u in net.units.items() if isinstance(u, Exchanger))
    assert unit._affine_fractions(_inlets(net, tag, np.random.default_rng(1))) is None
