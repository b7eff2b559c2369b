"""The arrangement registry (``hxtrain.units.arrangements``) as the rating uses it: every
arrangement and option through ``rate_exchanger``.

References, named beside each check:

* **ht 1.2 (ChEDL)** ``ht.hx``: ``temperature_effectiveness_TEMA_E/G/H/J`` (side 1 the shell
  fluid), ``temperature_effectiveness_plate`` (side 1 the side of ``Np1`` passes),
  ``temperature_effectiveness_basic`` and ``temperature_effectiveness_air_cooler`` (its forms on
  the air basis, see ``test_air_cooler.py``), called on the side the case says: the check that
  the registry hands each relation the right basis (which stream is in the shell, which passes
  belong to which stream, which fluid is the air). The relations themselves are checked against
  ht by ``test_pntu_shells_reference.py`` and ``test_pntu_plates_reference.py``.
* **Conservation and the second law**, on random batches with bypasses, for every arrangement,
  1-3 shells joined in counterflow and in parallel flow.
* **Identities**: F = 1 for what is counterflow unit by unit; a cross flagged only where it
  means heat flowing back (Shah & Sekulić 2003, ch. 3, from memory); the approach of arrangements
  whose streams leave at one end is their outlet difference.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from ht import hx

from hxtrain.units.arrangements import ARRANGEMENTS, arranged, setting_problem
from hxtrain.units.pntu_rating import rate_exchanger

EPS = np.finfo(float).eps


def _config(name, tube_passes=2, shell_side="hot", mixed_side=None, **options):
    return dict(arrangement=arranged(name, **options), tube_passes=tube_passes, shell_side=shell_side,
                mixed_side=mixed_side)


CONFIGS = [
    _config("tema_e", 1), _config("tema_e", 1, tube_flow="parallel_flow"), _config("tema_e", 3),
    _config("tema_e", 3, "cold"), _config("tema_f", 4), _config("tema_f", 8, "cold"), _config("tema_f", 2),
    _config("tema_g", 1), _config("tema_g", 2, "cold"), _config("tema_h", 1, "cold"), _config("tema_h", 2),
    _config("tema_j", 1), _config("tema_j", 2, "cold", shell_inlets=2), _config("tema_j", 4),
    _config("tema_x"), _config("tema_x", shell_side="cold", shell_fluid_mixed=True),
    _config("crossflow", mixed_side="both"), _config("crossflow", mixed_side="hot"),
    _config("plate", passes=(1, 1)), _config("plate", passes=(1, 1), channel_flow="parallel_flow"),
    _config("plate", shell_side="cold", passes=(1, 2)), _config("plate", passes=(3, 1), channel_flow="parallel_flow"),
    _config("plate", passes=(4, 1)), _config("plate", passes=(2, 2), overall_flow="parallel_flow"),
    _config("plate", passes=(3, 3), channel_flow="parallel_flow"), _config("plate", passes=(2, 3)),
    _config("plate", shell_side="cold", passes=(4, 2), overall_flow="parallel_flow"),
    _config("air_cooler", 1, "cold", tube_rows=3), _config("air_cooler", 2, "cold", tube_rows=4),
    _config("air_cooler", 4, "hot", tube_rows=4), _config("air_cooler", 5, "cold", tube_rows=5),
    _config("counterflow"), _config("parallel_flow"), _config("double_pipe"),
]


def _id(cfg):
    a = cfg["arrangement"]
    return "-".join([a.name, str(cfg["tube_passes"]), cfg["shell_side"], str(cfg["mixed_side"])]
                    + [f"{k}={v}" for k, v in a.given])


def test_configs_cover_every_arrangement():
    assert {c["arrangement"].name for c in CONFIGS} == set(ARRANGEMENTS)


def _random_inputs(seed, n=300, bypass=False):
    """Seeded batch as in test_exchanger_rating: inlets 0-400 °C either way round, C 0.05-50
    kW/K (equal C and equal inlets among them), UA 0.01-60 kW/K, bypasses 0-0.9."""
    rng = np.random.default_rng(seed)
    t_hot, t_cold = rng.uniform(0.0, 400.0, n), rng.uniform(0.0, 400.0, n)
    c_hot = 10.0 ** rng.uniform(math.log10(0.05), math.log10(50.0), n)
    c_cold = 10.0 ** rng.uniform(math.log10(0.05), math.log10(50.0), n)
    ua = 10.0 ** rng.uniform(-2.0, math.log10(60.0), n)
    c_cold[:10], t_cold[10:13] = c_hot[:10], t_hot[10:13]
    b_hot = rng.uniform(0.0, 0.9, n) if bypass else np.zeros(n)
    b_cold = rng.uniform(0.0, 0.9, n) if bypass else np.zeros(n)
    return t_hot, t_cold, c_hot, c_cold, ua, b_hot, b_cold


@pytest.mark.parametrize("shells_flow", ["counterflow", "parallel_flow"])
@pytest.mark.parametrize("shells", [1, 2, 3])
@pytest.mark.parametrize("cfg", CONFIGS, ids=[_id(c) for c in CONFIGS])
def test_energy_balance_and_second_law(cfg, shells, shells_flow):
    """Conservation: duty = C_hot ΔT_hot = C_cold ΔT_cold to 1e-12 plus the rounding of ΔT.
    Second law: duty has the sign of T_hot,in - T_cold,in and is zero only with equal inlets;
    |duty| <= C_min (exchanger proper) |ΔT_in|; outlets within the inlets. Energy closes for
    ``reversed`` inlets too (heat by temperature, not by label). F <= 1 (Bowman et al. 1940:
    no arrangement beats counterflow)."""
    a = cfg["arrangement"]
    cfg = {**cfg, "arrangement": arranged(a.name, shells_flow=shells_flow, **dict(a.given))}
    t_hot, t_cold, c_hot, c_cold, ua, b_hot, b_cold = _random_inputs(100 + shells, bypass=shells == 2)
    r = rate_exchanger(t_hot, t_cold, c_hot, c_cold, ua, shells=shells, bypass_hot=b_hot, bypass_cold=b_cold, **cfg)
    scale = np.maximum(np.abs(t_hot), np.abs(t_cold))
    for c, dq in ((c_hot, c_hot * (t_hot - r.t_hot_out)), (c_cold, c_cold * (r.t_cold_out - t_cold))):
        assert np.all(np.abs(dq - r.duty) <= 1e-12 * np.abs(r.duty) + 4 * EPS * c * scale)
    d_in = t_hot - t_cold
    assert np.all(r.duty * d_in >= 0.0)
    assert np.all((r.duty != 0.0) == (d_in != 0.0))
    c_min = np.minimum(c_hot * (1 - b_hot), c_cold * (1 - b_cold))
    assert np.all(np.abs(r.duty) <= c_min * np.abs(d_in) * (1 + 1e-12))
    low, high = np.minimum(t_hot, t_cold) - 4 * EPS * scale, np.maximum(t_hot, t_cold) + 4 * EPS * scale
    for t in (r.t_hot_out, r.t_cold_out):
        assert np.all((t >= low) & (t <= high))
    # F <= 1 where P carries it: near saturation F = NTU_cf(P)/NTU is as uncertain as
    # eps/(1 - P) relative (pntu.f_factor)
    resolved = r.effectiveness < 1.0 - 1e-6
    assert np.all(r.f[resolved] <= 1.0 + 1e-9) and np.all(np.isfinite(r.f))


# --------------------------------------------------------------------------------------------
# The basis each relation is handed: against ht on the side the case names
# --------------------------------------------------------------------------------------------
R_POINTS = (0.1, 0.45, 1.0, 1.7, 3.0)
NTU_POINTS = (0.05, 0.4, 1.3, 3.5)
SHELLS_IN_HT = {"tema_g": hx.temperature_effectiveness_TEMA_G, "tema_h": hx.temperature_effectiveness_TEMA_H,
                "tema_j": hx.temperature_effectiveness_TEMA_J}


def _p_hot(cfg, r_hot, ntu_hot):
    """P of the hot stream from rate_exchanger at R_hot and NTU_hot (C_hot = 1)."""
    rating = rate_exchanger(1.0, 0.0, 1.0, 1.0 / r_hot, ntu_hot, **cfg)
    return float(rating.p)


def _ht_shell_basis(reference, r_hot, ntu_hot, hot_in_shell):
    """ht's shell-basis relation read on the hot side: P_t(NTU_t, R_t) = P_s(NTU_t R_t, 1/R_t)/R_t."""
    if hot_in_shell:
        return reference(r_hot, ntu_hot)
    return reference(1.0 / r_hot, ntu_hot * r_hot) / r_hot


@pytest.mark.parametrize("shell_side", ["hot", "cold"])
@pytest.mark.parametrize("name, passes", [("tema_g", 1), ("tema_g", 2), ("tema_h", 1), ("tema_h", 2),
                                          ("tema_j", 1), ("tema_j", 2), ("tema_j", 4), ("tema_e", 1), ("tema_e", 3)])
def test_shell_side_reaches_the_relation_as_ht_has_it(name, passes, shell_side):
    """ht 1.2 temperature_effectiveness_TEMA_G/H/J/E (side 1 the shell fluid), to 1e-9: the
    rating puts the stream named by shell_side in the shell, whichever stream has the smaller C."""
    function = SHELLS_IN_HT.get(name, hx.temperature_effectiveness_TEMA_E)
    cfg = _config(name, passes, shell_side)
    for r in R_POINTS:
        for n in NTU_POINTS:
            expected = _ht_shell_basis(lambda rr, nn: function(rr, nn, passes), r, n, shell_side == "hot")
            assert _p_hot(cfg, r, n) == pytest.approx(expected, rel=1e-9), (r, n)


PLATE_CASES = [((1, 2), {}, ()), ((3, 1), {"channel_flow": "parallel_flow"}, (False,)),
               ((1, 3), {}, (True,)), ((4, 1), {}, ()), ((2, 3), {}, (True,)),
               ((3, 2), {"overall_flow": "parallel_flow"}, (False,)), ((2, 4), {"overall_flow": "parallel_flow"}, (False,)),
               ((2, 2), {"overall_flow": "parallel_flow", "channel_flow": "counterflow"}, (False, True)),
               ((2, 2), {"channel_flow": "parallel_flow"}, (True, False))]


@pytest.mark.parametrize("shell_side", ["hot", "cold"])
@pytest.mark.parametrize("passes, options, ht_args", PLATE_CASES, ids=[str(c[:2]) for c in PLATE_CASES])
def test_plate_passes_belong_to_the_streams_the_case_names(passes, options, ht_args, shell_side):
    """ht 1.2 temperature_effectiveness_plate(R1, NTU1, Np1, Np2, ...), side 1 the stream with
    Np1 passes, to 1e-9: ``passes: {hot: a, cold: b}`` gives the hot stream a passes (the case
    reader stores them as (shell_side stream's, other's); here the shell_side stream has
    passes[0])."""
    cfg = _config("plate", shell_side=shell_side, passes=passes, **options)
    hot_passes, cold_passes = passes if shell_side == "hot" else passes[::-1]
    for r in R_POINTS:
        for n in NTU_POINTS:
            expected = hx.temperature_effectiveness_plate(r, n, hot_passes, cold_passes, *ht_args)
            assert _p_hot(cfg, r, n) == pytest.approx(expected, rel=1e-9), (r, n)


@pytest.mark.parametrize("air_side", ["hot", "cold"])
@pytest.mark.parametrize("rows, passes", [(3, 1), (2, 2), (4, 2), (5, 5)])
def test_the_air_is_the_shell_side_of_an_air_cooled_bundle(rows, passes, air_side):
    """ht 1.2 temperature_effectiveness_air_cooler read on the air basis (see test_air_cooler.py),
    to 1e-9 where ht's float form is well conditioned (R·NTU >= 0.02): shell_side names the air."""
    cfg = _config("air_cooler", passes, air_side, tube_rows=rows)
    for r in R_POINTS:
        for n in NTU_POINTS:
            if air_side == "hot":
                expected = hx.temperature_effectiveness_air_cooler(r, n, rows, passes)
            else:
                expected = hx.temperature_effectiveness_air_cooler(1.0 / r, n * r, rows, passes) / r
            if n * min(r, 1.0 / r) < 0.02:
                continue
            assert _p_hot(cfg, r, n) == pytest.approx(expected, rel=1e-9), (r, n)


def test_both_fluids_mixed_crossflow():
    """ht 1.2 temperature_effectiveness_basic('crossflow, mixed 1&2'), to 1e-9, symmetric."""
    for r in R_POINTS:
        for n in NTU_POINTS:
            expected = hx.temperature_effectiveness_basic(r, n, "crossflow, mixed 1&2")
            assert _p_hot(_config("crossflow", mixed_side="both"), r, n) == pytest.approx(expected, rel=1e-9)


def test_x_shell_mixing_follows_the_shell_side():
    """ht 1.2 temperature_effectiveness_basic('crossflow, mixed 1' / 'mixed 2'): an X shell with
    its shell fluid mixed is crossflow with the shell stream mixed, to 1e-9."""
    for shell_side, kind in (("hot", "crossflow, mixed 1"), ("cold", "crossflow, mixed 2")):
        cfg = _config("tema_x", shell_side=shell_side, shell_fluid_mixed=True)
        for r in R_POINTS:
            for n in NTU_POINTS:
                expected = hx.temperature_effectiveness_basic(r, n, kind)
                assert _p_hot(cfg, r, n) == pytest.approx(expected, rel=1e-9)


# --------------------------------------------------------------------------------------------
# F, the cross and the approach
# --------------------------------------------------------------------------------------------
COUNTERFLOW_UNIT_BY_UNIT = [_config("tema_e", 1), _config("plate", passes=(1, 1)), _config("plate", passes=(3, 3)),
                            _config("tema_f", 2)]


@pytest.mark.parametrize("cfg", COUNTERFLOW_UNIT_BY_UNIT, ids=[_id(c) for c in COUNTERFLOW_UNIT_BY_UNIT])
def test_what_is_counterflow_has_f_one_and_no_cross(cfg):
    """Identity: a 1-1 E shell, a 1-1 plate, a plate with equal passes all in counterflow and a
    two-pass F shell are counterflow: F = 1 (to 1e-9) and a temperature cross is no defect there."""
    t_hot, t_cold, c_hot, c_cold, ua, *_ = _random_inputs(7)
    r = rate_exchanger(t_hot, t_cold, c_hot, c_cold, ua, shells=2, **cfg)
    forward = (t_hot > t_cold + 1.0) & (r.effectiveness < 1.0 - 1e-6)  # F resolved (see above)
    reference = rate_exchanger(t_hot, t_cold, c_hot, c_cold, ua, shells=2, arrangement="counterflow")
    np.testing.assert_allclose(r.duty, reference.duty, rtol=1e-12, atol=1e-12)
    assert np.all(np.abs(r.f[forward] - 1.0) < 1e-9)
    assert not r.temperature_cross.any()


def test_a_cross_flags_heat_flowing_back_only_where_it_can():
    """A G shell at large NTU and R = 1 passes P_hot + P_cold = 1: the cold stream leaves above
    the hot outlet, heat flows back in the parallel-flow half (a limit). The same exchanger as
    three units in overall parallel flow: the cross of one unit means the next sends heat back.
    Pure crossflow (X shell) crosses without either: never flagged."""
    g = rate_exchanger(200.0, 20.0, 10.0, 10.0, 80.0, **_config("tema_g", 2))
    assert float(g.shell_p_sum) > 1.0 and bool(g.temperature_cross)
    series = rate_exchanger(200.0, 20.0, 10.0, 10.0, 60.0, shells=3,
                            **{**_config("counterflow"), "arrangement": arranged("counterflow",
                                                                                   shells_flow="parallel_flow")})
    assert bool(series.temperature_cross)
    x = rate_exchanger(200.0, 20.0, 10.0, 10.0, 80.0, **_config("tema_x"))
    assert float(x.shell_p_sum) > 1.0 and not bool(x.temperature_cross)


@pytest.mark.parametrize("tube_passes", [4, 8])
@pytest.mark.parametrize("shells", [1, 2])
def test_an_f_shell_crosses_and_approaches_as_its_two_e_halves(tube_passes, shells):
    """Identity: a TEMA F shell with 2N tube passes is two 1-N E shells in series in counterflow
    (its relation's own definition, Shah & Sekulić 2003, from memory), so its cross and its
    outlets' meeting are those of each half: every number equals the same exchanger rated as
    twice the shells of a 1-N E. Judged on the whole F shell, P_hot + P_cold had passed 1 where
    no half crosses (a false limit on the shell type chosen to avoid a cross)."""
    t_hot, t_cold, c_hot, c_cold, ua, *_ = _random_inputs(11)
    f_shell = rate_exchanger(t_hot, t_cold, c_hot, c_cold, ua, shells=shells, **_config("tema_f", tube_passes))
    halves = rate_exchanger(t_hot, t_cold, c_hot, c_cold, ua, shells=2 * shells, **_config("tema_e", tube_passes // 2))
    np.testing.assert_allclose(f_shell.duty, halves.duty, rtol=1e-12, atol=1e-9)
    # the halves' P comes from inverting the series relation: ~1e-7 K of round-off at deep crosses
    np.testing.assert_allclose(f_shell.approach, halves.approach, rtol=1e-9, atol=1e-6)
    np.testing.assert_allclose(f_shell.shell_p_sum, halves.shell_p_sum, rtol=1e-7)
    np.testing.assert_array_equal(f_shell.temperature_cross, halves.temperature_cross)
    one = dict(t_hot_in=200.0, t_cold_in=100.0, c_hot=10.0, c_cold=12.0, ua=22.0)  # the trial's shape: no half crosses
    whole, half = (rate_exchanger(**one, **_config("tema_f", 4)), rate_exchanger(**one, shells=2, **_config("tema_e", 2)))
    assert float(whole.effectiveness) * (1.0 + 10.0 / 12.0) > 1.2  # the whole shell's sum, as it was judged
    assert not bool(whole.temperature_cross) and not bool(half.temperature_cross)
    assert float(whole.approach) == pytest.approx(float(half.approach), rel=1e-9) and float(whole.approach) > 4.0


def test_units_in_parallel_flow_approach_at_their_common_outlet_end():
    """Streams that leave at one end approach there: the approach of units in overall parallel
    flow, of a 1-1 parallel E shell and of a plate in overall parallel flow is T_hot,out -
    T_cold,out (as for parallel flow itself)."""
    for cfg, shells in ((_config("tema_e", 1, tube_flow="parallel_flow"), 1),
                        (_config("plate", passes=(2, 3), overall_flow="parallel_flow"), 1),
                        ({**_config("tema_e", 2), "arrangement": arranged("tema_e", shells_flow="parallel_flow")}, 2)):
        r = rate_exchanger(250.0, 40.0, 8.0, 12.0, 9.0, shells=shells, **cfg)
        assert float(r.approach) == pytest.approx(float(r.t_hot_out - r.t_cold_out), rel=1e-12)


def test_settings_without_a_relation_are_named():
    """The registry says which option has no relation for a setting (what the case reader
    reports with its key path)."""
    assert setting_problem("tema_e", 5)[0] == "tube_passes"
    assert setting_problem(arranged("plate", passes=(3, 4)), 1)[0] == "passes"
    assert setting_problem(arranged("plate", passes=(1, 2), channel_flow="parallel_flow"), 1)[0] == "channel_flow"
    assert setting_problem(arranged("air_cooler", tube_rows=3), 2)[0] == "tube_rows"
    assert setting_problem(arranged("tema_e", tube_flow="parallel_flow"), 2)[0] == "tube_flow"
    assert setting_problem("tema_j", 4) is None
