"""Bell–Delaware shell side (units/bell_delaware*.py) against outside references.

Every check names its source beside it:

* ``ht`` (ChEDL, test-only): ``ht.conv_tube_bank`` gives each correction factor two ways, the
  Heat Exchanger Design Handbook curve fits (``method="HEDH"``: the same formulas as Taborek's,
  compared to 1e-9) and splines through Bell's digitised charts (the default: a different fit of
  the same data, compared at the largest disagreement measured, stated beside each check);
  ``ht.conv_tube_bank.Nu_ESDU_73031`` and ``dP_Zukauskas`` are other tube-bank correlations;
  ``ht.hx`` holds TEMA's clearance tables;
* geometry identities (circle segments, tube lattices) and the published rules' own limits;
* a hand computation of Taborek's published formulas, written out step by step in plain scalar
  arithmetic, for the whole method (an independent path through the equations, not a published
  example);
* rules of thumb, marked "common practice".

Run with ``-s`` to print the largest disagreements.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad

from ht.conv_tube_bank import (Nu_ESDU_73031, baffle_correction_Bell, baffle_leakage_Bell, bundle_bypassing_Bell,
                               dP_Zukauskas, laminar_correction_Bell, unequal_baffle_spacing_Bell)
from ht.hx import D_baffle_holes, shell_clearance

from hxtrain.units import bell_delaware as bd
from hxtrain.units import bell_delaware_geometry as geo
from hxtrain.units import films

IDENTICAL = 1e-9
"""Relative agreement required where hxtrain and the reference evaluate the same formula."""

LAYOUTS = (30, 45, 60, 90)


def relative(a, b):
    return abs(a / b - 1.0)


def report(name, worst):
    print(f"\n{name}: largest relative disagreement {worst:.3g}")
    return worst


# ================================================================ correction factors against ht

FC = np.linspace(0.0, 1.0, 201)


def test_baffle_cut_correction_against_ht_baffle_correction_Bell_HEDH():
    """J_c = 0.55 + 0.72 F_c: ht.conv_tube_bank.baffle_correction_Bell(method='HEDH') is the
    same formula (HEDH / Taborek)."""
    worst = max(relative(float(bd.baffle_cut_correction(fc)), baffle_correction_Bell(fc, method="HEDH")) for fc in FC)
    assert report("J_c vs ht HEDH", worst) <= IDENTICAL


def test_baffle_cut_correction_against_ht_spline_of_Bell_chart():
    """Against ht's spline through Bell's digitised J_c chart (default method), over the
    crossflow fractions of baffle cuts 15-45 % (F_c 0.1-0.9). The linear fit misses the chart's
    hump near F_c = 0.9 (1.15 on the chart, 1.20 on the line): measured largest 3.9 %, bound 4 %."""
    fc = FC[(FC >= 0.1) & (FC <= 0.9)]
    worst = max(relative(float(bd.baffle_cut_correction(x)), baffle_correction_Bell(x)) for x in fc)
    assert report("J_c vs ht spline of Bell's chart", worst) <= 0.04


LEAK_TOTAL = np.linspace(0.01, 0.74, 40)   # r_lm up to the chart's end (ht clips above 0.7436)
SHELL_SHARE = np.linspace(0.0, 1.0, 21)


def test_leakage_correction_against_ht_baffle_leakage_Bell_HEDH():
    """J_l: ht.conv_tube_bank.baffle_leakage_Bell(method='HEDH') is Taborek's formula."""
    worst = max(relative(float(bd.leakage_correction(rs * rlm, (1 - rs) * rlm, 1.0)),
                         baffle_leakage_Bell(rs * rlm, (1 - rs) * rlm, 1.0, method="HEDH"))
                for rlm in LEAK_TOTAL for rs in SHELL_SHARE)
    assert report("J_l vs ht HEDH", worst) <= IDENTICAL


def test_leakage_correction_against_ht_spline_of_Bell_chart():
    """Against ht's spline through Bell's J_l chart. The two fits part most where all leakage is
    between shell and baffle (r_s = 1) at small r_lm (0.88 against 0.77) and at r_lm = 0.74
    (0.20 against 0.16): measured largest 19.9 %, bound 21 %. Over r_s <= 0.5 and r_lm <= 0.5
    (most exchangers) the measured largest is 7.8 %, bound 8 %."""
    worst = max(relative(float(bd.leakage_correction(rs * rlm, (1 - rs) * rlm, 1.0)),
                         baffle_leakage_Bell(rs * rlm, (1 - rs) * rlm, 1.0))
                for rlm in LEAK_TOTAL for rs in SHELL_SHARE)
    assert report("J_l vs ht spline of Bell's chart", worst) <= 0.21
    half = max(relative(float(bd.leakage_correction(rs * rlm, (1 - rs) * rlm, 1.0)),
                        baffle_leakage_Bell(rs * rlm, (1 - rs) * rlm, 1.0))
               for rlm in LEAK_TOTAL[LEAK_TOTAL <= 0.5] for rs in SHELL_SHARE[SHELL_SHARE <= 0.5])
    assert report("J_l vs ht spline, r_s <= 0.5, r_lm <= 0.5", half) <= 0.08


BYPASS = np.linspace(0.0, 0.69, 24)          # F_sbp to the chart's end (ht clips above 0.695)
STRIPS = np.linspace(0.0, 0.49, 25)          # r_ss below 1/2, where the formula applies


@pytest.mark.parametrize("re, laminar", [(1.0e4, False), (50.0, True)], ids=["Re>=100_C1.25", "Re<100_C1.35"])
def test_bypass_correction_against_ht_bundle_bypassing_Bell_HEDH(re, laminar):
    """J_b: ht.conv_tube_bank.bundle_bypassing_Bell(method='HEDH') is Taborek's formula, with
    C_bh = 1.25 (Re >= 100) and 1.35 (laminar); ht takes r_ss as strips / rows."""
    worst = max(relative(float(bd.bypass_correction(f, rss, re)),
                         bundle_bypassing_Bell(f, rss, 1.0, laminar=laminar, method="HEDH"))
                for f in BYPASS for rss in STRIPS)
    assert report(f"J_b vs ht HEDH (laminar={laminar})", worst) <= IDENTICAL


def test_bypass_correction_against_ht_spline_of_Bell_chart():
    """Against ht's splines through Bell's J_b charts (both regimes): measured largest 7.6 %
    (laminar chart, F_sbp = 0.69, r_ss near 0), bound 8 %."""
    worst = max(relative(float(bd.bypass_correction(f, rss, re)), bundle_bypassing_Bell(f, rss, 1.0, laminar=lam))
                for re, lam in ((1.0e4, False), (50.0, True)) for f in BYPASS for rss in STRIPS)
    assert report("J_b vs ht spline of Bell's chart", worst) <= 0.08


def test_bypass_factors_are_one_when_sealed_or_without_gap():
    """Taborek's rule: with one pair of sealing strips per two rows crossed or more
    (r_ss >= 1/2), or with no bypass gap, J_b = R_b = 1 (ht's HEDH branch does not apply this
    cap: its (2 r_ss)^(1/3) exceeds 1 there, so the rule itself is the reference)."""
    for re in (50.0, 1.0e4):
        for value in (bd.bypass_correction(0.4, [0.5, 0.8, 3.0], re), bd.bypass_drop_correction(0.4, [0.5, 0.8], re),
                      bd.bypass_correction(0.0, 0.1, re), bd.bypass_drop_correction(0.0, 0.1, re)):
            np.testing.assert_array_equal(value, 1.0)


SPACINGS = np.linspace(0.5, 3.0, 11)


@pytest.mark.parametrize("re, laminar", [(1.0e4, False), (50.0, True)], ids=["n0.6", "n1/3"])
def test_end_spacing_correction_against_ht_unequal_baffle_spacing_Bell(re, laminar):
    """J_s: ht.conv_tube_bank.unequal_baffle_spacing_Bell is the same formula (n = 0.6, or 1/3
    laminar)."""
    worst = max(relative(float(bd.end_spacing_correction(nb, 0.2, 0.2 * a, 0.2 * b, re)),
                         unequal_baffle_spacing_Bell(nb, 0.2, 0.2 * a, 0.2 * b, laminar=laminar))
                for nb in (2, 5, 16, 40) for a in SPACINGS for b in SPACINGS)
    assert report(f"J_s vs ht (laminar={laminar})", worst) <= IDENTICAL


def test_laminar_gradient_correction_against_ht_laminar_correction_Bell():
    """J_r: ht.conv_tube_bank.laminar_correction_Bell is the same rule (J_r* below Re 20,
    linear in Re to 1 at Re 100, floor 0.4), ht taking the total rows crossed."""
    res = np.concatenate([np.linspace(0.5, 150.0, 300), [20.0, 100.0]])
    worst = max(relative(float(bd.laminar_gradient_correction(re, n)), laminar_correction_Bell(re, n))
                for re in res for n in (2, 5, 10, 50, 100, 500, 5000, 1e6))
    assert report("J_r vs ht", worst) <= IDENTICAL


def test_drop_factors_hand_computed():
    """R_l, R_b, R_s have no ht counterpart: Taborek's formulas evaluated by hand.

    R_l at S_sb = 1, S_tb = 3, S_m = 8: r_s = 0.25, r_lm = 0.5, p = 0.8 - 0.15*1.25 = 0.6125,
    R_l = exp(-1.33*1.25*0.5**0.6125). R_b at F_sbp = 0.5, r_ss = 0.2, Re >= 100:
    exp(-3.7*0.5*(1 - 0.4**(1/3))); laminar C_bp = 4.5. R_s at L_bc = 0.1, L_bi = 0.15,
    L_bo = 0.3: 0.5*((0.1/0.15)**1.8 + (0.1/0.3)**1.8); laminar exponent 1. With no leakage and
    equal spacings R_l = R_s = 1."""
    assert relative(float(bd.leakage_drop_correction(1.0, 3.0, 8.0)),
                    math.exp(-1.33 * 1.25 * 0.5 ** 0.6125)) <= IDENTICAL
    assert relative(float(bd.bypass_drop_correction(0.5, 0.2, 1.0e4)),
                    math.exp(-3.7 * 0.5 * (1.0 - 0.4 ** (1.0 / 3.0)))) <= IDENTICAL
    assert relative(float(bd.bypass_drop_correction(0.5, 0.2, 50.0)),
                    math.exp(-4.5 * 0.5 * (1.0 - 0.4 ** (1.0 / 3.0)))) <= IDENTICAL
    assert relative(float(bd.end_spacing_drop_correction(0.1, 0.15, 0.3, 1.0e4)),
                    0.5 * ((0.1 / 0.15) ** 1.8 + (0.1 / 0.3) ** 1.8)) <= IDENTICAL
    assert relative(float(bd.end_spacing_drop_correction(0.1, 0.15, 0.3, 50.0)),
                    0.5 * ((0.1 / 0.15) + (0.1 / 0.3))) <= IDENTICAL
    assert float(bd.leakage_drop_correction(0.0, 0.0, 1.0)) == 1.0
    assert float(bd.leakage_correction(0.0, 0.0, 1.0)) == 1.0
    assert float(bd.end_spacing_drop_correction(0.2, 0.2, 0.2, 1.0e4)) == 1.0


# ================================================================ ideal tube bank


def _pitches(pitch, angle):
    """(pitch normal to flow, pitch parallel to flow) of a layout, as ht's tube-bank relations
    take them (transverse and longitudinal centre distances)."""
    return {30: (pitch, pitch * math.sqrt(3) / 2), 45: (pitch * math.sqrt(2), pitch / math.sqrt(2)),
            60: (pitch * math.sqrt(3), pitch / 2), 90: (pitch, pitch)}[angle]


ESDU_BOUND = {30: 0.16, 45: 0.26, 60: 0.16, 90: 0.18}
"""Largest disagreement measured against ESDU 73031 per layout, rounded up: 15.5 % (30 and 60
degrees), 25.9 % (45 degrees), 17.1 % (90 degrees). For the staggered layouts the largest lie
next to Re = 300, where ESDU 73031 itself changes constants (a step of its own); for the square
bank at Re 100, pitch ratio 1.5."""


@pytest.mark.parametrize("angle", LAYOUTS)
def test_ideal_bank_j_against_ht_Nu_ESDU_73031(angle):
    """Taborek's ideal-bank j against the ESDU 73031 tube-bank correlation
    (ht.conv_tube_bank.Nu_ESDU_73031, 20 rows, no property-ratio factor), Nu = j Re Pr^(1/3),
    both on the velocity in the minimum free area, Re 10..1e5, pitch ratios 1.25-1.5: two
    independent fits of tube-bank data, bounds in ESDU_BOUND. With the 0.498 printed for a1
    (45 degrees, Re 10-100) in some reproductions, j there would be a third of ESDU's."""
    do, pr, worst = 0.019, 5.0, 0.0
    for ratio in (1.25, 1.33, 1.5):
        normal, parallel = _pitches(ratio * do, angle)
        for re in np.geomspace(10.0, 1.0e5, 25):
            nu = float(bd.ideal_bank_j(re, ratio, angle)) * re * pr ** (1.0 / 3.0)
            worst = max(worst, relative(nu, Nu_ESDU_73031(re, pr, 20, parallel, normal)))
    assert report(f"ideal j vs ESDU 73031 ({angle} deg)", worst) <= ESDU_BOUND[angle]


@pytest.mark.parametrize("angle", [30, 90])
def test_ideal_bank_f_against_ht_dP_Zukauskas(angle):
    """Taborek's ideal-bank f against Zukauskas's tube-bank pressure drop
    (ht.conv_tube_bank.dP_Zukauskas, charts digitised by ht), one row: 2 f G^2/rho against
    Eu chi rho V_max^2/2, Re 1e3..1e4 (the charts' well-read range; ht's staggered chart
    correction is erratic for the 45 and 60 degree pitch ratios, so those are not compared).
    Measured largest 19 % (square bank, Re 3e3), bound 20 %."""
    do, worst = 0.019, 0.0
    for ratio in (1.25, 1.33, 1.5):
        normal, parallel = _pitches(ratio * do, angle)
        for re in np.geomspace(1.0e3, 1.0e4, 9):
            ours = 2.0 * float(bd.ideal_bank_f(re, ratio, angle))   # rho = 1, G = V_max = 1
            worst = max(worst, relative(ours, dP_Zukauskas(re, 1, normal, parallel, do, 1.0, 1.0)))
    assert report(f"ideal f vs Zukauskas ({angle} deg)", worst) <= 0.20


@pytest.mark.parametrize("angle", LAYOUTS)
def test_ideal_bank_fits_join_at_band_edges(angle):
    """Identity of the published fits: each Reynolds band's constants were fitted to one
    continuous curve, so the values on both sides of Re = 10, 100, 1e3, 1e4 must meet. Measured
    largest step 5.1 % (j, 90 degrees, Re 1e4), bound 5.5 %."""
    worst = 0.0
    for edge in (10.0, 100.0, 1.0e3, 1.0e4):
        for relation in (bd.ideal_bank_j, bd.ideal_bank_f):
            below, above = (float(relation(edge * s, 1.33, angle)) for s in (1.0 - 1e-12, 1.0))
            worst = max(worst, relative(below, above))
    assert report(f"band-edge steps ({angle} deg)", worst) <= 0.055


# ================================================================ clearances and geometry


def test_shell_baffle_clearance_against_ht_shell_clearance_TEMA():
    """TEMA RCB-4.3 shell-to-baffle clearance against ht.hx.shell_clearance(DShell=...), the
    same table: identical below 85 in; above, ht gives 11 mm for TEMA's 11.1 mm (7/16 in)."""
    for ds in np.linspace(0.15, 2.15, 81):
        assert abs(float(geo.shell_baffle_clearance_tema(ds)) - shell_clearance(DShell=ds)) <= 1e-12
    assert abs(float(geo.shell_baffle_clearance_tema(2.5)) - shell_clearance(DShell=2.5)) <= 1.5e-4


def test_tube_baffle_clearance_against_ht_D_baffle_holes_TEMA():
    """TEMA RCB-4.2 tube-hole clearance against ht.hx.D_baffle_holes (hole minus tube)."""
    for do in (0.01588, 0.01905, 0.0254, 0.0318, 0.0381, 0.0508):
        for span in (0.3, 0.9, 0.914, 0.92, 1.5, 2.5):
            assert abs(float(geo.tube_baffle_clearance_tema(do, span)) - (D_baffle_holes(do, span) - do)) <= 1e-12


def test_window_area_against_integrated_circle_segment():
    """Identity: the gross window (tubes = 0) is the circular segment beyond the cut,
    the integral of the chord 2 sqrt(R^2 - y^2) from R(1 - 2 B_c) to R."""
    for ds in (0.3, 0.8, 1.5):
        r = ds / 2.0
        for bc in (0.15, 0.25, 0.35, 0.45):
            segment, _ = quad(lambda y: 2.0 * math.sqrt(r * r - y * y), r - bc * ds, r, epsabs=1e-14)
            assert relative(float(geo.window_flow_area(ds, bc, 0, 0.0, 0.019)), segment) <= 1e-9


def _lattice(do, pitch, angle, dctl, offset=(0.0, 0.0)):
    """Tube centres of a real layout inside the circle of diameter D_ctl, the lattice shifted by
    ``offset`` (fractions of the two pitches); flow along y, rows normal to it L_pp apart,
    alternate rows shifted by half the in-row spacing (staggered layouts)."""
    normal, parallel = _pitches(pitch, angle)
    staggered = angle != 90
    points = []
    reach = int(dctl / min(normal, parallel)) + 3
    for i in range(-reach, reach + 1):
        y = (i + offset[1]) * parallel
        shift = 0.5 * normal if staggered and i % 2 else 0.0
        for k in range(-reach, reach + 1):
            x = (k + offset[0]) * normal + shift
            if math.hypot(x, y) <= dctl / 2.0:
                points.append((x, y))
    return np.array(points)


OFFSETS = [(a, b) for a in (0.0, 0.5) for b in np.linspace(0.0, 1.0, 8, endpoint=False)]


@pytest.mark.parametrize("angle", LAYOUTS)
def test_window_fraction_and_rows_against_a_counted_tube_lattice(angle):
    """Geometry: on a real lattice of some 1500 tubes the share of tube centres beyond the
    baffle cut, averaged over the lattice's position (16 offsets: a single position is off by
    up to one row, about 10 % at 20 % cut), matches F_w, an area fraction of the D_ctl circle,
    within 1.5 %; and the rows whose centres lie between the two baffle tips number N_tcc
    within one row at every position."""
    ds, do, pitch = 1.0, 0.019, 0.025
    dctl = ds - float(geo.bundle_shell_clearance_fixed_tubesheet(ds)) - do
    _, parallel = _pitches(pitch, angle)
    lattices = [_lattice(do, pitch, angle, dctl, offset) for offset in OFFSETS]
    worst = 0.0
    for bc in (0.2, 0.25, 0.35):
        tip = ds / 2.0 - bc * ds
        counted = np.mean([np.mean(tubes[:, 1] > tip) for tubes in lattices])
        fw = float(geo.window_tube_fraction(geo.centre_line_angle(ds, bc, dctl)))
        worst = max(worst, relative(counted, fw))
        for tubes in lattices:
            rows = len(np.unique(np.round(tubes[np.abs(tubes[:, 1]) < tip, 1] / parallel, 6)))
            assert abs(rows - float(geo.crossflow_rows(ds, bc, pitch, angle))) <= 1.0 + 1e-9
    assert report(f"F_w vs counted lattice ({angle} deg)", worst) <= 0.015


@pytest.mark.parametrize("angle", [30, 90])
def test_crossflow_area_against_the_centre_row_of_a_lattice(angle):
    """Geometry: where the gap between tubes of one row is the narrowest (30 and 90 degrees),
    S_m / L_bc is the shell chord at the centre line less the tubes of the centre row; the
    formula smears the row into D_ctl / L_tp gaps, so they agree within one tube diameter."""
    ds, do, pitch, lbc = 1.0, 0.019, 0.025, 0.3
    dotl = ds - float(geo.bundle_shell_clearance_fixed_tubesheet(ds))
    tubes = _lattice(do, pitch, angle, dotl - do)
    free_width = ds - do * np.sum(np.abs(tubes[:, 1]) < 1e-9)
    assert abs(float(geo.crossflow_area(lbc, ds, dotl, do, pitch, angle)) / lbc - free_width) <= do


def test_geometry_rejects_impossible_input():
    """Bad input is refused with a message, not rated."""
    shell = dict(shell_diameter=0.5, outer_diameter=0.019, pitch=0.025, layout=30, baffle_spacing=0.2, baffles=10,
                 tubes=300)
    for change in (dict(layout=50), dict(layout="hexagonal"), dict(baffle_cut=0.6), dict(pitch=0.018),
                   dict(outer_tube_limit=0.6), dict(pass_lane_width=0.01),
                   dict(bundle_shell_clearance=0.01, outer_tube_limit=0.48)):
        with pytest.raises(ValueError):
            geo.baffled_shell(**{**shell, **change})


# ================================================================ the whole method, by hand

# Taborek's table of ideal-bank constants as printed (from memory), 45 degrees 10 <= Re < 100
# with a1 = 1.498 (see test_ideal_bank_j_against_ht_Nu_ESDU_73031): band upper limits, then
# (a1, a2, b1, b2) per band and (a3, a4, b3, b4) per layout.
HAND_TABLE = {
    30: ([(1.400, -0.667, 48.0, -1.0), (1.360, -0.657, 45.1, -0.973), (0.593, -0.477, 4.570, -0.476),
          (0.321, -0.388, 0.486, -0.152), (0.321, -0.388, 0.372, -0.123)], (1.450, 0.519, 7.00, 0.500)),
    45: ([(1.550, -0.667, 32.0, -1.0), (1.498, -0.656, 26.2, -0.913), (0.730, -0.500, 3.500, -0.476),
          (0.370, -0.396, 0.333, -0.136), (0.370, -0.396, 0.303, -0.126)], (1.930, 0.500, 6.59, 0.520)),
    90: ([(0.970, -0.667, 35.0, -1.0), (0.900, -0.631, 32.1, -0.963), (0.408, -0.460, 6.090, -0.602),
          (0.107, -0.266, 0.0815, 0.022), (0.370, -0.395, 0.391, -0.148)], (1.187, 0.370, 6.30, 0.378)),
}


def _by_hand(m, rho, mu, cp, k, mu_w, ds, do, pt, angle, bc, lbc, lbi, lbo, nb, nt, nss, lsb, ltb, lbb, lpl):
    """Taborek's procedure [HEDH 3.3] step by step in scalar arithmetic (math only)."""
    pp = {30: pt * math.cos(math.radians(30)), 45: pt * math.cos(math.radians(45)), 60: pt / 2, 90: pt}[angle]
    pn = {30: pt, 45: pt * math.cos(math.radians(45)), 60: pt * math.cos(math.radians(30)), 90: pt}[angle]
    dotl = ds - lbb
    dctl = dotl - do
    theta_ds = 2 * math.acos(1 - 2 * bc)
    theta_ctl = 2 * math.acos(ds * (1 - 2 * bc) / dctl)
    fw = (theta_ctl - math.sin(theta_ctl)) / (2 * math.pi)
    fc = 1 - 2 * fw
    sm = lbc * (ds - dotl + dctl / pn * (pt - do))
    sw = ds**2 / 8 * (theta_ds - math.sin(theta_ds)) - nt * fw * math.pi * do**2 / 4
    dw = 4 * sw / (math.pi * do * nt * fw + ds * theta_ds)
    ntcc = ds * (1 - 2 * bc) / pp
    ntcw = 0.8 / pp * (ds * bc - (ds - dctl) / 2)
    ssb = math.pi * ds * lsb / 2 * (1 - theta_ds / (2 * math.pi))
    stb = math.pi / 4 * ((do + ltb) ** 2 - do**2) * nt * (1 - fw)
    sb = lbc * (ds - dotl + lpl)
    gs = m / sm
    re = do * gs / mu
    pr = cp * mu / k
    laminar = re < 100
    bands, (a3, a4, b3, b4) = HAND_TABLE[30 if angle == 60 else angle]
    a1, a2, b1, b2 = bands[sum(re >= edge for edge in (10, 100, 1e3, 1e4))]
    j = a1 * (1.33 / (pt / do)) ** (a3 / (1 + 0.14 * re**a4)) * re**a2
    f = b1 * (1.33 / (pt / do)) ** (b3 / (1 + 0.14 * re**b4)) * re**b2
    h_ideal = j * cp * gs * pr ** (-2 / 3) * (mu / mu_w) ** 0.14
    jc = 0.55 + 0.72 * fc
    rs, rlm = ssb / (ssb + stb), (ssb + stb) / sm
    jl = 0.44 * (1 - rs) + (1 - 0.44 * (1 - rs)) * math.exp(-2.2 * rlm)
    rl = math.exp(-1.33 * (1 + rs) * rlm ** (-0.15 * (1 + rs) + 0.8))
    fsbp, rss = sb / sm, nss / ntcc
    jb = 1.0 if rss >= 0.5 else math.exp(-(1.35 if laminar else 1.25) * fsbp * (1 - (2 * rss) ** (1 / 3)))
    rb = 1.0 if rss >= 0.5 else math.exp(-(4.5 if laminar else 3.7) * fsbp * (1 - (2 * rss) ** (1 / 3)))
    n = 1 / 3 if laminar else 0.6
    js = (nb - 1 + (lbi / lbc) ** (1 - n) + (lbo / lbc) ** (1 - n)) / (nb - 1 + lbi / lbc + lbo / lbc)
    n2 = 1.0 if laminar else 0.2
    rs_end = 0.5 * ((lbc / lbi) ** (2 - n2) + (lbc / lbo) ** (2 - n2))
    jr_star = (10 / ((ntcc + ntcw) * (nb + 1))) ** 0.18
    jr = 1.0 if re >= 100 else max(0.4, jr_star if re <= 20 else jr_star + (20 - re) / 80 * (jr_star - 1))
    h = h_ideal * jc * jl * jb * js * jr
    dp_bi = 2 * f * ntcc * gs**2 / rho * (mu_w / mu) ** 0.14
    gw2 = m**2 / (sm * sw)
    if laminar:
        dp_wi = 26 * mu * math.sqrt(gw2) / rho * (ntcw / (pt - do) + lbc / dw**2) + gw2 / rho
    else:
        dp_wi = (2 + 0.6 * ntcw) * gw2 / (2 * rho)
    dp_c = (nb - 1) * dp_bi * rl * rb
    dp_w = nb * dp_wi * rl
    dp_e = 2 * dp_bi * (1 + ntcw / ntcc) * rb * rs_end
    return dict(heat_transfer_coefficient=h, pressure_drop=dp_c + dp_w + dp_e, reynolds=re, ideal_j=j, ideal_f=f,
                baffle_cut_factor=jc, leakage_factor=jl, bypass_factor=jb, end_spacing_factor=js, laminar_factor=jr,
                leakage_drop_factor=rl, bypass_drop_factor=rb, end_spacing_drop_factor=rs_end, crossflow_drop=dp_c,
                window_drop=dp_w, end_drop=dp_e)


HAND_CASES = {
    # rotated square, floating-head bundle gap, unequal end spacings, sealing strips, crude-like oil
    "45deg_turbulent": dict(fluid=(25.0, 830.0, 2.5e-3, 2300.0, 0.11, 3.5e-3),
                            shell=dict(ds=0.74, do=0.0254, pt=0.03175, angle=45, bc=0.30, lbc=0.30, lbi=0.45,
                                       lbo=0.50, nb=12, nt=420, nss=2, lsb=0.0048, ltb=0.0004, lbb=0.035, lpl=0.0)),
    # triangular, viscous oil: Re below 20 (J_r at its laminar value, laminar window drop)
    "30deg_laminar": dict(fluid=(3.5, 900.0, 0.15, 2000.0, 0.13, 0.25),
                          shell=dict(ds=0.5, do=0.019, pt=0.025, angle=30, bc=0.25, lbc=0.2, lbi=0.3, lbo=0.3,
                                     nb=20, nt=300, nss=0, lsb=0.0048, ltb=0.0008, lbb=0.0145, lpl=0.0)),
    # square, Re between 20 and 100 (J_r interpolated), a pass lane open along the flow
    "90deg_transition": dict(fluid=(4.0, 880.0, 0.03, 2100.0, 0.13, 0.04),
                             shell=dict(ds=0.6, do=0.01905, pt=0.0254, angle=90, bc=0.20, lbc=0.25, lbi=0.25,
                                        lbo=0.25, nb=16, nt=400, nss=1, lsb=0.0048, ltb=0.0008, lbb=0.015,
                                        lpl=0.0127)),
    # rotated triangular, water, fully sealed bypass (r_ss >= 1/2)
    "60deg_sealed": dict(fluid=(60.0, 990.0, 6.0e-4, 4180.0, 0.63, 5.0e-4),
                         shell=dict(ds=0.9, do=0.01905, pt=0.02381, angle=60, bc=0.35, lbc=0.45, lbi=0.6, lbo=0.45,
                                    nb=8, nt=1000, nss=12, lsb=0.0048, ltb=0.0008, lbb=0.0165, lpl=0.0)),
}


@pytest.mark.parametrize("case", sorted(HAND_CASES))
def test_whole_method_against_a_step_by_step_hand_computation(case):
    """Every factor, h and the three pressure-drop zones against Taborek's published formulas
    written out step by step (_by_hand, scalar math): the same equations along an independent
    path, so they agree to round-off (1e-9). Cases cover the four layouts, both regimes, the
    laminar-gradient blend, unequal end spacings, sealing strips and a pass lane."""
    fluid, s = HAND_CASES[case]["fluid"], HAND_CASES[case]["shell"]
    expected = _by_hand(*fluid, **s)
    shell = geo.baffled_shell(s["ds"], s["do"], s["pt"], s["angle"], s["lbc"], s["nb"], s["nt"], baffle_cut=s["bc"],
                              inlet_baffle_spacing=s["lbi"], outlet_baffle_spacing=s["lbo"],
                              shell_baffle_clearance=s["lsb"], tube_baffle_clearance=s["ltb"],
                              bundle_shell_clearance=s["lbb"], sealing_strip_pairs=s["nss"],
                              tube_passes=2 if s["lpl"] else 1, pass_lane_width=s["lpl"])
    m, rho, mu, cp, k, mu_w = fluid
    result = bd.shell_side_bell_delaware(m, rho, mu, cp, k, shell, wall_viscosity=mu_w)
    for name, value in expected.items():
        assert relative(float(getattr(result, name)), value) <= IDENTICAL, (name, float(getattr(result, name)), value)
    regime = {"45deg_turbulent": (1e3, 1e5), "30deg_laminar": (1.0, 20.0), "90deg_transition": (20.0, 100.0),
              "60deg_sealed": (1e4, 1e6)}[case]
    assert regime[0] < expected["reynolds"] < regime[1], "the case no longer exercises the branch it is for"


# ================================================================ physical sanity


def _shell(layout=30, **changes):
    base = dict(shell_diameter=0.7, outer_diameter=0.01905, pitch=0.0254, layout=layout, baffle_spacing=0.25,
                baffles=18, tubes=700)
    return geo.baffled_shell(**{**base, **changes})


OIL = (850.0, 1.2e-3, 2300.0, 0.12)   # density, viscosity, cp, conductivity of a light crude


def test_every_factor_lies_in_its_published_range():
    """All J and R factors in (0, 1.2] (J_c reaches 1.2 only at F_c = 0.9: common practice,
    Taborek's charts) over baffle cuts 15-45 %, the four layouts, pitch ratios 1.25-1.5, shells
    0.3-1.5 m, sealing strips 0-4 pairs, end spacings 1-2 times the central one, Re 1..1e5."""
    flows = np.geomspace(1e-3, 1e3, 25)
    names = ("baffle_cut_factor", "leakage_factor", "bypass_factor", "end_spacing_factor", "laminar_factor",
             "leakage_drop_factor", "bypass_drop_factor", "end_spacing_drop_factor")
    count = 0
    for layout in LAYOUTS:
        for ds in (0.3, 0.7, 1.5):
            for bc in (0.15, 0.25, 0.35, 0.45):
                for ratio in (1.25, 1.5):
                    for nss, ends in ((0, 1.0), (2, 1.5), (4, 2.0)):
                        shell = _shell(layout, shell_diameter=ds, baffle_cut=bc, pitch=0.01905 * ratio,
                                       tubes=int(0.75 * (ds / (0.01905 * ratio)) ** 2), baffle_spacing=0.4 * ds,
                                       inlet_baffle_spacing=0.4 * ds * ends, sealing_strip_pairs=nss)
                        r = bd.shell_side_bell_delaware(flows, *OIL, shell)
                        for name in names:
                            value = getattr(r, name)
                            assert np.all((value > 0.0) & (value <= 1.2)), (name, layout, ds, bc, value)
                        count += 1
    assert count == 4 * 3 * 4 * 2 * 3


def _local_exponents(layout, quantity, re_low, re_high=1e5):
    """d ln(quantity) / d ln m between neighbouring flows whose Re both lie in [re_low, re_high]
    (so no step straddles a band edge of the fits, whose own few-percent steps are checked in
    test_ideal_bank_fits_join_at_band_edges)."""
    flows = np.geomspace(1.0, 2000.0, 200)
    r = bd.shell_side_bell_delaware(flows, *OIL, _shell(layout))
    slope = np.diff(np.log(getattr(r, quantity))) / np.diff(np.log(flows))
    inside = (r.reynolds[:-1] >= re_low) & (r.reynolds[1:] <= re_high)
    assert inside.sum() > 20
    return slope[inside]


@pytest.mark.parametrize("layout", LAYOUTS)
def test_film_coefficient_rises_as_flow_to_about_0_6_turbulent(layout):
    """Common practice: shell-side h ~ m^0.6 in turbulent crossflow. Local exponent over
    Re 1e4..1e5 within 0.55-0.70 for every layout; over Re 1e3..1e5 the triangular bank stays
    within 0.55-0.65."""
    slope = _local_exponents(layout, "heat_transfer_coefficient", 1e4)
    assert np.all((slope > 0.55) & (slope < 0.70)), slope
    if layout == 30:
        slope = _local_exponents(layout, "heat_transfer_coefficient", 1e3)
        assert np.all((slope > 0.55) & (slope < 0.65)), slope


@pytest.mark.parametrize("layout", LAYOUTS)
def test_pressure_drop_rises_as_flow_to_about_1_8_turbulent(layout):
    """Common practice: shell-side dp ~ m^1.8 in turbulent flow (crossflow f ~ Re^-0.15, the
    window term ~ m^2): local exponent over Re 1e4..1e5 within 1.75-2.0."""
    slope = _local_exponents(layout, "pressure_drop", 1e4)
    assert np.all((slope > 1.75) & (slope < 2.0)), slope


def _kern_h(flows, shell_diameter, pitch, outer_diameter, baffle_spacing, layout):
    density, viscosity, cp, k = OIL
    de = films.kern_equivalent_diameter(pitch, outer_diameter, layout)
    re = de * flows / (films.kern_crossflow_area(shell_diameter, pitch, outer_diameter, baffle_spacing) * viscosity)
    return films.nusselt_kern_shell(re, cp * viscosity / k) * k / de


def test_bell_delaware_below_kern_for_a_leaky_bundle():
    """Common practice: Kern's method, fitted to tight bundles, over-predicts h for real bundles
    with leakage and bypass. On a triangular bundle with TEMA clearances (fixed tubesheet) and
    with a floating-head bundle gap (60 mm), Bell-Delaware's h lies below Kern's over Re
    1e3..5e4, the more so the larger the gap."""
    flows = np.geomspace(3.6, 140.0, 12)
    ratios = []
    for gap in (None, 0.06):
        shell = _shell(30, bundle_shell_clearance=gap)
        r = bd.shell_side_bell_delaware(flows, *OIL, shell)
        assert r.reynolds[0] > 1e3 and r.reynolds[-1] < 5e4
        kern = _kern_h(flows, 0.7, 0.0254, 0.01905, 0.25, "triangular")
        ratios.append(r.heat_transfer_coefficient / kern)
        assert np.all(ratios[-1] < 1.0), ratios[-1]
    assert np.all(ratios[1] < ratios[0])


def test_batch_of_flows_equals_one_by_one_and_no_flow_gives_nothing():
    """Identity: the vectorised result equals the scalar one, element by element (to 1e-13: numpy's
    vector and scalar power functions may differ in the last bit); a shell with
    no flow has h = 0 and dp = 0 (and no NaN)."""
    shell = _shell(45, sealing_strip_pairs=1, outlet_baffle_spacing=0.4)
    flows = np.array([0.0, 0.05, 0.5, 5.0, 50.0, 500.0])
    viscosity = np.array([1e-3, 2e-3, 5e-2, 1e-3, 3e-3, 1e-3])
    batch = bd.shell_side_bell_delaware(flows, 850.0, viscosity, 2300.0, 0.12, shell, wall_viscosity=1.2 * viscosity)
    for i, m in enumerate(flows):
        one = bd.shell_side_bell_delaware(m, 850.0, viscosity[i], 2300.0, 0.12, shell, wall_viscosity=1.2 * viscosity[i])
        assert relative(float(one.heat_transfer_coefficient) + 1e-300, batch.heat_transfer_coefficient[i] + 1e-300) <= 1e-13
        assert relative(float(one.pressure_drop) + 1e-300, batch.pressure_drop[i] + 1e-300) <= 1e-13
    assert batch.heat_transfer_coefficient[0] == 0.0 and batch.pressure_drop[0] == 0.0
    assert np.all(np.isfinite(batch.heat_transfer_coefficient)) and np.all(np.isfinite(batch.pressure_drop))
