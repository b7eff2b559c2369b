"""Studies: variants side by side, specifications, sweeps and the cleaning ranking.

Every scenario is the base case with changes applied by key path (see
:mod:`hxtrain.network.changes`), checked like a case file and simulated.
"""

from __future__ import annotations

import itertools
import sys
from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy.optimize import brentq

from hxtrain.network import CaseError, without_fouling
from hxtrain.network.batch import check_values, is_batchable
from hxtrain.network.changes import value_changes
from hxtrain.network.study import Study, check_point_count

from hxtrain.units.models import FIRED_HEATERS

from .batch import simulate_batch
from .engine import ConvergenceError
from .evaluation import as_case
from .report import boxed
from .results import SimulationResult, simulate

def metric(result: SimulationResult, name: str) -> float:
    """A named result: ``TAG.duty``, ``TAG.hot_out``, ... ``TAG.inlet``/``TAG.outlet`` (the process
    stream of a heater or cooler, or a product's inlet), as the unit declares them."""
    tag = name.rpartition(".")[0]
    if name in result.metrics:
        return result.metrics[name]
    if tag not in result.units.index:
        raise CaseError(f"no unit '{tag}' in the results (for '{name}')")
    offered = ", ".join(m for m in result.metrics if m.startswith(tag + ".")) or "none"
    raise CaseError(f"'{name}' is not a result of {tag} (a {result.units.loc[tag, 'type']}; it has {offered})")


def key_outputs(result: SimulationResult) -> pd.Series:
    """The headline numbers of a run: the totals, heater inlet temperatures, limits violated and
    warnings."""
    s = result.summary
    keys = [k for k in s.index if k not in ("iterations",)]
    return s[keys].astype(float)


@dataclass
class Comparison:
    results: dict
    """scenario name -> SimulationResult (the base first), or None where it has no answer."""
    table: pd.DataFrame
    """Rows: key outputs, then each unit's duty and outlet temperatures; columns: scenarios and
    their differences from the base."""
    findings: pd.DataFrame
    """Every scenario's limits and warnings."""
    failures: dict = None
    """scenario name -> why it has no answer (a variant asking for the impossible, or one that
    did not converge): the other scenarios are still compared."""


def _unit_rows(result: SimulationResult) -> pd.Series:
    units = result.units[result.units["group"].isin(["exchangers", "heaters_and_coolers"])]
    rows = {}
    for tag, row in units.iterrows():
        for column in ("duty_kw", "hot_out_c", "cold_out_c"):
            if column in row and not pd.isna(row[column]):
                rows[f"{tag} {column}"] = row[column]
    return pd.Series(rows, dtype=float)


def try_scenario(name: str, build):
    """Simulate the case ``build()`` makes, as scenario ``name`` of a study: (result, None), or
    (None, reason) where the scenario has no answer. Errors in the study itself (a change that
    does not apply) still raise, naming the study file and key path."""
    case = build()
    try:
        return simulate(case), None
    except (CaseError, ConvergenceError) as exc:
        return None, f"scenario '{name}': {exc}"


def compare(study: Study) -> Comparison:
    """The base case and every variant, simulated and tabulated side by side; a variant with no
    answer is reported as such, beside the others."""
    results, failures = {}, {}
    builds = {"base": study.case}
    builds.update({name: (lambda changes=changes, key=key: study.case(changes, key))
                   for name, (_, changes, key) in study.variants.items()})
    for name, build in builds.items():
        results[name], reason = try_scenario(name, build)
        if reason:
            failures[name] = reason
    answered = {n: r for n, r in results.items() if r is not None}
    columns = {name: (pd.concat([key_outputs(r), _unit_rows(r)]) if r is not None else pd.Series(dtype=float))
               for name, r in results.items()}
    table = pd.DataFrame(columns)
    for name in study.variants:
        table[f"{name} - base"] = table[name] - table["base"]
    columns = ["scenario", "unit", "severity", "kind", "key", "message"]
    findings = pd.concat([r.findings.assign(scenario=n) for n, r in answered.items()] or [pd.DataFrame(columns=columns)],
                         ignore_index=True)
    return Comparison(results, table.rename_axis("quantity"), findings[columns], failures)


def adjust_changes(study: Study, path: str, value: float, where=(), changes=(), changes_where=()) -> list:
    """Changes setting the numeric key ``path`` to ``value`` (in its default unit) in the study's
    base case with ``changes`` applied; a splitter branch fraction rescales the other branches
    (as that case has them) so that the fractions still sum to one."""
    data = study.changed_data(changes, changes_where) if changes else study.base.data
    with study.attributed():
        return value_changes(data, path, value, where)


def _simulate_at(study: Study, case, where, at: str):
    """simulate(case), an error found while solving naming the study file, ``where`` and the
    setting ``at`` that led to it."""
    try:
        return simulate(case)
    except CaseError as exc:
        raise study.error(where, f"at {at}: {exc.describe()}") from None


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
        result = _simulate_at(study, study.case(spec.changes, changes_key, settings, adjust_key, context=f"at {at}"),
                              adjust_key, at)
        target = spec.target
        try:
            if "value" in target:
                return metric(result, target["value"])
            first, second = target["difference"]
            return metric(result, first) - metric(result, second)
        except CaseError as exc:
            raise study.error(target_key, exc.message) from None

    goal = spec.target["equals"]
    low, high = achieved(spec.low), achieved(spec.high)
    reach = (low, high)
    if (low - goal) * (high - goal) > 0:
        lo, hi = sorted(reach)
        return SpecificationResult(spec.name, spec.adjust, False, None, None, goal, reach, count,
                                   f"target {goal:g}{target_unit} is out of reach: adjusting {spec.adjust} over "
                                   f"[{spec.low:g}, {spec.high:g}]{adjust_unit} gives {lo:.4g} to "
                                   f"{hi:.4g}{target_unit}")
    if low == goal or high == goal:
        x = spec.low if low == goal else spec.high
    else:
        # xtol relative to the range searched: an absolute one would be coarse for small values
        # (a fouling resistance of 5e-4 m²·K/W found only to within 1e-6)
        x = brentq(lambda v: achieved(v) - goal, spec.low, spec.high, xtol=tolerance * (spec.high - spec.low))
    reached = achieved(x)
    return SpecificationResult(spec.name, spec.adjust, True, x, reached, goal, reach, count,
                               f"{spec.adjust} = {x:.6g}{adjust_unit} gives {reached:.6g}{target_unit} "
                               f"(target {goal:g}{target_unit})")


def specification_table(specifications) -> pd.DataFrame:
    """One row per solved specification."""
    return pd.DataFrame([vars(s) for s in specifications]).set_index("name")


def _progress(iterable, total, label):
    """A progress bar on a terminal (tqdm), nothing otherwise."""
    if not sys.stderr.isatty():
        return iterable
    from tqdm import tqdm

    return tqdm(iterable, total=total, desc=label, leave=False)


def run_sweep(study: Study, sweep) -> pd.DataFrame:
    """Simulate every point of a one- or two-dimensional grid; one tidy row per point.

    When every swept key path can vary within a batch (see :mod:`hxtrain.network.batch`), all
    points are solved in one vectorized pass; a point that asks for the impossible then gets a
    row with ``valid`` False and its reason instead of stopping the sweep. Otherwise the points
    are simulated one by one.
    """
    paths = list(sweep.grid)
    grid_key = sweep.key + ("grid",)
    check_point_count(study, grid_key, sweep.grid)
    bases = {p: study.base_value(p, grid_key + (p,)) for p in paths} if sweep.scale else {}
    points = list(itertools.product(*(sweep.grid[p] for p in paths)))
    if len(points) > 1 and all(is_batchable(p) for p in paths):
        return _batch_sweep(study, sweep, paths, bases, points)
    rows = []
    for point in _progress(points, len(points), sweep.name):
        values = {p: (v * bases[p] if sweep.scale else v) for p, v in zip(paths, point)}
        at = "the point " + ", ".join(f"{p} = {v:g}" for p, v in values.items())
        changes = [c for p, v in values.items() for c in adjust_changes(study, p, v, grid_key + (p,))]
        result = _simulate_at(study, study.case((), sweep.key, changes, grid_key, context=f"at {at}"), grid_key, at)
        rows.append({**{p: v for p, v in zip(paths, point)}, **key_outputs(result).to_dict()})
    return pd.DataFrame(rows)


def _batch_sweep(study: Study, sweep, paths, bases, points) -> pd.DataFrame:
    grid = np.asarray(points, dtype=float)
    values = {p: grid[:, k] * bases.get(p, 1.0) for k, p in enumerate(paths)}
    try:
        check_values(study.base, values)
    except CaseError as exc:
        raise study.error(sweep.key + ("grid",), f"a grid point is not valid: {exc.describe()}") from None
    table = simulate_batch(study.case(), values).table
    for k, p in enumerate(paths):
        table[p] = grid[:, k]
    return table


def cleaning_ranking(case) -> pd.DataFrame:
    """For each fouled exchanger, what cleaning it alone gains: fired-heater (furnace) duty saved,
    the exchanger's own duty gained and the heater inlet temperatures gained, with the limits
    the cleaned case violates; ranked by the duty saved. A cleaned case with no answer stays in
    the table, last, with its reason."""
    case = as_case(case)
    fouled = simulate(case)
    heaters = [k for k in fouled.summary.index if k.endswith("_inlet_c")]
    rows = []
    for tag, data in case.exchangers.items():
        if not any(data["spec"].fouling.values()):
            continue
        clean, reason = try_scenario(f"{tag} clean", lambda tag=tag: without_fouling(case, [tag]))
        row = {"exchanger": tag}
        if clean is None:
            rows.append({**row, "answer": reason})
            continue
        row.update({"fired_duty_saved_kw": fouled.summary[FIRED_HEATERS] - clean.summary[FIRED_HEATERS],
                    "exchanger_duty_gained_kw": clean.units.loc[tag, "duty_kw"] - fouled.units.loc[tag, "duty_kw"]})
        row.update({f"{h.removesuffix('_inlet_c')}_inlet_gain_k": clean.summary[h] - fouled.summary[h] for h in heaters})
        new_limits = clean.limits[~clean.limits["message"].isin(fouled.limits["message"])]
        row["limits_when_clean"] = int(len(clean.limits))
        row["new_limits_when_clean"] = "; ".join(f"{r.unit}: {r.message}" for r in new_limits.itertuples())
        row["answer"] = "ok"
        rows.append(row)
    table = pd.DataFrame(rows)
    if table.empty:
        return table
    if "fired_duty_saved_kw" in table:
        table = table.sort_values("fired_duty_saved_kw", ascending=False, na_position="last", kind="stable")
    table = table.reset_index(drop=True)
    table.index = np.arange(1, len(table) + 1)
    return table.rename_axis("rank")


def study_text(study: Study, comparison: Comparison, specifications) -> str:
    """Printed form of a comparison: the table, each scenario's limits and warnings, specifications."""
    from .results import CAUTION

    lines = [f"hxtrain study: {study.title or study.file}", f"NOTE: {CAUTION}", ""]
    for name, (description, _, _) in study.variants.items():
        lines.append(f"  {name}: {description}" if description else f"  {name}")
    lines += ["", comparison.table.to_string(float_format=lambda v: f"{v:,.2f}")]
    for spec in specifications:
        lines += ["", f"Specification {spec.name}: {'met' if spec.success else 'NOT MET'} - {spec.message}"
                      f" ({spec.evaluations} simulations)"]
    findings = comparison.findings
    limits = findings[findings["severity"] == "limit"]
    warnings = findings[findings["severity"] == "warning"]
    if len(warnings):
        lines += ["", f"Warnings: {len(warnings)}"]
        lines += [f"  * [{r.scenario}] {r.unit}: {r.message}" for r in warnings.itertuples()]
    lines += boxed("SCENARIOS WITH NO ANSWER", (comparison.failures or {}).values())
    lines += boxed("LIMITS VIOLATED", (f"[{r.scenario}] {r.unit}: {r.message}  [{r.key}]" for r in limits.itertuples()))
    return "\n".join(lines)
