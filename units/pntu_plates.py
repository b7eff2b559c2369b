r"""P–NTU relations of plate heat exchangers by the number of passes on each side.

Conventions are those of :mod:`.pntu`: side 1 is the basis, ``ntu1 = UA/C1``, ``r1 = C1/C2``,
``P1 = (T1_in - T1_out)/(T1_in - T2_in)``. Where the two sides have different numbers of
passes, ``side1_passes`` says which side is side 1 (the side with that many passes).

The model is that of Kandlikar & Shah [1]_ [2]_: a very large number of channels (end-plate
effects neglected), each pass a group of channels with its fluid evenly distributed and fully
mixed between passes, uniform U. A pass of one fluid then faces whole passes, or equal shares
of passes, of the other: the exchanger is a network of 1-1 zones in counterflow or parallel
flow, and every relation below combines the zones' effectiveness. As in :mod:`.pntu_shells`,
each is evaluated as the basis-free ratio Φ = P1/NTU1 = P2/NTU2 in the two sides' NTUs, with
the zones' complements 1 - P written without cancellation, so that one expression serves
both bases, every R1 >= 0 (R1 = 1 and R1 = 0 included), NTU1 -> 0 and NTU1 = 1e8.

In overall parallel flow P1 passes through a maximum at a finite NTU1 and then falls for the
2-3 and 2-4 arrangements and for equal even numbers of passes with counterflow channels (2-2,
4-4); with an odd number (3-3) it rises all the way. In overall counterflow it always rises.

References
----------
.. [1] Kandlikar, S. G., and R. K. Shah. "Multipass plate heat exchangers: effectiveness-NTU
       results and guidelines for selecting pass arrangements." J. Heat Transfer 111 (1989)
       300-313 (from memory).
.. [2] Kandlikar, S. G., and R. K. Shah. "Asymptotic effectiveness-NTU formulas for multipass
       plate heat exchangers." J. Heat Transfer 111 (1989) 314-321 (from memory).
.. [3] Shah, R. K., and D. P. Sekulić. Fundamentals of Heat Exchanger Design. Wiley, 2003,
       section 3.6 and Table 3.6 (plate exchanger formulas; from memory).
"""

from __future__ import annotations

from functools import partial

import numpy as np

from . import pntu
from .arrays import as_arrays
from .pntu_shells import _counterflow_zone, _finish, _ntus, _parallel_zone, p_shells_in_series_parallel_flow

__all__ = [
    "p_plate_1_1",
    "p_plate_1_2",
    "p_plate_1_3",
    "p_plate_1_4",
    "p_plate_equal_passes",
    "p_plate_2_3",
    "p_plate_2_4",
    "ARRANGEMENT",
]


def p_plate_1_1(ntu1, r1, counterflow=True):
    r"""Temperature effectiveness P1 of a plate exchanger with one pass on each side.

    Counterflow or parallel flow in the channels (symmetric in the sides) [1]_:

    .. math:: P_1 = \frac{1 - e^{-NTU_1(1-R_1)}}{1 - R_1e^{-NTU_1(1-R_1)}}\quad\text{or}\quad
              \frac{1 - e^{-NTU_1(1+R_1)}}{1 + R_1}

    Valid for ``ntu1 >= 0``, ``r1 >= 0``; :func:`.pntu.p_counterflow`, :func:`.pntu.p_parallel_flow`.

    >>> round(float(p_plate_1_1(1.0, 1.0)), 12)
    0.5
    """
    return pntu.p_counterflow(ntu1, r1) if counterflow else pntu.p_parallel_flow(ntu1, r1)


def _zones(a, b):
    """Φ and the complement on the b side (1 - bΦ) of a parallel and of a counterflow zone."""
    phi_p, _, comp_p = _parallel_zone(a, b)
    phi_c, _, comp_c = _counterflow_zone(a, b)
    return phi_p, comp_p, phi_c, comp_c


def p_plate_1_2(ntu1, r1, side1_passes=1):
    r"""Temperature effectiveness P1 of a plate exchanger with one pass on one side and two on
    the other.

    Half of the one-pass fluid's channels face each pass of the other fluid, one half in
    parallel flow, one in counterflow (all four channel arrangements give the same result with
    many channels) [1]_ [3]_. On the one-pass side's basis, :math:`A = P_p(NTU_1, R_1/2)`,
    :math:`B = P_c(NTU_1, R_1/2)`:

    .. math:: P_1 = \tfrac12\,(A + B - ABR_1/2)

    evaluated as :math:`\Phi = [\Phi_p + \Phi_c(1 - b\Phi_p/2)]/2` (a, b the NTUs of the
    one-pass and two-pass sides; the zones are at (a, b/2)). ``side1_passes`` 1 or 2.
    Valid for ``ntu1 >= 0``, ``r1 >= 0``.

    >>> round(float(p_plate_1_2(1.0, 1.0 / 3.0)), 12)
    0.569908519365
    """
    a, b = _ntus(ntu1, r1, side1_passes, sides=(1, 2))
    phi_p, comp_p, phi_c, _ = _zones(a, b / 2.0)
    return _finish(ntu1, r1, 0.5 * (phi_p + phi_c * comp_p))


def p_plate_1_3(ntu1, r1, side1_passes=1, end_passes_counterflow=True):
    r"""Temperature effectiveness P1 of a plate exchanger with one pass on one side and three on
    the other.

    A third of the one-pass fluid's channels faces each pass of the other fluid; the two end
    passes have the same direction, in counterflow (``end_passes_counterflow=True``) or in
    parallel flow with the one-pass fluid [1]_ [3]_. On the one-pass basis, with
    :math:`A = P_p(NTU_1, R_1/3)`, :math:`B = P_c(NTU_1, R_1/3)`:

    .. math:: P_1 = \tfrac13\Big[A + B\Big(1 - \frac{R_1A}{3}\Big)\Big(2 - \frac{R_1B}{3}\Big)\Big]
              \quad\text{or}\quad
              \tfrac13\Big[B + A\Big(1 - \frac{R_1B}{3}\Big)\Big(2 - \frac{R_1A}{3}\Big)\Big]

    evaluated as :math:`\Phi = [\Phi_p q_c^2 + \Phi_c(1 + q_c)]/3` (or with p and c exchanged),
    :math:`q = 1 - b\Phi/3` the complement of a zone's three-pass-side P: terms of one sign.
    ``side1_passes`` 1 or 3. Valid for ``ntu1 >= 0``, ``r1 >= 0``.

    >>> round(float(p_plate_1_3(1.0, 1.0 / 3.0, side1_passes=3)), 12)  # side 1: three passes
    0.574351435272
    """
    a, b = _ntus(ntu1, r1, side1_passes, sides=(1, 3))
    phi_p, comp_p, phi_c, comp_c = _zones(a, b / 3.0)
    if end_passes_counterflow:
        phi = (phi_p * comp_c**2 + phi_c * (1.0 + comp_c)) / 3.0
    else:
        phi = (phi_c * comp_p**2 + phi_p * (1.0 + comp_p)) / 3.0
    return _finish(ntu1, r1, phi)


def p_plate_1_4(ntu1, r1, side1_passes=1):
    r"""Temperature effectiveness P1 of a plate exchanger with one pass on one side and four on
    the other (all four channel arrangements alike) [1]_ [3]_. On the one-pass basis, with
    :math:`A = P_p(NTU_1, R_1/4)`, :math:`B = P_c(NTU_1, R_1/4)`:

    .. math:: P_1 = \frac{1 - Q}{R_1}, \qquad Q = \Big(1 - \frac{AR_1}{4}\Big)^2
              \Big(1 - \frac{BR_1}{4}\Big)^2

    evaluated as :math:`\Phi = [\Phi_c + \Phi_p q_c](1 + q_cq_p)/4` (from
    :math:`1 - Q = (1 - \sqrt Q)(1 + \sqrt Q)`; no 0/0 at R1 = 0). ``side1_passes`` 1 or 4.
    Valid for ``ntu1 >= 0``, ``r1 >= 0``.

    >>> round(float(p_plate_1_4(1.0, 1.0)), 12)
    0.468452321828
    """
    a, b = _ntus(ntu1, r1, side1_passes, sides=(1, 4))
    phi_p, comp_p, phi_c, comp_c = _zones(a, b / 4.0)
    return _finish(ntu1, r1, 0.25 * (phi_c + phi_p * comp_c) * (1.0 + comp_c * comp_p))


def _in_series(p_unit, r1, units, overall_counterflow):
    if overall_counterflow:
        return pntu.p_shells_in_series(p_unit, r1, units)
    return p_shells_in_series_parallel_flow(p_unit, r1, units)


def p_plate_equal_passes(ntu1, r1, passes, overall_counterflow=True, channels_counterflow=True):
    r"""Temperature effectiveness P1 of a plate exchanger with the same number N of passes on
    both sides (2-2, 3-3, 4-4, ...).

    Each pass of one fluid faces exactly one pass of the other: N 1-1 units, counterflow or
    parallel flow in the channels (``channels_counterflow``), joined in overall counterflow or
    parallel flow (``overall_counterflow``) [1]_ [3]_. With :math:`P_u` one unit's P1 at
    :math:`NTU_1/N`:

    .. math:: P_1 = \frac{X^N - 1}{X^N - R_1},\; X = \frac{1 - R_1P_u}{1 - P_u}
              \quad\text{or}\quad P_1 = \frac{1 - [1 - (1+R_1)P_u]^N}{1 + R_1}

    For N = 2 these are Kandlikar & Shah's 2-2 formulas, e.g. overall counterflow with
    parallel-flow channels :math:`P_1 = [2A - A^2(1+R_1)]/(1 - R_1A^2)`. Counterflow throughout
    is pure counterflow, parallel flow throughout pure parallel flow. Symmetric in the sides.
    Valid for ``ntu1 >= 0``, ``r1 >= 0``, ``passes >= 1``.

    >>> round(float(p_plate_equal_passes(1.0, 1.0, 2, channels_counterflow=False)), 12)
    0.480312770407
    """
    ntu1, r1 = as_arrays(ntu1, r1)
    if passes < 1:
        raise ValueError(f"passes must be >= 1, got {passes}")
    unit = p_plate_1_1(ntu1 / passes, r1, counterflow=channels_counterflow)
    return _in_series(unit, r1, passes, overall_counterflow)


def p_plate_2_3(ntu1, r1, side1_passes=2, overall_counterflow=True):
    r"""Temperature effectiveness P1 of a plate exchanger with two passes on one side and three
    on the other [1]_ [3]_.

    Each two-pass-side pass faces one whole pass and half of the middle pass of the other side:
    four zones at :math:`(NTU_1/2,\,2R_1/3)` on the two-pass basis, alternately in counterflow
    and parallel flow, the two-pass fluid split 2:1 between them and the middle pass 1:1. The
    published forms (overall parallel flow, :math:`D = 2R_1/3`, :math:`A = P_p(NTU_1/2, D)`,
    :math:`B = P_c(NTU_1/2, D)`)

    .. math:: P_1 = A + B - \Big(\frac29 + \frac D3\Big)(A^2 + B^2) - \Big(\frac59 +
              \frac{4D}{3}\Big)AB + \frac{D(1+D)AB(A+B)}{3} - \frac{D^2A^2B^2}{9}

    and, in overall counterflow, a rational function of :math:`G = P_c(NTU_1/2, D)`,
    :math:`H = P_p(NTU_1/2, D)` (dividing by G and H), are evaluated here from the zone network
    (derived here): with :math:`p_z`, :math:`q_z` the P of zone z on the two- and three-pass
    sides, zones 1, 2 on the first pass of the two-pass side, the overall counterflow is

    .. math:: P_1 = X + (1 - X)\Big[\frac{p_3(1 - q_4)}{3} + \frac{2p_4}{3}\Big], \qquad
              X = \frac{(1 - q_4)[\frac23 p_1(1 - \frac{q_2 + q_3}{2}) + \frac13 p_2]}
              {\frac23[(1 - p_1) + p_1(1 - k)] + \frac13[(1 - p_2) + p_2(1 - q_4)]}

    :math:`1 - k = (1 - q_4)(1 - q_3/2) + q_4q_2/2`: sums of terms of one sign. ``side1_passes``
    2 or 3. Valid for ``ntu1 >= 0``, ``r1 >= 0``.

    >>> round(float(p_plate_2_3(1.0, 1.0 / 3.0)), 12)
    0.581446149109
    """
    a, b = _ntus(ntu1, r1, side1_passes, sides=(2, 3))
    phi_p, comp_p, phi_c, comp_c = _zones(a / 2.0, b / 3.0)
    # zones 1 and 3 in counterflow, 2 and 4 in parallel flow; p = a/2 Φ, q = b/3 Φ
    p1, p2 = a / 2.0 * phi_c, a / 2.0 * phi_p
    q1, q2, q3, q4 = 1.0 - comp_c, 1.0 - comp_p, 1.0 - comp_c, 1.0 - comp_p
    if overall_counterflow:
        one_k = comp_p * (1.0 - q3 / 2.0) + q4 * q2 / 2.0
        one_c1 = 2.0 / 3.0 * ((1.0 - p1) + p1 * one_k) + ((1.0 - p2) + p2 * comp_p) / 3.0
        one_c0 = 2.0 / 3.0 * ((1.0 - p1) + p1 * q2 / 2.0) + (1.0 - p2) / 3.0
        x_over_a = comp_p * (phi_c * (comp_p + comp_c) / 6.0 + phi_p / 6.0) / one_c1
        phi = x_over_a + one_c0 / one_c1 * (phi_c * comp_p / 6.0 + phi_p / 3.0)
    else:
        x = (2.0 * p1 + p2 * comp_c) / 3.0
        d3 = comp_c - x
        d4 = d3 * (1.0 - q3 / 2.0) - q2 * comp_c / 2.0
        phi = (2.0 * phi_c + phi_p * comp_c) / 6.0 + (phi_c * d3 + 2.0 * phi_p * d4) / 6.0
    return _finish(ntu1, r1, phi)


def p_plate_2_4(ntu1, r1, side1_passes=2, overall_counterflow=True):
    r"""Temperature effectiveness P1 of a plate exchanger with two passes on one side and four
    on the other [1]_ [3]_.

    Each pass of the two-pass side faces two passes of the other: two 1-2 units (see
    :func:`p_plate_1_2`) at :math:`NTU_1/2`, joined in overall counterflow or parallel flow
    (the channel directions do not change the result). On the two-pass basis,
    :math:`D = [A + B - ABR_1/2]/2`, :math:`A = P_p(NTU_1/2, R_1/2)`, :math:`B = P_c(NTU_1/2, R_1/2)`:

    .. math:: P_1 = \frac{2D - (1 + R_1)D^2}{1 - R_1D^2} \quad\text{or}\quad 2D - (1 + R_1)D^2

    ``side1_passes`` 2 or 4. Valid for ``ntu1 >= 0``, ``r1 >= 0``.

    >>> round(float(p_plate_2_4(1.0, 1.0)), 12)
    0.490740728324
    """
    a, b = _ntus(ntu1, r1, side1_passes, sides=(2, 4))
    ntu1, r1 = as_arrays(ntu1, r1)
    phi_p, comp_p, phi_c, _ = _zones(a / 2.0, b / 4.0)
    unit = _finish(ntu1 / 2.0, r1, 0.5 * (phi_p + phi_c * comp_p))  # each 1-2 unit at NTU/2
    return _in_series(unit, r1, 2, overall_counterflow)


def _register():
    table = {
        "plate_1_1_counterflow": (partial(p_plate_1_1, counterflow=True), "1 pass-1 pass, counterflow; ntu1, r1"),
        "plate_1_1_parallel_flow": (partial(p_plate_1_1, counterflow=False), "1 pass-1 pass, parallel flow; ntu1, r1"),
        "plate_1_2": (p_plate_1_2, "1 pass-2 passes; ntu1, r1, side1_passes (1 or 2)"),
        "plate_1_3_end_passes_counterflow": (
            partial(p_plate_1_3, end_passes_counterflow=True),
            "1 pass-3 passes, end passes in counterflow; ntu1, r1, side1_passes (1 or 3)"),
        "plate_1_3_end_passes_parallel_flow": (
            partial(p_plate_1_3, end_passes_counterflow=False),
            "1 pass-3 passes, end passes in parallel flow; ntu1, r1, side1_passes (1 or 3)"),
        "plate_1_4": (p_plate_1_4, "1 pass-4 passes; ntu1, r1, side1_passes (1 or 4)"),
    }
    for n in (2, 3, 4):
        for overall, channels, label in ((True, True, "counterflow"), (False, False, "parallel_flow"),
                                         (True, False, "overall_counterflow_channels_parallel"),
                                         (False, True, "overall_parallel_channels_counterflow")):
            table[f"plate_{n}_{n}_{label}"] = (
                partial(p_plate_equal_passes, passes=n, overall_counterflow=overall, channels_counterflow=channels),
                f"{n} passes-{n} passes, {label.replace('_', ' ')} (symmetric); ntu1, r1")
    for m, func in ((3, p_plate_2_3), (4, p_plate_2_4)):
        for overall, label in ((True, "counterflow"), (False, "parallel_flow")):
            table[f"plate_2_{m}_{label}"] = (
                partial(func, overall_counterflow=overall),
                f"2 passes-{m} passes, overall {label.replace('_', ' ')}; ntu1, r1, side1_passes (2 or {m})")
    source = "Kandlikar & Shah (1989); Shah & Sekulić (2003) sec. 3.6"
    return {name: (func, text, source) for name, (func, text) in table.items()}


ARRANGEMENT = _register()
"""Each arrangement: (function, description with the arguments it takes, published source)."""
