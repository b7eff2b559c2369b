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

from hxtrain.network import CaseError, load_case, without_fouling
from hxtrain.network.batch import check_values, is_batchable
from hxtrain.network.changes import value_changes
from hxtrain.network.study import Study

from .batch import simulate_batch
from .results import SimulationResult, simulate

METRIC_COLUMNS = {"duty": "duty_kw", "hot_in": "hot_in_c", "hot_out": "hot_out_c", "cold_in": "cold_in_c",
                  "cold_out": "cold_out_c"}


def metric(result: SimulationResult, name: str) -> float:
    """A named result: ``TAG.duty``, ``TAG.hot_out``, ... ``TAG.inlet``/``TAG.outlet`` (the process
    stream of a heater or cooler, or a product's inlet)."""
    tag, _, field = name.rpartition(".")
    units = result.units
    if tag not in units.index:
        raise CaseError(f"no unit '{tag}' in the results (for '{name}')")
    row = units.loc[tag]
    if field in ("inlet", "outlet"):
        kind = row["type"]
        side = "cold" if kind == "heater" else "hot"
        column = f"{side}_{'in' if field == 'inlet' else 'out'}_c"
        if kind == "product" and field == "inlet":
            column = "inlet_c"
    else:
        column = METRIC_COLUMNS[field]
    value = row.get(column)
    if value is None or pd.isna(value):
        raise CaseError(f"'{name}' is not a result of {tag} (a {row['type']})")
    return float(value)


def key_outputs(result: SimulationResult) -> pd.Series:
    """The headline numbers of a run: heat recovered, heater and cooler duties, heater inlet
    temperatures, limits violated and warnings."""
    s = result.summary
    keys = ["heat_recovered_kw", "heater_duty_kw", "cooler_duty_kw"]
    keys += [k for k in s.index if k.endswith("_inlet_c")]
    keys += ["limit_violations", "warnings"]
    return s[keys].astype(float)


@dataclass
class Comparison:
    results: dict
    """scenario name -> SimulationResult (the base first)."""
    table: pd.DataFrame
    """Rows: key outputs, then each unit's duty and outlet temperatures; columns: scenarios and
    their differences from the base."""
    findings: pd.DataFrame
    """Every scenario's limits and warnings."""


def _unit_rows(result: SimulationResult) -> pd.Series:
    units = result.units[result.units["type"].isin(["exchanger", "heater", "cooler"])]
    rows = {}
    for tag, row in units.iterrows():
        for column in ("duty_kw", "hot_out_c", "cold_out_c"):
            if column in row and not pd.isna(row[column]):
                rows[f"{tag} {column}"] = row[column]
    return pd.Series(rows, dtype=float)


def compare(study: Study) -> Comparison:
    """The base case and every variant, simulated and tabulated side by side."""
    results = {"base": simulate(study.case())}
    for name, (_, changes, key) in study.variants.items():
        results[name] = simulate(study.case(changes, key))
    columns = {name: pd.concat([key_outputs(r), _unit_rows(r)]) for name, r in results.items()}
    table = pd.DataFrame(columns)
    for name in study.variants:
        table[f"{name} - base"] = table[name] - table["base"]
    findings = pd.concat([r.findings.assign(scenario=name) for name, r in results.items()], ignore_index=True)
    return Comparison(results, table.rename_axis("quantity"), findings[["scenario", *results["base"].findings.columns]])


def adjust_changes(study: Study, path: str, value: float, where=()) -> list:
    """Changes setting ``path`` to ``value`` in the study's base case; a splitter branch fraction
    rescales the other branches so that the fractions still sum to one."""
    try:
        return value_changes(study.base.data, path, value, where)
    except CaseError as exc:
        raise study.error(exc.path or where, exc.message) from None


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

    def achieved(x):
        nonlocal count
        count += 1
        result = simulate(study.case(spec.changes, spec.key + ("changes",),
                                     adjust_changes(study, spec.adjust, x, spec.key + ("adjust",)), spec.key + ("adjust",)))
        target = spec.target
        if "value" in target:
            return metric(result, target["value"])
        first, second = target["difference"]
        return metric(result, first) - metric(result, second)

    goal = spec.target["equals"]
    low, high = achieved(spec.low), achieved(spec.high)
    reach = (low, high)
    if (low - goal) * (high - goal) > 0:
        lo, hi = sorted(reach)
        return SpecificationResult(spec.name, spec.adjust, False, None, None, goal, reach, count,
                                   f"target {goal:g} is out of reach: adjusting {spec.adjust} over "
                                   f"[{spec.low:g}, {spec.high:g}] gives {lo:.4g} to {hi:.4g}")
    if low == goal or high == goal:
        x = spec.low if low == goal else spec.high
    else:
        x = brentq(lambda v: achieved(v) - goal, spec.low, spec.high, xtol=tolerance * max(1.0, abs(spec.high)))
    reached = achieved(x)
    return SpecificationResult(spec.name, spec.adjust, True, x, reached, goal, reach, count,
                               f"{spec.adjust} = {x:.6g} gives {reached:.6g} (target {goal:g})")


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
    bases = {p: study.base_value(p, sweep.key + ("grid", p)) for p in paths} if sweep.scale else {}
    points = list(itertools.product(*(sweep.grid[p] for p in paths)))
    if len(points) > 1 and all(is_batchable(p) for p in paths):
        return _batch_sweep(study, sweep, paths, bases, points)
    rows = []
    for point in _progress(points, len(points), sweep.name):
        values = {p: (v * bases[p] if sweep.scale else v) for p, v in zip(paths, point)}
        changes = [c for p, v in values.items() for c in adjust_changes(study, p, v, sweep.key + ("grid", p))]
        result = simulate(study.case((), sweep.key, changes, sweep.key + ("grid",)))
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
    """For each fouled exchanger, what cleaning it alone gains: heater (furnace) duty saved and
    heater inlet temperature gained; ranked by the duty saved."""
    if not hasattr(case, "exchangers"):
        case = load_case(case)
    fouled = simulate(case)
    heaters = [k for k in fouled.summary.index if k.endswith("_inlet_c")]
    rows = []
    for tag, data in case.exchangers.items():
        thermal = data["spec"].thermal
        if thermal is None or not (getattr(thermal, "fouling_shell", 0.0) or getattr(thermal, "fouling_tube", 0.0)):
            continue
        clean = simulate(without_fouling(case, [tag]))
        row = {"exchanger": tag,
               "heater_duty_saved_kw": fouled.summary["heater_duty_kw"] - clean.summary["heater_duty_kw"],
               "duty_gained_kw": clean.units.loc[tag, "duty_kw"] - fouled.units.loc[tag, "duty_kw"]}
        row.update({f"{h.removesuffix('_inlet_c')}_inlet_gain_k": clean.summary[h] - fouled.summary[h] for h in heaters})
        rows.append(row)
    table = pd.DataFrame(rows)
    if table.empty:
        return table
    table = table.sort_values("heater_duty_saved_kw", ascending=False).reset_index(drop=True)
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
    if len(limits):
        lines += ["", "!" * 78, f"!! LIMITS VIOLATED: {len(limits)}", "!" * 78]
        lines += [f"!! [{r.scenario}] {r.unit}: {r.message}  [{r.key}]" for r in limits.itertuples()]
        lines.append("!" * 78)
    return "\n".join(lines)
