"""Outside-reference tests of ``hxtrain.units.pntu_shells`` (TEMA E 1-1 and 1-3, F, G, H, J, X
shells, crossflow with both fluids mixed, units in series in overall parallel flow).

References, named beside each check:

* **ht 1.2 (ChEDL)** ``ht.hx``: ``temperature_effectiveness_TEMA_E``, ``_TEMA_G``, ``_TEMA_H``,
  ``_TEMA_J``, ``temperature_effectiveness_basic``, ``temperature_effectiveness_plate`` and
  ``F_LMTD_Fakheri``. ht's side 1 is the shell fluid; the tube basis is compared through
  P_t(NTU_t, R_t) = P_s(NTU_t R_t, 1/R_t)/R_t (both sides' duty is the same).
  ht evaluates the published forms literally in double precision; where one of them loses
  digits (a difference of nearly equal terms), ht's float value is off by more than the
  tolerance itself. So every ht relation is also evaluated **in 60-digit decimal arithmetic
  from ht's own source** (:func:`decimal_ht`: each float literal read as a Decimal, ``exp`` and
  ``tanh`` decimal): hxtrain must agree with that to 1e-13 everywhere, and with ht's float
  value to 1e-9 wherever ht's float value is itself within 1e-10 of its decimal value (the
  points left out are counted and printed by :func:`test_report_largest_disagreement`).
* **The arrangements' differential equations** (shell fluid mixed over each cross section,
  the model behind the published forms), solved in the test by matrix exponentials of each
  zone and one linear system for the connections (:func:`solve_zone_network`): an independent
  check of the published forms and of the orientation each describes, and the check that the
  TEMA J shell gives the same P with one shell inlet as with two.
* Published formulas recalled (marked "from memory"): Kern's F factor of the 2-4 exchanger
  (Bowman, Mueller & Nagle 1940), Incropera's crossflow relations (Table 11.3).
* Identities: exchange of sides, R = 0, the NTU -> 0 expansion, continuity at removable
  singularities, the large-N limit of units in series in parallel flow.
"""

from __future__ import annotations

import ast
import inspect
import math
import textwrap
import warnings
from dataclasses import dataclass, field
from decimal import Decimal, localcontext
from typing import Callable

import numpy as np
import pytest
from hypothesis import given
from hypothesis import strategies as st
from ht import hx
from scipy.linalg import expm

from hxtrain.units import pntu
from hxtrain.units import pntu_shells as S

R_GRID = (0.01, 0.1, 0.25, 0.3, 0.5, 0.8, 1.0, 1.3, 2.0, 2.5, 3.3, 4.0, 5.0)
NTU_GRID = (1e-4, 1e-3, 0.01, 0.1, 0.5, 1.0, 2.0, 5.0, 10.0, 20.0, 50.0)
SIDES = ("shell", "tube")
REL_HT = 1e-9
"""Agreement required with ht's float value where that value is itself within HT_OWN of exact."""
HT_OWN = 1e-10
REL_DECIMAL = 1e-13
"""Agreement required with ht's formulas in 60-digit arithmetic. Measured while writing these
tests: <= 1.1e-15 for every relation here (a few ulp)."""
EPS = np.finfo(float).eps


# --------------------------------------------------------------------------------------------
# ht's published forms in 60-digit decimal arithmetic, from ht's own source.
# --------------------------------------------------------------------------------------------
class _DecimalLiterals(ast.NodeTransformer):
    def visit_Constant(self, node):
        if isinstance(node.value, (int, float)) and not isinstance(node.value, bool):
            call = ast.Call(ast.Name("_decimal_", ast.Load()), [ast.Constant(repr(node.value))], [])
            return ast.copy_location(call, node)
        return node


def _decimal_tanh(x):
    e = (-2 * x).exp()
    return (1 - e) / (1 + e)


_DECIMAL_NS = {"_decimal_": Decimal, "exp": lambda x: x.exp(), "tanh": _decimal_tanh}


def _load_decimal(name):
    tree = ast.parse(textwrap.dedent(inspect.getsource(getattr(hx, name))))
    func = tree.body[0]
    func.body = [_DecimalLiterals().visit(stmt) for stmt in func.body[1:]]  # docstring dropped
    ast.fix_missing_locations(tree)
    exec(compile(tree, f"<decimal {name}>", "exec"), _DECIMAL_NS)
    return _DECIMAL_NS[name]


for _name in ("P_NTU_Pp", "P_NTU_Pc", "temperature_effectiveness_basic", "temperature_effectiveness_TEMA_E",
              "temperature_effectiveness_TEMA_G", "temperature_effectiveness_TEMA_H",
              "temperature_effectiveness_TEMA_J", "temperature_effectiveness_plate"):
    _load_decimal(_name)


def decimal_ht(name, r1, ntu1, *args, **kwargs):
    """ht's ``name`` evaluated in 60-digit decimal arithmetic at the exact binary values of
    r1, ntu1 (ht's argument order)."""
    with localcontext() as context:
        context.prec = 60
        value = _DECIMAL_NS[name](Decimal(float(r1)), Decimal(float(ntu1)), *args, **kwargs)
        return +value


def float_ht(name, r1, ntu1, *args, **kwargs):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return getattr(hx, name)(r1, ntu1, *args, **kwargs)


def series_counterflow(p, r, n):
    """Shah & Sekulić sec. 3.6, textbook form: n units in overall counterflow."""
    if r == 1:
        return n * p / (1 + (n - 1) * p)
    x = ((1 - r * p) / (1 - p)) ** n
    return (x - 1) / (x - r)


# --------------------------------------------------------------------------------------------
# The relations, each with its ht reference on the shell basis.
# --------------------------------------------------------------------------------------------
@dataclass(frozen=True)
class Relation:
    name: str
    hx: Callable  # (ntu1, r1, side1) -> P1
    ht: Callable  # (r_s, ntu_s, evaluate) -> P_s, evaluate = float_ht or decimal_ht
    symmetric: bool = False
    monotone: bool = True
    singular: tuple = (1.0,)
    ht_function: str = ""


def _ht_call(name, *args, **kwargs):
    return lambda r, n, ev: ev(name, r, n, *args, **kwargs)


def _ht_f_shell(tube_passes):
    """F shell as two ht 1-(N/2) E shells in series in counterflow (the textbook series formula)."""
    def ref(r, n, ev):
        half = ev("temperature_effectiveness_TEMA_E", r, n / 2, Ntp=tube_passes // 2)
        return series_counterflow(half, Decimal(float(r)) if ev is decimal_ht else r, 2)
    return ref


RELATIONS = [
    Relation("tema_e_1_counterflow", lambda n, r, s: S.p_tema_e_one_tube_pass(n, r),
             _ht_call("temperature_effectiveness_TEMA_E", 1), symmetric=True, ht_function="TEMA_E(Ntp=1)"),
    Relation("tema_e_1_parallel", lambda n, r, s: S.p_tema_e_one_tube_pass(n, r, counterflow=False),
             _ht_call("temperature_effectiveness_basic", "parallel"), symmetric=True, singular=(),
             ht_function="basic(parallel)"),
    Relation("tema_e_3", lambda n, r, s: S.p_tema_e_three_tube_passes(n, r, s),
             _ht_call("temperature_effectiveness_TEMA_E", 3), monotone=False, ht_function="TEMA_E(Ntp=3)"),
    Relation("tema_f_4", lambda n, r, s: S.p_tema_f(n, r, 4, s), _ht_f_shell(4), symmetric=True,
             ht_function="2 x TEMA_E(Ntp=2)"),
    Relation("tema_f_8", lambda n, r, s: S.p_tema_f(n, r, 8, s), _ht_f_shell(8), monotone=False,
             ht_function="2 x TEMA_E(Ntp=4)"),  # the 1-4 E halves pass through a maximum
    Relation("tema_g_1", lambda n, r, s: S.p_tema_g(n, r, 1, s), _ht_call("temperature_effectiveness_TEMA_G", 1),
             symmetric=True, ht_function="TEMA_G(Ntp=1)"),
    Relation("tema_g_2", lambda n, r, s: S.p_tema_g(n, r, 2, s), _ht_call("temperature_effectiveness_TEMA_G", 2),
             singular=(1.0, 2.0), ht_function="TEMA_G(Ntp=2)"),
    Relation("tema_h_1", lambda n, r, s: S.p_tema_h(n, r, 1, s), _ht_call("temperature_effectiveness_TEMA_H", 1),
             singular=(1.0, 2.0), ht_function="TEMA_H(Ntp=1)"),
    Relation("tema_h_2", lambda n, r, s: S.p_tema_h(n, r, 2, s), _ht_call("temperature_effectiveness_TEMA_H", 2),
             singular=(1.0, 4.0), ht_function="TEMA_H(Ntp=2)"),
    Relation("tema_j_1", lambda n, r, s: S.p_tema_j(n, r, 1, s), _ht_call("temperature_effectiveness_TEMA_J", 1),
             singular=(1.0, 2.0), ht_function="TEMA_J(Ntp=1)"),
    Relation("tema_j_2", lambda n, r, s: S.p_tema_j(n, r, 2, s), _ht_call("temperature_effectiveness_TEMA_J", 2),
             monotone=False, ht_function="TEMA_J(Ntp=2)"),
    Relation("tema_j_4", lambda n, r, s: S.p_tema_j(n, r, 4, s), _ht_call("temperature_effectiveness_TEMA_J", 4),
             monotone=False, ht_function="TEMA_J(Ntp=4)"),
    Relation("tema_x_shell_mixed", lambda n, r, s: S.p_tema_x(n, r, s, shell_mixed=True),
             _ht_call("temperature_effectiveness_basic", "crossflow, mixed 1"), singular=(),
             ht_function="basic(crossflow, mixed 1)"),
    Relation("crossflow_both_mixed", lambda n, r, s: S.p_crossflow_both_mixed(n, r),
             _ht_call("temperature_effectiveness_basic", "crossflow, mixed 1&2"), symmetric=True, monotone=False,
             singular=(), ht_function="basic(crossflow, mixed 1&2)"),
]
CASES = [(rel, side) for rel in RELATIONS for side in SIDES]
CASE_IDS = [f"{rel.name}-{side}" for rel, side in CASES]


def reference(rel, side, r, n, ev):
    """ht's value on the shell basis, or converted to the tube basis."""
    if side == "shell":
        return rel.ht(r, n, ev)
    if ev is decimal_ht:
        with localcontext() as context:
            context.prec = 60
            rt, nt = Decimal(float(r)), Decimal(float(n))
            return rel.ht(1 / rt, nt * rt, ev) / rt
    return rel.ht(1.0 / r, n * r, ev) / r


def _rel(a, b):
    return abs(float(a) / float(b) - 1.0) if b != 0 else abs(float(a))


def _compare(rel, side, references=None):
    """Largest disagreement with ht's float value where ht's own value holds to HT_OWN (and
    where), with ht's float value at every point, with the 60-digit value, and the number of
    points where ht's float value is itself off by more than HT_OWN."""
    worst_float = worst_all = worst_decimal = 0.0
    where, skipped = None, 0
    for r in R_GRID:
        for n in NTU_GRID:
            got = float(rel.hx(n, r, side))
            exact = reference(rel, side, r, n, decimal_ht)
            floating = reference(rel, side, r, n, float_ht)
            worst_decimal = max(worst_decimal, _rel(got, exact))
            d = _rel(got, floating)
            worst_all = max(worst_all, d)
            if _rel(floating, exact) > HT_OWN:
                skipped += 1
            elif d > worst_float:
                worst_float, where = d, (r, n)
    return worst_float, where, worst_all, worst_decimal, skipped


@pytest.mark.parametrize("rel, side", CASES, ids=CASE_IDS)
def test_against_ht(rel, side):
    """ht.hx (function in ``rel.ht_function``), R from 0.01 to 5 (1 included), NTU from 1e-4 to
    50, shell and tube basis: 1e-9 relative to ht's float value, 1e-13 to its 60-digit value."""
    worst_float, where, _, worst_decimal, skipped = _compare(rel, side)
    assert worst_float <= REL_HT, (worst_float, where)
    assert worst_decimal <= REL_DECIMAL, worst_decimal
    assert skipped <= len(R_GRID) * len(NTU_GRID) // 20  # ht is trusted at >= 95 % of the grid


# --------------------------------------------------------------------------------------------
# The differential equations of each arrangement, solved exactly (matrix exponentials).
# --------------------------------------------------------------------------------------------
def solve_zone_network(streams, couplings, inlets, shell_out, tube_out):
    """Outlet temperatures of a network of 1-D zones, shell inlet at 1, tube inlet at 0.

    ``streams``: name -> (zone, C, direction +1/-1 along the zone's length 0..1); within a zone
    ``couplings`` (name_i, name_j, UA) exchange heat, C dT/dx = direction·UA (T_other - T);
    ``inlets``: name -> [(weight, source)], source "shell_in", "tube_in" or another stream
    (its outlet). Unknowns: every stream's temperature at x = 0; T(1) = expm(M_zone) T(0)."""
    names = list(streams)
    index = {name: i for i, name in enumerate(names)}
    transfer = np.zeros((len(names), len(names)))
    for zone in {z for z, _, _ in streams.values()}:
        members = [s for s in names if streams[s][0] == zone]
        m = np.zeros((len(members), len(members)))
        for a, b, ua in couplings:
            if a in members:
                for p, q in ((members.index(a), members.index(b)), (members.index(b), members.index(a))):
                    _, c, direction = streams[members[p]]
                    m[p, q] += direction * ua / c
                    m[p, p] -= direction * ua / c
        sub = expm(m)
        for p, sp in enumerate(members):
            for q, sq in enumerate(members):
                transfer[index[sp], index[sq]] = sub[p, q]
    unit = np.eye(len(names))

    def outlet(s):
        return transfer[index[s]] if streams[s][2] > 0 else unit[index[s]]

    def inlet(s):
        return unit[index[s]] if streams[s][2] > 0 else transfer[index[s]]

    matrix, rhs = np.zeros_like(transfer), np.zeros(len(names))
    for row, s in enumerate(names):
        matrix[row] = inlet(s)
        for weight, source in inlets[s]:
            if source == "shell_in":
                rhs[row] += weight
            elif source != "tube_in":
                matrix[row] -= weight * outlet(source)
    t0 = np.linalg.solve(matrix, rhs)
    return (sum(w * outlet(s) @ t0 for w, s in shell_out), sum(w * outlet(s) @ t0 for w, s in tube_out))


def _chain(streams, inlets, order):
    for i, name in enumerate(order):
        inlets[name] = [(1.0, "tube_in")] if i == 0 else [(1.0, order[i - 1])]


def model_tema_e(cs, ct, ua, passes, shell_direction):
    """1-N E shell, shell fluid mixed; the first tube pass runs in direction +1."""
    streams = {"s": ("z", cs, shell_direction)}
    inlets = {"s": [(1.0, "shell_in")]}
    order = [f"t{k}" for k in range(passes)]
    for k, name in enumerate(order):
        streams[name] = ("z", ct, 1 if k % 2 == 0 else -1)
    _chain(streams, inlets, order)
    couplings = [("s", t, ua / passes) for t in order]
    return streams, couplings, inlets, [(1.0, "s")], [(1.0, order[-1])]


def model_tema_j(cs, ct, ua, passes, shell_inlets):
    """J shell: halves L (x = 0 left end, 1 middle) and R (0 middle, 1 right end); one inlet at
    mid-length (flowing out to the ends) or two at the ends (flowing in)."""
    out = 1 if shell_inlets == 1 else -1
    streams = {"sL": ("L", cs / 2, -out), "sR": ("R", cs / 2, out)}
    inlets = {"sL": [(1.0, "shell_in")], "sR": [(1.0, "shell_in")]}
    order, couplings = [], []
    for k in range(passes):
        direction = 1 if k % 2 == 0 else -1
        for half in ("L", "R") if direction > 0 else ("R", "L"):
            name = f"t{k}{half}"
            streams[name] = (half, ct, direction)
            couplings.append(("s" + half, name, ua / passes / 2))
            order.append(name)
    _chain(streams, inlets, order)
    return streams, couplings, inlets, [(0.5, "sL"), (0.5, "sR")], [(1.0, order[-1])]


def _split_flow_shell(cs, segments):
    """Shell streams of G (2 segments) and H (4) shells: in each segment the shell fluid runs
    on the upper side of the longitudinal baffle away from its inlet nozzle and returns below."""
    streams, inlets = {}, {}
    for k in range(segments):
        up = -1 if k % 2 == 0 else 1
        streams[f"sU{k}"] = (f"U{k}", cs / segments, up)
        streams[f"sL{k}"] = (f"L{k}", cs / segments, -up)
        inlets[f"sU{k}"] = [(1.0, "shell_in")]
        inlets[f"sL{k}"] = [(1.0, f"sU{k}")]
    return streams, inlets, [(1.0 / segments, f"sL{k}") for k in range(segments)]


def model_split_flow(cs, ct, ua, segments, tube_passes):
    """G (segments=2) or H (4) shell. Two tube passes: the first below the baffle (where the
    shell fluid returns to its outlet), left to right. One pass: separate streams above and
    below the baffle."""
    streams, inlets, shell_out = _split_flow_shell(cs, segments)
    zone_ua = ua / (2 * segments)
    if tube_passes == 2:
        order = [f"t1{k}" for k in range(segments)] + [f"t2{k}" for k in reversed(range(segments))]
        for k in range(segments):
            streams[f"t1{k}"] = (f"L{k}", ct, 1)
            streams[f"t2{k}"] = (f"U{k}", ct, -1)
        _chain(streams, inlets, order)
        tube_out = [(1.0, order[-1])]
    else:
        for side in "UL":
            for k in range(segments):
                streams[f"t{side}{k}"] = (f"{side}{k}", ct / 2, 1)
                inlets[f"t{side}{k}"] = [(1.0, "tube_in")] if k == 0 else [(1.0, f"t{side}{k - 1}")]
        tube_out = [(0.5, f"tU{segments - 1}"), (0.5, f"tL{segments - 1}")]
    couplings = [("s" + streams[t][0], t, zone_ua) for t in streams if t.startswith("t")]
    return streams, couplings, inlets, shell_out, tube_out


MODELS = {
    "tema_e_3 (shell against pass 1)": (lambda n, r, s: S.p_tema_e_three_tube_passes(n, r, s),
                                        lambda cs, ct, ua: model_tema_e(cs, ct, ua, 3, -1)),
    **{f"tema_g_{tp}": (lambda n, r, s, tp=tp: S.p_tema_g(n, r, tp, s),
                        lambda cs, ct, ua, tp=tp: model_split_flow(cs, ct, ua, 2, tp)) for tp in (1, 2)},
    **{f"tema_h_{tp}": (lambda n, r, s, tp=tp: S.p_tema_h(n, r, tp, s),
                        lambda cs, ct, ua, tp=tp: model_split_flow(cs, ct, ua, 4, tp)) for tp in (1, 2)},
    **{f"tema_j_{tp}_{k}_inlets": (lambda n, r, s, tp=tp: S.p_tema_j(n, r, tp, s),
                                   lambda cs, ct, ua, tp=tp, k=k: model_tema_j(cs, ct, ua, tp, k))
       for tp in (1, 2, 4) for k in (1, 2)},
}
MODEL_POINTS = [(r, n) for r in (0.3, 1.0, 2.5) for n in (0.5, 2.0, 5.0)]
REL_MODEL = 1e-11
"""The matrix exponentials and the linear solve carry their own round-off (measured <= 1.5e-13,
J with two tube passes)."""


def _model_disagreement(name):
    func, build = MODELS[name]
    worst = 0.0
    for r, n in MODEL_POINTS:
        # shell basis: C_s = 1, C_t = 1/R_s, UA = NTU_s; the tube basis from the same solution
        t_shell, t_tube = solve_zone_network(*build(1.0, 1.0 / r, n))
        p_shell, p_tube = 1.0 - t_shell, t_tube
        assert p_shell == pytest.approx(p_tube / r, rel=1e-12)  # the model's own energy balance
        worst = max(worst, _rel(func(n, r, "shell"), p_shell), _rel(func(n * r, 1.0 / r, "tube"), p_tube))
    return worst


@pytest.mark.parametrize("name", list(MODELS))
def test_solves_the_differential_equations_of_the_arrangement(name):
    """Each relation equals the solution of its arrangement's differential equations (shell
    fluid mixed over each cross section) on both bases, 1e-11. For TEMA J this is also the check
    that one shell inlet and two shell inlets give the same P (flow reversal, Pignotti 1984,
    from memory); for the 1-3 E shell, that the published form is the one with the shell fluid
    against the first tube pass; for G and H, that the first of two tube passes lies where the
    shell fluid returns."""
    assert _model_disagreement(name) <= REL_MODEL


def test_the_orientation_matters_in_the_models():
    """The model does tell the orientations apart (the check above can fail): the 1-3 E shell
    with the shell fluid along the first pass is worse, by more than 1e-3 at NTU 2, R 1."""
    against = solve_zone_network(*model_tema_e(1.0, 1.0, 2.0, 3, -1))[0]
    along = solve_zone_network(*model_tema_e(1.0, 1.0, 2.0, 3, +1))[0]
    assert (1.0 - against) - (1.0 - along) > 1e-3


# --------------------------------------------------------------------------------------------
# F shell, X shell, units in series in parallel flow: published formulas.
# --------------------------------------------------------------------------------------------
def kern_f_2_4(p, r):
    """F of the 2-4 exchanger (Kern 1950, after Bowman, Mueller & Nagle 1940; from memory),
    P and R on either basis (R != 1)."""
    s = math.sqrt(r * r + 1.0)
    w = 2.0 / p - 1.0 - r + 2.0 / p * math.sqrt((1.0 - p) * (1.0 - p * r))
    return s / (2.0 * (r - 1.0)) * math.log((1.0 - p) / (1.0 - p * r)) / math.log((w + s) / (w - s))


def _f_points():
    for r in R_GRID:
        for n in NTU_GRID:
            p = float(S.p_tema_f(n, r, 4))
            f = float(pntu.f_factor(p, r, n))
            if r != 1.0 and f >= 0.5 and n >= 0.01:  # F below 0.5 is far past any design
                yield r, n, p, f


def test_tema_f_against_kern_two_four_formula():
    """F shell with 4 tube passes (the 2-4 exchanger): its F factor equals Kern's closed form
    (from memory), 1e-10, R != 1, F >= 0.5, NTU >= 0.01 (the log form loses digits below)."""
    for r, n, p, f in _f_points():
        assert f == pytest.approx(kern_f_2_4(p, r), rel=1e-10), (r, n)


def test_tema_f_against_ht_fakheri_two_shells():
    """F shell with 4 tube passes: F equals ht.hx.F_LMTD_Fakheri(shells=2) (two 1-2 shells in
    series; Fakheri 2003), 1e-9, F >= 0.5."""
    for r, n, p, f in _f_points():
        assert f == pytest.approx(hx.F_LMTD_Fakheri(1.0, 1.0 - p, 0.0, p * r, shells=2), rel=1e-9), (r, n)


def test_tema_f_with_two_tube_passes_is_counterflow():
    """Two shell passes, one tube pass in each: pure counterflow (ht basic 'counterflow'), 1e-9
    (ht's literal form carries ~2e-12 at NTU = 1e-4)."""
    for r in R_GRID:
        for n in NTU_GRID:
            expected = float_ht("temperature_effectiveness_basic", r, n, "counterflow")
            for side in SIDES:
                assert float(S.p_tema_f(n, r, 2, side)) == pytest.approx(expected, rel=1e-9), (r, n)


def test_tema_x_shell_mixed_against_incropera():
    """X shell, shell fluid mixed, tubes unmixed: crossflow with one fluid mixed, Incropera
    Table 11.3 (from memory) on the C_min basis, C_r = C_min/C_max <= 1:
    C_max mixed: eps = [1 - exp(-C_r(1 - exp(-NTU)))]/C_r; C_min mixed:
    eps = 1 - exp(-[1 - exp(-C_r NTU)]/C_r). 1e-12."""
    for cr in (0.01, 0.25, 0.5, 0.9, 1.0):
        for n in NTU_GRID:
            shell_is_cmax = -math.expm1(-cr * -math.expm1(-n)) / cr
            shell_is_cmin = -math.expm1(-(-math.expm1(-cr * n)) / cr)
            assert float(S.p_tema_x(n, cr, "tube", shell_mixed=True)) == pytest.approx(shell_is_cmax, rel=1e-12)
            assert float(S.p_tema_x(n, cr, "shell", shell_mixed=True)) == pytest.approx(shell_is_cmin, rel=1e-12)


def test_tema_x_shell_unmixed_against_ht_exact_crossflow():
    """X shell, shell fluid unmixed: crossflow with both fluids unmixed, ht basic 'crossflow'
    (the exact integral of Triboix 2009, by quadrature), 1e-7 (quadrature tolerance), NTU >= 0.01
    and R >= 0.1 (where ht's integral converges)."""
    for r in R_GRID[1:]:
        for n in NTU_GRID[2:]:
            expected = float_ht("temperature_effectiveness_basic", r, n, "crossflow")
            for side in SIDES:
                assert float(S.p_tema_x(n, r, side)) == pytest.approx(expected, rel=1e-7), (r, n, side)


def test_series_parallel_flow_against_ht_plate_forms():
    """Units in series in overall parallel flow: two counterflow units are ht's 2-2 plate with
    overall parallel flow and counterflow channels, two 1-2 plate units ht's 2-4 plate with
    overall parallel flow (Kandlikar & Shah 1989 through ht.hx.temperature_effectiveness_plate);
    1e-9, and 1e-13 against their 60-digit values."""
    from hxtrain.units.pntu_plates import p_plate_1_2
    for r in R_GRID:
        for n in NTU_GRID:
            two_two = S.p_shells_in_series_parallel_flow(pntu.p_counterflow(n / 2, r), r, 2)
            two_four = S.p_shells_in_series_parallel_flow(p_plate_1_2(n / 2, r, 1), r, 2)
            for got, args in ((two_two, (2, 2, False, True)), (two_four, (2, 4, False))):
                exact = decimal_ht("temperature_effectiveness_plate", r, n, *args)
                assert _rel(got, exact) <= REL_DECIMAL, (r, n, args)
                floating = float_ht("temperature_effectiveness_plate", r, n, *args)
                if _rel(floating, exact) <= HT_OWN:
                    assert _rel(got, floating) <= REL_HT, (r, n, args)


def test_series_parallel_flow_tends_to_parallel_flow():
    """N units in series in overall parallel flow tend to one parallel-flow exchanger,
    (1 - exp(-NTU(1+R)))/(1+R) (ht basic 'parallel'), as N -> inf: each unit's P is
    x - (1+R)x²/2 + O(x³) with x = NTU/N whatever the unit, so N ln(1 - (1+R)P_unit) =
    -(1+R)NTU + O(N^-2) and the error falls as 1/N². Checked with counterflow and 1-2 E units:
    error below 1e-6 at N = 1000 and 50 times smaller at N = 10000."""
    for r in (0.1, 1.0, 3.0):
        for n in (0.5, 2.0, 5.0):
            limit = float_ht("temperature_effectiveness_basic", r, n, "parallel")
            for unit in (pntu.p_counterflow, pntu.p_tema_e):
                errors = [abs(float(S.p_shells_in_series_parallel_flow(unit(n / k, r), r, k)) - limit)
                          for k in (1000, 10000)]
                assert errors[0] < 1e-6 and errors[1] < errors[0] / 50.0 + 1e-14, (r, n, errors)


def test_series_parallel_flow_of_one_unit_is_the_unit():
    p = np.linspace(0.0, 0.9, 10)
    np.testing.assert_array_equal(S.p_shells_in_series_parallel_flow(p, 1.0, 1), p)


# --------------------------------------------------------------------------------------------
# Invariants of every relation.
# --------------------------------------------------------------------------------------------
ALL = [(rel.name, rel.hx) for rel in RELATIONS] + [
    ("tema_x_shell_unmixed", lambda n, r, s: S.p_tema_x(n, r, s)),
    ("tema_f_2", lambda n, r, s: S.p_tema_f(n, r, 2, s)),
    ("series_parallel_3_tema_e", lambda n, r, s: S.p_shells_in_series_parallel_flow(pntu.p_tema_e(n / 3, r), r, 3)),
]
ALL_CASES = [(name, func, side) for name, func in ALL for side in SIDES]
ALL_IDS = [f"{name}-{side}" for name, func, side in ALL_CASES]
BOUND_R = np.concatenate([[0.0], np.logspace(-6, 1, 36), [1.0, 2.0, 4.0]])
BOUND_NTU = np.concatenate([[0.0], np.logspace(-8, 8, 81)])


@pytest.mark.parametrize("name, func, side", ALL_CASES, ids=ALL_IDS)
def test_p_within_physical_bounds_and_finite(name, func, side):
    """0 <= P1 <= min(1, 1/R1) (second law), never NaN, R from 0 to 10, NTU from 0 to 1e8,
    one batch call; float64 out with the batch's shape."""
    rr, nn = np.meshgrid(BOUND_R, BOUND_NTU, indexing="ij")
    p = func(nn, rr, side)
    assert isinstance(p, np.ndarray) and p.dtype == np.float64 and p.shape == rr.shape
    assert not np.any(np.isnan(p))
    assert np.all(p >= 0.0) and np.all(p <= 1.0)
    assert np.all(p * rr <= 1.0 + 2 * EPS)


MONO_NTU = np.logspace(-4, 8, 121)


@pytest.mark.parametrize("rel", RELATIONS, ids=[r.name for r in RELATIONS])
def test_monotone_in_ntu_or_as_published(rel):
    """Monotone relations: P1 non-decreasing in NTU1 up to 1e8, R from 0 to 5, both bases
    (round-off of 8 eps relative allowed on the plateau: measured 4.8e-16 for the F shell, whose
    two parts each carry an ulp or two). The others (1-3 E, F of two 1-4 halves, J with 2 and 4
    passes, crossflow both mixed) fall somewhere on NTU <= 50: each fall found is confirmed by
    ht's form in 60 digits."""
    for side in SIDES:
        for r in (0.0, 0.01, 0.1, 0.5, 1.0, 2.0, 5.0):
            p = rel.hx(MONO_NTU, r, side)
            steps = np.diff(p)
            if rel.monotone:
                assert np.all(steps >= -8 * EPS * p[1:]), (side, r, MONO_NTU[1:][steps < 0][:3])
    if not rel.monotone:
        falls = []
        for side in SIDES:
            for r in R_GRID:
                vals = [float(rel.hx(n, r, side)) for n in NTU_GRID]
                for i in range(len(NTU_GRID) - 1):
                    if vals[i + 1] < vals[i] * (1.0 - 1e-9):
                        exact = [reference(rel, side, r, NTU_GRID[j], decimal_ht) for j in (i, i + 1)]
                        assert exact[1] < exact[0], (side, r, NTU_GRID[i])
                        falls.append((side, r, NTU_GRID[i]))
        assert falls  # the relation does fall somewhere, as published


@pytest.mark.parametrize("name, func, side", ALL_CASES, ids=ALL_IDS)
def test_side_exchange(name, func, side):
    """Same duty from either side: P1(NTU1, R1)·R1 = P2(NTU1·R1, 1/R1) with the other side as
    side 1 (identity), 1e-12; the symmetric relations give it with the same side flag too."""
    other = "tube" if side == "shell" else "shell"
    symmetric = name in {rel.name for rel in RELATIONS if rel.symmetric} | {"tema_x_shell_unmixed", "tema_f_2"}
    for r in (0.01, 0.3, 1.0, 2.0, 7.0):
        for n in (1e-6, 0.1, 1.0, 10.0, 1e3):
            p1 = float(func(n, r, side))
            assert float(func(n * r, 1.0 / r, other)) == pytest.approx(p1 * r, rel=1e-12), (r, n)
            if symmetric:
                assert float(func(n * r, 1.0 / r, side)) == pytest.approx(p1 * r, rel=1e-12), (r, n)


def _singular(name):
    for rel in RELATIONS:
        if rel.name == name:
            return rel.singular or (1.0,)
    return (1.0,)


@pytest.mark.parametrize("name, func, side", ALL_CASES, ids=ALL_IDS)
def test_continuous_at_removable_singularities(name, func, side):
    """No 0/0 where the published form has one (R = 1, and R = 2 or 4 where the form divides
    by 2 - R or 4 - R, on either basis, so 1/2 and 1/4 too): P at R0(1 ± 1e-7) within 1e-6 of
    P at R0, NTU from 1e-6 to 1e8."""
    points = set()
    for r0 in _singular(name):
        points |= {r0, 1.0 / r0}
    for r0 in sorted(points):
        for n in (1e-6, 0.01, 1.0, 10.0, 100.0, 1e4, 1e8):
            at = float(func(n, r0, side))
            for r in (r0 * (1 - 1e-7), r0 * (1 + 1e-7)):
                assert float(func(n, r, side)) == pytest.approx(at, rel=1e-6), (r0, n)


@pytest.mark.parametrize("name, func, side", ALL_CASES, ids=ALL_IDS)
def test_small_ntu_expansion(name, func, side):
    """NTU1 -> 0: P1 = NTU1 - (1 + R1)NTU1²/2 + O(NTU1³), the expansion of counterflow and
    parallel flow alike (to second order only each fluid's mean upstream path fraction, 1/2,
    enters, whatever the arrangement). Error within (1 + R1)²NTU1², NTU1 = 1e-6 and 1e-3."""
    for r in (0.0, 0.01, 0.5, 1.0, 2.0, 5.0):
        for n in (1e-6, 1e-3):
            p = float(func(n, r, side))
            assert abs(p / n - (1.0 - (1.0 + r) * n / 2.0)) <= (1.0 + r) ** 2 * n * n + 4 * EPS, (r, n)


@pytest.mark.parametrize("name, func, side", ALL_CASES, ids=ALL_IDS)
def test_other_side_isothermal(name, func, side):
    """R1 = 0 (side 2 isothermal): P1 = 1 - exp(-NTU1) for every arrangement, 1e-14, NTU from
    1e-8 to 1e8."""
    ntu = np.logspace(-8, 8, 33)
    np.testing.assert_allclose(func(ntu, 0.0, side), -np.expm1(-ntu), rtol=1e-14, atol=0.0)


@pytest.mark.parametrize("name, func, side", ALL_CASES, ids=ALL_IDS)
def test_batch_equals_scalar_calls(name, func, side):
    """Arrays in, float64 arrays out, element by element equal to scalar calls, broadcasting."""
    rr, nn = np.meshgrid(np.array(R_GRID), np.array(NTU_GRID), indexing="ij")
    batch = func(nn, rr, side)
    scalar = np.array([[float(func(n, r, side)) for n in NTU_GRID] for r in R_GRID])
    np.testing.assert_array_equal(batch, scalar)
    np.testing.assert_array_equal(func(np.array(NTU_GRID)[None, :], np.array(R_GRID)[:, None], side), scalar)


@given(ntu=st.floats(1e-9, 1e8), r=st.floats(0.0, 20.0, allow_subnormal=False), side=st.sampled_from(SIDES))
def test_bounds_and_side_exchange_property(ntu, r, side):
    """Random NTU and R (hypothesis): every relation within its bounds, and the same duty from
    either side."""
    other = "tube" if side == "shell" else "shell"
    for name, func in ALL:
        p = float(func(ntu, r, side))
        assert 0.0 <= p <= 1.0 and p * r <= 1.0 + 2 * EPS, name
        if r > 1e-3:
            assert float(func(ntu * r, 1.0 / r, other)) == pytest.approx(p * r, rel=1e-11), name


def test_bad_arguments_are_refused():
    with pytest.raises(ValueError):
        S.p_tema_g(1.0, 0.5, side1="hot")
    for func, passes in ((S.p_tema_g, 3), (S.p_tema_h, 4), (S.p_tema_j, 3), (S.p_tema_f, 6), (S.p_tema_f, 1)):
        with pytest.raises(ValueError):
            func(1.0, 0.5, passes)
    with pytest.raises(ValueError):
        S.p_tema_x(1.0, 0.5, side1="cold")


def test_arrangement_table():
    """Every entry: a lower_snake_case name, a function of this module taking (ntu1, r1) and
    returning float64 arrays, a description naming its arguments, a published source."""
    assert {"tema_e_one_tube_pass", "tema_e_three_tube_passes", "tema_f", "tema_g", "tema_h", "tema_j_one_inlet",
            "tema_j_two_inlets", "tema_x", "crossflow_both_mixed"} <= set(S.ARRANGEMENT)
    for name, (func, description, source) in S.ARRANGEMENT.items():
        assert name == name.lower() and " " not in name
        assert func.__name__ in S.__all__
        out = func(np.array([0.5, 2.0]), np.array([0.3, 1.0]))
        assert out.dtype == np.float64 and out.shape == (2,)
        assert "ntu1" in description and source


# --------------------------------------------------------------------------------------------
# Figures for the record.
# --------------------------------------------------------------------------------------------
def test_report_largest_disagreement():
    """Prints, per relation and basis, the largest relative disagreement with ht's float value
    where ht holds to 1e-10 of its own 60-digit value ('ht float'), the number of grid points
    where it does not ('ht off'), the largest disagreement with ht's float value over every
    point ('all points', ht's own rounding included), with ht's forms in 60 digits, and with the
    differential equations.
    Run with ``pytest -s``."""
    lines = [f"{'relation':22s} {'basis':5s} {'ht float':>9s} {'at (R, NTU)':15s} {'ht off':>6s} "
             f"{'all points':>10s} {'60-digit':>9s}"]
    for rel, side in CASES:
        worst_float, where, worst_all, worst_decimal, skipped = _compare(rel, side)
        lines.append(f"{rel.name:22s} {side:5s} {worst_float:9.1e} {str(where):15s} {skipped:6d} "
                     f"{worst_all:10.1e} {worst_decimal:9.1e}")
        assert worst_float <= REL_HT and worst_decimal <= REL_DECIMAL
    lines.append(f"\n{'differential equations':32s} largest disagreement (R 0.3-2.5, NTU 0.5-5, both bases)")
    for name in MODELS:
        worst = _model_disagreement(name)
        lines.append(f"{name:32s} {worst:9.1e}")
        assert worst <= REL_MODEL
    worst_kern = max(_rel(f, kern_f_2_4(p, r)) for r, n, p, f in _f_points())
    worst_fakheri = max(_rel(f, hx.F_LMTD_Fakheri(1.0, 1.0 - p, 0.0, p * r, shells=2)) for r, n, p, f in _f_points())
    lines.append(f"{'tema_f_4 F vs Kern 2-4':32s} {worst_kern:9.1e}")
    lines.append(f"{'tema_f_4 F vs ht Fakheri':32s} {worst_fakheri:9.1e}")
    print("\nLargest relative disagreement of hxtrain.units.pntu_shells\n" + "\n".join(lines))
