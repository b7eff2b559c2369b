"""Tests of the inverse P–NTU relations, ``hxtrain.units.pntu_inverse`` and the generic solver
``hxtrain.units.ntu_solver``.

References, named beside each check:

* **Identity, forward then inverse**: NTU -> P by the rating's own forward path
  (``pntu_rating.p_one_unit`` and ``pntu.p_shells_in_series``) -> NTU by the inverse, over R from
  0 to 5 (1 exactly included) and NTU from 1e-4 to 20, for every arrangement and flag. The
  NTU that comes back cannot be closer than the conditioning of the problem allows: a P rounded
  by δP moves the exact inverse by δP/(dP/dNTU), i.e. by ``cond·δP/P`` relative with
  ``cond = P/(NTU·dP/dNTU)``. So the NTU check is ``1e-10 + COND_ULPS·eps·cond`` (cond from a
  central difference), which is 1e-10 wherever cond·eps is negligible; where P lies within
  ``SATURATED_ULPS`` ulp of its supremum no NTU information is left and only P is checked.
* **ht 1.2 (ChEDL)** ``ht.hx.NTU_from_P_basic`` (counterflow, parallel, crossflow, crossflow
  mixed 1, mixed 2, mixed 1&2) and ``ht.hx.NTU_from_P_E`` (TEMA E, 2 to 8 tube passes; ht's side
  1 is the shell fluid, the tube basis is compared through P_s = P_t·R_t, R_s = 1/R_t,
  NTU_s = NTU_t·R_t), at 1e-9 where the inverse is well conditioned (cond < 1e4). ht's side 1 of
  "mixed 1" is the mixed fluid, as hxtrain's ``side1_mixed=True`` (same forward formula).
* **Closed-form limits** (Shah & Sekulić 2003, Table 3.6; Bowman, Mueller & Nagle 1940, from
  memory) for the suprema, and a dense scan for the maximum of the 1-N shell.
"""

from __future__ import annotations

import math
import time
import warnings

import numpy as np
import pytest
from ht.hx import NTU_from_P_basic, NTU_from_P_E

from hxtrain.units import pntu
from hxtrain.units.ntu_solver import p_maximum, solve_ntu
from hxtrain.units.pntu_inverse import (
    ntu_crossflow_one_mixed,
    ntu_from_p,
    ntu_tema_e,
    p_one_unit_of_series,
    p_supremum,
)
from hxtrain.units.pntu_rating import p_one_unit

EPS = np.finfo(float).eps
R_GRID = np.array([0.0, 1e-6, 0.1, 0.5, 0.9, 1.0 - 1e-9, 1.0, 1.0 + 1e-9, 1.5, 2.0, 3.0, 5.0])
NTU_GRID = np.logspace(-4.0, math.log10(20.0), 25)
SHELLS = (1, 2, 3, 4)
REL_NTU = 1e-10
COND_ULPS = 16.0
"""NTU error allowed per unit of eps·cond. Measured while writing these tests: at most 1.9
(the forward relations round to a few ulp; the closed-form inverses and the solver add ~1)."""
SATURATED_ULPS = 64.0
"""Within this many ulp of its supremum P carries no usable NTU information (the central
difference for cond is itself noise there)."""
REL_HT = 1e-9
COND_HT = 1e4

CONFIGS = [
    dict(arrangement="counterflow"),
    dict(arrangement="double_pipe"),
    dict(arrangement="parallel_flow"),
    dict(arrangement="tema_e", tube_passes=2),
    dict(arrangement="tema_e", tube_passes=2, basis_is_shell=False),
    *[dict(arrangement="tema_e", tube_passes=n, basis_is_shell=b) for n in (4, 6, 8) for b in (True, False)],
    dict(arrangement="crossflow"),
    dict(arrangement="crossflow", basis_is_mixed=True),
    dict(arrangement="crossflow", basis_is_mixed=False),
]
CASES = [(cfg, shells) for cfg in CONFIGS for shells in SHELLS]


def _id(case):
    cfg, shells = case
    return "-".join(str(v) for v in cfg.values()) + f"-x{shells}"


def forward(ntu, r, cfg, shells):
    """The rating's path: one shell at NTU/N by ``p_one_unit``, then N shells in series."""
    return pntu.p_shells_in_series(p_one_unit(ntu / shells, r, **cfg), r, shells)


def _conditioning(ntu, r, cfg, shells, p):
    """cond = P/(NTU·dP/dNTU) by a central difference (relative step 1e-4)."""
    h = 1e-4
    slope = (forward(ntu * (1 + h), r, cfg, shells) - forward(ntu * (1 - h), r, cfg, shells)) / (2 * h * ntu)
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.abs(p / (ntu * slope))


def _round_trip(cfg, shells):
    rr, nn = np.meshgrid(R_GRID, NTU_GRID, indexing="ij")
    p = forward(nn, rr, cfg, shells)
    sup, at = p_supremum(rr, **cfg, shells=shells, return_ntu=True)
    # past the maximum of a 1-N shell the NTU is the upper root
    lower = ntu_from_p(p, rr, **cfg, shells=shells)
    upper = ntu_from_p(p, rr, **cfg, shells=shells, branch="upper")
    back = np.where(nn > at, upper, lower)
    return rr, nn, p, sup, back


@pytest.mark.parametrize("case", CASES, ids=[_id(c) for c in CASES])
def test_round_trip_forward_inverse_forward(case):
    """Identity NTU -> P -> NTU over R 0..5 (1 exactly) and NTU 1e-4..20: NTU back within
    1e-10 + 16·eps·cond relative; P of the NTU returned equal to P within 1e-13; NaN exactly
    where the forward P has rounded onto the supremum (nothing left to invert)."""
    cfg, shells = case
    rr, nn, p, sup, back = _round_trip(cfg, shells)
    cond = _conditioning(nn, rr, cfg, shells, p)
    saturated = p >= sup
    assert np.all(np.isnan(back[saturated]))
    lost = ~saturated & ~np.isfinite(back)
    assert not lost.any(), (rr[lost], nn[lost])
    informative = ~saturated & (sup - p > SATURATED_ULPS * EPS * sup)
    error = np.abs(back / nn - 1.0)
    allowed = REL_NTU + COND_ULPS * EPS * cond
    bad = informative & ~(error <= allowed)
    assert not bad.any(), list(zip(rr[bad], nn[bad], error[bad], cond[bad]))[:5]
    p_back = forward(back[~saturated], rr[~saturated], cfg, shells)
    np.testing.assert_allclose(p_back, p[~saturated], rtol=1e-13, atol=0.0)


def test_round_trip_report():
    """Prints, for the record, the largest NTU error on the well-conditioned points
    (cond·eps <= 1e-12) and how many grid points have a looser, conditioning-limited
    tolerance; asserts the former <= 1e-10 (the brief's figure)."""
    lines, worst_all = [], 0.0
    for cfg, shells in CASES:
        rr, nn, p, sup, back = _round_trip(cfg, shells)
        cond = _conditioning(nn, rr, cfg, shells, p)
        well = (p < sup) & (cond * EPS <= 1e-12)
        worst = float(np.max(np.abs(back[well] / nn[well] - 1.0)))
        worst_all = max(worst_all, worst)
        lines.append(f"{_id((cfg, shells)):32s} {worst:9.2e} {int(well.sum()):5d} {int((~well).sum()):5d}")
    print("\nround trip NTU -> P -> NTU: worst relative error where cond·eps <= 1e-12, points there,"
          " points conditioning-limited or saturated\n" + "\n".join(lines))
    assert worst_all <= REL_NTU


def test_counterflow_at_r_equal_1_is_p_over_1_minus_p():
    """Shah & Sekulić Table 3.6 (from memory): counterflow at R = 1 has NTU = P/(1 - P),
    exactly the limit (no 0/0), also through the series reduction (N shells at R = 1:
    P_p = P/(N - (N - 1)P))."""
    p = np.array([1e-9, 0.1, 0.5, 0.9, 0.999])
    np.testing.assert_allclose(ntu_from_p(p, 1.0, "counterflow"), p / (1.0 - p), rtol=4 * EPS)
    for n in (2, 3, 5):
        np.testing.assert_allclose(p_one_unit_of_series(p, 1.0, n), p / (n - (n - 1) * p), rtol=4 * EPS)


@pytest.mark.parametrize("shells", (2, 3, 5))
def test_series_reduction_continuous_across_r_equal_1(shells):
    """No 0/0 in the series inverse near R = 1 (GUIDE: stable forms near Cr -> 1): the unit P
    at R = 1 ± 1e-9 agrees with R = 1 within 1e-8 relative."""
    p = np.array([1e-6, 0.2, 0.6, 0.95])
    at = p_one_unit_of_series(p, 1.0, shells)
    for r in (1.0 - 1e-9, 1.0 + 1e-9):
        np.testing.assert_allclose(p_one_unit_of_series(p, r, shells), at, rtol=1e-8)


# ---------------------------------------------------------------------------------------------
# ht 1.2 (ChEDL)
# ---------------------------------------------------------------------------------------------
HT_R = (0.1, 0.5, 0.9, 1.0, 1.5, 2.0, 3.0, 5.0)
HT_NTU = np.logspace(-3.0, math.log10(20.0), 15)
BASIC = {
    "counterflow": lambda p, r: ntu_from_p(p, r, "counterflow"),
    "parallel": lambda p, r: ntu_from_p(p, r, "parallel_flow"),
    "crossflow": lambda p, r: ntu_from_p(p, r, "crossflow"),
    "crossflow, mixed 1": lambda p, r: ntu_crossflow_one_mixed(p, r, True),
    "crossflow, mixed 2": lambda p, r: ntu_crossflow_one_mixed(p, r, False),
}
BASIC_FORWARD = {
    "counterflow": pntu.p_counterflow,
    "parallel": pntu.p_parallel_flow,
    "crossflow": pntu.p_crossflow_unmixed,
    "crossflow, mixed 1": lambda n, r: pntu.p_crossflow_one_mixed(n, r, True),
    "crossflow, mixed 2": lambda n, r: pntu.p_crossflow_one_mixed(n, r, False),
}


def _cond(func, ntu, r):
    h = 1e-4
    p = float(func(ntu, r))
    slope = (float(func(ntu * (1 + h), r)) - float(func(ntu * (1 - h), r))) / (2 * h * ntu)
    return p, (abs(p / (ntu * slope)) if slope != 0.0 else math.inf)


def _ht(call, *args):
    """ht's answer, or None where ht raises (its closed forms divide by R - 1 at R = 1, its
    bounded solvers refuse some points): those points are left out and counted."""
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            return call(*args)
    except (ValueError, ZeroDivisionError, OverflowError):
        return None


def _compare_basic(subtype):
    """Largest relative disagreement with ht.hx.NTU_from_P_basic over the well-conditioned
    grid points (cond < 1e4), and how many points were compared."""
    worst, compared = 0.0, 0
    for r in HT_R:
        for ntu in HT_NTU:
            p, cond = _cond(BASIC_FORWARD[subtype], ntu, r)
            ref = _ht(NTU_from_P_basic, p, r, subtype)
            if ref is None or cond >= COND_HT:
                continue
            got = float(BASIC[subtype](p, r))
            worst, compared = max(worst, abs(got / ref - 1.0)), compared + 1
    return worst, compared


def _compare_e(tube_passes, side1):
    """The same against ht.hx.NTU_from_P_E, on the branch where ht's root lies."""
    worst, compared = 0.0, 0
    for r in HT_R:
        _, at = p_supremum(r, "tema_e", tube_passes=tube_passes, basis_is_shell=side1 == "shell", return_ntu=True)
        for ntu in HT_NTU:
            p, cond = _cond(lambda n, rr: pntu.p_tema_e(n, rr, tube_passes, side1), ntu, r)
            if side1 == "shell":
                ref = _ht(NTU_from_P_E, p, r, tube_passes)
            else:
                ref = _ht(NTU_from_P_E, p * r, 1.0 / r, tube_passes)
                ref = None if ref is None else ref / r
            if ref is None or cond >= COND_HT:
                continue
            got = float(ntu_tema_e(p, r, tube_passes, side1, "upper" if ref > at else "lower"))
            worst, compared = max(worst, abs(got / ref - 1.0)), compared + 1
    return worst, compared


def _p_crossflow_both_mixed(ntu1, r1):
    """Crossflow, both fluids mixed (Shah & Sekulić Table 3.6, from memory):
    P1 = [1/K1 + R1/K2 - 1/NTU1]^-1, K1 = 1 - exp(-NTU1), K2 = 1 - exp(-R1 NTU1) (R1 > 0). A
    relation hxtrain does not have, to invert with the generic solver in one line."""
    k1, k2 = -np.expm1(-ntu1), -np.expm1(-r1 * ntu1)
    return 1.0 / (1.0 / k1 + r1 / k2 - 1.0 / ntu1)


def _compare_generic():
    """solve_ntu + p_maximum on crossflow both mixed against ht's 'crossflow, mixed 1&2' (ht's
    bounded solver stays below its own NTU of the maximum: the lower branch)."""
    worst, compared = 0.0, 0
    for r in HT_R:
        p_max, at = p_maximum(_p_crossflow_both_mixed, r)
        for ntu in HT_NTU[HT_NTU < float(at)]:
            p, cond = _cond(_p_crossflow_both_mixed, ntu, r)
            ref = _ht(NTU_from_P_basic, p, r, "crossflow, mixed 1&2")
            if ref is None or cond >= COND_HT:
                continue
            got = float(solve_ntu(_p_crossflow_both_mixed, p, r, p_sup=p_max, ntu_at_sup=at))
            worst, compared = max(worst, abs(got / ref - 1.0)), compared + 1
    return worst, compared


@pytest.mark.parametrize("subtype", list(BASIC))
def test_against_ht_ntu_from_p_basic(subtype):
    """ht.hx.NTU_from_P_basic (ht 1.2) at 1e-9 relative on the points where the inverse is well
    conditioned (cond < 1e4); both take the same P."""
    worst, compared = _compare_basic(subtype)
    assert worst <= REL_HT
    assert compared >= 80  # of 120 grid points; the rest saturated, ill-conditioned or refused by ht


@pytest.mark.parametrize("side1", ("shell", "tube"))
@pytest.mark.parametrize("tube_passes", (2, 4, 6, 8))
def test_against_ht_ntu_from_p_e(tube_passes, side1):
    """ht.hx.NTU_from_P_E (ht 1.2, shell basis) at 1e-9 where cond < 1e4. With 4 or more tube
    passes P is reached twice above its NTU -> inf limit and ht's bounded solver returns either
    root (its Notes say it may return 'a smaller but also correct solution'): it is compared
    with hxtrain's root on the side of the maximum where ht landed."""
    worst, compared = _compare_e(tube_passes, side1)
    assert worst <= REL_HT
    assert compared >= 80


def test_generic_solver_inverts_a_new_relation_in_one_line():
    """``solve_ntu`` with ``p_maximum`` on a forward relation written here (crossflow, both
    fluids mixed, which has a maximum at finite NTU) against ht.hx.NTU_from_P_basic
    ('crossflow, mixed 1&2') at 1e-9 where cond < 1e4."""
    worst, compared = _compare_generic()
    assert worst <= REL_HT
    assert compared >= 40


def test_report_largest_disagreement_with_ht():
    """Prints the largest relative disagreement with ht 1.2 per relation (run with -s)."""
    rows = [(s, *_compare_basic(s)) for s in BASIC]
    rows += [(f"TEMA E {n} passes, {side} basis", *_compare_e(n, side))
             for n in (2, 4, 6, 8) for side in ("shell", "tube")]
    rows.append(("crossflow mixed 1&2 (generic)", *_compare_generic()))
    print("\nlargest relative disagreement with ht 1.2 (points with cond < 1e4)\n"
          + "\n".join(f"{name:32s} {worst:9.2e} over {n} points" for name, worst, n in rows))
    assert max(worst for _, worst, _ in rows) <= REL_HT


# ---------------------------------------------------------------------------------------------
# Suprema and NaN
# ---------------------------------------------------------------------------------------------
SUP_R = np.array([0.0, 1e-3, 0.1, 0.5, 1.0, 1.5, 3.0, 5.0])


@pytest.mark.parametrize("case", CASES, ids=[_id(c) for c in CASES])
def test_nan_at_and_above_the_supremum_finite_just_below(case):
    """P >= p_supremum (at it, one ulp above, 1e-9 above, 1, 1.5, inf) and P < 0 give NaN, never
    a clipped value; NaN in gives NaN out; a P 1e-6 below the supremum is reached (finite)."""
    cfg, shells = case
    sup = p_supremum(SUP_R, **cfg, shells=shells)
    above = [sup, np.nextafter(sup, np.inf), sup * (1 + 1e-9), np.maximum(sup, 1.0), sup + 0.5,
             np.full_like(sup, np.inf)]
    for p in above:
        assert np.all(np.isnan(ntu_from_p(p, SUP_R, **cfg, shells=shells))), p
        assert np.all(np.isnan(ntu_from_p(p, SUP_R, **cfg, shells=shells, branch="upper"))), p
    for p in (-1e-12, -0.1, np.nan):
        assert np.all(np.isnan(ntu_from_p(np.full_like(sup, p), SUP_R, **cfg, shells=shells)))
    assert np.all(np.isnan(ntu_from_p(0.3, np.array([np.nan, -0.5]), **cfg, shells=shells)))
    below = ntu_from_p(sup * (1 - 1e-6), SUP_R, **cfg, shells=shells)
    assert np.all(np.isfinite(below)) and np.all(below > 0.0)
    assert ntu_from_p(0.0, 0.7, **cfg, shells=shells) == 0.0


MONOTONE = [c for c in CONFIGS if not (c["arrangement"] == "tema_e" and c["tube_passes"] >= 4)]


@pytest.mark.parametrize("cfg", MONOTONE, ids=[_id((c, 1)) for c in MONOTONE])
def test_supremum_is_the_large_ntu_limit(cfg):
    """Relations rising with NTU: no P on a dense scan (NTU 1e-3..1e14) exceeds p_supremum, and
    the last equals it within 1e-12 relative (1e-6 for crossflow unmixed, which approaches as
    1/sqrt(pi NTU) at R = 1: 6e-8 at 1e14; counterflow at R = 1 as 1/NTU). Limits of Shah &
    Sekulić Table 3.6 and, for the 1-2 shell, Bowman et al. 1940 (from memory)."""
    ntu = np.logspace(-3, 14, 1701)[None, :]
    r = SUP_R[1:, None]
    p = p_one_unit(ntu, r, **cfg)
    sup = p_supremum(r, **cfg)
    assert np.all(p <= sup * (1 + 2 * EPS))  # the forward's saturated value may round 1 ulp above
    unmixed = cfg["arrangement"] == "crossflow" and cfg.get("basis_is_mixed") is None
    np.testing.assert_allclose(p[:, -1:], sup, rtol=1e-6 if unmixed else 1e-12)


@pytest.mark.parametrize("side1", ("shell", "tube"))
@pytest.mark.parametrize("tube_passes", (4, 6, 8))
def test_one_n_shell_maximum_against_a_dense_scan(tube_passes, side1):
    """1-N shell, N >= 4: P has a maximum at finite NTU. A dense scan (4001 points, NTU
    1e-3..1e5) finds the best point; a second scan of 20 001 points between its neighbours
    (spacing 5e-8 in ln NTU, so P within ~1e-15 of the maximum) gives the reference. p_supremum
    is within 1e-13 of it and not below it by more than that, its NTU lies between the coarse
    neighbours, and the maximum is above the NTU -> inf limit."""
    ntu = np.logspace(-3, 5, 4001)
    for r in SUP_R[1:]:
        scan = pntu.p_tema_e(ntu, r, tube_passes, side1)
        i = int(np.argmax(scan))
        fine = pntu.p_tema_e(np.geomspace(ntu[i - 1], ntu[i + 1], 20_001), r, tube_passes, side1).max()
        sup, at = p_supremum(r, "tema_e", tube_passes=tube_passes, basis_is_shell=side1 == "shell", return_ntu=True)
        assert sup == pytest.approx(fine, rel=1e-13)
        assert ntu[i - 1] <= at <= ntu[i + 1]
        assert scan[-1] < sup


@pytest.mark.parametrize("side1", ("shell", "tube"))
def test_one_four_shell_two_roots_above_its_limit(side1):
    """Between the NTU -> inf limit and the maximum a 1-4 shell reaches P twice: both branches
    reproduce P (forward), lie either side of the maximum, and the upper root is NaN below the
    limit (identity of the forward relation)."""
    for r in (0.1, 0.5, 1.0, 2.0):
        sup, at = p_supremum(r, "tema_e", tube_passes=4, basis_is_shell=side1 == "shell", return_ntu=True)
        limit = float(pntu.p_tema_e(1e6, r, 4, side1))
        p = np.linspace(limit, sup, 7)[1:-1]
        lower = ntu_tema_e(p, r, 4, side1, "lower")
        upper = ntu_tema_e(p, r, 4, side1, "upper")
        assert np.all(lower < at) and np.all(upper > at)
        np.testing.assert_allclose(pntu.p_tema_e(lower, r, 4, side1), p, rtol=1e-13)
        np.testing.assert_allclose(pntu.p_tema_e(upper, r, 4, side1), p, rtol=1e-13)
        assert np.isnan(ntu_tema_e(0.9 * limit, r, 4, side1, "upper"))
        assert np.isfinite(ntu_tema_e(0.9 * limit, r, 4, side1, "lower"))


# ---------------------------------------------------------------------------------------------
# Batch evaluation, flags, errors
# ---------------------------------------------------------------------------------------------
BATCH = 100_000


BATCH_CONFIGS = CONFIGS[2:] + [dict(arrangement="counterflow")]


@pytest.mark.parametrize("cfg", BATCH_CONFIGS, ids=[_id((c, 1)) for c in BATCH_CONFIGS])
def test_vectorized_call_on_100k_elements(cfg):
    """One call on 100 000 elements (random R 0..5, NTU 1e-4..20, per-element basis flags where
    the arrangement has them): the P of the NTU returned is the P given (1e-13, identity), and
    the call's time is printed (a figure, not an assertion)."""
    rng = np.random.default_rng(7)
    r = rng.uniform(0.0, 5.0, BATCH)
    ntu = 10.0 ** rng.uniform(-4.0, math.log10(20.0), BATCH)
    flags = dict(cfg)
    if "basis_is_shell" in flags:
        flags["basis_is_shell"] = rng.random(BATCH) < 0.5
    if flags.get("basis_is_mixed") is not None:
        flags["basis_is_mixed"] = rng.random(BATCH) < 0.5
    p = p_one_unit(ntu, r, **flags)
    start = time.perf_counter()
    back = ntu_from_p(p, r, **flags)
    elapsed = time.perf_counter() - start
    print(f"\n{_id((cfg, 1))}: ntu_from_p on {BATCH} elements {elapsed:.3f} s")
    sup = p_supremum(r, **flags) if "basis_is_shell" not in flags or flags.get("tube_passes") == 2 else None
    finite = np.isfinite(back)
    if sup is not None:  # NaN at or above the supremum, or within a few ulp of it (documented)
        assert not np.any(finite & (p >= sup))
        assert not np.any(~finite & (p < sup * (1 - 4 * EPS)))
    assert finite.mean() > 0.9
    np.testing.assert_allclose(p_one_unit(back[finite], r[finite], **{k: (v[finite] if isinstance(v, np.ndarray) else v)
                                                                     for k, v in flags.items()}), p[finite], rtol=1e-13)


def test_flags_per_element_equal_separate_calls_and_broadcast():
    """An array of basis flags gives, element by element, what separate calls with each flag
    give (bit for bit); P and R broadcast (column against row)."""
    r = np.array([0.3, 0.3, 1.7, 1.7])
    shell = np.array([True, False, True, False])
    p = np.array([0.4, 0.4, 0.3, 0.3])
    both = ntu_from_p(p, r, "tema_e", tube_passes=6, basis_is_shell=shell)
    apart = np.where(shell, ntu_tema_e(p, r, 6, "shell"), ntu_tema_e(p, r, 6, "tube"))
    np.testing.assert_array_equal(both, apart)
    mixed = ntu_from_p(p, r, "crossflow", basis_is_mixed=shell)
    apart = np.where(shell, ntu_crossflow_one_mixed(p, r, True), ntu_crossflow_one_mixed(p, r, False))
    np.testing.assert_array_equal(mixed, apart)
    table = ntu_from_p(np.array([0.1, 0.4])[:, None], np.array([0.5, 1.0, 2.0])[None, :], "crossflow")
    assert table.shape == (2, 3)
    assert table[1, 2] == ntu_from_p(0.4, 2.0, "crossflow")


def test_bad_arguments_are_refused():
    with pytest.raises(ValueError):
        ntu_from_p(0.5, 0.5, "spiral")
    with pytest.raises(ValueError):
        ntu_from_p(0.5, 0.5, "tema_e", tube_passes=4)  # not symmetric: the basis must be given
    with pytest.raises(ValueError):
        p_supremum(0.5, "tema_e", tube_passes=4)
    with pytest.raises(ValueError):
        ntu_tema_e(0.5, 0.5, 3)
    with pytest.raises(ValueError):
        solve_ntu(pntu.p_crossflow_unmixed, 0.5, 0.5, branch="middle")
