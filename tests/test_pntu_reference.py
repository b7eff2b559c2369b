"""Outside-reference tests of the P–NTU, LMTD and F relations in ``hxtrain.units.pntu``.

Two independent references are used for every relation:

* **ht 1.2 (ChEDL)**, ``ht.hx``: ``temperature_effectiveness_basic``,
  ``temperature_effectiveness_TEMA_E``, ``effectiveness_from_NTU``, ``NTU_from_effectiveness``,
  ``F_LMTD_Fakheri`` and ``ht.LMTD``. ht evaluates the textbook forms literally in double
  precision (``1 - exp(-x)`` rather than ``expm1``), so where an argument ``x`` of such a
  difference is tiny ht itself carries a rounding error of about ``eps/x``. The comparison with ht
  at 1e-9 relative is therefore made on the grid points where every such argument is at least
  ``X_MIN_HT = 1e-5`` (ht's own error below ~2e-11); the points left out are named per relation
  below, and their measured disagreement is printed by :func:`test_report_largest_disagreement`.
* **The textbook forms evaluated in 200-digit decimal arithmetic** (python ``decimal``, no
  rearrangement, no float): Incropera et al., Fundamentals of Heat and Mass Transfer, Table 11.3
  relations; Shah & Sekulić, Fundamentals of Heat Exchanger Design, ch. 3; Mason (1954) series for
  unmixed crossflow; Thulukkanam (2013) 1-N TEMA E relation (tube basis, as also coded in ht);
  Fakheri (2003) F for N 1-2N shells. These cover the whole grid, including the points ht cannot
  evaluate accurately (NTU = 1e-8, R = 1 ± 1e-6) or at all (R = 0).

``mpmath`` is not installed in the test venv; ``decimal`` (stdlib) provides the high precision.

Basis: hxtrain's side 1 is ``ntu1 = UA/C1``, ``r1 = C1/C2``; ht's argument order is ``(R1, NTU1)``.
For TEMA E, ht's side 1 is the shell fluid.
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass
from decimal import Decimal as D
from decimal import localcontext
from typing import Callable

import numpy as np
import pytest
from ht import LMTD as ht_lmtd
from ht.hx import (
    F_LMTD_Fakheri,
    NTU_from_effectiveness,
    effectiveness_from_NTU,
    temperature_effectiveness_basic,
    temperature_effectiveness_TEMA_E,
)

from hxtrain.units import pntu

R_GRID = (0.0, 1e-6, 0.1, 0.5, 0.9, 0.999999, 1.0, 1.000001, 1.5, 3.0, 10.0)
NTU_GRID = (1e-8, 1e-3, 0.1, 0.5, 1.0, 2.0, 5.0, 10.0, 30.0)
GRID = [(r, n) for r in R_GRID for n in NTU_GRID]
TUBE_PASSES = (2, 4, 6, 8)
SHELLS = (1, 2, 3, 4, 5)

REL_HT = 1e-9
"""Agreement required with ht where ht's own evaluation is well conditioned."""
X_MIN_HT = 1e-5
"""Smallest argument x of ht's ``1 - exp(-x)`` (and similar) at which ht is trusted to ~eps/x."""
REL_DECIMAL = 1e-13
"""Agreement required with the 200-digit textbook forms. Measured worst case while writing these
tests: 5.7e-15 for crossflow unmixed (scipy ``gammainc`` sums, at R = 1.000001, NTU = 1e-8),
<= 4.4e-16 (2 ulp) for every other relation, so 1e-13 leaves room for other platforms' libm."""

EPS = np.finfo(float).eps


# --------------------------------------------------------------------------------------------
# High-precision references: the textbook forms, literally, in 200-digit decimal arithmetic.
# Every float input is converted exactly (Decimal(float) is the exact binary value).
# --------------------------------------------------------------------------------------------
PREC = 200  # NTU = 30, R = 10 makes exp(-E*NTU) ~ 1e-131 matter in the F of a 1-2 shell


def _d(x) -> D:
    return x if isinstance(x, D) else D(float(x))


def _coth(z: D) -> D:
    e = (-2 * z).exp()
    return (1 + e) / (1 - e)


def dec_counterflow(ntu, r) -> D:
    """Incropera Table 11.3 / Shah & Sekulić Table 3.6: counterflow, and NTU/(1+NTU) at R = 1."""
    with localcontext() as c:
        c.prec = PREC
        n, rr = _d(ntu), _d(r)
        if rr == 1:
            return +(n / (1 + n))
        e = (-n * (1 - rr)).exp()
        return +((1 - e) / (1 - rr * e))


def dec_parallel(ntu, r) -> D:
    """Incropera Table 11.3: parallel flow, (1 - exp[-NTU(1+R)])/(1+R)."""
    with localcontext() as c:
        c.prec = PREC
        n, rr = _d(ntu), _d(r)
        return +((1 - (-n * (1 + rr)).exp()) / (1 + rr))


def dec_mixed_1(ntu, r) -> D:
    """Shah & Sekulić Table 3.6: crossflow, side 1 mixed: 1 - exp(-K/R), K = 1 - exp(-R NTU);
    R = 0 is the limit 1 - exp(-NTU)."""
    with localcontext() as c:
        c.prec = PREC
        n, rr = _d(ntu), _d(r)
        if rr == 0:
            return +(1 - (-n).exp())
        k = 1 - (-rr * n).exp()
        return +(1 - (-k / rr).exp())


def dec_mixed_2(ntu, r) -> D:
    """Shah & Sekulić Table 3.6: crossflow, side 2 mixed: [1 - exp(-K R)]/R, K = 1 - exp(-NTU)."""
    with localcontext() as c:
        c.prec = PREC
        n, rr = _d(ntu), _d(r)
        k = 1 - (-n).exp()
        if rr == 0:
            return +k
        return +((1 - (-k * rr).exp()) / rr)


def dec_mason(ntu, r) -> D:
    """Mason (1954) series for crossflow, both fluids unmixed, in its textbook form
    P = 1/(R NTU) sum_n [1 - e^-NTU sum_{m<=n} NTU^m/m!][1 - e^-RNTU sum_{m<=n} (RNTU)^m/m!],
    summed on the given side (no change of basis) until a term is below 1e-40 of the sum."""
    with localcontext() as c:
        c.prec = PREC
        x = _d(ntu)
        y = _d(r) * x
        if y == 0:
            return +(1 - (-x).exp())
        ex, ey = (-x).exp(), (-y).exp()
        tx = ty = D(1)
        sx = sy = total = D(0)
        n = 0
        while True:
            if n:
                tx = tx * x / n
                ty = ty * y / n
            sx += tx
            sy += ty
            term = (1 - ex * sx) * (1 - ey * sy)
            total += term
            if n > max(x, y) and term < total * D("1e-40"):
                break
            n += 1
        return +(total / y)


def dec_tema_e_tube(ntu_t, r_t, tube_passes) -> D:
    """Thulukkanam (2013) 1-N TEMA E, N even, tube-fluid basis (the form ht codes):
    P_t = 2/(A+B+C), A = 1 + R_t + coth(NTU_t/2), B = -coth(NTU_t/(2N1))/N1,
    C = sqrt(1 + N1^2 R_t^2)/N1 coth(NTU_t sqrt(1 + N1^2 R_t^2)/(2 N1)), N1 = N/2.
    R_t = 0 (shell fluid isothermal) is the limit 1 - exp(-NTU_t)."""
    with localcontext() as c:
        c.prec = PREC
        n, rr = _d(ntu_t), _d(r_t)
        if n == 0:
            return D(0)
        if rr == 0:
            return +(1 - (-n).exp())
        n1 = D(tube_passes) / 2
        e = (1 + n1 * n1 * rr * rr).sqrt()
        a = 1 + rr + _coth(n / 2)
        b = -_coth(n / (2 * n1)) / n1
        cc = e / n1 * _coth(n * e / (2 * n1))
        return +(2 / (a + b + cc))


def dec_tema_e_shell(ntu_s, r_s, tube_passes) -> D:
    """Shell basis from the tube basis: NTU_t = NTU_s R_s, R_t = 1/R_s, P_s = P_t/R_s
    (P_s C_s = P_t C_t = Q/ΔT_in). R_s = 0 (tube fluid isothermal): 1 - exp(-NTU_s)."""
    with localcontext() as c:
        c.prec = PREC
        n, rr = _d(ntu_s), _d(r_s)
        if rr == 0:
            return +(1 - (-n).exp())
        return +(dec_tema_e_tube(n * rr, 1 / rr, tube_passes) / rr)


def dec_series(p_one, r, shells) -> D:
    """Shah & Sekulić sec. 3.6: N identical units in overall counterflow,
    P = (X^N - 1)/(X^N - R), X = (1 - R P_p)/(1 - P_p); R = 1: N P_p/(1 + (N-1) P_p)."""
    with localcontext() as c:
        c.prec = PREC
        p, rr = _d(p_one), _d(r)
        if rr == 1:
            return +(shells * p / (1 + (shells - 1) * p))
        x = ((1 - rr * p) / (1 - p)) ** shells
        return +((x - 1) / (x - rr))


def dec_ntu_counterflow(p, r) -> D:
    """Inverse counterflow relation: ln[(1 - R P)/(1 - P)]/(1 - R); R = 1: P/(1 - P)."""
    with localcontext() as c:
        c.prec = PREC
        pp, rr = _d(p), _d(r)
        if rr == 1:
            return +(pp / (1 - pp))
        return +(((1 - rr * pp) / (1 - pp)).ln() / (1 - rr))


def dec_fakheri(p, r, shells) -> D:
    """Fakheri (2003) F for N 1-2N shells in series (symmetric: either side's P, R):
    F = S ln W / ln[(1 + W - S + S W)/(1 + W + S - S W)], S = sqrt(R^2+1)/(R-1),
    W = [(1 - P R)/(1 - P)]^(1/N); at R = 1 the W' form."""
    with localcontext() as c:
        c.prec = PREC
        pp, rr = _d(p), _d(r)
        if rr == 1:
            w = (shells - shells * pp) / (shells - shells * pp + pp)
            s2 = D(2).sqrt()
            q = w / (1 - w)
            return +(s2 * (1 - w) / w / ((q + 1 / s2) / (q - 1 / s2)).ln())
        w = ((1 - pp * rr) / (1 - pp)) ** (D(1) / shells)
        s = (rr * rr + 1).sqrt() / (rr - 1)
        return +(s * w.ln() / ((1 + w - s + s * w) / (1 + w + s - s * w)).ln())


def dec_lmtd(dt1, dt2) -> D:
    """Textbook LMTD (ΔT1 - ΔT2)/ln(ΔT1/ΔT2); equal differences give that difference."""
    with localcontext() as c:
        c.prec = PREC
        a, b = _d(dt1), _d(dt2)
        if a == b:
            return +a
        return +((a - b) / (a / b).ln())


def _rel(value, reference) -> float:
    """Relative difference of a float from a Decimal or float reference."""
    ref = reference if isinstance(reference, D) else D(float(reference))
    val = D(float(value))
    with localcontext() as c:
        c.prec = PREC
        if ref == 0:
            return float(abs(val))
        return float(abs((val - ref) / ref))


# --------------------------------------------------------------------------------------------
# The relations under test, each with its ht counterpart and its decimal textbook reference.
# --------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Relation:
    name: str
    source_ht: str
    source_textbook: str
    hx: Callable[[float, float], float]
    ht: Callable[[float, float], float]
    ht_arg_min: Callable[[float, float], float]
    """Smallest argument x of ht's 1 - exp(-x)-type differences at this point (inf: none)."""
    dec: Callable[[float, float], D]
    symmetric: bool


def _ht_basic(subtype):
    return lambda n, r: temperature_effectiveness_basic(r, n, subtype=subtype)


def _tema_relations():
    out = []
    for tp in TUBE_PASSES:
        out.append(
            Relation(
                name=f"tema_e_{tp}_shell",
                source_ht=f"ht 1.2 (ChEDL) temperature_effectiveness_TEMA_E(R1, NTU1, Ntp={tp})",
                source_textbook="Thulukkanam (2013) 1-N TEMA E (tube basis) moved to the shell basis",
                hx=lambda n, r, tp=tp: float(pntu.p_tema_e(n, r, tp, side1="shell")),
                ht=lambda n, r, tp=tp: temperature_effectiveness_TEMA_E(r, n, Ntp=tp),
                ht_arg_min=lambda n, r: math.inf,  # coth/tanh forms: measured <= 7e-16 from ht
                dec=lambda n, r, tp=tp: dec_tema_e_shell(n, r, tp),
                symmetric=tp == 2,
            )
        )
        # side 1 = tube fluid: P_t(NTU_t, R_t) = P_s(NTU_t R_t, 1/R_t)/R_t, since with
        # NTU_s = UA/C_s = NTU_t C_t/C_s = NTU_t R_t, R_s = C_s/C_t = 1/R_t and P_s C_s = P_t C_t.
        out.append(
            Relation(
                name=f"tema_e_{tp}_tube",
                source_ht=f"ht 1.2 (ChEDL) temperature_effectiveness_TEMA_E(1/R_t, NTU_t R_t, Ntp={tp})/R_t",
                source_textbook="Thulukkanam (2013) 1-N TEMA E, tube-fluid basis",
                hx=lambda n, r, tp=tp: float(pntu.p_tema_e(n, r, tp, side1="tube")),
                ht=lambda n, r, tp=tp: temperature_effectiveness_TEMA_E(1.0 / r, n * r, Ntp=tp) / r,
                ht_arg_min=lambda n, r: math.inf,
                dec=lambda n, r, tp=tp: dec_tema_e_tube(n, r, tp),
                symmetric=tp == 2,
            )
        )
    return out


RELATIONS = [
    Relation(
        name="counterflow",
        source_ht="ht 1.2 (ChEDL) temperature_effectiveness_basic(subtype='counterflow')",
        source_textbook="Incropera et al. Table 11.3; Shah & Sekulić Table 3.6",
        hx=lambda n, r: float(pntu.p_counterflow(n, r)),
        ht=_ht_basic("counterflow"),
        ht_arg_min=lambda n, r: math.inf if r == 1.0 else n * abs(1.0 - r),
        dec=dec_counterflow,
        symmetric=True,
    ),
    Relation(
        name="parallel_flow",
        source_ht="ht 1.2 (ChEDL) temperature_effectiveness_basic(subtype='parallel')",
        source_textbook="Incropera et al. Table 11.3",
        hx=lambda n, r: float(pntu.p_parallel_flow(n, r)),
        ht=_ht_basic("parallel"),
        ht_arg_min=lambda n, r: n * (1.0 + r),
        dec=dec_parallel,
        symmetric=True,
    ),
    Relation(
        name="crossflow_mixed_1",
        source_ht="ht 1.2 (ChEDL) temperature_effectiveness_basic(subtype='crossflow, mixed 1')",
        source_textbook="Shah & Sekulić Table 3.6 (fluid 1 mixed)",
        hx=lambda n, r: float(pntu.p_crossflow_one_mixed(n, r, side1_mixed=True)),
        ht=_ht_basic("crossflow, mixed 1"),
        ht_arg_min=lambda n, r: min(r * n, -math.expm1(-r * n) / r) if r > 0 else 0.0,
        dec=dec_mixed_1,
        symmetric=False,
    ),
    Relation(
        name="crossflow_mixed_2",
        source_ht="ht 1.2 (ChEDL) temperature_effectiveness_basic(subtype='crossflow, mixed 2')",
        source_textbook="Shah & Sekulić Table 3.6 (fluid 2 mixed)",
        hx=lambda n, r: float(pntu.p_crossflow_one_mixed(n, r, side1_mixed=False)),
        ht=_ht_basic("crossflow, mixed 2"),
        ht_arg_min=lambda n, r: min(n, -r * math.expm1(-n)),
        dec=dec_mixed_2,
        symmetric=False,
    ),
    Relation(
        name="crossflow_unmixed",
        source_ht="ht 1.2 (ChEDL) temperature_effectiveness_basic(subtype='crossflow') (quad of Triboix's integral)",
        source_textbook="Mason (1954) series, textbook form",
        hx=lambda n, r: float(pntu.p_crossflow_unmixed(n, r)),
        ht=_ht_basic("crossflow"),
        # ht: 1/R - exp(-R NTU)/(2 (R NTU)^2) * quad(...): cancels like 1 - exp(-x) at small R NTU
        ht_arg_min=lambda n, r: min(n, r * n),
        dec=dec_mason,
        symmetric=True,
    ),
    *_tema_relations(),
]
RELATION_IDS = [rel.name for rel in RELATIONS]


def _ht_value(rel: Relation, ntu: float, r: float):
    """ht's value, or None where ht cannot evaluate (ZeroDivisionError at R = 0 and the like)."""
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            value = rel.ht(ntu, r)
    except (ZeroDivisionError, ValueError, OverflowError):
        return None
    return value if math.isfinite(value) else None


def _format(rows):
    return "\n".join("  " + ", ".join(f"{k}={v!r}" for k, v in row.items()) for row in rows)


# --------------------------------------------------------------------------------------------
# 1. Every P relation against ht (where ht is well conditioned) and against the decimal forms.
# --------------------------------------------------------------------------------------------
@pytest.mark.parametrize("rel", RELATIONS, ids=RELATION_IDS)
def test_p_relation_matches_ht_chedl(rel: Relation):
    """P1 of each relation against ht 1.2 (ChEDL), 1e-9 relative, on the grid points where ht
    evaluates and its literal ``1 - exp(-x)`` differences have x >= 1e-5.

    Points left out (ht loses about eps/x there; they are checked against the decimal textbook
    forms instead): R = 0 for crossflow and for TEMA E with 4+ passes or on the tube basis (ht
    divides by R: ZeroDivisionError); NTU = 1e-8 everywhere except TEMA E; NTU·|1-R| < 1e-5
    for counterflow (R = 1 ± 1e-6); R·NTU < 1e-5 for the crossflow relations (R = 1e-6).
    Measured disagreement at those points: up to 8.0e-4 (counterflow at R = 0.999999,
    NTU = 1e-8; ht's value is the wrong one, see the decimal test) and 1.06e-2 (crossflow
    unmixed at R = 1e-6, NTU = 1e-8)."""
    compared, bad = 0, []
    for r, ntu in GRID:
        if rel.ht_arg_min(ntu, r) < X_MIN_HT:
            continue
        expected = _ht_value(rel, ntu, r)
        if expected is None:
            continue
        got = rel.hx(ntu, r)
        compared += 1
        if not got == pytest.approx(expected, rel=REL_HT, abs=0.0):
            bad.append(dict(R=r, NTU=ntu, hxtrain=got, ht=expected, rel=_rel(got, expected)))
    assert compared >= 0.6 * len(GRID), f"only {compared} points compared for {rel.name}"
    assert not bad, f"{rel.name} vs {rel.source_ht}:\n{_format(bad)}"


@pytest.mark.parametrize("rel", RELATIONS, ids=RELATION_IDS)
def test_p_relation_matches_textbook_form_in_200_digits(rel: Relation):
    """P1 of each relation against its textbook form evaluated in 200-digit decimal arithmetic
    (sources in the relation table), over the whole grid (R = 0 by its limit 1 - exp(-NTU)).
    Tolerance 1e-13 relative (measured worst 5.7e-15, crossflow unmixed)."""
    bad = []
    for r, ntu in GRID:
        got = rel.hx(ntu, r)
        expected = rel.dec(ntu, r)
        if _rel(got, expected) > REL_DECIMAL or not math.isfinite(got):
            bad.append(dict(R=r, NTU=ntu, hxtrain=got, ref=float(expected), rel=_rel(got, expected)))
    assert not bad, f"{rel.name} vs {rel.source_textbook}:\n{_format(bad)}"


def test_crossflow_unmixed_matches_ht_quad_where_quad_converges():
    """Crossflow, both fluids unmixed, against ht 1.2 (ChEDL) temperature_effectiveness_basic
    'crossflow' (scipy quad of Triboix's integral) on a denser practical grid. ht's quad is
    requested to 1.49e-8 relative; in practice it agrees with hxtrain to < 1e-9 relative wherever
    R·NTU >= 1e-5 (measured while writing these tests), so the 1e-9 tolerance holds against ht
    too, and the exact reference is the 200-digit Mason series (test above, 1e-13)."""
    bad = []
    for r in (0.05, 0.2, 0.35, 0.6, 0.75, 1.0, 1.25, 2.0, 5.0):
        for ntu in (0.05, 0.3, 0.7, 1.5, 3.0, 7.0, 15.0):
            got = float(pntu.p_crossflow_unmixed(ntu, r))
            expected = temperature_effectiveness_basic(r, ntu, subtype="crossflow")
            if not got == pytest.approx(expected, rel=REL_HT, abs=0.0):
                bad.append(dict(R=r, NTU=ntu, hxtrain=got, ht=expected))
    assert not bad, _format(bad)


# --------------------------------------------------------------------------------------------
# 2. Shells in series (S&T) against ht's effectiveness_from_NTU and the decimal form.
# --------------------------------------------------------------------------------------------
def _hx_shells(ntu, r, shells, tube_passes=2):
    return float(pntu.p_shells_in_series(pntu.p_tema_e(ntu / shells, r, tube_passes), r, shells))


@pytest.mark.parametrize("shells", SHELLS)
def test_shells_in_series_matches_ht_effectiveness_from_ntu(shells):
    """N 1-2 shells in series, on the Cmin basis (Cr <= 1), against ht 1.2 (ChEDL)
    ``effectiveness_from_NTU(NTU, Cr, subtype='S&T', n_shell_tube=N)``, 1e-9 relative.

    At Cr = 1 with N > 1 ht raises ZeroDivisionError (its series formula is 0/0 there); the
    reference at Cr = 1 is then ht's one-shell value at NTU/N put through the textbook limit
    N P_p / (1 + (N - 1) P_p) (Shah & Sekulić sec. 3.6).
    Points left out as ill-conditioned in ht: NTU/N < 1e-5 (ht's 1 - exp(-NTU E/N)) and, for
    N > 1 and Cr != 1, P_p·|1 - Cr| < 1e-5 (ht's [(1 - Cr P_p)/(1 - P_p)]^N - 1). Measured
    disagreement there: up to 6.2e-2 (Cr = 0.999999, NTU = 1e-8, N = 4) — ht's error."""
    compared, bad = 0, []
    for r, ntu in GRID:
        if r > 1.0:
            continue
        p_one = float(pntu.p_tema_e(ntu / shells, r, 2))
        arg = ntu / shells
        if shells > 1 and r != 1.0:
            arg = min(arg, p_one * abs(1.0 - r))
        if arg < X_MIN_HT:
            continue
        if shells > 1 and r == 1.0:
            pp = effectiveness_from_NTU(ntu / shells, 1.0, subtype="S&T", n_shell_tube=1)
            expected = shells * pp / (1.0 + (shells - 1) * pp)
        else:
            expected = effectiveness_from_NTU(ntu, r, subtype="S&T", n_shell_tube=shells)
        got = _hx_shells(ntu, r, shells)
        compared += 1
        if not got == pytest.approx(expected, rel=REL_HT, abs=0.0):
            bad.append(dict(Cr=r, NTU=ntu, hxtrain=got, ht=expected, rel=_rel(got, expected)))
    assert compared >= 30
    assert not bad, _format(bad)


def test_shells_in_series_at_cr_1_matches_the_limit_form():
    """Cr = 1 exactly, N shells: equals the textbook limit N P_p/(1 + (N-1) P_p) (Shah &
    Sekulić sec. 3.6), 1e-12 relative, with P_p the one-shell value from ht 1.2 (ChEDL)
    ``effectiveness_from_NTU(NTU/N, 1, 'S&T')`` where NTU/N >= 1e-5 and from the 200-digit
    1-2 relation at every NTU (ht's 1 - exp(-x) at NTU/N = 2e-9 is off by 3.5e-9)."""
    for shells in SHELLS:
        for ntu in NTU_GRID:
            got = _hx_shells(ntu, 1.0, shells)
            pp = dec_tema_e_shell(_d(ntu) / shells, 1.0, 2)
            assert _rel(got, shells * pp / (1 + (shells - 1) * pp)) <= 1e-12, (shells, ntu)
            if ntu / shells >= X_MIN_HT:
                pp = effectiveness_from_NTU(ntu / shells, 1.0, subtype="S&T", n_shell_tube=1)
                expected = shells * pp / (1.0 + (shells - 1) * pp)
                assert got == pytest.approx(expected, rel=1e-12, abs=0.0), (shells, ntu)


@pytest.mark.parametrize("tube_passes", TUBE_PASSES)
@pytest.mark.parametrize("shells", SHELLS)
def test_shells_in_series_matches_textbook_form_in_200_digits(shells, tube_passes):
    """N 1-2N shells in series, shell basis, all R of the grid (R > 1 included: the series
    formula holds on either basis) against the 200-digit Shah & Sekulić sec. 3.6 formula fed by
    the 200-digit Thulukkanam one-shell P. Tolerance 1e-12 relative (two relations chained;
    measured worst ~1e-15)."""
    bad = []
    for r, ntu in GRID:
        got = _hx_shells(ntu, r, shells, tube_passes)
        expected = dec_series(dec_tema_e_shell(_d(ntu) / shells, r, tube_passes), r, shells)
        if _rel(got, expected) > 1e-12:
            bad.append(dict(R=r, NTU=ntu, hxtrain=got, ref=float(expected), rel=_rel(got, expected)))
    assert not bad, _format(bad)


@pytest.mark.parametrize("shells", SHELLS)
def test_counterflow_units_in_series_are_one_counterflow_unit(shells):
    """Identity (Shah & Sekulić sec. 3.6): N counterflow units in overall counterflow, each
    with NTU/N, are one counterflow unit with NTU — for every R of the grid, R = 1 and R > 1
    included. 1e-12 relative."""
    for r, ntu in GRID:
        got = float(pntu.p_shells_in_series(pntu.p_counterflow(ntu / shells, r), r, shells))
        assert got == pytest.approx(float(dec_counterflow(ntu, r)), rel=1e-12, abs=0.0), (r, ntu)


# --------------------------------------------------------------------------------------------
# 3. F factor, counterflow inverse and LMTD.
# --------------------------------------------------------------------------------------------
FAKHERI_R = (0.1, 0.25, 0.5, 0.8, 0.999, 1.0, 1.001, 1.25, 2.0, 4.0, 10.0)
FAKHERI_NTU = (1e-3, 0.01, 0.1, 0.3, 0.5, 1.0, 2.0, 3.0, 5.0, 10.0)


@pytest.mark.parametrize("shells", SHELLS)
def test_f_factor_matches_ht_fakheri_from_terminal_temperatures(shells):
    """F of N 1-2 shells in series against ht 1.2 (ChEDL) ``F_LMTD_Fakheri(Thi, Tho, Tci, Tco,
    shells=N)`` (Fakheri 2003), 1e-9 relative.

    Basis: the hot stream is hxtrain's side 1 with C_hot = 10 kW/K, C_cold = C_hot/R,
    UA = NTU·C_hot, Thi = 200, Tci = 50 °C; hxtrain's P_hot gives Tho = Thi - P ΔT and
    Tco = Tci + P R ΔT, and hxtrain's ``f_factor(P_hot, R_hot, NTU_hot)`` is compared with
    Fakheri's F, which works on the cold-side P and R = C_cold/C_hot (F does not depend on the
    basis). At R = 1 the temperature change is rounded to a multiple of 2^-40 so that ht sees
    R == 1.0 exactly and takes its R = 1 branch (otherwise ht's S = sqrt(R²+1)/(R-1) ~ 1e16
    returns garbage: measured F = 1.287 for every NTU); hxtrain is then given the P of those
    temperatures. Points with F < 0.5 (reference value) are left out: F is steep there and
    rebuilding P and R from rounded temperatures, as Fakheri's F must, amplifies the rounding
    (measured: 0.96 vs 0.06 at F ~ 0.05). Measured worst on this grid: 3.6e-10."""
    thi, tci, c_hot = 200.0, 50.0, 10.0
    compared, bad = 0, []
    for r in FAKHERI_R:
        for ntu in FAKHERI_NTU:
            ref = float(dec_fakheri(dec_series(dec_tema_e_shell(_d(ntu) / shells, r, 2), r, shells), r, shells))
            if ref < 0.5:
                continue
            c_cold, ua = c_hot / r, ntu * c_hot
            p_hot = _hx_shells(ua / c_hot, c_hot / c_cold, shells)
            if r == 1.0:
                d_t = round(p_hot * (thi - tci) * 2.0**40) / 2.0**40
                tho, tco = thi - d_t, tci + d_t
                p_hot = d_t / (thi - tci)
            else:
                tho = thi - p_hot * (thi - tci)
                tco = tci + p_hot * (c_hot / c_cold) * (thi - tci)
            expected = F_LMTD_Fakheri(thi, tho, tci, tco, shells=shells)
            got = float(pntu.f_factor(p_hot, c_hot / c_cold, ua / c_hot))
            compared += 1
            if not got == pytest.approx(expected, rel=REL_HT, abs=0.0):
                bad.append(dict(R=r, NTU=ntu, hxtrain=got, ht=expected, rel=_rel(got, expected)))
    assert compared >= 40
    assert not bad, _format(bad)


def _ntu_cf_condition(p, r):
    """Relative condition number of NTU_cf(P, R) with respect to P."""
    if p >= 1.0 or r * p >= 1.0:
        return math.inf  # saturated: the counterflow inverse is infinite
    if r == 1.0:
        return 1.0 / (1.0 - p)
    log_term = abs(math.log((1.0 - r * p) / (1.0 - p)))
    return (p / (1.0 - p) + r * p / (1.0 - r * p)) / log_term if log_term > 0 else math.inf


@pytest.mark.parametrize("shells", SHELLS)
def test_f_factor_of_1_2_shells_matches_fakheri_in_200_digits(shells):
    """hxtrain's F = NTU_cf(P, R)/NTU (Bowman, Mueller & Nagle 1940) for N 1-2 shells in series,
    chained from hxtrain's P, against Fakheri's (2003) closed form evaluated in 200 digits on the
    200-digit P, over the whole grid with R > 0 (R > 1 and R = 1 ± 1e-6 included).

    Tolerance 1e-11 + 8·eps·κ, κ the condition number of NTU_cf in P: a float P within δ of 1
    (or of 1/R) carries a relative error eps/δ into ln[(1-RP)/(1-P)] however F is computed;
    measured 3.8e-5 at R = 1e-6, NTU = 30, 3 shells, where 1 - P = 9.7e-14 (κ·8eps = 6e-4).
    Elsewhere the measured worst is 3.5e-12."""
    bad = []
    for r, ntu in GRID:
        if r == 0.0:
            continue
        p_dec = dec_series(dec_tema_e_shell(_d(ntu) / shells, r, 2), r, shells)
        expected = dec_fakheri(p_dec, r, shells)
        p = _hx_shells(ntu, r, shells)
        got = float(pntu.f_factor(p, r, ntu))
        tol = 1e-11 + 8 * EPS * _ntu_cf_condition(float(p_dec), r)
        if _rel(got, expected) > tol:
            bad.append(dict(R=r, NTU=ntu, hxtrain=got, ref=float(expected), rel=_rel(got, expected), tol=tol))
    assert not bad, _format(bad)


def test_fakheri_form_equals_bowman_definition_in_200_digits():
    """Sanity of the references themselves (no hxtrain): Fakheri's closed form equals
    NTU_cf(P, R)/NTU (Bowman et al. definition) for N 1-2 shells, 200 digits, to 1e-20."""
    for shells in SHELLS:
        for r, ntu in GRID:
            if r == 0.0:
                continue
            p_dec = dec_series(dec_tema_e_shell(_d(ntu) / shells, r, 2), r, shells)
            f_def = dec_ntu_counterflow(p_dec, r) / _d(ntu)
            assert _rel(float(f_def), dec_fakheri(p_dec, r, shells)) < 1e-15


def test_f_factor_is_one_for_counterflow():
    """F = 1 for pure counterflow by definition (Bowman et al. 1940), every grid point:
    f_factor(p_counterflow(NTU, R), R, NTU) = 1 within 1e-12 + 8·eps·κ (κ as above). Left out:
    the points where the float P itself is saturated (P·max(1, R) rounds to 1: R = 3 at NTU = 30,
    R = 10 at NTU >= 5), outside f_factor's documented domain R1 P1 < 1."""
    compared = 0
    for r, ntu in GRID:
        p = float(pntu.p_counterflow(ntu, r))
        if p * max(1.0, r) >= 1.0:
            continue
        compared += 1
        f = float(pntu.f_factor(p, r, ntu))
        tol = 1e-12 + 8 * EPS * _ntu_cf_condition(float(dec_counterflow(ntu, r)), r)
        assert abs(f - 1.0) <= tol, (r, ntu, f)
    assert compared == len(GRID) - 4
    assert float(pntu.f_factor(0.0, 0.5, 0.0)) == 1.0  # documented NTU = 0 limit


def test_ntu_counterflow_matches_ht_and_200_digits():
    """Inverse counterflow relation against ht 1.2 (ChEDL) ``NTU_from_effectiveness(eff, Cr,
    'counterflow')`` (Cmin basis, Cr <= 1; 1e-9 relative where 1 - P >= 1e-6 and
    P·|1-Cr| >= 1e-5, ht's log of a ratio near 1 loses eps/x) and against the 200-digit
    textbook inverse at every point of a P × R grid (1e-12 + 8·eps·κ)."""
    ps = (1e-8, 1e-3, 0.1, 0.3, 0.5, 0.7, 0.9, 0.99, 0.999999)
    for r in R_GRID:
        for p in ps:
            if r * p >= 1.0:
                continue
            got = float(pntu.ntu_counterflow(p, r))
            expected = dec_ntu_counterflow(p, r)
            tol = 1e-12 + 8 * EPS * _ntu_cf_condition(p, r)
            assert _rel(got, expected) <= tol, (r, p, got, float(expected))
            if r <= 1.0 and 1.0 - p >= 1e-6 and (r == 1.0 or p * abs(1.0 - r) >= X_MIN_HT):
                assert got == pytest.approx(NTU_from_effectiveness(p, r, "counterflow"), rel=REL_HT, abs=0.0), (r, p)


def test_ntu_counterflow_inverts_p_counterflow():
    """Round trip NTU -> P -> NTU for counterflow, R <= 1 and R > 1, where P is not saturated."""
    for r, ntu in GRID:
        p = float(pntu.p_counterflow(ntu, r))
        if 1.0 - p * max(1.0, r) < 1e-6:
            continue
        back = float(pntu.ntu_counterflow(p, r))
        tol = 1e-12 + 8 * EPS * _ntu_cf_condition(p, r)
        assert back == pytest.approx(ntu, rel=tol, abs=0.0), (r, ntu)


LMTD_PAIRS = [(40.0, 20.0), (20.0, 40.0), (100.0, 1.0), (1e-3, 5.0), (15.0, 15.0), (30.0, 30.0 * (1 + 1e-12)),
              (7.0, 7.0 * (1 - 1e-9)), (123.4, 0.1234), (-40.0, -20.0), (-5.0, -5.0)]


@pytest.mark.parametrize("dt1, dt2", LMTD_PAIRS)
def test_lmtd_matches_textbook_definition_in_200_digits(dt1, dt2):
    """LMTD = (ΔT1 - ΔT2)/ln(ΔT1/ΔT2) (Incropera et al. eq. 11.15), 200 digits, 1e-13 relative —
    including nearly equal differences, where the textbook float form loses digits, and a
    negative pair (heat flowing the other way: negative mean, as documented)."""
    got = float(pntu.lmtd(dt1, dt2))
    assert _rel(got, dec_lmtd(dt1, dt2)) <= 1e-13
    assert float(pntu.lmtd(dt2, dt1)) == pytest.approx(got, rel=1e-14)


def test_lmtd_equal_differences_give_that_difference():
    """Equal end differences: the LMTD is that difference, not 0/0 (GUIDE physics list)."""
    for dt in (1e-9, 0.5, 15.0, 250.0, -12.0):
        assert float(pntu.lmtd(dt, dt)) == dt


def test_lmtd_matches_ht_and_incropera_example_11_1():
    """Against ht 1.2 (ChEDL) ``LMTD(Thi, Tho, Tci, Tco)`` (counterflow pairing ΔT1 = Thi - Tco,
    ΔT2 = Tho - Tci), 1e-12 relative, and Incropera et al. Example 11.1 as quoted in ht's
    docstring: Thi = 100, Tho = 60, Tci = 30, Tco = 40.2 °C gives 43.200409294131525."""
    assert float(pntu.lmtd(100.0 - 40.2, 60.0 - 30.0)) == pytest.approx(43.200409294131525, rel=1e-12)
    for thi, tho, tci, tco in [(200, 120, 50, 90), (150, 67.1, 30, 71.4), (300, 100, 20, 280), (90, 40, 35, 60)]:
        got = float(pntu.lmtd(thi - tco, tho - tci))
        assert got == pytest.approx(ht_lmtd(thi, tho, tci, tco), rel=1e-12)


def test_lmtd_without_a_logarithmic_mean_is_zero():
    """Documented: a zero or sign-changing pair has no logarithmic mean; the result is 0."""
    got = pntu.lmtd(np.array([0.0, 10.0, -3.0, 0.0]), np.array([10.0, 0.0, 4.0, 0.0]))
    np.testing.assert_array_equal(got, 0.0)


# --------------------------------------------------------------------------------------------
# 4. Textbook identities and limits.
# --------------------------------------------------------------------------------------------
def test_counterflow_at_r_1_is_ntu_over_1_plus_ntu():
    """Counterflow at R = 1: P = NTU/(1 + NTU) (Incropera Table 11.3), exactly up to rounding."""
    for ntu in (*NTU_GRID, 0.0, 1e3, 1e8):
        assert float(pntu.p_counterflow(ntu, 1.0)) == pytest.approx(ntu / (1.0 + ntu), rel=2 * EPS, abs=0.0)


def _all_p_functions():
    """(name, P1(ntu, r)) for every arrangement and basis, and for N shells in series."""
    funcs = [(rel.name, rel.hx) for rel in RELATIONS]
    for shells in (2, 3, 5):
        funcs.append((f"{shells}x_tema_e_2", lambda n, r, s=shells: _hx_shells(n, r, s)))
        funcs.append((f"{shells}x_tema_e_4_tube", lambda n, r, s=shells: float(
            pntu.p_shells_in_series(pntu.p_tema_e(n / s, r, 4, side1="tube"), r, s))))
        funcs.append((f"{shells}x_crossflow_unmixed", lambda n, r, s=shells: float(
            pntu.p_shells_in_series(pntu.p_crossflow_unmixed(n / s, r), r, s))))
    return funcs


@pytest.mark.parametrize("name, func", _all_p_functions(), ids=[f[0] for f in _all_p_functions()])
def test_r_to_zero_gives_one_minus_exp_minus_ntu(name, func):
    """R -> 0 (the other stream isothermal), every arrangement and basis: P = 1 - exp(-NTU)
    (Incropera, sec. 11.4: Cr = 0 for all exchangers). At R = 0 to 1e-14, at R = 1e-12 to 1e-10."""
    for ntu in (*NTU_GRID, 50.0):
        expected = -math.expm1(-ntu)
        assert func(ntu, 0.0) == pytest.approx(expected, rel=1e-14, abs=0.0), ntu
        assert func(ntu, 1e-12) == pytest.approx(expected, rel=1e-10, abs=0.0), ntu


@pytest.mark.parametrize("name, func", _all_p_functions(), ids=[f[0] for f in _all_p_functions()])
def test_ntu_to_zero_gives_p_equal_ntu(name, func):
    """NTU -> 0: P = NTU (1 + O(NTU)) for every arrangement; P = 0 at NTU = 0, no 0/0."""
    for r in R_GRID:
        assert func(1e-12, r) == pytest.approx(1e-12, rel=1e-10, abs=0.0), r
        assert func(0.0, r) == 0.0, r


def test_large_ntu_limits_of_counterflow_and_parallel_flow():
    """NTU -> inf (Incropera Table 11.3 limits): counterflow P -> 1 for R < 1 and -> 1/R for
    R > 1; parallel flow P -> 1/(1 + R). Evaluated at NTU = 1e4, 1e-12 relative."""
    for r in (0.0, 1e-6, 0.1, 0.5, 0.9):
        assert float(pntu.p_counterflow(1e4, r)) == pytest.approx(1.0, rel=1e-12)
    for r in (1.1, 1.5, 3.0, 10.0):
        assert float(pntu.p_counterflow(1e4, r)) == pytest.approx(1.0 / r, rel=1e-12)
    for r in R_GRID:
        assert float(pntu.p_parallel_flow(1e4, r)) == pytest.approx(1.0 / (1.0 + r), rel=1e-12)


def test_large_ntu_limits_of_crossflow_one_mixed():
    """NTU -> inf, crossflow with one fluid mixed (limits of Shah & Sekulić Table 3.6 forms):
    side 1 mixed P -> 1 - exp(-1/R); side 2 mixed P -> (1 - exp(-R))/R. NTU = 1e4."""
    for r in (0.1, 0.5, 1.0, 1.5, 3.0, 10.0):
        assert float(pntu.p_crossflow_one_mixed(1e4, r, True)) == pytest.approx(-math.expm1(-1 / r), rel=1e-12)
        assert float(pntu.p_crossflow_one_mixed(1e4, r, False)) == pytest.approx(-math.expm1(-r) / r, rel=1e-12)


@pytest.mark.parametrize("side1", ["shell", "tube"])
def test_one_two_shell_asymptote(side1):
    """1-2 TEMA E shell at NTU -> inf: P = 2/(1 + R + sqrt(1 + R²)) (Shah & Sekulić Table 3.6;
    Bowman et al. 1940), both bases. NTU = 1e4, 1e-12 relative."""
    for r in R_GRID:
        expected = 2.0 / (1.0 + r + math.sqrt(1.0 + r * r))
        assert float(pntu.p_tema_e(1e4, r, 2, side1=side1)) == pytest.approx(expected, rel=1e-12), r


def _continuity_functions():
    funcs = _all_p_functions()
    funcs.append(("f_factor_2x_tema_e_2", lambda n, r: float(pntu.f_factor(_hx_shells(n, r, 2), r, n))))
    funcs.append(("f_factor_tema_e_4", lambda n, r: float(pntu.f_factor(pntu.p_tema_e(n, r, 4), r, n))))
    # P = 0.9 NTU/(1+NTU): at P -> 1 the true slope dNTU/dR ~ u^2/2 (u = P/(1-P)) is itself
    # steep (at u = 30 a step of 1e-9 in R moves NTU by 1.5e-8 relative, measured), not a jump
    funcs.append(("ntu_counterflow", lambda n, r: float(pntu.ntu_counterflow(0.9 * n / (1.0 + n), r))))
    return funcs


@pytest.mark.parametrize("name, func", _continuity_functions(), ids=[f[0] for f in _continuity_functions()])
def test_continuous_across_r_equal_1(name, func):
    """No 0/0 at R = 1: values at R = 1 - 1e-9, 1 and 1 + 1e-9 agree within 1e-8 relative and are
    finite, NTU from 1e-8 to 30 (GUIDE: stable forms near Cr -> 1)."""
    for ntu in NTU_GRID:
        below, at, above = (func(ntu, r) for r in (1.0 - 1e-9, 1.0, 1.0 + 1e-9))
        assert all(math.isfinite(v) for v in (below, at, above)), (ntu, below, at, above)
        assert below == pytest.approx(at, rel=1e-8, abs=0.0), ntu
        assert above == pytest.approx(at, rel=1e-8, abs=0.0), ntu


SYMMETRIC = [(rel.name, rel.hx) for rel in RELATIONS if rel.symmetric]


@pytest.mark.parametrize("name, func", SYMMETRIC, ids=[s[0] for s in SYMMETRIC])
def test_symmetric_arrangements_give_the_same_duty_from_either_side(name, func):
    """Symmetric arrangements (counterflow, parallel flow, 1-2 shell on either basis, crossflow
    unmixed): evaluated from side 2, with NTU2 = NTU1·R1 and R2 = 1/R1, the relation gives
    P2 = P1·R1 (same duty). 1e-12 relative over the grid, R > 0."""
    for r, ntu in GRID:
        if r == 0.0:
            continue
        assert func(ntu * r, 1.0 / r) == pytest.approx(func(ntu, r) * r, rel=1e-12, abs=0.0), (r, ntu)


def test_crossflow_mixed_1_seen_from_side_2_is_mixed_2():
    """Crossflow with one fluid mixed is not symmetric, but the mixed fluid seen from the other
    side is 'side 2 mixed': P1_mixed1(NTU1, R1)·R1 = P2_mixed2(NTU1 R1, 1/R1). 1e-12."""
    for r, ntu in GRID:
        if r == 0.0:
            continue
        p1 = float(pntu.p_crossflow_one_mixed(ntu, r, side1_mixed=True))
        p2 = float(pntu.p_crossflow_one_mixed(ntu * r, 1.0 / r, side1_mixed=False))
        assert p2 == pytest.approx(p1 * r, rel=1e-12, abs=0.0), (r, ntu)


@pytest.mark.parametrize("tube_passes", (4, 6, 8))
def test_tema_e_tube_basis_is_the_shell_basis_seen_from_the_tube(tube_passes):
    """1-N shell, N >= 4 (not symmetric): P_tube(NTU_t, R_t) = P_shell(NTU_t R_t, 1/R_t)/R_t
    (P_s C_s = P_t C_t), 1e-12 — and the two bases do differ (side1 is not ignored)."""
    for r, ntu in GRID:
        if r == 0.0:
            continue
        tube = float(pntu.p_tema_e(ntu, r, tube_passes, side1="tube"))
        shell = float(pntu.p_tema_e(ntu * r, 1.0 / r, tube_passes, side1="shell"))
        assert tube == pytest.approx(shell / r, rel=1e-12, abs=0.0), (r, ntu)
    a = float(pntu.p_tema_e(10.0, 0.5, tube_passes, side1="shell"))
    b = float(pntu.p_tema_e(10.0, 0.5, tube_passes, side1="tube"))
    assert abs(a - b) > 5e-3  # 0.011 (4 passes) to 0.0068 (8 passes) at NTU = 10, R = 0.5


def test_tema_e_rejects_odd_or_too_few_tube_passes_and_unknown_sides():
    for bad in (0, 1, 3, 5):
        with pytest.raises(ValueError):
            pntu.p_tema_e(1.0, 0.5, bad)
    with pytest.raises(ValueError):
        pntu.p_tema_e(1.0, 0.5, 2, side1="hot")


BOUND_R = np.concatenate([[0.0], np.logspace(-8, 1, 70), [1.0]])
BOUND_NTU = np.logspace(-3, 3.5, 70)
ARRAY_P = [
    ("counterflow", pntu.p_counterflow),
    ("parallel_flow", pntu.p_parallel_flow),
    ("crossflow_unmixed", pntu.p_crossflow_unmixed),
    ("crossflow_mixed_1", lambda n, r: pntu.p_crossflow_one_mixed(n, r, True)),
    ("crossflow_mixed_2", lambda n, r: pntu.p_crossflow_one_mixed(n, r, False)),
    *[(f"tema_e_{tp}_{s}", lambda n, r, tp=tp, s=s: pntu.p_tema_e(n, r, tp, side1=s))
      for tp in TUBE_PASSES for s in ("shell", "tube")],
    *[(f"{k}x_{name}", lambda n, r, k=k, f=f: pntu.p_shells_in_series(f(n / k, r), r, k))
      for k in (2, 3) for name, f in (("counterflow", pntu.p_counterflow),
                                      ("tema_e_2", pntu.p_tema_e),
                                      ("crossflow_unmixed", pntu.p_crossflow_unmixed))],
]


@pytest.mark.parametrize("name, func", ARRAY_P, ids=[a[0] for a in ARRAY_P])
def test_p_stays_within_its_physical_bounds(name, func):
    """0 <= P1 <= 1 and P1·R1 <= 1 (neither stream can change by more than the inlet difference:
    second law), and never NaN, over R from 0 to 10 and NTU up to ~3000 (batch call).
    P1 <= 1 is required exactly: a P of 1 + ulp is not a rounding nuisance downstream, it turns
    f_factor and the series formula into NaN (log of a negative number). P1·R1 <= 1 gets 2 eps
    for the rounding of the product."""
    rr, nn = np.meshgrid(BOUND_R, BOUND_NTU, indexing="ij")
    p = func(nn, rr)

    def where(mask, label, value):
        pts = ", ".join(f"(R={r:.4g}, NTU={n:.4g}, {label}={v:.2e})"
                        for r, n, v in zip(rr[mask][:4], nn[mask][:4], value[mask][:4]))
        return f"{pts} ... {int(mask.sum())} points"

    nan = np.isnan(p)
    assert not np.any(nan), "NaN at " + where(nan, "P", p)
    assert np.all(p >= 0.0)
    over = p > 1.0
    assert not np.any(over), "P > 1 at " + where(over, "P-1", p - 1.0)
    over = p * rr > 1.0 + 2 * EPS
    assert not np.any(over), "P·R > 1 at " + where(over, "PR-1", p * rr - 1.0)


# --------------------------------------------------------------------------------------------
# 5. Batch evaluation.
# --------------------------------------------------------------------------------------------
BATCH = [
    ("p_counterflow", pntu.p_counterflow),
    ("p_parallel_flow", pntu.p_parallel_flow),
    ("p_crossflow_unmixed", pntu.p_crossflow_unmixed),
    ("p_crossflow_one_mixed_1", lambda n, r: pntu.p_crossflow_one_mixed(n, r, True)),
    ("p_crossflow_one_mixed_2", lambda n, r: pntu.p_crossflow_one_mixed(n, r, False)),
    *[(f"p_tema_e_{tp}_{s}", lambda n, r, tp=tp, s=s: pntu.p_tema_e(n, r, tp, side1=s))
      for tp in TUBE_PASSES for s in ("shell", "tube")],
    *[(f"p_shells_in_series_{k}", lambda n, r, k=k: pntu.p_shells_in_series(pntu.p_tema_e(n / k, r), r, k))
      for k in SHELLS],
    ("f_factor", lambda n, r: pntu.f_factor(pntu.p_tema_e(n, r), r, n)),
    ("ntu_counterflow", lambda n, r: pntu.ntu_counterflow(n / (1.0 + n), r)),
    ("lmtd", lambda n, r: pntu.lmtd(n, r + 1e-3)),
]


@pytest.mark.parametrize("name, func", BATCH, ids=[b[0] for b in BATCH])
def test_batch_equals_scalar_calls(name, func):
    """Every function accepts numpy arrays (broadcast, batch axis first) and returns float64
    arrays equal, element by element, to scalar calls (bit for bit)."""
    rr, nn = np.meshgrid(np.array(R_GRID), np.array(NTU_GRID), indexing="ij")
    batch = func(nn, rr)
    assert isinstance(batch, np.ndarray) and batch.dtype == np.float64 and batch.shape == rr.shape
    scalar = np.array([[float(func(n, r)) for n in NTU_GRID] for r in R_GRID])
    np.testing.assert_array_equal(batch, scalar)
    # broadcasting a column of R against a row of NTU gives the same table
    np.testing.assert_array_equal(func(np.array(NTU_GRID)[None, :], np.array(R_GRID)[:, None]), scalar)


# --------------------------------------------------------------------------------------------
# 6. Figures for the record: largest disagreement with ht per relation.
# --------------------------------------------------------------------------------------------
def test_report_largest_disagreement():
    """Prints, per relation, the largest relative disagreement of hxtrain with ht 1.2 (ChEDL)
    over the well-conditioned subgrid (the figure the 1e-9 tests guard) and over every grid point
    ht can evaluate (ht's own cancellation included), and with the 200-digit textbook forms.
    Run with ``pytest -s`` to see the table. Asserts the well-conditioned figure <= 1e-9."""
    lines = [f"{'relation':22s} {'ht, conditioned':>16s} {'ht, all points':>15s} at (R, NTU)        {'200-digit':>10s}"]
    worst_conditioned = 0.0
    for rel in RELATIONS:
        cond, every, where, dec = 0.0, 0.0, None, 0.0
        for r, ntu in GRID:
            got = rel.hx(ntu, r)
            dec = max(dec, _rel(got, rel.dec(ntu, r)))
            expected = _ht_value(rel, ntu, r)
            if expected is None:
                continue
            d = _rel(got, expected)
            if d > every:
                every, where = d, (r, ntu)
            if rel.ht_arg_min(ntu, r) >= X_MIN_HT:
                cond = max(cond, d)
        worst_conditioned = max(worst_conditioned, cond)
        lines.append(f"{rel.name:22s} {cond:16.2e} {every:15.2e} {str(where):18s} {dec:10.2e}")
    for shells in SHELLS:
        cond, every, where = 0.0, 0.0, None
        for r, ntu in GRID:
            if r > 1.0 or (r == 1.0 and shells > 1):
                continue
            got = _hx_shells(ntu, r, shells)
            d = _rel(got, effectiveness_from_NTU(ntu, r, subtype="S&T", n_shell_tube=shells))
            if d > every:
                every, where = d, (r, ntu)
            p_one = float(pntu.p_tema_e(ntu / shells, r, 2))
            arg = ntu / shells if (shells == 1 or r == 1.0) else min(ntu / shells, p_one * abs(1 - r))
            if arg >= X_MIN_HT:
                cond = max(cond, d)
        worst_conditioned = max(worst_conditioned, cond)
        lines.append(f"{'S&T x' + str(shells):22s} {cond:16.2e} {every:15.2e} {str(where):18s}")
    for shells in SHELLS:
        worst, where = 0.0, None
        for r in FAKHERI_R:
            for ntu in FAKHERI_NTU:
                ref = float(dec_fakheri(dec_series(dec_tema_e_shell(_d(ntu) / shells, r, 2), r, shells), r, shells))
                if ref < 0.5 or r == 1.0:
                    continue
                p = _hx_shells(ntu, r, shells)
                f = float(pntu.f_factor(p, r, ntu))
                d = _rel(f, F_LMTD_Fakheri(200.0, 200.0 - 150 * p, 50.0, 50.0 + 150 * p * r, shells=shells))
                if d > worst:
                    worst, where = d, (r, ntu)
        worst_conditioned = max(worst_conditioned, worst)
        lines.append(f"{'F Fakheri x' + str(shells):22s} {worst:16.2e} {'':15s} {str(where):18s}")
    print("\nLargest relative disagreement of hxtrain.units.pntu\n" + "\n".join(lines))
    assert worst_conditioned <= REL_HT
