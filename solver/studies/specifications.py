"""Specifications: adjust one numeric key of a study's case within a range until a named result
meets its target (Brent's bracketing method), or say what the range can reach."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy.optimize import brentq

from hxtrain.network import CaseError
from hxtrain.network.changes import value_changes
from hxtrain.network.study import Study
from hxtrain.solver.reporting.console_tables import fixed
from hxtrain.solver.reporting.display_units import Display, ending_of_unit
from hxtrain.units.protocol import Worded
from hxtrain.solver.simulation.engine import ConvergenceError
from hxtrain.solver.simulation.results import simulate

from .compare import metric


def adjust_changes(study: Study, path: str, value: float, where=(), changes=(), changes_where=()) -> list:
    """Changes setting the numeric key ``path`` to ``value`` (in its default unit) in the study's
    base case with ``changes`` applied; a splitter branch fraction rescales the other branches
    (as that case has them) so that the fractions still sum to one."""
    data = study.changed_data(changes, changes_where) if changes else study.base.data
    with study.attributed():
        return value_changes(data, path, value, where)


class NoAnswerAt(Exception):
    """The case has no answer at an adjusted value (it does not converge there, or asks for the
    impossible): the specification is reported without an answer, the study goes on."""

    def __init__(self, value, reason):
        super().__init__(reason)
        self.value, self.reason = value, reason


def simulate_at(case, value):
    """simulate(case); where it has no answer (not converged, or a value the case cannot take
    found while solving), :class:`NoAnswerAt` ``value`` with the reason."""
    try:
        return simulate(case)
    except (CaseError, ConvergenceError) as exc:
        raise NoAnswerAt(value, exc.describe() if isinstance(exc, CaseError) else str(exc)) from None


@dataclass
class SpecificationResult:
    name: str
    adjust: str
    success: bool
    value: float | None
    achieved: float | None
    target: float
    achievable: tuple
    """(result at the low end, result at the high end) of the range searched."""
    evaluations: int
    message: str
    adjust_unit: str = ""
    """The unit of ``value`` (the adjusted key's default unit, as messages write it: "kg/s")."""
    target_unit: str = ""
    """The unit of ``achieved``, ``target`` and ``achievable``."""


def solve_specification(study: Study, spec, tolerance=1e-6) -> SpecificationResult:
    """Adjust ``spec.adjust`` within its range until the target holds (Brent's bracketing method);
    when the target lies outside what the range can reach, say what it can reach instead."""
    count = 0
    changes_key, adjust_key = spec.key + ("changes",), spec.key + ("adjust",)
    target_key = spec.key + ("target", "value" if "value" in spec.target else "difference")
    adjust_unit, target_unit = spec.adjust_unit, spec.target_unit

    def achieved(x):
        nonlocal count
        count += 1
        at = f"{spec.adjust} = {x:g}{adjust_unit}"
        settings = adjust_changes(study, spec.adjust, x, adjust_key, spec.changes, changes_key)
        result = simulate_at(study.case(spec.changes, changes_key, settings, adjust_key, context=f"at {at}"), x)
        target = spec.target
        try:
            if "value" in target:
                return metric(result, target["value"])
            first, second = target["difference"]
            return metric(result, first) - metric(result, second)
        except CaseError as exc:
            raise study.error(target_key, exc.message) from None

    goal = spec.target["equals"]

    def result(value, reached, reach, message):
        """The result with what every one carries; a success where a value was found."""
        return SpecificationResult(spec.name, spec.adjust, value is not None, value, reached, goal, reach, count,
                                   message, adjust_unit.strip(), target_unit.strip())

    try:
        return _solved(spec, achieved, goal, tolerance, result)
    except NoAnswerAt as missing:
        return result(None, None, (np.nan, np.nan), _worded(
            "no answer: at {} = {} the case has none ({}); narrow 'between' to values where it has one",
            spec.adjust, (missing.value, adjust_unit), missing.reason))


def _solved(spec, achieved, goal, tolerance, result) -> SpecificationResult:
    """The specification's answer, or what its range can reach (see :func:`solve_specification`);
    ``result(value, achieved, reach, message)`` makes it."""
    adjust_unit, target_unit = spec.adjust_unit, spec.target_unit
    low, high = achieved(spec.low), achieved(spec.high)
    reach = (low, high)
    bracket, scanned = (spec.low, spec.high), None
    if (low - goal) * (high - goal) > 0:  # the ends do not bracket it: a result may turn inside the range
        points = np.linspace(spec.low, spec.high, SCAN_INTERVALS + 1)
        scanned = [low, *(achieved(x) for x in points[1:-1]), high]
        crossing = np.flatnonzero(np.diff(np.asarray(scanned) >= goal))  # a point on the target counts as above
        if not crossing.size:
            lo, hi = min(scanned), max(scanned)
            return result(None, None, reach, _worded(
                "target {} not found in reach: adjusting {} over {} to {} gives {} at the low end, {} at the high "
                f"end, and from {{}} to {{}} over those and {SCAN_INTERVALS - 1} points between (a narrower peak or "
                "dip between them is not seen: narrow 'between' round it to be sure)", (goal, target_unit),
                spec.adjust, (spec.low, adjust_unit), (spec.high, adjust_unit), (low, target_unit),
                (high, target_unit), (lo, target_unit), (hi, target_unit)))
        bracket = tuple(points[crossing[0]:crossing[0] + 2])
    at_ends = (low, high) if scanned is None else scanned[crossing[0]:crossing[0] + 2]
    x = _root(lambda v: achieved(v) - goal, *bracket, [v - goal for v in at_ends], tolerance * (spec.high - spec.low))
    reached = achieved(x)
    others = [f"{a:g} and {b:g}" for a, b in zip(points[crossing[1:]], points[crossing[1:] + 1])] if scanned else []
    more = "" if scanned is None else (
        f" (the result turns inside the range: found between {bracket[0]:g} and {bracket[1]:g}; the ends do not "
        "bracket the target" + (f"; another value meets it too, between {'; '.join(others)})" if others else ")"))
    return result(x, reached, reach, _worded("{} = {} gives {} (target {})" + more, spec.adjust, (x, adjust_unit),
                                             (reached, target_unit), (goal, target_unit)))


SCAN_INTERVALS = 16
"""Where a result at the two ends of the range lies on one side of its target, the range is
scanned at this many equal intervals for a turn that crosses it (a duty that peaks inside a
flow range: checking the ends alone had said 'out of reach' of a target met inside)."""


def _root(shortfall, a, b, ends, xtol):
    """The adjusted value in [a, b], where ``shortfall`` (known there as ``ends``) changes sign,
    by Brent's method; an end itself where the shortfall is zero there."""
    if ends[0] == 0.0 or ends[1] == 0.0:
        return a if ends[0] == 0.0 else b
    # xtol relative to the range searched: an absolute one would be coarse for small values
    # (a fouling resistance of 5e-4 m²·K/W found only to within 1e-6)
    return brentq(shortfall, a, b, xtol=xtol)


def solve_specifications(study: Study) -> list[SpecificationResult]:
    """Every specification of ``study``, solved in its order."""
    return [solve_specification(study, spec) for spec in study.specifications]


def _worded(template, *parts):
    """The message, one template slot a part: a text as it is, or a (number, unit) in its unit's
    decimals (four significant digits without a unit), carrying the full numbers
    (:class:`.Worded`) that a report in other units converts."""
    rounded, exact = [], []
    for part in parts:
        if isinstance(part, str):
            rounded.append(part)
            exact.append(part)
            continue
        value, unit = part
        ending = ending_of_unit(unit.strip())
        column = Display("si").column(f"x{ending}") if ending else None
        rounded.append((fixed(value, column.digits) if column else f"{value:.4g}") + unit)
        exact.append(repr(float(value)) + unit)
    return Worded(template.format(*rounded), template.format(*exact))


def specification_table(specifications) -> pd.DataFrame:
    """One row per solved specification; each number's column named with its unit's ending
    (``value_kg_s``, ``achieved_c``, ...: converted like any result column where the report is in
    other units), the result at each end of the range in two columns."""
    rows = []
    for s in specifications:
        adjusted, targeted = ending_of_unit(s.adjust_unit), ending_of_unit(s.target_unit)
        rows.append({"name": s.name, "adjust": s.adjust, "success": s.success, f"value{adjusted}": s.value,
                     f"achieved{targeted}": s.achieved, f"target{targeted}": s.target,
                     f"at_low_end{targeted}": s.achievable[0], f"at_high_end{targeted}": s.achievable[1],
                     "evaluations": s.evaluations, "message": s.message})
    return pd.DataFrame(rows).set_index("name")


