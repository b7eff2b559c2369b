"""Tests of ``hxtrain.units.pntu_rating.rate_exchanger``: conservation, second law, limits,
identities, the F factor, the temperature-cross flag, the choice of the C_min basis, and
hand-worked numbers.

References are conservation (energy balance), closed forms worked by hand, ht 1.2 (ChEDL)
``ht.hx`` (``temperature_effectiveness_basic``, ``temperature_effectiveness_TEMA_E``,
``F_LMTD_Fakheri``) and the textbook LMTD; never ``rate_exchanger`` called the same way.
Random sweeps use a seeded numpy generator (deterministic), one batch call per configuration.
"""

from __future__ import annotations

import math
from dataclasses import fields
from decimal import Decimal, localcontext

import numpy as np
import pytest
from ht.hx import F_LMTD_Fakheri, temperature_effectiveness_basic, temperature_effectiveness_TEMA_E

from hxtrain.units import ARRANGEMENTS, ExchangerRating, rate_exchanger

EPS = np.finfo(float).eps

# every arrangement, with the options that change its physics
CONFIGS = [
    dict(arrangement="counterflow"),
    dict(arrangement="double_pipe"),
    dict(arrangement="parallel_flow"),
    dict(arrangement="crossflow", mixed_side=None),
    dict(arrangement="crossflow", mixed_side="hot"),
    dict(arrangement="crossflow", mixed_side="cold"),
    dict(arrangement="tema_e", tube_passes=2, shell_side="hot"),
    dict(arrangement="tema_e", tube_passes=2, shell_side="cold"),
    dict(arrangement="tema_e", tube_passes=4, shell_side="hot"),
    dict(arrangement="tema_e", tube_passes=4, shell_side="cold"),
]


def _cid(cfg):
    return "-".join(str(v) for v in cfg.values() if v is not None) or "counterflow"


CONFIG_IDS = [_cid(c) for c in CONFIGS]
SHELLS = (1, 2, 3, 4)


def test_configs_cover_every_arrangement():
    """Every arrangement is rated either here or in test_arrangement_registry.py (the shells,
    plates and air-cooled bundles added later, with their options and ht references)."""
    from test_arrangement_registry import CONFIGS as REGISTRY_CONFIGS

    here = {c["arrangement"] for c in CONFIGS}
    there = {str(getattr(c["arrangement"], "name", c["arrangement"])) for c in REGISTRY_CONFIGS}
    assert here <= set(ARRANGEMENTS)
    assert here | there == set(ARRANGEMENTS)


def _random_inputs(seed, n=400, bypass=False):
    """Seeded batch: inlet temperatures 0-400 °C in either order (about half reversed),
    C 0.05-50 kW/K, UA 0.01-60 kW/K (NTU 2e-4 .. 1200), optional bypass fractions 0-0.9."""
    rng = np.random.default_rng(seed)
    t_hot = rng.uniform(0.0, 400.0, n)
    t_cold = rng.uniform(0.0, 400.0, n)
    c_hot = 10.0 ** rng.uniform(math.log10(0.05), math.log10(50.0), n)
    c_cold = 10.0 ** rng.uniform(math.log10(0.05), math.log10(50.0), n)
    ua = 10.0 ** rng.uniform(-2.0, math.log10(60.0), n)
    # a few exact ties: equal C (R = 1) and equal inlet temperatures
    c_cold[:10] = c_hot[:10]
    t_cold[10:13] = t_hot[10:13]
    b_hot = rng.uniform(0.0, 0.9, n) if bypass else np.zeros(n)
    b_cold = rng.uniform(0.0, 0.9, n) if bypass else np.zeros(n)
    return t_hot, t_cold, c_hot, c_cold, ua, b_hot, b_cold


def _rate(inputs, cfg, shells):
    t_hot, t_cold, c_hot, c_cold, ua, b_hot, b_cold = inputs
    return rate_exchanger(t_hot, t_cold, c_hot, c_cold, ua, shells=shells, bypass_hot=b_hot, bypass_cold=b_cold, **cfg)


# --------------------------------------------------------------------------------------------
# Conservation and second law
# --------------------------------------------------------------------------------------------
@pytest.mark.parametrize("bypass", [False, True], ids=["no_bypass", "bypass"])
@pytest.mark.parametrize("shells", SHELLS)
@pytest.mark.parametrize("cfg", CONFIGS, ids=CONFIG_IDS)
def test_energy_balance_closes(cfg, shells, bypass):
    """Duty = C_hot (T_hot_in - T_hot_out) = C_cold (T_cold_out - T_cold_in), with C the whole
    stream (bypass included), to 1e-12 relative. The only slack added is the rounding of the
    temperature difference itself, 4·eps·C·max|T| (a ΔT formed from two temperatures of
    magnitude T cannot be better than eps·T)."""
    inputs = _random_inputs(1000 + shells, bypass=bypass)
    t_hot, t_cold, c_hot, c_cold, *_ = inputs
    rating = _rate(inputs, cfg, shells)
    t_scale = np.maximum(np.abs(t_hot), np.abs(t_cold))
    q = rating.duty
    for c, dq in ((c_hot, c_hot * (t_hot - rating.t_hot_out)), (c_cold, c_cold * (rating.t_cold_out - t_cold))):
        tol = 1e-12 * np.abs(q) + 4 * EPS * c * t_scale
        bad = np.flatnonzero(~(np.abs(dq - q) <= tol))
        assert bad.size == 0, [(float(dq[i]), float(q[i])) for i in bad[:5]]
    # the exchanger proper balances on the flows through it
    b_hot, b_cold = inputs[5], inputs[6]
    dq_x = c_hot * (1 - b_hot) * (t_hot - rating.t_hot_out_exchanger)
    assert np.all(np.abs(dq_x - q) <= 1e-12 * np.abs(q) + 4 * EPS * c_hot * t_scale)
    dq_x = c_cold * (1 - b_cold) * (rating.t_cold_out_exchanger - t_cold)
    assert np.all(np.abs(dq_x - q) <= 1e-12 * np.abs(q) + 4 * EPS * c_cold * t_scale)


@pytest.mark.parametrize("bypass", [False, True], ids=["no_bypass", "bypass"])
@pytest.mark.parametrize("shells", SHELLS)
@pytest.mark.parametrize("cfg", CONFIGS, ids=CONFIG_IDS)
def test_second_law(cfg, shells, bypass):
    """Heat flows from the hotter inlet to the colder one, whatever the labels (GUIDE: never
    uphill): sign(duty) = sign(T_hot_in - T_cold_in); |duty| <= C_min,exchanger |ΔT_in| (Q_max);
    both outlets within the inlet envelope and each moved toward the other inlet; a positive
    duty whenever both sides flow, UA > 0 and the inlets differ; ``reversed`` exactly when the
    'hot' side enters colder and heat flows."""
    inputs = _random_inputs(2000 + shells, bypass=bypass)
    t_hot, t_cold, c_hot, c_cold, ua, b_hot, b_cold = inputs
    r = _rate(inputs, cfg, shells)
    d_in = t_hot - t_cold
    t_scale = np.maximum(np.abs(t_hot), np.abs(t_cold))
    tol_t = 4 * EPS * t_scale
    c_min = np.minimum(c_hot * (1 - b_hot), c_cold * (1 - b_cold))

    assert np.all(r.duty * d_in >= 0.0)
    assert np.all((np.abs(r.duty) > 0) == (np.abs(d_in) > 0))  # all C > 0, UA > 0 here
    assert np.all(np.abs(r.duty) <= c_min * np.abs(d_in) * (1 + 1e-12))
    lo, hi = np.minimum(t_hot, t_cold) - tol_t, np.maximum(t_hot, t_cold) + tol_t
    for t in (r.t_hot_out, r.t_cold_out, r.t_hot_out_exchanger, r.t_cold_out_exchanger):
        assert np.all((lo <= t) & (t <= hi))
    # each side moves from its inlet toward the other inlet, never past it
    assert np.all((t_hot - r.t_hot_out) * d_in >= -tol_t * np.abs(d_in))
    assert np.all((r.t_cold_out - t_cold) * d_in >= -tol_t * np.abs(d_in))
    np.testing.assert_array_equal(r.reversed, (t_hot < t_cold) & (r.duty != 0.0))
    assert r.reversed.sum() > 50 and (~r.reversed).sum() > 50  # both directions were exercised


@pytest.mark.parametrize("cfg", CONFIGS, ids=CONFIG_IDS)
def test_reversed_stream_pair_is_rated_with_heat_flowing_to_the_hot_label(cfg):
    """A 'hot' side stream entering at 40 °C against a 'cold' side stream at 180 °C: negative
    duty, ``reversed`` set, the 'hot' side heated and the 'cold' side cooled, each toward the
    other's inlet, and the magnitude the same as with the labels put right (next test)."""
    r = rate_exchanger(40.0, 180.0, 3.0, 5.0, 6.0, **cfg)
    assert r.duty < 0 and bool(r.reversed)
    assert 40.0 < r.t_hot_out <= 180.0 and 40.0 <= r.t_cold_out < 180.0


def _swapped(cfg):
    """The same physical exchanger with the streams' labels exchanged: the shell fluid / mixed
    fluid follow the stream, not the label."""
    out = dict(cfg)
    flip = {"hot": "cold", "cold": "hot"}
    if out.get("shell_side"):
        out["shell_side"] = flip[out["shell_side"]]
    if out.get("mixed_side"):
        out["mixed_side"] = flip[out["mixed_side"]]
    return out


@pytest.mark.parametrize("shells", (1, 3))
@pytest.mark.parametrize("c_pair", [(2.0, 5.0), (5.0, 2.0), (3.0, 3.0)], ids=["Cmin_hot", "Cmin_cold", "R1"])
@pytest.mark.parametrize("cfg", CONFIGS, ids=CONFIG_IDS)
def test_cmin_on_either_side_same_physics(cfg, c_pair, shells):
    """Exchanging the two streams between the 'hot' and 'cold' ports (shell/mixed fluid moving
    with its stream) describes the same exchanger: the duty is equal and opposite (1e-12), each
    stream leaves at the same temperature (1e-12 of ΔT_in), ``reversed`` flips, and F is the
    same. Covers C_min on the hot side, on the cold side and R = 1."""
    c_a, c_b = c_pair  # stream A at 180 °C, stream B at 40 °C
    a = rate_exchanger(180.0, 40.0, c_a, c_b, 7.0, shells=shells, **cfg)
    b = rate_exchanger(40.0, 180.0, c_b, c_a, 7.0, shells=shells, **_swapped(cfg))
    assert float(b.duty) == pytest.approx(-float(a.duty), rel=1e-12)
    assert float(b.t_hot_out) == pytest.approx(float(a.t_cold_out), abs=1e-12 * 140)
    assert float(b.t_cold_out) == pytest.approx(float(a.t_hot_out), abs=1e-12 * 140)
    assert not bool(a.reversed) and bool(b.reversed)
    assert float(b.f) == pytest.approx(float(a.f), rel=1e-12)
    assert float(b.effectiveness) == pytest.approx(float(a.effectiveness), rel=1e-12)


# --------------------------------------------------------------------------------------------
# Duty of every arrangement against ht on the hot-side basis (tests the C_min basis switch)
# --------------------------------------------------------------------------------------------
def _ht_p_hot_one_shell(cfg, ntu_h, r_h):
    """P of one shell on the hot-stream basis from ht 1.2 (ChEDL)."""
    arr = cfg["arrangement"]
    if arr in ("counterflow", "double_pipe"):
        return temperature_effectiveness_basic(r_h, ntu_h, subtype="counterflow")
    if arr == "parallel_flow":
        return temperature_effectiveness_basic(r_h, ntu_h, subtype="parallel")
    if arr == "crossflow":
        subtype = {None: "crossflow", "hot": "crossflow, mixed 1", "cold": "crossflow, mixed 2"}[cfg["mixed_side"]]
        return temperature_effectiveness_basic(r_h, ntu_h, subtype=subtype)
    if arr == "tema_e":  # ht: side 1 = shell fluid
        if cfg["shell_side"] == "hot":
            return temperature_effectiveness_TEMA_E(r_h, ntu_h, Ntp=cfg["tube_passes"])
        return temperature_effectiveness_TEMA_E(1.0 / r_h, ntu_h * r_h, Ntp=cfg["tube_passes"]) / r_h
    raise AssertionError(arr)


def _series(p, r, n):
    """Shah & Sekulić sec. 3.6, N units in overall counterflow, plain float (any basis)."""
    if n == 1:
        return p
    if r == 1.0:
        return n * p / (1 + (n - 1) * p)
    x = ((1 - r * p) / (1 - p)) ** n
    return (x - 1) / (x - r)


@pytest.mark.parametrize("shells", SHELLS)
@pytest.mark.parametrize("cfg", CONFIGS, ids=CONFIG_IDS)
def test_duty_matches_ht_on_the_hot_basis(cfg, shells):
    """Duty = P_hot C_hot (T_hot_in - T_cold_in) with P_hot from ht 1.2 (ChEDL) on the hot-stream
    basis (ht's TEMA E side 1 = shell fluid; crossflow 'mixed 1' = hot fluid mixed), shells in
    series by the textbook formula; rate_exchanger works on the C_min basis, so this checks the
    basis switch for C_min on either side and the asymmetric arrangements. 1e-9 relative."""
    for c_hot, c_cold in ((2.0, 5.0), (5.0, 2.0), (3.0, 3.0), (0.4, 9.0)):
        for ua in (0.5, 4.0, 12.0):
            r_h, ntu_h = c_hot / c_cold, ua / c_hot
            p_h = _series(_ht_p_hot_one_shell(cfg, ntu_h / shells, r_h), r_h, shells)
            rating = rate_exchanger(210.0, 35.0, c_hot, c_cold, ua, shells=shells, **cfg)
            assert float(rating.duty) == pytest.approx(p_h * c_hot * 175.0, rel=1e-9), (c_hot, c_cold, ua)
            assert float(rating.p) == pytest.approx(p_h, rel=1e-9)
            assert float(rating.r) == r_h and float(rating.ntu) == pytest.approx(ntu_h, rel=1e-15)
            c_min = min(c_hot, c_cold)
            assert float(rating.effectiveness) == pytest.approx(p_h * c_hot / c_min, rel=1e-9)


# --------------------------------------------------------------------------------------------
# Zero flow and zero UA
# --------------------------------------------------------------------------------------------
_INF_ALLOWED = {"ntu", "r"}  # documented: a side without flow is the limit NTU = inf / R = inf


def _assert_no_nan(rating: ExchangerRating, inf_allowed=_INF_ALLOWED):
    for f in fields(rating):
        value = np.asarray(getattr(rating, f.name), dtype=float)
        assert not np.any(np.isnan(value)), f"{f.name} is NaN: {value}"
        if f.name not in inf_allowed:
            assert np.all(np.isfinite(value)), f"{f.name} is not finite: {value}"


@pytest.mark.parametrize("shells", (1, 2))
@pytest.mark.parametrize("cfg", CONFIGS, ids=CONFIG_IDS)
@pytest.mark.parametrize("zero", ["hot", "cold", "both"])
def test_zero_flow_on_a_side(cfg, shells, zero):
    """No flow on one side (or both), UA > 0: zero duty, no NaN in any field (inf only in
    ``ntu``/``r``, as documented), and the stagnant side's outlet at the other side's inlet
    (documented limit P -> 1 as its NTU -> inf); the flowing side leaves at its inlet."""
    c_hot = 0.0 if zero in ("hot", "both") else 4.0
    c_cold = 0.0 if zero in ("cold", "both") else 4.0
    r = rate_exchanger(150.0, 30.0, c_hot, c_cold, 5.0, shells=shells, **cfg)
    _assert_no_nan(r)
    assert float(r.duty) == 0.0
    assert float(r.t_hot_out) == (30.0 if c_hot == 0 else 150.0)
    assert float(r.t_cold_out) == (150.0 if c_cold == 0 else 30.0)
    assert not bool(r.temperature_cross) and not bool(r.reversed)


@pytest.mark.parametrize("cfg", CONFIGS, ids=CONFIG_IDS)
def test_all_flow_bypassed_is_zero_duty(cfg):
    """A side fully bypassed (fraction 1) carries no flow through the exchanger: zero duty, both
    outlet temperatures at their inlets (the bypass re-mixes the whole stream), no NaN."""
    for b_hot, b_cold in ((1.0, 0.0), (0.0, 1.0)):
        r = rate_exchanger(150.0, 30.0, 4.0, 6.0, 5.0, bypass_hot=b_hot, bypass_cold=b_cold, **cfg)
        _assert_no_nan(r)
        assert float(r.duty) == 0.0 and float(r.t_hot_out) == 150.0 and float(r.t_cold_out) == 30.0


@pytest.mark.parametrize("cfg", CONFIGS, ids=CONFIG_IDS)
def test_zero_ua(cfg):
    """UA = 0: zero duty, outlets = inlets (also for a side without flow), all fields finite."""
    for c_hot, c_cold in ((4.0, 6.0), (0.0, 6.0), (4.0, 0.0)):
        r = rate_exchanger(150.0, 30.0, c_hot, c_cold, 0.0, **cfg)
        _assert_no_nan(r)
        assert float(r.duty) == 0.0
        assert float(r.t_hot_out) == 150.0 and float(r.t_cold_out) == 30.0


# --------------------------------------------------------------------------------------------
# Identities and F
# --------------------------------------------------------------------------------------------
@pytest.mark.parametrize("shells", (2, 3, 4, 7))
@pytest.mark.parametrize("arrangement", ["counterflow", "double_pipe"])
def test_counterflow_shells_are_one_counterflow_unit(arrangement, shells):
    """N counterflow units in series in overall counterflow, UA split among them, are one
    counterflow unit with the total UA (identity), for C_min on either side and R = 1."""
    inputs = _random_inputs(3000 + shells)
    t_hot, t_cold, c_hot, c_cold, ua, *_ = inputs
    many = rate_exchanger(t_hot, t_cold, c_hot, c_cold, ua, arrangement, shells=shells)
    one = rate_exchanger(t_hot, t_cold, c_hot, c_cold, ua, arrangement, shells=1)
    scale = np.abs(one.duty) + 1e-300
    assert np.all(np.abs(many.duty - one.duty) <= 1e-12 * scale + 8 * EPS * np.minimum(c_hot, c_cold) * np.abs(t_hot - t_cold))


def _lmtd_textbook(dt1, dt2):
    """Incropera et al. eq. 11.15, (ΔT1 - ΔT2)/ln(ΔT1/ΔT2), with its equal-difference limit.
    Evaluated in 50-digit decimal arithmetic: in float the form is 0/0-like when the two
    differences are a few ulp apart (R = 1 counterflow), measured 128 instead of 108."""
    a, b = Decimal(dt1), Decimal(dt2)
    with localcontext() as ctx:
        ctx.prec = 50
        return float(a) if a == b else float((a - b) / (a / b).ln())


F_CASES = [(2.0, 5.0, 3.0), (5.0, 2.0, 3.0), (3.0, 3.0, 2.0), (1.0, 4.0, 6.0), (4.0, 1.5, 1.0), (2.5, 2.0, 8.0)]


@pytest.mark.parametrize("shells", (1, 2, 3))
@pytest.mark.parametrize("cfg", CONFIGS, ids=CONFIG_IDS)
def test_f_equals_duty_over_ua_lmtd_from_terminal_temperatures(cfg, shells):
    """F reported by the rating = Q/(UA·LMTD) with LMTD of the counterflow terminal differences
    (T_hot_in - T_cold_out, T_hot_out - T_cold_in) computed here by the textbook formula from
    the rating's outlet temperatures (GUIDE: F = Q/(UA·LMTD_counterflow)), 1e-9 relative; with a
    bypass, on the exchanger proper (its own outlets and flows). Also ``lmtd`` = that LMTD."""
    for c_hot, c_cold, ua in F_CASES:
        for b_hot, b_cold in ((0.0, 0.0), (0.3, 0.1)):
            r = rate_exchanger(220.0, 40.0, c_hot, c_cold, ua, shells=shells, bypass_hot=b_hot, bypass_cold=b_cold, **cfg)
            lm = _lmtd_textbook(220.0 - float(r.t_cold_out_exchanger), float(r.t_hot_out_exchanger) - 40.0)
            assert float(r.lmtd) == pytest.approx(lm, rel=1e-12)
            assert float(r.f) == pytest.approx(float(r.duty) / (ua * lm), rel=1e-9), (c_hot, c_cold, ua, b_hot)


@pytest.mark.parametrize("shells", (1, 2, 4))
@pytest.mark.parametrize("arrangement", ["counterflow", "double_pipe"])
@pytest.mark.parametrize("ntu_min", [1e-6, 0.1, 1.0, 5.0, 10.0])
def test_f_is_one_for_counterflow(arrangement, shells, ntu_min):
    """F = 1 for counterflow by definition (Bowman et al. 1940), C_min on either side and R = 1,
    1e-9, NTU_min up to 10. (F is recovered from P, and the round trip P -> NTU_cf loses digits
    as P -> 1: measured |F - 1| = 3.2e-11 at NTU 30, Cr = 0.5, but 1.6e-6 at NTU 30, Cr = 0.1;
    larger NTU in the next test.)"""
    for c_hot, c_cold in ((2.0, 4.0), (4.0, 2.0), (3.0, 3.0), (1.0, 10.0)):
        ua = ntu_min * min(c_hot, c_cold)
        r = rate_exchanger(200.0, 50.0, c_hot, c_cold, ua, arrangement, shells=shells)
        assert float(r.f) == pytest.approx(1.0, rel=1e-9), (c_hot, c_cold)


@pytest.mark.parametrize("ntu_min", [30.0, 50.0, 60.0, 80.0, 100.0, 1000.0])
def test_f_of_a_large_counterflow_is_a_number_near_one(ntu_min):
    """A counterflow exchanger with a large NTU (an oversized unit, or one whose flow is nearly
    all bypassed) must still report F — it is 1 by definition — not NaN. The tolerance 1e-3 is
    loose on purpose: F is recovered from an effectiveness within 1e-11 of 1, which carries
    only a few digits (measured |F - 1| = 1.6e-6 at NTU 30, Cr = 0.1; 1.7e-7 at NTU 50 and
    3.4e-5 at NTU 60, Cr = 0.5). Measured while writing: NaN once the effectiveness rounds to
    exactly 1.0 (NTU(1 - Cr) >~ 37: NTU 50 at Cr = 0.1, NTU ~ 75 at Cr = 0.5), where
    ``f_factor(1.0, r, ntu)`` evaluates inf/inf."""
    for c_hot, c_cold in ((2.0, 4.0), (4.0, 2.0), (1.0, 10.0)):
        r = rate_exchanger(200.0, 50.0, c_hot, c_cold, ntu_min * min(c_hot, c_cold), "counterflow")
        assert math.isfinite(float(r.f)), (c_hot, c_cold, float(r.effectiveness), float(r.f))
        assert float(r.f) == pytest.approx(1.0, abs=1e-3)


@pytest.mark.parametrize("cfg", CONFIGS, ids=CONFIG_IDS)
def test_no_nan_in_any_field_for_valid_inputs(cfg):
    """Every field of a rating with valid inputs (C >= 0, UA >= 0, bypass fractions in [0, 1))
    is a number (inf only in ``ntu``/``r`` for a side without flow). Seeded batch including
    near-total bypass (0.999), which leaves a tiny flow and so a huge NTU on that side."""
    t_hot, t_cold, c_hot, c_cold, ua, b_hot, b_cold = _random_inputs(4000, n=600, bypass=True)
    b_hot[:100] = 0.999
    b_cold[100:200] = 0.999
    r = rate_exchanger(t_hot, t_cold, c_hot, c_cold, ua, bypass_hot=b_hot, bypass_cold=b_cold, **cfg)
    bad = {f.name: int(np.isnan(np.asarray(getattr(r, f.name), float)).sum()) for f in fields(r)}
    bad = {k: v for k, v in bad.items() if v}
    if bad:
        i = int(np.flatnonzero(np.isnan(np.asarray(r.f, float)) | np.isnan(np.asarray(r.duty, float)))[0])
        example = dict(t_hot_in=t_hot[i], t_cold_in=t_cold[i], c_hot=c_hot[i], c_cold=c_cold[i], ua=ua[i],
                       bypass_hot=b_hot[i], bypass_cold=b_cold[i], effectiveness=float(r.effectiveness[i]))
        pytest.fail(f"NaN counts per field {bad}; e.g. {example}")
    _assert_no_nan(r)


@pytest.mark.parametrize("shells", (1, 2, 3, 4))
def test_f_of_one_two_shells_matches_ht_fakheri(shells):
    """F of N 1-2 TEMA E shells in series against ht 1.2 (ChEDL) ``F_LMTD_Fakheri(Thi, Tho, Tci,
    Tco, shells=N)`` (Fakheri 2003) from the rating's own terminal temperatures, 1e-9 relative,
    on cases with F >= 0.6 (F is steep below; Fakheri must rebuild P and R from temperatures)."""
    compared = 0
    for c_hot, c_cold in ((2.0, 5.0), (5.0, 2.0), (4.0, 3.0), (1.0, 8.0), (8.0, 1.0)):
        for ntu_min in (0.05, 0.3, 0.8, 1.5, 3.0):
            ua = ntu_min * min(c_hot, c_cold)
            for shell_side in ("hot", "cold"):
                r = rate_exchanger(200.0, 50.0, c_hot, c_cold, ua, "tema_e", shells=shells, shell_side=shell_side)
                if float(r.f) < 0.6:
                    continue
                compared += 1
                expected = F_LMTD_Fakheri(200.0, float(r.t_hot_out), 50.0, float(r.t_cold_out), shells=shells)
                assert float(r.f) == pytest.approx(expected, rel=1e-9), (c_hot, c_cold, ua)
    assert compared >= 20


# --------------------------------------------------------------------------------------------
# Temperature cross
# --------------------------------------------------------------------------------------------
@pytest.mark.parametrize("direction", [1, -1], ids=["normal", "reversed"])
@pytest.mark.parametrize("shell_side", ["hot", "cold"])
@pytest.mark.parametrize("tube_passes", (2, 4))
def test_temperature_cross_flag_of_one_shell(tube_passes, shell_side, direction):
    """One multipass shell: ``temperature_cross`` is set exactly when the heated stream leaves
    above the outlet of the stream that heats it (cold outlet above hot outlet; with the labels
    reversed, the roles follow the temperatures). Grid of NTU and R both sides of the cross
    line; points within 1e-9 ΔT of it are left out. Both outcomes must occur in the grid."""
    seen = set()
    for c_hot in (1.0, 2.0, 3.0, 5.0):
        for c_cold in (1.0, 2.5, 4.0, 8.0):
            for ua in (0.2, 1.0, 2.0, 4.0, 8.0, 20.0):
                t_hot, t_cold = (200.0, 50.0) if direction == 1 else (50.0, 200.0)
                r = rate_exchanger(t_hot, t_cold, c_hot, c_cold, ua, "tema_e", tube_passes=tube_passes, shell_side=shell_side)
                gap = direction * (float(r.t_cold_out) - float(r.t_hot_out))
                if abs(gap) < 1e-9 * 150.0:
                    continue
                seen.add(gap > 0)
                assert bool(r.temperature_cross) == (gap > 0), (c_hot, c_cold, ua, gap)
    assert seen == {True, False}


def test_no_temperature_cross_flag_for_counterflow():
    """Counterflow has no multipass shell: the flag stays false even though the cold outlet
    exceeds the hot outlet, which a counterflow exchanger does routinely."""
    r = rate_exchanger(200.0, 50.0, 3.0, 3.0, np.array([6.0, 15.0, 30.0]), "counterflow")
    assert np.all(r.t_cold_out > r.t_hot_out)
    assert not np.any(r.temperature_cross)


# --------------------------------------------------------------------------------------------
# Worked numbers
# --------------------------------------------------------------------------------------------
def test_worked_counterflow_example():
    """Counterflow, C_hot = 2 kW/K, C_cold = 4 kW/K, UA = 3 kW/K, T_hot_in = 150 °C,
    T_cold_in = 30 °C (closed form of Incropera Table 11.3, worked by hand):

    C_min = C_hot = 2, Cr = 0.5, NTU = 3/2 = 1.5, NTU(1 - Cr) = 0.75, e^-0.75 = 0.4723665527;
    ε = (1 - 0.4723665527)/(1 - 0.5 × 0.4723665527) = 0.5276334473/0.7638167236 = 0.6907854082;
    Q = ε C_min (150 - 30) = 0.6907854082 × 240 = 165.7884980 kW;
    T_hot_out = 150 - 165.7884980/2 = 67.10575101 °C; T_cold_out = 30 + 165.7884980/4 =
    71.44712449 °C; ΔT1 = 150 - 71.44712449 = 78.55287551, ΔT2 = 67.10575101 - 30 = 37.10575101,
    LMTD = (78.55287551 - 37.10575101)/ln(78.55287551/37.10575101) = 55.26283266 K, and
    UA·LMTD = 3 × 55.26283266 = 165.788498 kW = Q (F = 1). P_hot = ε = 0.6907854082, R_hot = 0.5.
    """
    r = rate_exchanger(150.0, 30.0, 2.0, 4.0, 3.0, "counterflow")
    assert float(r.duty) == pytest.approx(165.7884980, rel=1e-9)
    assert float(r.t_hot_out) == pytest.approx(67.10575101, rel=1e-9)
    assert float(r.t_cold_out) == pytest.approx(71.44712449, rel=1e-9)
    assert float(r.lmtd) == pytest.approx(55.26283266, rel=1e-9)
    assert float(r.effectiveness) == pytest.approx(0.6907854082, rel=1e-9)
    assert float(r.p) == pytest.approx(0.6907854082, rel=1e-9)
    assert float(r.r) == 0.5 and float(r.ntu) == 1.5
    assert float(r.f) == pytest.approx(1.0, rel=1e-12)
    assert not bool(r.temperature_cross) and not bool(r.reversed)


def test_worked_one_two_shell_example():
    """The same streams in one 1-2 TEMA E shell (Shah & Sekulić Table 3.6 1-2 relation, worked by
    hand): R = 0.5, NTU = 1.5, E = sqrt(1 + 0.25) = 1.118033989, E·NTU/2 = 0.8385254916,
    coth(0.8385254916) = 1.459795888; P = 2/(1 + 0.5 + 1.118033989 × 1.459795888) =
    2/3.132101665 = 0.6385489267; Q = 0.6385489267 × 2 × 120 = 153.2517424 kW;
    T_hot_out = 150 - 76.6258712 = 73.3741288 °C, T_cold_out = 30 + 38.3129356 = 68.3129356 °C
    (below the hot outlet: no temperature cross, P_hot + P_cold = 0.958 < 1)."""
    for shell_side in ("hot", "cold"):
        r = rate_exchanger(150.0, 30.0, 2.0, 4.0, 3.0, "tema_e", tube_passes=2, shell_side=shell_side)
        assert float(r.duty) == pytest.approx(153.2517424, rel=1e-9)
        assert float(r.t_hot_out) == pytest.approx(73.3741288, rel=1e-9)
        assert float(r.t_cold_out) == pytest.approx(68.3129356, rel=1e-9)
        assert float(r.shell_p_sum) == pytest.approx(0.6385489267 * 1.5, rel=1e-9)
        assert not bool(r.temperature_cross)
